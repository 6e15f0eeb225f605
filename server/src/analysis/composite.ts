/**
 * Convexity of composite losses in the score v = ψ(q). For strictly proper losses with an invertible
 * link the exact condition is Reid & Williamson 2010, "Composite Binary Losses", JMLR 11, Thm 24,
 * eq. (17): −1/x ≤ w'(x)/w(x) − ψ''(x)/ψ'(x) ≤ 1/(1−x) for all x ∈ (0,1). For margin losses the
 * composite partial losses are φ(v) and φ(−v) themselves, so convexity is that of φ; other cases
 * (improper or not strictly proper losses) fall back to second differences of λ_y(v) = l_y(ψ⁻¹(v)).
 */
import type { Finding, LossFunctions, RealFn } from "../loss-model.js";
import { bisect } from "./numeric/roots.js";
import { fmt } from "../display.js";
import { probabilityGrid } from "./numeric/sampling.js";
import { diffInUnit } from "./numeric/differences.js";
import { safeCall, scanConvexity } from "./margin.js";

/** Relative slack on the eq. (17) bounds: w' and ψ'' are central differences of closed forms (error ~1e-9), so 1e-6 is far above noise. */
export const EQ17_REL_TOL = 1e-6;
/** Sample points of eq. (17) stay this far from 0 and 1, where w'/w and the bounds themselves blow up. */
export const EQ17_MARGIN = 1e-4;

/** Convexity in the score: the verdict, the findings with evidence, and which test decided it. */
export interface ConvexityResult {
  /** True when convex in the score, false when refuted (with a finding), null when not decidable. */
  convex: boolean | null;
  findings: Finding[];
  method: "rw10-eq17" | "margin" | "second-differences" | "none";
}

interface Eq17Point {
  x: number;
  value: number;
  lower: number;
  upper: number;
}

function eq17At(w: RealFn, dlink: RealFn, d2link: RealFn | null, x: number): Eq17Point | null {
  const wx = w(x);
  const dwx = diffInUnit(w, x);
  const p1 = dlink(x);
  const p2 = d2link ? d2link(x) : diffInUnit(dlink, x);
  if (!(wx > 0) || !Number.isFinite(dwx) || !Number.isFinite(p1) || p1 === 0 || !Number.isFinite(p2)) return null;
  return { x, value: dwx / wx - p2 / p1, lower: -1 / x, upper: 1 / (1 - x) };
}

/** Signed violation of eq. (17) at x: positive when the lower bound fails by more than the tolerance (side "lower") or the upper. */
function violation(p: Eq17Point): { side: "lower" | "upper" | null; amount: number } {
  const lo = p.lower - EQ17_REL_TOL * Math.abs(p.lower);
  const hi = p.upper + EQ17_REL_TOL * Math.abs(p.upper);
  if (p.value < lo) return { side: "lower", amount: lo - p.value };
  if (p.value > hi) return { side: "upper", amount: p.value - hi };
  return { side: null, amount: 0 };
}

/**
 * Checks RW10 eq. (17) on a grid dense near the endpoints; on failure refines the ends of the failing
 * interval by bisection on the violated inequality and reports them as evidence.
 */
