/**
 * The properness engine: decides whether a loss is strictly proper, proper or improper by a global
 * search for a counterexample L(η, q) < L(η, η) over both η and q (grids dense near the endpoints and on
 * both sides of ½, seeded random points, refinement near suspicious points), plus a local slope test at
 * q = η. Diagnostics attribute failures to the clause at fault with evidence; parameters are swept over
 * their declared ranges; claims (`expect …`) are evaluated against the result.
 *
 * Definitions follow Reid & Williamson 2010, "Composite Binary Losses", JMLR 11 (§3, Thm 1, Cor. 2) and
 * Bao 2023, "Proper Losses, Moduli of Convexity, and Surrogate Regret Bounds", COLT (§2): proper means
 * L(η, η) = inf_q L(η, q) for all η; strictly proper means q = η is the unique minimiser.
 */
import type { Claim, Finding, LossFamily, LossFunctions, LossSpec, ParamRange, RealFn } from "../loss-model.js";
import { fmt } from "../display.js";
import { goldenMin } from "./numeric/minimise.js";
import { linspace, probabilityGrid, seededRandom } from "./numeric/sampling.js";
import { deriveLossFunctions, internalError } from "./derive.js";
import { computeRecovery, minimiseRisk, RECOVERY_ETAS, type RecoveryMap, type RiskTable } from "./recovery.js";
import { checkCompositeConvexity, checkMarginConvexity } from "./composite.js";
import { checkMarginCalibration, marginDerivative, safeCall } from "./margin.js";
import { diffInUnit } from "./numeric/differences.js";

/** Re-exported so callers of `analyseProperness` get the type of `PropernessResult.recovery` from one module. */
export type { RecoveryMap } from "./recovery.js";

/** A pair (η, q) with L(η, q) < L(η, η), both risks re-evaluated from the closures. */
export interface Counterexample {
  eta: number;
  q: number;
  riskAtEta: number;
  riskAtQ: number;
}

/** The outcome of the properness analysis of a loss family (verdict at the defaults). */
export interface PropernessResult {
  verdict: "strictly-proper" | "proper" | "improper" | "unknown";
  /** Present when improper (null for margin losses without an invertible link, which elicit no q). */
  counterexample: Counterexample | null;
  /** Where H is affine (proper but not strictly); the widest such interval. */
  flatInterval: [number, number] | null;
  findings: Finding[];
  /** Sampled minimisers q*(η) for improper losses (for hovers and curves). */
  minimiser?: { etas: number[]; qs: number[] };
  /** The posterior-recovery map when q*(η) is monotone. */
  recovery?: RecoveryMap | null;
  /** Summary over declared parameter ranges, e.g. "improper for g > 0; proper at g = 0". */
  paramReport?: string;
  /** The derived model at the defaults. */
  fns: LossFunctions | null;
}

/** Options of `analyseProperness`. */
export interface PropernessOptions {
  /** Time budget for the whole analysis, in milliseconds (default DEFAULT_DEADLINE_MS). */
  deadlineMs?: number;
  /** Seed of the random sample points (default DEFAULT_SEED). */
  seed?: number;
  /** Grid resolution of the q and η scans (default GRID_RESOLUTION); lower is faster and coarser. */
  resolution?: number;
}

/** Default time budget: long enough for two-parameter sweeps on a slow machine, short enough for an editor. */
export const DEFAULT_DEADLINE_MS = 2000;
/** Default seed of the random sample points (any fixed value makes runs reproducible). */
export const DEFAULT_SEED = 20260101;
/** Uniform part of the scan grid (plus geometric points near both endpoints and seeded random points). */
export const GRID_RESOLUTION = 200;
/** Coarser grid used for each point of a parameter sweep. */
export const SWEEP_RESOLUTION = 100;
/**
 * Relative tolerance of a risk gap L(η,η) − L(η,q), scaled by 1 + |η·l1(η)| + |(1−η)·l0(η)|. Risks are
 * sums of two closure values, and derived forms (tabulated integrals, bisection links) are accurate to
 * ~1e-11 relative, so 1e-9 is two orders above noise and still catches gaps of 1e-8 on O(1) losses.
 */
export const RISK_TOL = 1e-9;
/**
 * Tighter gap tolerance for losses whose partial losses are the user's closures evaluated directly
 * ("partials", "score-partials"): only rounding (~1e-16 relative) separates L(η,q) from its true value.
 */
export const RISK_TOL_DIRECT = 1e-10;
/** Scan grids for Bayes-risk losses without a closed-form H' stop this far from the endpoints, where differences of H lose all accuracy. */
export const NUMERIC_DERIVATIVE_EDGE_EXPONENT = 5;
/** Largest variation of l1 and l0 (relative to the loss scale) over an interval on which H counts as affine (l1, l0 are constant there). */
export const FLAT_VARIATION_TOL = 1e-12;
/** The same for Bayes-risk losses with a numeric H' (differences of H carry ~1e-10 relative noise). */
export const FLAT_VARIATION_TOL_NUMERIC = 1e-8;
/** Relative slope |∂L/∂q| at q = η that triggers a local descent search (central differences are accurate to ~1e-8). */
export const SLOPE_TOL = 1e-6;
/** Confirmed slope points collected as evidence once a counterexample is known (more only cost time). */
export const SLOPE_EVIDENCE_POINTS = 4;
/** Relative disagreement of the stationarity ratios −l1'/(1−q) and l0'/q reported as a mismatch (well above difference noise). */
export const STATIONARITY_TOL = 1e-5;
/** Relative increase of l1 (or decrease of l0) between grid neighbours that counts as a monotonicity failure. */
export const MONOTONE_TOL = 1e-9;
/** Mean weight 2R/(b−a)² over an interval, relative to the loss scale, below which H counts as affine there. */
export const FLAT_WEIGHT_TOL = 1e-8;
/** Narrowest affine stretch of H that is reported (narrower ones are below the grid's resolution). */
export const FLAT_MIN_WIDTH = 1e-3;
/** Relative difference between a declared Bayes risk and the loss's own that is reported (numeric H' noise is ~1e-9). */
export const BAYES_MISMATCH_TOL = 1e-6;
/** Relative tolerance on second differences of a Bayes risk when testing concavity (rounding of three values). */
export const CONCAVITY_TOL = 1e-9;
/** Largest recovery error over the sampled η for which the posterior-recovery finding is reported. */
export const RECOVERY_TOL = 1e-6;
/** A sampled minimiser counts as moved away from η when |q* − η| exceeds this (well above minimiser accuracy ~1e-12). */
export const RECOVERY_MOVED = 1e-6;

/** The sampled model: a table of the partial losses on the scan grid. */
interface Table extends RiskTable {
  /** Indices of interior points (0 < q < 1). */
  interior: boolean[];
  /** Relative gap tolerance for this loss (RISK_TOL or RISK_TOL_DIRECT). */
  tol: number;
  /** Relative variation tolerance for flat intervals. */
  flatTol: number;
}

function buildGrid(resolution: number, seed: number, edgeExponent = 10): number[] {
  const rnd = seededRandom(seed);
  const pts = new Set<number>(probabilityGrid(resolution, edgeExponent));
  pts.add(0);
  pts.add(1);
  // Seeded random points break any alignment between the grid and kinks or bumps of the loss.
  const extra = Math.max(8, Math.floor(resolution / 8));
  for (let i = 0; i < extra; i++) pts.add(rnd());
  return [...pts].sort((a, b) => a - b);
}

