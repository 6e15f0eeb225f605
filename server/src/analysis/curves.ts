/**
 * Sampled curves for the viewer and reports: partial losses, Bayes risk, weight, δ and δ**, the bound on
 * decision regret as a function of surrogate regret by each route, and the link. Plain arrays only;
 * NaN and ±Infinity become null, with a note saying where.
 */
import type { LossFunctions, Note, NoteKind, RealFn } from "../loss-model.js";
import { fmt } from "../display.js";
import { boundedUnitFn } from "./numeric/limits.js";
import { buildModulusModel, sampleUnitGrid } from "./modulus.js";
import { buildDirectBound, buildPsiTransform } from "./bounds.js";
import { cachedCurvatureModels, numericWeight, savageSlope, type CurvatureModels, type CurvatureResult } from "./curvature.js";

export interface Series {
  id: string;
  label: string;
  x: number[];
  y: (number | null)[];
}

export interface CurveSet {
  partials: Series[];
  bayes: Series;
  weight: Series | null;
  /** δ and δ** on ε ∈ [0,1]. */
  modulus: Series[];
  /** Decision regret bound (cost-c units) against surrogate regret, one series per route. */
  bounds: Series[];
  link: Series | null;
  notes: Note[];
}

/**
 * The kinds of notes about the weight, modulus and bound curves. These curves describe the regret of a
 * proper loss; where they are not drawn (an improper loss), neither are these notes.
 */
export const CURVATURE_CURVE_NOTE_KINDS: ReadonlySet<NoteKind> = new Set<NoteKind>([
  "weight-samples",
  "point-mass",
  "modulus-samples",
  "modulus-unavailable",
  "modulus-vacuous",
  "bound-samples",
  "bound-axes",
]);

/** True for a note about the weight, modulus or bound curves (see CURVATURE_CURVE_NOTE_KINDS). */
export function isCurvatureCurveNote(note: Note): boolean {
  return CURVATURE_CURVE_NOTE_KINDS.has(note.kind);
}

/** Default number of samples per curve. */
const DEFAULT_POINTS = 201;
/** Upper limit on samples per curve (bounds the work per request). */
const MAX_POINTS = 2001;

function grid(a: number, b: number, points: number): number[] {
  const out: number[] = [];
  for (let i = 0; i < points; i++) out.push(a + ((b - a) * i) / (points - 1));
  return out;
}

/** Samples g on xs; non-finite values become null and are counted in a note of the given kind. */
export function series(id: string, label: string, xs: number[], g: RealFn, notes: Note[], kind: NoteKind = "loss-samples"): Series {
  let bad = 0;
  let firstBad = NaN;
  const y = xs.map((x) => {
    let v: number;
    try {
      v = g(x);
    } catch {
      v = NaN;
    }
    if (Number.isFinite(v)) return v;
    if (bad === 0) firstBad = x;
    bad++;
    return null;
  });
  if (bad > 0) notes.push({ kind, text: `${label}: ${bad} sample${bad === 1 ? "" : "s"} not finite (shown as gaps), first at ${fmt(firstBad)}.` });
  return { id, label, x: xs, y };
}

function finiteOrNull(v: number): number | null {
  return Number.isFinite(v) ? v : null;
}

/**
 * sup{x : g(x) ≤ r} for a non-decreasing g known at samples (xs, ys), by linear interpolation between the
 * samples; `floor` is returned for r ≤ 0 (the start of a vacuous stretch) and the last x above the range.
 */
function inverseFromSamples(xs: number[], ys: (number | null)[], floor: number): RealFn {
  return (r: number) => {
    if (!(r > 0)) return floor;
    for (let i = 1; i < xs.length; i++) {
      const y0 = ys[i - 1];
      const y1 = ys[i];
      if (y0 === null || y0 === undefined || y1 === null || y1 === undefined) continue;
      if (y1 >= r && y1 > y0) return xs[i - 1]! + ((xs[i]! - xs[i - 1]!) * (Math.max(r, y0) - y0)) / (y1 - y0);
    }
    return xs[xs.length - 1]!;
  };
}

function rebuildModels(fns: LossFunctions, threshold: number, kinkAtC: boolean): CurvatureModels {
  const f = boundedUnitFn((q) => -fns.bayes(q));
  const g = sampleUnitGrid(f);
  const weightIsNumeric = fns.weight === null;
  return {
    f,
    grid: g,
    weight: fns.weight ?? numericWeight(f),
    weightIsNumeric,
    modulus: g.nonFiniteAt === null ? buildModulusModel(f, g) : null,
    direct: g.nonFiniteAt === null ? buildDirectBound(f, threshold, savageSlope(fns, threshold), kinkAtC) : null,
    psi: fns.margin && g.nonFiniteAt === null ? buildPsiTransform(fns.margin, boundedUnitFn(fns.bayes)) : null,
  };
}

/** w on the q grid, blanked next to point masses (which are not functions; each gets a note instead). */
function weightSeries(models: CurvatureModels, curvature: CurvatureResult, qs: number[], notes: Note[]): Series {
  const masses = curvature.weightFeatures.pointMasses;
  const near = 2 / (qs.length - 1);
  const weightFn: RealFn = (q) => (masses.some((p) => Math.abs(q - p.q) < near) ? NaN : models.weight(q));
  const weight = series("weight", models.weightIsNumeric ? "w(q) (from second differences of H)" : "w(q)", qs, weightFn, notes, "weight-samples");
  for (const p of masses) notes.push({ kind: "point-mass", text: `w has a point mass ${fmt(p.mass)} at q = ${fmt(p.q)} (a kink of H), not drawn as a function.` });
  return weight;
}

