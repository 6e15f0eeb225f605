/**
 * `computeCurves(doc, params)`: the data behind the curve viewer and the report. For each loss of an
 * analysed document it instantiates the loss at its defaults (or at the viewer's slider values), derives
 * the common model, samples the curves of the engine (`sampleCurves`) and adds the conditional risk
 * L(η, ·) for a few η with its minimiser. The webview only draws what this returns.
 *
 * Pure and guarded: no I/O, never throws; a loss that cannot be drawn goes to `skipped` with a reason,
 * and every non-finite sample becomes a null gap with a note.
 */
import type { CurvatureResult } from "../analysis/curvature.js";
import { isCurvatureCurveNote, sampleCurves, series, type CurveSet, type Series } from "../analysis/curves.js";
import { boundedUnitFn } from "../analysis/numeric/limits.js";
import type { LossFunctions, Note } from "../loss-model.js";
import { fmt, verdictText } from "../display.js";
import { minimiseRisk } from "../analysis/recovery.js";
import type { CurvesParams, CurvesResult, LossCurves, LossFigures, SeriesData } from "../protocol.js";
import type { DocumentAnalysis, LossReport } from "../pipeline/stages.js";
import { createPipeline, type PinnedAnalysis, type Pipeline } from "../pipeline/pipeline.js";

/** Default η values of the conditional-risk curves: a 0.05 grid (the viewer's η slider steps through them). */
export const DEFAULT_ETAS: readonly number[] = Array.from({ length: 19 }, (_, i) => Math.round((i + 1) * 5) / 100);
/** Default samples per curve: enough for smooth curves at viewer size, small enough to post 30 losses quickly. */
export const DEFAULT_POINTS = 151;
/** Bounds on the requested samples per curve (the work per request is linear in it). */
export const MIN_POINTS = 11;
export const MAX_POINTS = 1001;
/** At most this many η values per request (each one is a minimisation and a sampled curve). */
export const MAX_ETAS = 101;
/**
 * Where an axis is clipped: samples with x inside [CLIP_INTERIOR, 1 − CLIP_INTERIOR] set the range,
 * and a curve leaving it by more than CLIP_FACTOR times that range's height is clipped (common practice:
 * a curve that diverges at an endpoint would otherwise flatten everything else to a line).
 */
export const CLIP_INTERIOR = 0.05;
export const CLIP_FACTOR = 1;
/** A minimiser farther than this from η is reported in the notes (grid and golden-section accuracy is ~1e-8). */
export const MINIMISER_NOTE_TOL = 1e-4;
/**
 * Samples the curves of the losses in `doc` (all, or those named in `params.losses`) at their defaults
 * overridden by `params.overrides`, analysed at those values by the pipeline that analysed `doc` (the
 * same settings; a fresh pipeline with the document's settings when none is given). The result is plain
 * JSON for the webview and the report.
 */
export function computeCurves(doc: DocumentAnalysis, params: CurvesParams, pipeline: Pick<Pipeline, "analyseAt"> = createPipeline(doc.settings)): CurvesResult {
  const result: CurvesResult = { uri: params.uri, version: null, losses: [], skipped: [] };
  const wanted = params.losses ? new Set(params.losses) : null;
  const etas = normaliseEtas(params.etas);
  const points = Math.round(Math.max(MIN_POINTS, Math.min(MAX_POINTS, Number.isFinite(params.points) ? params.points! : DEFAULT_POINTS)));
  for (const report of doc.losses) {
    const name = report.info.name;
    if (wanted && !wanted.has(name)) continue;
    try {
      const overrides = params.overrides?.[name] ?? {};
      const drawn = curvesForLoss(pipeline.analyseAt(doc, name, overrides), report, etas, points);
      if ("reason" in drawn) result.skipped.push({ loss: name, reason: drawn.reason });
      else result.losses.push(drawn);
    } catch (err) {
      // Every stage below is guarded already; this is the last line of defence for the request handler.
      result.skipped.push({ loss: name, reason: `internal error while sampling the curves: ${err instanceof Error ? err.message : String(err)}` });
    }
  }
  if (wanted) {
    for (const n of wanted) if (!doc.losses.some((l) => l.info.name === n)) result.skipped.push({ loss: n, reason: "no loss of that name in the document" });
  }
  return result;
}

/** The η values to sample, in (0,1), sorted and deduplicated; defaults when none are valid. */
function normaliseEtas(etas: number[] | undefined): number[] {
  const valid = (etas ?? []).filter((e) => Number.isFinite(e) && e > 0 && e < 1);
  const list = valid.length > 0 ? valid : [...DEFAULT_ETAS];
  return [...new Set(list)].sort((a, b) => a - b).slice(0, MAX_ETAS);
}