function buildTable(fns: LossFunctions, qs: number[], tol: number, flatTol: number): Table {
  return {
    tol,
    flatTol,
    qs,
    l1: qs.map((q) => safeCall(fns.l1, q)),
    l0: qs.map((q) => safeCall(fns.l0, q)),
    interior: qs.map((q) => q > 0 && q < 1),
  };
}

/** Halvings used to test every grid cell for a jump: a jump keeps its size while smooth deviations shrink by 2^-k. */
export const JUMP_PROBE_HALVINGS = 10;
/** A cell holds a jump when its deviation from the neighbours' slope keeps at least this fraction of its size after the probe halvings. */
export const JUMP_PERSIST_FRACTION = 0.25;
/** At most this many jumps per partial loss are located and sampled around (piecewise losses have a handful). */
export const MAX_JUMPS = 16;
/** Offsets around a located jump at which extra points are sampled (both sides). */
export const JUMP_OFFSETS: readonly number[] = [1e-10, 1e-7, 1e-5, 1e-4, 1e-3, 2.5e-3];

/**
 * Locates discontinuities of l1 and l0 inside grid cells and returns extra sample points on both sides
 * of each, so small jumps between grid points (which make a loss improper right next to the diagonal)
 * are sampled. The smooth part is predicted from the neighbouring cells' slope; each cell is halved
 * towards the half that deviates most from that prediction. A jump keeps its deviation at every level,
 * a smooth change loses it in proportion to the width.
 */
function jumpPoints(fns: LossFunctions, t: Table, deadline: number): number[] {
  const extra: number[] = [];
  const n = t.qs.length;
  for (const [vals, f] of [[t.l1, fns.l1], [t.l0, fns.l0]] as const) {
    const slope = (i: number) => {
      if (i < 0 || i + 1 >= n || !t.interior[i] || !t.interior[i + 1]) return NaN;
      return (vals[i + 1]! - vals[i]!) / (t.qs[i + 1]! - t.qs[i]!);
    };
    let found = 0;
    for (let j = 0; j + 1 < n && found < MAX_JUMPS; j++) {
      // Past the deadline the probe stops; the search that follows reports the time-out.
      if ((j & 15) === 0 && Date.now() > deadline) return extra;
      if (!t.interior[j] || !t.interior[j + 1]) continue;
      let lo = t.qs[j]!;
      let hi = t.qs[j + 1]!;
      let flo = vals[j]!;
      let fhi = vals[j + 1]!;
      if (!Number.isFinite(flo) || !Number.isFinite(fhi)) continue;
      const sides = [slope(j - 1), slope(j + 1)].filter(Number.isFinite);
      if (sides.length === 0) continue;
      const sbar = sides.reduce((x, y) => x + y, 0) / sides.length;
      const dev = (a: number, b: number, fa: number, fb: number) => Math.abs(fb - fa - sbar * (b - a));
      const cellDev = dev(lo, hi, flo, fhi);
      const floor = 1e-12 * (1 + Math.abs(flo) + Math.abs(fhi));
      if (!(cellDev > floor)) continue;
      let ok = true;
      for (let k = 0; k < 60 && hi - lo > 1e-15; k++) {
        if (k === JUMP_PROBE_HALVINGS && !(dev(lo, hi, flo, fhi) > Math.max(floor, JUMP_PERSIST_FRACTION * cellDev))) {
          ok = false;
          break;
        }
        const m = 0.5 * (lo + hi);
        const fm = safeCall(f, m);
        if (!Number.isFinite(fm)) {
          ok = false;
          break;
        }
        if (dev(lo, m, flo, fm) >= dev(m, hi, fm, fhi)) {
          hi = m;
          fhi = fm;
        } else {
          lo = m;
          flo = fm;
        }
      }
      if (!ok) continue;
      const c = 0.5 * (lo + hi);
      found++;
      extra.push(lo, hi);
      for (const d of JUMP_OFFSETS) {
        if (c - d > 0) extra.push(c - d);
        if (c + d < 1) extra.push(c + d);
      }
    }
  }
  return extra;
}

/** The table extended by extra points (merged in order, values evaluated once). */
function extendTable(fns: LossFunctions, t: Table, extra: number[]): Table {
  if (extra.length === 0) return t;
  const qs = [...new Set([...t.qs, ...extra])].sort((a, b) => a - b);
  return buildTable(fns, qs, t.tol, t.flatTol);
}

/** Risk from the table, NaN when a needed value is not finite. */
function tableRisk(t: Table, eta: number, j: number): number {
  const a = eta === 0 ? 0 : eta * t.l1[j]!;
  const b = eta === 1 ? 0 : (1 - eta) * t.l0[j]!;
  const r = a + b;
  return Number.isFinite(r) ? r : NaN;
}

function riskTol(fns: LossFunctions, eta: number, rel: number): number {
  const a = eta === 0 ? 0 : Math.abs(eta * safeCall(fns.l1, eta));
  const b = eta === 1 ? 0 : Math.abs((1 - eta) * safeCall(fns.l0, eta));
  return rel * (1 + a + b);
}

interface NonFinite {
  q: number;
  which: "l1" | "l0";
  value: number;
}

interface SearchOutcome {
  counterexample: Counterexample | null;
  nonFinite: NonFinite | null;
  timedOut: boolean;
  /** Points where the slope test at q = η led to a confirmed descent (evidence for stationarity-mismatch). */
  slopePoints: number[];
}

/** Confirms a candidate (η, q) from the closures; returns it as a counterexample when the gap exceeds the tolerance. */
function confirm(fns: LossFunctions, eta: number, q: number, rel: number): Counterexample | null {
  const riskAtEta = fns.risk(eta, eta);
  const riskAtQ = fns.risk(eta, q);
  if (!Number.isFinite(riskAtEta) || !Number.isFinite(riskAtQ)) return null;
  if (riskAtQ < riskAtEta - riskTol(fns, eta, rel)) return { eta, q, riskAtEta, riskAtQ };
  return null;
}

/** Relative size of a counterexample's gap, used to pick the most convincing one. */
function gapScore(c: Counterexample): number {
  return (c.riskAtEta - c.riskAtQ) / (1 + Math.abs(c.riskAtEta));
}

/**
 * The global search. Every η of the grid is compared with every q of the grid (a vectorised scan of
 * the table), the best few candidates are refined by golden section and confirmed from the closures,
 * and at each interior η the slope of L(η, ·) at q = η is tested, with a local descent search when it
 * is not zero (this catches improperness confined close to the diagonal, between grid points).
 */