export function checkEq17(fns: LossFunctions, d2link: RealFn | null = null): ConvexityResult {
  const w = fns.weight;
  const dlink = fns.dlink;
  if (!w || !fns.link || !dlink) return { convex: null, findings: [], method: "none" };
  const xs = probabilityGrid(200, 4).filter((x) => x >= EQ17_MARGIN && x <= 1 - EQ17_MARGIN);
  const pts: (Eq17Point | null)[] = xs.map((x) => eq17At(w, dlink, d2link, x));
  let first = -1;
  let last = -1;
  let side: "lower" | "upper" | null = null;
  let worst: Eq17Point | null = null;
  let worstAmount = 0;
  for (let i = 0; i < pts.length; i++) {
    const p = pts[i];
    if (!p) continue;
    const v = violation(p);
    if (v.side && (side === null || v.side === side)) {
      // The failing set is summarised by its first and last grid points on the same side of eq. (17).
      if (first < 0) first = i;
      last = i;
      side = v.side;
      if (v.amount / Math.max(1, Math.abs(v.side === "lower" ? p.lower : p.upper)) > worstAmount) {
        worstAmount = v.amount / Math.max(1, Math.abs(v.side === "lower" ? p.lower : p.upper));
        worst = p;
      }
    }
  }
  if (first < 0 || !worst || !side) return { convex: true, findings: [], method: "rw10-eq17" };
  // Refine the failing interval's ends: the root of (value − bound) between a passing and a failing grid point.
  const gap = (x: number) => {
    const p = eq17At(w, dlink, d2link, x);
    if (!p) return NaN;
    return side === "lower" ? p.value - p.lower : p.upper - p.value;
  };
  // The bound may hold with equality at the grid point next to the failing run, so the bracket reaches a few points further.
  const refine = (inside: number, outsides: (number | undefined)[]) => {
    for (const outside of outsides) {
      if (outside === undefined) continue;
      const r = bisect(gap, Math.min(inside, outside), Math.max(inside, outside), 1e-14, 100);
      if (r !== null) return r;
    }
    return inside;
  };
  const a = first > 0 ? refine(xs[first]!, [xs[first - 1], xs[first - 3]]) : 0;
  const b = last < xs.length - 1 ? refine(xs[last]!, [xs[last + 1], xs[last + 3]]) : 1;
  const bound = side === "lower" ? `−1/x = ${fmt(worst.lower)}` : `1/(1−x) = ${fmt(worst.upper)}`;
  const rel = side === "lower" ? "<" : ">";
  const finding: Finding = {
    code: "not-convex-in-score",
    clause: "link",
    message: `Not convex in the score on x ∈ (${fmt(a)}, ${fmt(b)}): at x = ${fmt(worst.x)}, w'/w − ψ''/ψ' = ${fmt(worst.value)} ${rel} ${bound} (Reid & Williamson 2010, Thm 24, eq. (17)).`,
    data: { x: worst.x, value: worst.value, lowerBound: worst.lower, upperBound: worst.upper, side, interval: [a, b] },
  };
  return { convex: false, findings: [finding], method: "rw10-eq17" };
}

/** Convexity of v ↦ l_y(ψ⁻¹(v)) by second differences over the score range of ψ on [1e-6, 1−1e-6]. */
export function checkScoreSecondDifferences(fns: LossFunctions): ConvexityResult {
  const link = fns.link;
  const inv = fns.inverseLink;
  if (!link || !inv) return { convex: null, findings: [], method: "none" };
  const a = link(1e-6);
  const b = link(1 - 1e-6);
  if (!Number.isFinite(a) || !Number.isFinite(b) || a === b) return { convex: null, findings: [], method: "none" };
  const lo = Math.min(a, b);
  const hi = Math.max(a, b);
  for (const [y, part] of [[1, fns.l1], [0, fns.l0]] as const) {
    const lam = (v: number) => part(safeCall(inv, v));
    const s = scanConvexity(lam, lo, hi, 600);
    if (!s.convex && s.where !== null) {
      const x = safeCall(inv, s.where);
      return {
        convex: false,
        method: "second-differences",
        findings: [
          {
            code: "not-convex-in-score",
            clause: "link",
            message: `Not convex in the score: the partial loss for y = ${y} has a negative second difference at v = ${fmt(s.where)} (q = ${fmt(x)}).`,
            data: { v: s.where, q: x, y, secondDifference: s.secondDifference },
          },
        ],
      };
    }
  }
  return { convex: true, findings: [], method: "second-differences" };
}

/** Convexity of a margin loss in the score: convexity of φ on the scanned score range. */
export function checkMarginConvexity(phi: RealFn): ConvexityResult {
  const s = scanConvexity(phi);
  if (s.convex) return { convex: true, findings: [], method: "margin" };
  return {
    convex: false,
    method: "margin",
    findings: [
      {
        code: "not-convex-in-score",
        clause: "margin",
        message: `Not convex in the score: φ has a negative second difference at v = ${fmt(s.where!)} (the composite partial losses are φ(v) and φ(−v)).`,
        data: { v: s.where, secondDifference: s.secondDifference },
      },
    ],
  };
}

/**
 * Convexity in the score of a loss with a link or margin: eq. (17) for strictly proper losses with a
 * link, φ's convexity for margin losses, second differences otherwise. Never throws.
 */
export function checkCompositeConvexity(fns: LossFunctions, strictlyProper: boolean, d2link: RealFn | null = null): ConvexityResult {
  try {
    if (fns.form === "margin" && fns.margin) return checkMarginConvexity(fns.margin);
    if (!fns.link) return { convex: null, findings: [], method: "none" };
    if (strictlyProper && fns.weight) {
      const r = checkEq17(fns, d2link);
      if (r.convex !== null) return r;
    }
    return checkScoreSecondDifferences(fns);
  } catch (e) {
    const msg = e instanceof Error ? e.message : String(e);
    return { convex: null, method: "none", findings: [{ code: "internal-error", clause: "link", message: `Internal error in the convexity check: ${msg}` }] };
  }
}