function curvesForLoss(at: PinnedAnalysis, report: LossReport, etas: number[], points: number): LossCurves | { reason: string } {
  if (at.reason || !at.fns || !report.compiled) return { reason: at.reason ?? "the loss could not be compiled" };
  const family = report.compiled.family;
  const fns = at.fns;
  const values = at.values;
  const overridden = at.overridden;
  const notes: string[] = [...at.notes, ...fns.notes.map((n) => n.text)];
  const verdict: LossCurves["verdict"] = at.analysis?.verdict ?? "unknown";
  if (verdict === "unknown") {
    const why = at.analysis?.findings.find((f) => f.code === "analysis-unknown" || f.code === "internal-error");
    notes.push(`Properness undecided at these values${why ? `: ${why.message}` : "."}`);
  }
  // Curvature and bounds come from the engine's analysis at these values, which computes them only for a
  // loss it found proper: an improper or undecided loss gets only the curves of the loss itself.
  const curvature: CurvatureResult | null = at.analysis?.curvature ?? null;
  const set: CurveSet = curvature ? sampleCurves(fns, curvature, { points }) : sampleLossCurves(fns, points);
  // Notes about curves that are not drawn for an improper loss would only confuse.
  const improperLoss = verdict === "improper";
  notes.push(...set.notes.filter((n) => !(improperLoss && isCurvatureCurveNote(n))).map((n) => n.text));

  const qs = set.partials[0]?.x ?? gridOf(points);
  const sampled = etas.map((eta) => conditionalRiskAt(fns!, eta, qs, notes));
  const conditionalRisk = sampled.map((s) => s.curve);
  const gaps = sampled.reduce((n, s) => n + s.bad, 0);
  if (gaps > 0) notes.push(`Conditional risk: ${gaps} sample${gaps === 1 ? "" : "s"} not finite over the ${etas.length} η values (shown as gaps).`);
  const minimiser: SeriesData = {
    id: "minimiser",
    label: "q*(η)",
    x: conditionalRisk.map((c) => c.eta),
    y: conditionalRisk.map((c) => (Number.isFinite(c.minimiser) ? c.minimiser : null)),
  };
  const far = conditionalRisk.filter((c) => Math.abs(c.minimiser - c.eta) > MINIMISER_NOTE_TOL);
  if (far.length > 0) {
    const worst = far.reduce((a, b) => (Math.abs(b.minimiser - b.eta) > Math.abs(a.minimiser - a.eta) ? b : a));
    notes.push(`The conditional risk is not minimised at q = η for ${far.length} of ${conditionalRisk.length} sampled η (largest gap at η = ${fmt(worst.eta)}: q* = ${fmt(worst.minimiser)}).`);
  }

  // The weight, modulus and bounds describe the regret of a proper loss; for an improper one they
  // would suggest guarantees the loss does not have, so they are left empty.
  const improper = improperLoss;
  if (improper) {
    notes.push("Weight, modulus and bound curves are not drawn: the loss is improper, so its regret is not controlled by the curvature of its Bayes risk.");
  }
  const partials = set.partials.map(toSeriesData);
  const bayes = set.bayes.x.length > 0 ? toSeriesData(set.bayes) : null;
  const weight = !improper && set.weight ? toSeriesData(set.weight) : null;
  const modulus = improper ? [] : set.modulus.map(toSeriesData);
  const bounds = improper ? [] : set.bounds.map(toSeriesData);
  const link = set.link ? toSeriesData(set.link) : null;

  const ranges: Record<string, [number, number]> = {};
  const clip = (chart: string, label: string, series: SeriesData[]) => {
    const r = suggestRange(series);
    if (!r) return;
    ranges[chart] = r.range;
    if (r.clipped) notes.push(`The ${label} axis is clipped to [${fmt(r.range[0], 3)}, ${fmt(r.range[1], 3)}]: the curve grows without bound towards an endpoint.`);
  };
  clip("partials", "partial-loss", partials);
  clip("conditional", "conditional-risk", conditionalRisk.map((c) => c.series));
  if (bayes) clip("bayes", "Bayes-risk", [bayes]);
  if (weight) clip("weight", "weight", [weight]);
  if (link) clip("link", "link", [link]);

  const figures: LossFigures = {
    lambda: curvature ? curvature.lambda : null,
    modulus: curvature ? curvature.modulus : null,
    exponents: curvature ? { viaModulus: curvature.exponents.viaModulus, direct: curvature.exponents.direct } : { viaModulus: null, direct: null },
    inverseTable: curvature ? curvature.inverseTable.map((r) => ({ ...r })) : [],
    exponentNote: curvature ? curvature.exponents.explanation : null,
    ...(curvature ? { units: { decisionRegret: curvature.units.decisionRegret, surrogateRegret: curvature.units.surrogateRegret } } : {}),
  };
  const summary = at.analysis?.summary ?? `${verdictText(verdict)} · no regret bound`;

  return {
    loss: report.info.name,
    verdict,
    summary,
    params: family.params.map((p) => ({ name: p.name, value: values[p.name]!, lo: p.lo ?? null, hi: p.hi ?? null })),
    threshold: fns.threshold,
    partials,
    bayes,
    weight,
    conditionalRisk,
    modulus,
    bounds,
    link,
    notes: dedupe(notes),
    figures,
    minimiser,
    ranges,
  };
}