function searchCounterexample(fns: LossFunctions, t: Table, deadline: number): SearchOutcome {
  const n = t.qs.length;
  let nonFinite: NonFinite | null = null;
  for (let j = 0; j < n && !nonFinite; j++) {
    if (!t.interior[j]) continue;
    if (!Number.isFinite(t.l1[j]!)) nonFinite = { q: t.qs[j]!, which: "l1", value: t.l1[j]! };
    else if (!Number.isFinite(t.l0[j]!)) nonFinite = { q: t.qs[j]!, which: "l0", value: t.l0[j]! };
  }
  interface Cand {
    eta: number;
    j: number;
    score: number;
  }
  const cands: Cand[] = [];
  const keep = 6;
  let timedOut = false;
  for (let i = 0; i < n; i++) {
    if ((i & 31) === 0 && Date.now() > deadline) {
      timedOut = true;
      break;
    }
    const eta = t.qs[i]!;
    const diag = tableRisk(t, eta, i);
    if (Number.isNaN(diag)) continue;
    let best = diag;
    let bestJ = -1;
    for (let j = 0; j < n; j++) {
      const a = eta === 0 ? 0 : eta * t.l1[j]!;
      const b = eta === 1 ? 0 : (1 - eta) * t.l0[j]!;
      const r = a + b;
      if (r < best) {
        best = r;
        bestJ = j;
      }
    }
    if (bestJ < 0) continue;
    const scale = 1 + Math.abs(eta === 0 ? 0 : eta * t.l1[i]!) + Math.abs(eta === 1 ? 0 : (1 - eta) * t.l0[i]!);
    const gap = diag - best;
    if (gap > t.tol * scale) {
      const score = gap / (1 + Math.abs(diag));
      if (cands.length < keep || score > cands[cands.length - 1]!.score) {
        cands.push({ eta, j: bestJ, score });
        cands.sort((x, y) => y.score - x.score);
        if (cands.length > keep) cands.pop();
      }
    }
  }
  let counterexample: Counterexample | null = null;
  const consider = (c: Counterexample | null) => {
    if (c && (!counterexample || gapScore(c) > gapScore(counterexample))) counterexample = c;
  };
  for (const c of cands) {
    const lo = t.qs[Math.max(0, c.j - 1)]!;
    const hi = t.qs[Math.min(n - 1, c.j + 1)]!;
    const m = goldenMin((q) => fns.risk(c.eta, q), lo, hi);
    const q = m.fx < fns.risk(c.eta, t.qs[c.j]!) ? m.x : t.qs[c.j]!;
    consider(confirm(fns, c.eta, q, t.tol));
  }
  const slopePoints: number[] = [];
  if (!timedOut) {
    for (let i = 0; i < n; i++) {
      if ((i & 31) === 0 && Date.now() > deadline) {
        timedOut = true;
        break;
      }
      // Once the scan has a counterexample, a few confirmed slope points suffice as evidence for the diagnostics.
      if (counterexample && slopePoints.length >= SLOPE_EVIDENCE_POINTS) break;
      const eta = t.qs[i]!;
      if (!(eta >= 1e-6 && eta <= 1 - 1e-6)) continue;
      const d1 = safeCall(fns.dl1, eta);
      const d0 = safeCall(fns.dl0, eta);
      if (!Number.isFinite(d1) || !Number.isFinite(d0)) continue;
      const s = eta * d1 + (1 - eta) * d0;
      const scale = eta * Math.abs(d1) + (1 - eta) * Math.abs(d0);
      if (!(Math.abs(s) > SLOPE_TOL * scale) || scale === 0) continue;
      // Descend from q = η in the downhill direction, within a neighbourhood that stays inside [0, 1].
      const r = Math.min(0.05, eta, 1 - eta);
      const [lo, hi] = s < 0 ? [eta, Math.min(1, eta + r)] : [Math.max(0, eta - r), eta];
      const m = goldenMin((q) => fns.risk(eta, q), lo, hi);
      const c = confirm(fns, eta, m.x, t.tol);
      if (c) {
        slopePoints.push(eta);
        consider(c);
      }
    }
  }
  return { counterexample, nonFinite, timedOut, slopePoints };
}

/** The clause a diagnostic about the whole loss belongs to, by definition form. */
function primaryClause(form: LossSpec["form"]): "l1" | "bayes" | "weight" | "margin" {
  switch (form) {
    case "bayes":
      return "bayes";
    case "weight":
      return "weight";
    case "margin":
      return "margin";
    default:
      return "l1";
  }
}

/** l1-increasing / l0-decreasing on the table (interior, finite values), with the interval of the failure. */
function monotonicityFindings(t: Table, form: LossSpec["form"]): Finding[] {
  const out: Finding[] = [];
  const check = (vals: number[], sign: 1 | -1, code: "l1-increasing" | "l0-decreasing", clause: "l1" | "l0") => {
    let j0 = -1;
    let prev = -1;
    for (let j = 0; j < t.qs.length; j++) {
      if (!t.interior[j] || !Number.isFinite(vals[j]!)) continue;
      if (prev >= 0) {
        const d = sign * (vals[j]! - vals[prev]!);
        if (d > MONOTONE_TOL * (1 + Math.abs(vals[j]!) + Math.abs(vals[prev]!))) {
          j0 = prev;
          let k = j;
          while (k + 1 < t.qs.length && t.interior[k + 1] && sign * (vals[k + 1]! - vals[k]!) > 0) k++;
          const a = t.qs[j0]!;
          const b = t.qs[k]!;
          const verb = code === "l1-increasing" ? "increases" : "decreases";
          out.push({
            code,
            clause: form === "partials" || form === "score-partials" ? clause : primaryClause(form),
            message: `${clause} ${verb} on [${fmt(a)}, ${fmt(b)}] (from ${fmt(vals[j0]!)} to ${fmt(vals[k]!)}); a proper loss has l1 non-increasing and l0 non-decreasing (Reid & Williamson 2010, Thm 1).`,
            data: { q: a, q2: b, value: vals[j0], value2: vals[k] },
          });
          return;
        }
      }
      prev = j;
    }
  };
  check(t.l1, 1, "l1-increasing", "l1");
  check(t.l0, -1, "l0-decreasing", "l0");
  return out;
}

/**
 * Stationarity ratios −l1'/(1−q) and l0'/q (used only once impropriety is proven). The reported point is
 * the confirmed descent point nearest the counterexample's η, else the worst disagreement on [0.01, 0.99].
 */
function stationarityFinding(fns: LossFunctions, t: Table, form: LossSpec["form"], hint: number[], nearEta: number): Finding | null {
  const ratios = (q: number) => {
    const r1 = -safeCall(fns.dl1, q) / (1 - q);
    const r0 = safeCall(fns.dl0, q) / q;
    if (!Number.isFinite(r1) || !Number.isFinite(r0)) return null;
    const rel = Math.abs(r1 - r0) / Math.max(Math.abs(r1), Math.abs(r0), 1e-300);
    return rel > STATIONARITY_TOL ? { q, r1, r0 } : null;
  };
  let pick: { q: number; r1: number; r0: number } | null = null;
  const inner = hint.filter((q) => q >= 0.01 && q <= 0.99);
  // Evidence inside [0.01, 0.99] reads better than a point next to an endpoint, where both ratios blow up.
  const byDistance = (xs: number[]) => [...xs].sort((a, b) => Math.abs(a - nearEta) - Math.abs(b - nearEta));
  for (const q of byDistance(inner)) {
    pick = ratios(q);
    if (pick) break;
  }
  if (!pick) {
    let worst = 0;
    for (const q of t.qs) {
      if (q < 0.01 || q > 0.99) continue;
      const r = ratios(q);
      if (!r) continue;
      const d = Math.abs(r.r1 - r.r0) / (Math.abs(r.r1) + Math.abs(r.r0));
      if (d > worst) {
        worst = d;
        pick = r;
      }
    }
  }
  if (!pick) {
    for (const q of byDistance(hint)) {
      pick = ratios(q);
      if (pick) break;
    }
  }
  if (!pick) return null;
  const { q: at, r1: r1w, r0: r0w } = pick;
  const clause = form === "partials" || form === "score-partials" ? "l1" : primaryClause(form);
  return {
    code: "stationarity-mismatch",
    clause,
    message: `The stationarity ratios disagree at q = ${fmt(at)}: −l1'/(1−q) = ${fmt(r1w)} but l0'/q = ${fmt(r0w)} (difference ${fmt(r1w - r0w)}); a proper loss has them equal (Reid & Williamson 2010, Thm 1).`,
    data: { q: at, ratio1: r1w, ratio0: r0w, difference: r1w - r0w },
    related: clause === "l1" ? [{ clause: "l0", message: `l0'/q = ${fmt(r0w)} at q = ${fmt(at)}` }] : [],
  };
}