/** δ and δ** on the ε grid `es` (none, with a note, when the modulus model is missing). */
function modulusSeries(models: CurvatureModels, es: number[], notes: Note[]): Series[] {
  const m = models.modulus;
  if (!m) {
    notes.push({ kind: "modulus-unavailable", text: "δ and δ** not available (see the curvature findings)." });
    return [];
  }
  // exactValue memoises δ, so the envelope below reuses these evaluations.
  return [
    series("delta", "δ(ε)", es, (e) => m.envelope.exactValue(e), notes, "modulus-samples"),
    series("delta-envelope", "δ**(ε)", es, (e) => m.envelope.value(e), notes, "modulus-samples"),
  ];
}

/** Surrogate regrets up to what the direct route needs for a cost-c regret of ¼ (or the modulus route's when that is missing). */
function regretRange(models: CurvatureModels): number {
  let rMax = NaN;
  if (models.direct) rMax = models.direct.envelope.value(Math.min(0.25, models.direct.alphaMax));
  if (!(rMax > 0) && models.modulus) rMax = 2 * models.modulus.envelope.value(Math.min(1, (models.modulus.vacuousBelow ?? 0) + 0.25));
  if (!(rMax > 0) || !Number.isFinite(rMax)) rMax = 1;
  return rMax;
}

/** The decision-regret bound against surrogate regret by each route, with the axes note. */
function boundSeries(models: CurvatureModels, c: number, es: number[], envelopeSamples: (number | null)[] | null, points: number, notes: Note[]): Series[] {
  const bounds: Series[] = [];
  const rs = grid(0, regretRange(models), points);
  if (models.modulus && envelopeSamples) {
    const m = models.modulus;
    // The curves invert exact envelope samples piecewise linearly (an exact inverse per point costs a
    // root search each; the inverse table and hovers use the exact inverses).
    const inv = inverseFromSamples(es, envelopeSamples, m.vacuousBelow ?? 0);
    bounds.push(series("bound-modulus", "modulus route (δ**)⁻¹(R/2) (Bao 2023, Cor. 7)", rs, (r) => inv(r / 2), notes, "bound-samples"));
    if (m.vacuousBelow !== null) notes.push({ kind: "modulus-vacuous", text: `The modulus-route bound never goes below ε = ${fmt(m.vacuousBelow)} (δ** = 0 there: vacuous).` });
  }
  if (models.direct) {
    const d = models.direct;
    const as = grid(0, d.alphaMax, points);
    const inv = inverseFromSamples(as, as.map((a) => finiteOrNull(d.envelope.value(a))), 0);
    bounds.push(series("bound-direct", `direct (ψ_RW**)⁻¹(R) at c = ${fmt(c)} (RW09 Thm 3)`, rs, inv, notes, "bound-samples"));
  }
  if (models.psi && Math.abs(c - 0.5) < 1e-12) {
    const p = models.psi;
    const ts = grid(0, 1, points);
    const inv = inverseFromSamples(ts, ts.map((t) => finiteOrNull(p.psi(t))), 0);
    // ψ⁻¹ is in 0-1 regret units (θ = 2α); halve it to share the cost-½ axis of the other routes.
    bounds.push(series("bound-psi", "ψ-transform ψ⁻¹(R)/2 (BJM 2006)", rs, (r) => inv(r) / 2, notes, "bound-samples"));
  }
  notes.push({ kind: "bound-axes", text: `Bound curves: x = surrogate regret (loss units), y = cost-${fmt(c)} regret bound (at c = ½, half the usual 0-1 regret).` });
  return bounds;
}

/**
 * Samples the curves of a loss for plotting. Reuses the models of the `analyseCurvature` call that
 * produced `curvature` when it was made on the same LossFunctions object. Never throws.
 */
export function sampleCurves(fns: LossFunctions, curvature: CurvatureResult, options?: { points?: number }): CurveSet {
  const notes: Note[] = [];
  const points = Math.max(3, Math.min(MAX_POINTS, Math.round(options?.points ?? DEFAULT_POINTS)));
  const qs = grid(0, 1, points);
  const empty: Series = { id: "bayes", label: "H(q)", x: [], y: [] };
  try {
    const c = curvature.threshold;
    const kinkAtC = curvature.weightFeatures.pointMasses.some((p) => Math.abs(p.q - c) < 1e-6);
    const models = cachedCurvatureModels(fns) ?? rebuildModels(fns, c, kinkAtC);
    const partials = [series("l1", "l1(q)", qs, fns.l1, notes), series("l0", "l0(q)", qs, fns.l0, notes)];
    const bayes = series("bayes", "H(q)", qs, boundedUnitFn(fns.bayes), notes);
    const weight = weightSeries(models, curvature, qs, notes);
    const es = grid(0, 1, points);
    const modulus = modulusSeries(models, es, notes);
    const bounds = boundSeries(models, c, es, modulus[1]?.y ?? null, points, notes);
    const link = fns.link ? series("link", "ψ(q)", qs, fns.link, notes) : null;
    return { partials, bayes, weight, modulus, bounds, link, notes };
  } catch (err) {
    notes.push({ kind: "curves-failed", text: `Curves not available: internal error (${err instanceof Error ? err.message : String(err)}).` });
    return { partials: [], bayes: empty, weight: null, modulus: [], bounds: [], link: null, notes };
  }
}