/** The curves of the loss itself (partials, H, link) without the curvature analysis, for improper losses. */
function sampleLossCurves(fns: LossFunctions, points: number): CurveSet {
  const notes: Note[] = [];
  const qs = gridOf(points);
  return {
    partials: [series("l1", "l1(q)", qs, fns.l1, notes), series("l0", "l0(q)", qs, fns.l0, notes)],
    // Endpoint values of H by their limits, as the engine's sampler does.
    bayes: series("bayes", "H(q)", qs, boundedUnitFn(fns.bayes), notes),
    weight: null,
    modulus: [],
    bounds: [],
    link: fns.link ? series("link", "ψ(q)", qs, fns.link, notes) : null,
    notes,
  };
}

function gridOf(points: number): number[] {
  return Array.from({ length: points }, (_, i) => i / (points - 1));
}

/** L(η, q) on the q grid, with its numeric minimiser; non-finite samples become gaps with a note. */
function conditionalRiskAt(fns: LossFunctions, eta: number, qs: number[], notes: string[]): { curve: LossCurves["conditionalRisk"][number]; bad: number } {
  let bad = 0;
  const y = qs.map((q) => {
    let v: number;
    try {
      v = fns.risk(eta, q);
    } catch {
      v = NaN;
    }
    if (Number.isFinite(v)) return v;
    bad++;
    return null;
  });
  let minimiser = NaN;
  let minimumRisk: number | null = null;
  try {
    const m = minimiseRisk(fns, eta);
    minimiser = m.q;
    minimumRisk = Number.isFinite(m.risk) ? m.risk : null;
  } catch {
    notes.push(`The minimiser of L(${fmt(eta)}, ·) could not be computed.`);
  }
  return { curve: { eta, series: { id: `risk-${eta}`, label: `L(${fmt(eta, 3)}, q)`, x: qs, y }, minimiser, minimumRisk }, bad };
}

/** Copies a series, turning any remaining non-finite sample into null and dropping non-finite abscissae. */
function toSeriesData(s: Series): SeriesData {
  const x: number[] = [];
  const y: (number | null)[] = [];
  for (let i = 0; i < s.x.length; i++) {
    const xi = s.x[i]!;
    if (!Number.isFinite(xi)) continue;
    const yi = s.y[i];
    x.push(xi);
    y.push(typeof yi === "number" && Number.isFinite(yi) ? yi : null);
  }
  return { id: s.id, label: s.label, x, y };
}

/**
 * A y range for a chart of curves on q ∈ [0,1]: all finite samples, unless samples near the endpoints
 * leave the interior range by more than CLIP_FACTOR times its height; then the interior range plus that
 * margin, flagged as clipped. Null when there is nothing finite to draw.
 */
export function suggestRange(series: SeriesData[]): { range: [number, number]; clipped: boolean } | null {
  let lo = Infinity;
  let hi = -Infinity;
  let ilo = Infinity;
  let ihi = -Infinity;
  for (const s of series) {
    for (let i = 0; i < s.x.length; i++) {
      const v = s.y[i];
      if (typeof v !== "number") continue;
      lo = Math.min(lo, v);
      hi = Math.max(hi, v);
      const x = s.x[i]!;
      if (x >= CLIP_INTERIOR && x <= 1 - CLIP_INTERIOR) {
        ilo = Math.min(ilo, v);
        ihi = Math.max(ihi, v);
      }
    }
  }
  if (!(lo <= hi)) return null;
  if (!(ilo <= ihi)) return { range: [lo, hi], clipped: false };
  const height = ihi - ilo > 0 ? ihi - ilo : Math.max(1e-12, Math.abs(ihi));
  const top = ihi + CLIP_FACTOR * height;
  const bottom = ilo - CLIP_FACTOR * height;
  const clipTop = hi > top;
  const clipBottom = lo < bottom;
  return { range: [clipBottom ? bottom : lo, clipTop ? top : hi], clipped: clipTop || clipBottom };
}

function dedupe(xs: string[]): string[] {
  return [...new Set(xs)];
}