/** Points for checks of a Bayes risk: both sides of ½ and close to the endpoints. */
function bayesCheckPoints(): number[] {
  const pts = linspace(0.01, 0.99, 98);
  for (const x of [1e-3, 3e-3, 1 - 3e-3, 1 - 1e-3]) pts.push(x);
  return pts.sort((a, b) => a - b);
}

/** Concavity of H by second differences (robust to kinks, which concave H may have). */
function concavityFinding(H: (q: number) => number, declared: boolean): Finding | null {
  let worst = 0;
  let at = -1;
  for (const x of bayesCheckPoints()) {
    const h = Math.min(1e-3, x / 2, (1 - x) / 2);
    const a = safeCall(H, x - h);
    const b = safeCall(H, x);
    const c = safeCall(H, x + h);
    if (!Number.isFinite(a) || !Number.isFinite(b) || !Number.isFinite(c)) continue;
    const d2 = a - 2 * b + c;
    const tol = CONCAVITY_TOL * (Math.abs(a) + 2 * Math.abs(b) + Math.abs(c)) + 1e-300;
    if (d2 > tol && d2 / (h * h) > worst) {
      worst = d2 / (h * h);
      at = x;
    }
  }
  if (at < 0) return null;
  return {
    code: "bayes-not-concave",
    clause: "bayes",
    message: `The ${declared ? "declared " : ""}Bayes risk is not concave near q = ${fmt(at)} (second derivative ≈ ${fmt(worst)} > 0); a Bayes risk is an infimum of affine functions, hence concave (Bao 2023, §2).`,
    data: { q: at, secondDerivative: worst },
  };
}

/** A declared Bayes risk against the loss's own: H vs inf_q L, and (for partials) the Savage links l1 = H + (1−q)H', l0 = H − qH'. */
function bayesMismatchFinding(spec: LossSpec, fns: LossFunctions, deadline: number): Finding | null {
  const H = spec.bayes!;
  const dH = spec.dbayes ?? ((q: number) => diffInUnit(H, q));
  let worst = 0;
  let ev: Record<string, unknown> | null = null;
  let msg = "";
  const pts = linspace(0.02, 0.98, 48);
  for (const q of pts) {
    if (Date.now() > deadline) break;
    const declared = safeCall(H, q);
    const actual = fns.bayes(q);
    if (!Number.isFinite(declared) || !Number.isFinite(actual)) continue;
    const d = Math.abs(declared - actual) / (1 + Math.abs(actual));
    if (d > BAYES_MISMATCH_TOL && d > worst) {
      worst = d;
      ev = { q, declared, derived: actual, difference: declared - actual };
      msg = `at q = ${fmt(q)} the declared H(q) = ${fmt(declared)} but inf over predictions of L(q, ·) = ${fmt(actual)} (difference ${fmt(declared - actual)})`;
    }
    if (spec.form === "partials") {
      const d1 = safeCall(dH, q);
      const s1 = declared + (1 - q) * d1;
      const s0 = declared - q * d1;
      const l1 = safeCall(fns.l1, q);
      const l0 = safeCall(fns.l0, q);
      for (const [name, savage, given] of [["l1", s1, l1], ["l0", s0, l0]] as const) {
        if (!Number.isFinite(savage) || !Number.isFinite(given)) continue;
        const e = Math.abs(savage - given) / (1 + Math.abs(given));
        if (e > BAYES_MISMATCH_TOL && e > worst) {
          worst = e;
          const form = name === "l1" ? "H + (1−q)H'" : "H − qH'";
          ev = { q, partial: name, savage, given, difference: savage - given };
          msg = `at q = ${fmt(q)} the Savage link gives ${name} = ${form} = ${fmt(savage)} but ${name}(q) = ${fmt(given)} (difference ${fmt(savage - given)})`;
        }
      }
    }
  }
  if (!ev) return null;
  return {
    code: "bayes-mismatch",
    clause: "bayes",
    message: `The declared Bayes risk disagrees with the partial losses: ${msg} (Savage representation, Bao 2023, Thm 1).`,
    data: ev,
  };
}

/** Weight samples with w < 0 (weight form), reported with the first failing point. */
function weightNegativeFinding(spec: LossSpec): Finding | null {
  if (!spec.weight) return null;
  for (const q of probabilityGrid(200, 8)) {
    const y = safeCall(spec.weight, q);
    if (y < 0) {
      return {
        code: "weight-negative",
        clause: "weight",
        message: `The weight function is negative at q = ${fmt(q)} (w = ${fmt(y)}); a proper loss has w ≥ 0 (Reid & Williamson 2010, Thm 6).`,
        data: { q, value: y },
      };
    }
  }
  return null;
}

interface FlatRun {
  a: number;
  b: number;
}

/** Interior probes of a candidate flat interval at which a closed-form weight is evaluated. */
export const FLAT_WEIGHT_PROBES = 16;

/**
 * True when a closed-form weight is strictly positive inside (a, b): then H is strictly concave there and
 * the interval is not affine, however small the partial losses' variation (a weight vanishing like
 * (1−q)^4 at an endpoint makes l1 and l0 vary by ~1e-13 near it). Strict properness holds iff w puts mass
 * on every open set (Reid & Williamson 2010, text after Thm 6, attributed to Buja, Stuetzle & Shen 2005).
 */
function exactWeightPositive(fns: LossFunctions, a: number, b: number): boolean {
  if (!fns.weightExact || !fns.weight) return false;
  for (let i = 1; i <= FLAT_WEIGHT_PROBES; i++) {
    const x = a + ((b - a) * i) / (FLAT_WEIGHT_PROBES + 1);
    const w = fns.weight(x);
    if (!(Number.isFinite(w) && w > 0)) return false;
  }
  return true;
}

/**
 * Intervals where H is affine (w has no mass): consecutive grid cells whose mean weight 2R/(b−a)² is
 * negligible against the loss's scale, merged into runs, confirmed from the closures, and with ends
 * refined by bisection (so a point mass at c gives an interval ending exactly at c).
 */
function findFlatIntervals(fns: LossFunctions, t: Table): FlatRun[] {
  const n = t.qs.length;
  let scale = 0;
  const mid = t.qs.findIndex((q) => q >= 0.5);
  for (let j = 0; j < n; j++) {
    const q = t.qs[j]!;
    if (q < 0.01 || q > 0.99) continue;
    const d = tableRisk(t, q, j);
    if (Number.isFinite(d)) scale = Math.max(scale, Math.abs(d));
    if (mid >= 0) {
      const s1 = Math.abs(t.l1[j]! - t.l1[mid]!);
      const s0 = Math.abs(t.l0[j]! - t.l0[mid]!);
      if (Number.isFinite(s1)) scale = Math.max(scale, s1);
      if (Number.isFinite(s0)) scale = Math.max(scale, s0);
    }
  }
  const tol = FLAT_WEIGHT_TOL * scale;
  const varTol = t.flatTol * Math.max(scale, 1e-300);
  const regret = (eta: number, q: number) => fns.risk(eta, q) - fns.risk(eta, eta);
  const flatBetween = (a: number, b: number) => {
    if (!(b > a)) return true;
    const r = Math.max(regret(a, b), regret(b, a));
    return Number.isFinite(r) && (2 * r) / ((b - a) * (b - a)) <= tol;
  };
  const cellFlat: boolean[] = [];
  for (let j = 0; j + 1 < n; j++) {
    const a = t.qs[j]!;
    const b = t.qs[j + 1]!;
    const raa = tableRisk(t, a, j);
    const rab = tableRisk(t, a, j + 1);
    const rbb = tableRisk(t, b, j + 1);
    const rba = tableRisk(t, b, j);
    const r = Math.max(rab - raa, rba - rbb);
    // On an affine stretch of H the partial losses are constant (l1' = −(1−q)w = 0), which separates w ≡ 0 from a merely small w.
    const v1 = Math.abs(t.l1[j + 1]! - t.l1[j]!);
    const v0 = Math.abs(t.l0[j + 1]! - t.l0[j]!);
    const constant = v1 <= varTol && v0 <= varTol;
    cellFlat.push(Number.isFinite(r) && (2 * r) / ((b - a) * (b - a)) <= tol && constant);
  }
  const runs: FlatRun[] = [];
  let j = 0;
  while (j < cellFlat.length) {
    if (!cellFlat[j]) {
      j++;
      continue;
    }
    let k = j;
    while (k + 1 < cellFlat.length && cellFlat[k + 1]) k++;
    let a = t.qs[j]!;
    let b = t.qs[k + 1]!;
    let lo1 = Infinity, hi1 = -Infinity, lo0 = Infinity, hi0 = -Infinity;
    for (let i = j; i <= k + 1; i++) {
      lo1 = Math.min(lo1, t.l1[i]!);
      hi1 = Math.max(hi1, t.l1[i]!);
      lo0 = Math.min(lo0, t.l0[i]!);
      hi0 = Math.max(hi0, t.l0[i]!);
    }
    const drift = Math.max(hi1 - lo1, hi0 - lo0) <= varTol;
    if (b - a >= FLAT_MIN_WIDTH && drift && flatBetween(a, b) && !exactWeightPositive(fns, a, b)) {
      // Refine the ends towards the neighbouring (non-flat) cells.
      if (j > 0) {
        let lo = t.qs[j - 1]!;
        let hi = a;
        for (let it = 0; it < 60; it++) {
          const m = 0.5 * (lo + hi);
          if (flatBetween(m, b)) hi = m;
          else lo = m;
        }
        a = hi;
      }
      if (k + 2 < n) {
        let lo = b;
        let hi = t.qs[k + 2]!;
        for (let it = 0; it < 60; it++) {
          const m = 0.5 * (lo + hi);
          if (flatBetween(a, m)) lo = m;
          else hi = m;
        }
        b = lo;
      }
      // Ends refined to within 1e-9 of 0 or 1 are the endpoints themselves (the bisection cannot reach them exactly when a value there is infinite).
      const snap = (x: number) => (x < 1e-9 ? 0 : x > 1 - 1e-9 ? 1 : Number(x.toPrecision(10)));
      runs.push({ a: snap(a), b: snap(b) });
    }
    j = k + 1;
  }
  return runs;
}

/** The first finding of the given codes, for building "unknown" reasons. */
function firstMessage(findings: Finding[]): string {
  return findings.length > 0 ? findings[0]!.message : "no reason given";
}

interface CoreResult {
  verdict: PropernessResult["verdict"];
  counterexample: Counterexample | null;
  flatInterval: [number, number] | null;
  findings: Finding[];
  fns: LossFunctions | null;
  table: Table | null;
  slopePoints: number[];
}

/** The analysis of one instance (one parameter assignment). `full` adds the diagnostics beyond the verdict. */
function analyseSpec(spec: LossSpec, deadline: number, seed: number, resolution: number, full: boolean): CoreResult {
  const derived = deriveLossFunctions(spec);
  const findings: Finding[] = [...derived.findings];
  const fns = derived.fns;
  const base = { counterexample: null, flatInterval: null, table: null, slopePoints: [] as number[] };
  if (!fns) {
    if (!findings.some((f) => f.code === "analysis-unknown" || f.code === "internal-error")) {
      findings.push({ code: "analysis-unknown", clause: "loss", message: `Cannot decide properness: the loss functions could not be derived (${firstMessage(findings)}).` });
    }
    return { ...base, verdict: "unknown", findings, fns: null };
  }
  const noLink = findings.some((f) => f.code === "margin-no-link");
  if (spec.form === "margin" && full && spec.margin) {
    const phi = (v: number) => safeCall(spec.margin!, v);
    const conv = checkMarginConvexity(phi);
    findings.push(...conv.findings);
    const cal = checkMarginCalibration(phi, marginDerivative(phi, spec.dmargin), conv.convex === true);
    findings.push(...cal.findings);
    if (noLink && cal.calibrated) {
      const f = findings.find((x) => x.code === "margin-no-link");
      if (f) f.message += " It is classification-calibrated (Bartlett, Jordan & McAuliffe 2006).";
    }
  }
  if (noLink) {
    // notation.md: a margin loss without an invertible link is improper (it elicits no probability).
    return { ...base, verdict: "improper", findings, fns };
  }
  const numericH = spec.form === "bayes" && !spec.dbayes;
  const direct = spec.form === "partials" || spec.form === "score-partials";
  const coarse = buildTable(
    fns,
    buildGrid(resolution, seed, numericH ? NUMERIC_DERIVATIVE_EDGE_EXPONENT : 10),
    direct ? RISK_TOL_DIRECT : RISK_TOL,
    numericH ? FLAT_VARIATION_TOL_NUMERIC : FLAT_VARIATION_TOL,
  );
  // Weight-form partial losses are integrals (continuous) and margin ones are costly to probe; jumps are sought in the others.
  const probeJumps = spec.form === "partials" || spec.form === "score-partials" || spec.form === "bayes";
  const table = probeJumps ? extendTable(fns, coarse, jumpPoints(fns, coarse, deadline)) : coarse;
  const s = searchCounterexample(fns, table, deadline);
  const clauseOf = (which: "l1" | "l0") => (spec.form === "partials" || spec.form === "score-partials" ? which : primaryClause(spec.form));
  if (s.nonFinite) {
    findings.push({
      code: "non-finite-value",
      clause: clauseOf(s.nonFinite.which),
      message: `${s.nonFinite.which}(q) is ${fmt(s.nonFinite.value)} at q = ${fmt(s.nonFinite.q)}, inside (0, 1).`,
      data: { q: s.nonFinite.q, value: String(s.nonFinite.value) },
    });
  }
  if (full) {
    if (spec.form === "weight") {
      const f = weightNegativeFinding(spec);
      if (f) findings.push(f);
    }
    if (spec.form === "bayes" && spec.bayes) {
      const f = concavityFinding((q) => safeCall(spec.bayes!, q), false);
      if (f) findings.push(f);
    } else if (spec.bayes) {
      const f = concavityFinding((q) => safeCall(spec.bayes!, q), true);
      if (f) findings.push(f);
      const m = bayesMismatchFinding(spec, fns, deadline);
      if (m) findings.push(m);
    }
  }
  const ce = s.counterexample as Counterexample | null;
  if (ce) {
    findings.push({
      code: "improper",
      clause: "loss",
      message: `Not proper: at η = ${fmt(ce.eta)}, predicting q = ${fmt(ce.q)} has conditional risk ${fmt(ce.riskAtQ)} < L(η, η) = ${fmt(ce.riskAtEta)}.`,
      data: { eta: ce.eta, q: ce.q, riskAtEta: ce.riskAtEta, riskAtQ: ce.riskAtQ },
    });
    if (full) {
      if (spec.form === "partials" || spec.form === "score-partials") findings.push(...monotonicityFindings(table, spec.form));
      if (spec.form !== "weight" && spec.form !== "bayes") {
        const st = stationarityFinding(fns, table, spec.form, s.slopePoints, ce.eta);
        if (st) findings.push(st);
      }
    }
    return { ...base, verdict: "improper", counterexample: ce, findings, fns, table, slopePoints: s.slopePoints };
  }
  if (s.timedOut) {
    findings.push({ code: "analysis-unknown", clause: "loss", message: "Cannot decide properness: the time limit was reached before the search finished." });
    return { ...base, verdict: "unknown", findings, fns, table };
  }
  if (s.nonFinite) {
    findings.push({
      code: "analysis-unknown",
      clause: "loss",
      message: `Cannot decide properness: ${s.nonFinite.which} is not finite at q = ${fmt(s.nonFinite.q)}, and no counterexample was found elsewhere.`,
    });
    return { ...base, verdict: "unknown", findings, fns, table };
  }
  if (full && Date.now() > deadline) {
    // No counterexample was found, but strictness was not examined: claim only properness and say why.
    findings.push({ code: "analysis-unknown", clause: "loss", message: "Strict properness not decided: the time limit was reached before the Bayes risk was examined for affine pieces." });
    return { ...base, verdict: "proper", findings, fns, table };
  }
  const runs = full ? findFlatIntervals(fns, table) : [];
  if (runs.length > 0) {
    const widest = runs.reduce((x, y) => (y.b - y.a > x.b - x.a ? y : x));
    const list = runs.map((r) => `[${fmt(r.a)}, ${fmt(r.b)}]`).join(" and ");
    findings.push({
      code: "proper-not-strict",
      clause: "loss",
      message: `Proper but not strictly proper: the Bayes risk is affine on ${list} (the weight has no mass there), so several predictions are optimal for each η inside (Bao 2023, Thm 2).`,
      data: { intervals: runs.map((r) => [r.a, r.b]) },
    });
    return { ...base, verdict: "proper", flatInterval: [widest.a, widest.b], findings, fns, table };
  }
  return { ...base, verdict: "strictly-proper", findings, fns, table };
}

/** A parameter with a declared range. */
function rangedParams(family: LossFamily): (ParamRange & { lo: number; hi: number })[] {
  return family.params.filter(
    (p): p is ParamRange & { lo: number; hi: number } => p.lo !== undefined && p.hi !== undefined && p.hi >= p.lo && !p.thresholdOnly,
  );
}

function defaultsOf(family: LossFamily): Record<string, number> {
  const v: Record<string, number> = {};
  for (const p of family.params) v[p.name] = p.default;
  return v;
}

type Status = "improper" | "proper" | "unknown";

interface SweepPoint {
  values: Record<string, number>;
  status: Status;
  counterexample: Counterexample | null;
}

/** Probe points near each endpoint for the power-law integrability test of a weight function. */
const WEIGHT_EDGE_PROBES = [1e-8, 1e-6] as const;
/** Local exponents this close to the borderline −1 are left to the full analysis. */
export const WEIGHT_EXPONENT_MARGIN = 0.05;

/**
 * A fast sweep verdict for a weight-defined loss: every w ≥ 0 whose integrals l1, l0 converge defines a
 * proper loss (Reid & Williamson 2010, Thm 6), so sampling the sign of w and the local power of c·w(c)
 * at 0 and (1−c)·w(c) at 1 suffices. Returns null (use the full analysis) when in doubt.
 */
function quickWeightStatus(w: RealFn): Status | null {
  for (const q of probabilityGrid(100, 6)) {
    const y = w(q);
    if (!Number.isFinite(y) || y < 0) return null;
  }
  const [near, far] = WEIGHT_EDGE_PROBES;
  for (const edge of [0, 1] as const) {
    const g = (t: number) => t * w(edge === 0 ? t : 1 - t);
    const a = g(near);
    const b = g(far);
    if (a === 0 && b === 0) continue;
    if (!(a > 0 && b > 0)) return null;
    const k = Math.log(b / a) / Math.log(far / near);
    if (!Number.isFinite(k) || k <= -1 + WEIGHT_EXPONENT_MARGIN) return null;
  }
  return "proper";
}

function statusAt(family: LossFamily, values: Record<string, number>, deadline: number, seed: number): SweepPoint {
  try {
    const spec = family.instantiate(values);
    if (spec.form === "weight" && spec.weight) {
      const quick = quickWeightStatus(spec.weight);
      if (quick) return { values, status: quick, counterexample: null };
    }
    const r = analyseSpec(spec, deadline, seed, SWEEP_RESOLUTION, false);
    const status: Status = r.verdict === "improper" ? "improper" : r.verdict === "unknown" ? "unknown" : "proper";
    return { values, status, counterexample: r.counterexample };
  } catch {
    return { values, status: "unknown", counterexample: null };
  }
}

/** Bisection steps refining a boundary between a proper and an improper sample of one parameter. */
export const BOUNDARY_STEPS = 12;

interface Sweep1D {
  param: ParamRange & { lo: number; hi: number };
  points: { x: number; status: Status }[];
  improper: SweepPoint[];
  /** Refined boundaries between runs of different status: (left status, right status, location). */
  boundaries: { x: number; left: Status; right: Status }[];
}

function fmtParam(x: number): string {
  return fmt(x, 4);
}

/** Text like "improper for g > 0; proper at g = 0" from a 1-D sweep. */
function describeSweep(s: Sweep1D): string {
  const { name, lo, hi } = s.param;
  const span = hi - lo;
  const pts = s.points;
  if (pts.length === 0) return "";
  if (pts.every((p) => p.status === pts[0]!.status)) return `${pts[0]!.status} for all ${name} in [${fmtParam(lo)}, ${fmtParam(hi)}] (sampled)`;
  // Runs of equal status between refined boundaries.
  interface Run {
    status: Status;
    from: number;
    to: number;
  }
  const runs: Run[] = [];
  let cur: Run = { status: pts[0]!.status, from: pts[0]!.x, to: pts[0]!.x };
  let bi = 0;
  for (let i = 1; i < pts.length; i++) {
    const p = pts[i]!;
    if (p.status === cur.status) {
      cur.to = p.x;
      continue;
    }
    const b = s.boundaries[bi++]?.x ?? 0.5 * (cur.to + p.x);
    cur.to = b;
    runs.push(cur);
    cur = { status: p.status, from: b, to: p.x };
  }
  runs.push(cur);
  const near = (a: number, b: number) => Math.abs(a - b) <= 1e-3 * Math.max(span, 1e-300);
  const isPoint = (r: Run) => near(r.from, r.to) && (near(r.from, lo) || near(r.from, hi));
  const parts: string[] = [];
  runs.forEach((r, i) => {
    if (isPoint(r)) {
      parts.push(`${r.status} at ${name} = ${fmtParam(near(r.from, lo) ? lo : hi)}`);
      return;
    }
    const prev = runs[i - 1];
    const next = runs[i + 1];
    // A neighbouring single-point run at an end makes this bound strict ("g > 0"); otherwise it is a refined boundary.
    const strictLeft = !!prev && isPoint(prev);
    const strictRight = !!next && isPoint(next);
    const leftAt = strictLeft ? lo : near(r.from, lo) ? null : r.from;
    const rightAt = strictRight ? hi : near(r.to, hi) ? null : r.to;
    if (leftAt === null && rightAt === null) parts.push(`${r.status} for all ${name} in [${fmtParam(lo)}, ${fmtParam(hi)}]`);
    else if (leftAt !== null && rightAt !== null)
      parts.push(`${r.status} for ${fmtParam(leftAt)} ${strictLeft ? "<" : "≤"} ${name} ${strictRight ? "<" : "≤"} ${fmtParam(rightAt)}`);
    else if (leftAt !== null) parts.push(`${r.status} for ${name} ${strictLeft ? ">" : "≥"} ${fmtParam(leftAt)}`);
    else parts.push(`${r.status} for ${name} ${strictRight ? "<" : "≤"} ${fmtParam(rightAt!)}`);
  });
  const order: Status[] = ["improper", "proper", "unknown"];
  const sorted = parts.map((t, i) => ({ t, s: runs[i]!.status })).sort((a, b) => order.indexOf(a.s) - order.indexOf(b.s));
  return sorted.map((x) => x.t).join("; ");
}

/** Sample values of one parameter: both ends, the default, a uniform grid and seeded random points. */
function paramSamples(p: ParamRange & { lo: number; hi: number }, rnd: () => number, uniform: number): number[] {
  const xs = new Set<number>([p.lo, p.hi, p.default]);
  if (p.hi > p.lo) {
    for (let k = 1; k < uniform; k++) xs.add(p.lo + ((p.hi - p.lo) * k) / uniform);
    for (let k = 0; k < 2; k++) xs.add(p.lo + (p.hi - p.lo) * rnd());
  }
  return [...xs].filter((x) => x >= p.lo && x <= p.hi).sort((a, b) => a - b);
}

interface RangeOutcome {
  report: string;
  findings: Finding[];
}

/**
 * Sweeps each ranged parameter (others at defaults), refines the boundaries between proper and improper
 * samples by bisection, and adds seeded joint samples when there are several parameters.
 */
function analyseRanges(family: LossFamily, defaultVerdict: PropernessResult["verdict"], deadline: number, seed: number): RangeOutcome {
  const params = rangedParams(family);
  const findings: Finding[] = [];
  if (params.length === 0) return { report: "", findings };
  const defaults = defaultsOf(family);
  const rnd = seededRandom(seed ^ 0x5bd1e995);
  const sweeps: Sweep1D[] = [];
  let timedOut = false;
  const uniform = params.length === 1 ? 8 : 5;
  for (const p of params) {
    const sweep: Sweep1D = { param: p, points: [], improper: [], boundaries: [] };
    for (const x of paramSamples(p, rnd, uniform)) {
      if (Date.now() > deadline) {
        timedOut = true;
        break;
      }
      const sp = statusAt(family, { ...defaults, [p.name]: x }, deadline, seed);
      sweep.points.push({ x, status: sp.status });
      if (sp.status === "improper") sweep.improper.push(sp);
    }
    for (let i = 0; i + 1 < sweep.points.length; i++) {
      const a = sweep.points[i]!;
      const b = sweep.points[i + 1]!;
      if (a.status === b.status) continue;
      let lo = a.x;
      let hi = b.x;
      for (let k = 0; k < BOUNDARY_STEPS && Date.now() <= deadline; k++) {
        const m = 0.5 * (lo + hi);
        const st = statusAt(family, { ...defaults, [p.name]: m }, deadline, seed).status;
        if (st === a.status) lo = m;
        else hi = m;
      }
      sweep.boundaries.push({ x: 0.5 * (lo + hi), left: a.status, right: b.status });
    }
    sweeps.push(sweep);
  }
  const joint: SweepPoint[] = [];
  if (params.length > 1) {
    const corners = 1 << Math.min(params.length, 4);
    for (let c = 0; c < corners + 6 && !timedOut; c++) {
      if (Date.now() > deadline) {
        timedOut = true;
        break;
      }
      const values = { ...defaults };
      params.forEach((p, k) => {
        values[p.name] = c < corners ? ((c >> k) & 1 ? p.hi : p.lo) : p.lo + (p.hi - p.lo) * rnd();
      });
      const sp = statusAt(family, values, deadline, seed);
      if (sp.status === "improper") joint.push(sp);
    }
  }
  const texts = sweeps.map(describeSweep).filter((t) => t.length > 0);
  if (joint.length > 0) {
    const v = joint[0]!.values;
    texts.push(`improper at (${params.map((p) => `${p.name} = ${fmtParam(v[p.name]!)}`).join(", ")})`);
  }
  if (timedOut) {
    texts.push("range only partly sampled (time limit)");
    findings.push({
      code: "analysis-unknown",
      clause: `param:${params[0]!.name}`,
      message: "The declared parameter ranges were only partly sampled: the time limit was reached.",
    });
  }
  if (defaultVerdict === "proper" || defaultVerdict === "strictly-proper") {
    for (const s of sweeps) {
      const bad = s.improper[0];
      if (!bad) continue;
      const ce = bad.counterexample;
      findings.push({
        code: "improper-in-range",
        clause: `param:${s.param.name}`,
        message: `Proper at the defaults but improper at ${s.param.name} = ${fmtParam(bad.values[s.param.name]!)}${ce ? ` (at η = ${fmt(ce.eta)}, q = ${fmt(ce.q)} has risk ${fmt(ce.riskAtQ)} < ${fmt(ce.riskAtEta)})` : ""}: ${describeSweep(s)}.`,
        data: { values: bad.values, counterexample: ce },
      });
    }
    if (joint.length > 0 && !findings.some((f) => f.code === "improper-in-range")) {
      const bad = joint[0]!;
      findings.push({
        code: "improper-in-range",
        clause: `param:${params[0]!.name}`,
        message: `Proper at the defaults but improper at ${params.map((p) => `${p.name} = ${fmtParam(bad.values[p.name]!)}`).join(", ")}.`,
        data: { values: bad.values, counterexample: bad.counterexample },
      });
    }
  }
  return { report: texts.join("; "), findings };
}

/**
 * Decides properness of a loss family at its parameter defaults, with diagnostics, and sweeps the
 * declared parameter ranges. Never throws: failures become "internal-error" findings with verdict
 * "unknown"; a search that runs out of time says so ("analysis-unknown").
 */
export function analyseProperness(family: LossFamily, options: PropernessOptions = {}): PropernessResult {
  const start = Date.now();
  const deadline = start + (options.deadlineMs ?? DEFAULT_DEADLINE_MS);
  const seed = options.seed ?? DEFAULT_SEED;
  const resolution = options.resolution ?? GRID_RESOLUTION;
  try {
    const spec = family.instantiate(defaultsOf(family));
    const core = analyseSpec(spec, deadline, seed, resolution, true);
    const result: PropernessResult = {
      verdict: core.verdict,
      counterexample: core.counterexample,
      flatInterval: core.flatInterval,
      findings: core.findings,
      fns: core.fns,
    };
    let fns = core.fns;
    if (fns && (core.verdict === "proper" || core.verdict === "strictly-proper")) {
      // For a loss found proper the Bayes risk is L(η, η); this replaces the per-point minimisation, which callers evaluating H densely would pay for.
      const risk = fns.risk;
      fns = { ...fns, bayes: (eta: number) => risk(eta, eta), notes: [...fns.notes, "H(η) = L(η, η), since the loss was found proper."] };
      result.fns = fns;
    }
    if (fns && fns.link && spec.form !== "margin") {
      const conv = checkCompositeConvexity(fns, core.verdict === "strictly-proper", spec.d2link ?? null);
      result.findings.push(...conv.findings);
    }
    if (fns && core.verdict === "improper" && core.counterexample && core.table && Date.now() <= deadline) {
      const table = core.table;
      // The minimiser curve is sampled for every improper loss (also when it sits at the endpoints and no recovery exists).
      result.minimiser = { etas: [...RECOVERY_ETAS], qs: RECOVERY_ETAS.map((eta) => minimiseRisk(fns!, eta, table).q) };
      const rec = computeRecovery(fns, RECOVERY_ETAS, table, result.minimiser.qs);
      if (rec) {
        result.recovery = rec.monotone ? rec : null;
        // Recovery is only news when the minimiser moves away from η on most samples (not for a loss broken on a small set).
        const moved = rec.samples.filter((x) => Math.abs(x.qStar - x.eta) > RECOVERY_MOVED).length;
        if (rec.monotone && rec.maxError <= RECOVERY_TOL && 2 * moved > rec.samples.length) {
          result.findings.push({
            code: "posterior-recovery",
            clause: "loss",
            message: `η can be recovered from the minimiser q* by η = l0'(q*)/(l0'(q*) − l1'(q*)) (Reid & Williamson 2010, Cor. 12); checked on ${rec.samples.length} values of η, largest error ${fmt(rec.maxError, 3)}.`,
            data: { maxError: rec.maxError, samples: rec.samples },
          });
        }
      } else {
        result.recovery = null;
      }
    }
    const ranges = analyseRanges(family, core.verdict, deadline, seed);
    if (ranges.report) result.paramReport = ranges.report;
    result.findings.push(...ranges.findings);
    return result;
  } catch (e) {
    return { verdict: "unknown", counterexample: null, flatInterval: null, findings: [internalError("the properness analysis", e)], fns: null };
  }
}

/** Values computed elsewhere (curvature, bounds) that some claims need; null means "could not be computed". */
export interface ClaimExtras {
  lambda?: number | null;
  exponent?: number | null;
  convex?: boolean | null;
}

/** A finding's sentence reused inside another sentence: no capital at the start, no full stop at the end. */
function asClause(sentence: string): string {
  const s = sentence.trim().replace(/\.$/, "");
  return /^[A-Z][a-z]/.test(s) ? s[0]!.toLowerCase() + s.slice(1) : s;
}

function claimText(c: Claim): string {
  switch (c.kind) {
    case "proper":
      return "expect proper";
    case "strictly-proper":
      return "expect strictly proper";
    case "improper":
      return "expect improper";
    case "convex":
      return "expect convex";
    case "lambda-at-least":
      return `expect lambda >= ${fmt(c.value)}`;
    case "exponent-at-least":
      return `expect exponent >= ${fmt(c.value)}`;
  }
}

/**
 * Evaluates the family's `expect` claims against a properness result (at the defaults) and the extras.
 * A refuted claim is an "expect-failed" error on clause `expect:N`; an undecided one "expect-undecided".
 * Convexity, when not supplied, is computed here from the derived model (composite check).
 */
export function evaluateClaims(family: LossFamily, properness: PropernessResult, extra: ClaimExtras = {}): Finding[] {
  const out: Finding[] = [];
  for (const claim of family.claims) {
    try {
      const clause = `expect:${claim.index}` as const;
      const fail = (why: string, data?: Record<string, unknown>) =>
        out.push({ code: "expect-failed", clause, message: `Claim "${claimText(claim)}" fails: ${asClause(why)}.`, ...(data ? { data } : {}) });
      const undecided = (why: string) => out.push({ code: "expect-undecided", clause, message: `Claim "${claimText(claim)}" could not be decided: ${why}.` });
      const v = properness.verdict;
      const ce = properness.counterexample;
      const ceText = ce ? `at η = ${fmt(ce.eta)}, q = ${fmt(ce.q)} has risk ${fmt(ce.riskAtQ)} < L(η, η) = ${fmt(ce.riskAtEta)}` : "the loss is improper";
      switch (claim.kind) {
        case "proper":
          if (v === "unknown") undecided("properness could not be decided");
          else if (v === "improper") fail(ceText, ce ? { ...ce } : undefined);
          break;
        case "strictly-proper":
          if (v === "unknown") undecided("properness could not be decided");
          else if (v === "improper") fail(ceText, ce ? { ...ce } : undefined);
          else if (v === "proper") {
            const fi = properness.flatInterval;
            fail(`the loss is proper but not strictly${fi ? `: the Bayes risk is affine on [${fmt(fi[0])}, ${fmt(fi[1])}]` : ""}`, fi ? { flatInterval: fi } : undefined);
          }
          break;
        case "improper":
          if (v === "unknown") undecided("properness could not be decided");
          else if (v === "proper" || v === "strictly-proper") fail(`the loss is ${v === "proper" ? "proper" : "strictly proper"}`);
          break;
        case "convex": {
          let convex = extra.convex;
          let evidence: Finding | undefined;
          if (convex === undefined) {
            const fns = properness.fns;
            if (fns && (fns.link || fns.margin)) {
              const r = checkCompositeConvexity(fns, v === "strictly-proper");
              convex = r.convex;
              evidence = r.findings[0];
            } else convex = null;
          }
          if (convex === null || convex === undefined) undecided("convexity in the score needs a link or a margin form, or could not be computed");
          else if (!convex) fail(evidence ? evidence.message : "the loss is not convex in the score", evidence?.data);
          break;
        }
        case "lambda-at-least": {
          const lam = extra.lambda;
          if (lam === null || lam === undefined || Number.isNaN(lam)) undecided("λ could not be computed");
          else if (lam < claim.value) fail(`λ = ${fmt(lam)} < ${fmt(claim.value)}`, { lambda: lam });
          break;
        }
        case "exponent-at-least": {
          const ex = extra.exponent;
          if (ex === null || ex === undefined || Number.isNaN(ex)) undecided("the exponent could not be computed");
          else if (ex < claim.value) fail(`exponent = ${fmt(ex)} < ${fmt(claim.value)}`, { exponent: ex });
          break;
        }
      }
    } catch (e) {
      out.push(internalError(`the claim expect:${claim.index}`, e));
    }
  }
  return out;
}
