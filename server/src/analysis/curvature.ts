/**
 * Curvature analysis of a proper loss: the weight function w = −H'' (with its point masses and zero
 * intervals, `weight-features.ts`), the strong-properness constant λ = inf w (`lambda.ts`), the modulus of
 * convexity δ** of f = −H near 0 (`modulus.ts`), and the surrogate-regret bounds by three routes
 * (`bounds.ts`) with their exponents (`exponents.ts`) and an inverse table.
 *
 * Sources:
 * - Agarwal 2014, "Surrogate Regret Bounds for Bipartite Ranking via Strongly Proper Losses", JMLR 15,
 *   Def. 7 / Thm 10: λ-strongly proper ⇔ R(η,q) ≥ (λ/2)(η−q)² ⇔ w ≥ λ.
 * - Bao 2023, "Proper Losses, Moduli of Convexity, and Surrogate Regret Bounds", COLT, Def. 4, Thm 6,
 *   Cor. 7, Def. 9, Thm 10 (the modulus route).
 * - Reid & Williamson 2009, "Surrogate Regret Bounds for Proper Losses", ICML, Thm 3 (= RW11 JMLR 12
 *   Thm 25, with min in place of the printed max) (the direct route).
 * - Bartlett, Jordan & McAuliffe 2006, "Convexity, Classification, and Risk Bounds", JASA 101 (ψ-transform).
 */
import type { Finding, LossFunctions, Note, RealFn } from "../loss-model.js";
import { fmt, formatExponent, formatPowerLaw, MESSAGE_STYLE } from "../display.js";
import { boundedUnitFn } from "./numeric/limits.js";
import { buildModulusModel, sampleUnitGrid, type ModulusModel, type SimonenkoRange, type UnitGrid } from "./modulus.js";
import { buildDirectBound, buildPsiTransform, modulusRouteBound, type DirectBoundModel, type PsiTransformModel } from "./bounds.js";
import { numericWeight, scanWeightFeatures, type WeightFeatures } from "./weight-features.js";
import { crossCheckedLambda, estimateLambda, type LambdaEstimate } from "./lambda.js";
import { EXPONENT_SAME_TOL, explainExponents } from "./exponents.js";
import { deadlineAfter, type Clock } from "./budget.js";

/** Re-exported so callers of the curvature analysis find its parts in one module. */
export { detectWeightFeatures, numericWeight, type PointMass, type WeightFeatures } from "./weight-features.js";

/** One row of the inverse table: the surrogate regret that guarantees a decision regret. */
export interface InverseTableRow {
  /** Target cost-c regret (at c = ½: half the usual 0-1 regret). */
  decisionRegret: number;
  /** 2·δ**(target) (Bao 2023, Cor. 7); null when δ** = 0 there (vacuous). */
  viaModulus: number | null;
  /** ψ_RW**(target) at the loss's threshold (RW09 Thm 3); null when no regret guarantees it. */
  direct: number | null;
  /** ψ_BJM(2·target) for margin losses at c = ½ (θ = 2α, BJM06); null otherwise. */
  psiTransform: number | null;
}

export interface CurvatureResult {
  /** λ = inf over (0,1) of w (Agarwal 2014 convention); null when undetermined. */
  lambda: number | null;
  /** Where the infimum is attained, or approached (an endpoint limit counts as approached at 0 or 1). */
  lambdaAt: { q: number; approached: boolean } | null;
  weightFeatures: WeightFeatures;
  /** δ**(ε) ≈ coefficient·ε^power near 0. */
  modulus: { coefficient: number; power: number } | null;
  /** δ** = 0 on (0, ε0]: the modulus bound is vacuous below ε0. */
  vacuousBelow: number | null;
  /** Bound exponents: decision regret = O(R^exponent). */
  exponents: { viaModulus: number | null; direct: number | null; explanation: string | null };
  threshold: number;
  inverseTable: InverseTableRow[];
  findings: Finding[];
  /** One line for a code lens, e.g. "λ = 4 · δ** ≈ 0.5ε² · exponents ½ / ½". */
  summary: string;
  /** Units of the numbers above. */
  units: { decisionRegret: string; surrogateRegret: string; psiTransform: string };
  /** Bao 2023 Thm 10 constants at ε* = ½ (null when vacuous). */
  simonenko: SimonenkoRange | null;
  /** Statements for hovers and reports: strong properness, bound comparisons, numerical notes. */
  notes: Note[];
}

export interface CurvatureOptions {
  /**
   * Wall-clock budget in milliseconds (default 2000), a last resort: every stage is bounded in steps, and
   * stages not reached become analysis-unknown findings with reason "time-budget".
   */
  deadlineMs?: number;
  /** The clock the budget is read from (default Date.now); tests inject one. */
  clock?: Clock;
  /**
   * Target absolute accuracy of δ (default 1e-8). It sets the midpoint tolerance of every exact δ
   * evaluation; the defaults already give ≈1e-13 on the standard losses, so only stricter targets change it.
   */
  accuracy?: number;
}


/** Decision-regret targets of the inverse table (cost-c units). */
export const INVERSE_TABLE_TARGETS = [0.1, 0.05, 0.01, 0.001];

/** The models built by one analysis, reused by `sampleCurves`. */
export interface CurvatureModels {
  f: RealFn;
  grid: UnitGrid;
  weight: RealFn;
  weightIsNumeric: boolean;
  modulus: ModulusModel | null;
  direct: DirectBoundModel | null;
  psi: PsiTransformModel | null;
}

const modelCache = new WeakMap<LossFunctions, CurvatureModels>();

/** The models of the last `analyseCurvature` call on this LossFunctions object, if any. */
export function cachedCurvatureModels(fns: LossFunctions): CurvatureModels | undefined {
  return modelCache.get(fns);
}

/** f'(c) = l0(c) − l1(c) for f = −H (Savage: H' = l1 − l0), or undefined when not finite. */
export function savageSlope(fns: LossFunctions, c: number): number | undefined {
  try {
    const s = fns.l0(c) - fns.l1(c);
    return Number.isFinite(s) ? s : undefined;
  } catch {
    return undefined;
  }
}

function safeFn(g: RealFn): RealFn {
  return (x: number) => {
    try {
      return g(x);
    } catch {
      return NaN;
    }
  };
}

function internalError(where: string, err: unknown): Finding {
  return {
    code: "internal-error",
    clause: "loss",
    message: `Internal error in the curvature analysis (${where}): ${err instanceof Error ? err.message : String(err)}`,
  };
}

function emptyResult(threshold: number, findings: Finding[], reason: string): CurvatureResult {
  return {
    lambda: null,
    lambdaAt: null,
    weightFeatures: { pointMasses: [], zeroIntervals: [] },
    modulus: null,
    vacuousBelow: null,
    exponents: { viaModulus: null, direct: null, explanation: null },
    threshold,
    inverseTable: INVERSE_TABLE_TARGETS.map((t) => ({ decisionRegret: t, viaModulus: null, direct: null, psiTransform: null })),
    findings,
    summary: `curvature not analysed: ${reason}`,
    units: unitsFor(threshold),
    simonenko: null,
    notes: [],
  };
}

function unitsFor(c: number): CurvatureResult["units"] {
  return {
    decisionRegret: `cost-weighted regret at threshold c = ${fmt(c)}: |η − c| when η and q are on opposite sides of c (at c = ½ this is half the usual 0-1 regret |2η − 1|)`,
    surrogateRegret: "regret of the loss itself, in the units of its Bayes risk H",
    psiTransform: "BJM's θ is the usual {0,1}-valued 0-1 regret |2η − 1| = 2·(cost-½ regret)",
  };
}
/** A stage check against the time budget: true (with an "analysis-unknown" finding) when the budget is spent. */
type BudgetCheck = (stage: string) => boolean;

function budgetCheck(options: CurvatureOptions | undefined, findings: Finding[]): BudgetCheck {
  const budget = options?.deadlineMs ?? 2000;
  const deadline = deadlineAfter(budget, options?.clock ?? Date.now);
  return (stage: string): boolean => {
    if (!deadline.expired()) return false;
    findings.push({ code: "analysis-unknown", clause: "loss", reason: "time-budget", message: `The curvature analysis ran out of its ${fmt(budget)} ms budget before ${stage}.` });
    return true;
  };
}

/** The loss's threshold c, or ½ (with a finding) when it is outside (0, 1). */
function checkedThreshold(fns: LossFunctions, findings: Finding[]): number {
  const threshold = fns.threshold;
  if (threshold > 0 && threshold < 1) return threshold;
  findings.push({ code: "analysis-unknown", clause: "threshold", reason: "threshold-outside", message: `The threshold ${fmt(threshold)} is outside (0, 1); the direct bound uses c = ½.` });
  return 0.5;
}

/** The weight: the derived model's closed form (guarded), else second differences of H (with a note). */
function weightOf(fns: LossFunctions, f: RealFn, notes: Note[]): { weight: RealFn; weightIsNumeric: boolean } {
  const weightIsNumeric = fns.weight === null;
  const weight = fns.weight ? safeFn(fns.weight) : numericWeight(f);
  if (weightIsNumeric) notes.push({ kind: "numeric-weight", text: "w computed by second differences of H (no closed-form weight available)." });
  return { weight, weightIsNumeric };
}

function weightFeaturesOf(grid: UnitGrid, findings: Finding[]): WeightFeatures {
  try {
    return scanWeightFeatures(grid);
  } catch (err) {
    findings.push(internalError("weight features", err));
    return { pointMasses: [], zeroIntervals: [] };
  }
}

/** λ and where it sits, with the estimate behind it (null when it could not be computed or w is negative). */
interface LambdaStep {
  estimate: LambdaEstimate | null;
  lambda: number | null;
  lambdaAt: { q: number; approached: boolean } | null;
}

/** λ from the weight, cross-checked near the endpoints for a supplied weight; findings for non-finite or negative w. */
function lambdaStep(weight: RealFn, weightIsNumeric: boolean, f: RealFn, features: WeightFeatures, findings: Finding[], notes: Note[]): LambdaStep {
  let lam: LambdaEstimate | null = null;
  try {
    lam = estimateLambda(weight, weightIsNumeric, features);
  } catch (err) {
    findings.push(internalError("λ", err));
  }
  if (lam && lam.lambda !== null && !weightIsNumeric && lam.extremeAt !== null) {
    try {
      const own = crossCheckedLambda(lam, f, features);
      if (own) {
        notes.push({
          kind: "lambda-cross-check",
          text: `The weight function gives w = ${fmt(lam.lambda)} near q = ${fmt(lam.extremeAt ?? NaN)}, but second differences of H give λ = ${fmt(own.lambda!)}; the weight looks inaccurate that close to the endpoint, so λ is taken from second differences of H.`,
        });
        lam = own;
      }
    } catch (err) {
      findings.push(internalError("λ (second differences)", err));
    }
  }
  let lambda: number | null = lam?.lambda ?? null;
  let lambdaAt = lam?.at ?? null;
  if (lam && lam.nonFiniteAt !== null) {
    findings.push({ code: "analysis-unknown", clause: "weight", reason: "non-finite", message: `The weight function is not finite at q = ${fmt(lam.nonFiniteAt)}; λ uses the finite samples only.`, data: { q: lam.nonFiniteAt } });
  }
  if (lam && lam.negativeAt !== null && lambda !== null) {
    findings.push({
      code: "analysis-unknown",
      clause: "weight",
      reason: "negative-weight",
      message: `w is negative (${fmt(lambda)}) near q = ${fmt(lam.negativeAt)}: H is not concave there, so λ and the bounds assume a properness the loss lacks.`,
      data: { q: lam.negativeAt, w: lambda },
    });
    lambda = null;
    lambdaAt = null;
  }
  return { estimate: lam, lambda, lambdaAt };
}

/** The three bound models (each null when it failed, was out of budget, or does not apply). */
interface BoundModels {
  modulus: ModulusModel | null;
  direct: DirectBoundModel | null;
  psi: PsiTransformModel | null;
}

/** Builds the modulus model, the direct bound at c and (for margin losses) the ψ-transform, each within the budget. */
function boundModels(
  fns: LossFunctions,
  f: RealFn,
  grid: UnitGrid,
  threshold: number,
  features: WeightFeatures,
  options: CurvatureOptions | undefined,
  overBudget: BudgetCheck,
  findings: Finding[],
): BoundModels {
  let modulus: ModulusModel | null = null;
  if (!overBudget("the modulus of convexity")) {
    try {
      modulus = buildModulusModel(f, grid, { accuracy: options?.accuracy });
    } catch (err) {
      findings.push(internalError("modulus of convexity", err));
    }
  }
  let direct: DirectBoundModel | null = null;
  if (!overBudget("the direct bound")) {
    try {
      const kinkAtC = features.pointMasses.some((p) => Math.abs(p.q - threshold) < 1e-6);
      direct = buildDirectBound(f, threshold, savageSlope(fns, threshold), kinkAtC);
    } catch (err) {
      findings.push(internalError("direct bound", err));
    }
  }
  let psi: PsiTransformModel | null = null;
  if (fns.margin && !overBudget("the ψ-transform")) {
    try {
      psi = buildPsiTransform(safeFn(fns.margin), boundedUnitFn(fns.bayes));
      if (!psi.calibrated) {
        findings.push({ code: "analysis-unknown", clause: "margin", reason: "not-calibrated", message: "ψ̃(θ) = 0 for some θ > 0: the margin loss does not look classification-calibrated, so the ψ-transform bound is vacuous there." });
      }
    } catch (err) {
      findings.push(internalError("ψ-transform", err));
    }
  }
  return { modulus, direct, psi };
}

/** Where the modulus route is vacuous, and where the powers of δ** or of the direct bound near 0 are only estimates. */
function modelFindings(models: BoundModels, features: WeightFeatures): Finding[] {
  const out: Finding[] = [];
  const vacuousBelow = models.modulus?.vacuousBelow ?? null;
  const near = models.modulus?.nearZero ?? null;
  if (vacuousBelow !== null) {
    out.push({
      code: "vacuous-bound",
      clause: "loss",
      message: `δ** = 0 on (0, ${fmt(vacuousBelow)}]: the modulus-route bound is vacuous below ε = ${fmt(vacuousBelow)} (H is affine on an interval that long).`,
      data: { vacuousBelow, zeroIntervals: features.zeroIntervals },
    });
  }
  if (near && !near.stable) {
    out.push({
      code: "analysis-unknown",
      clause: "loss",
      reason: "unstable-estimate",
      message: `The power of δ** near 0 is not stable (local log-log slopes ${near.slopes.slice(-3).map((s) => fmt(s, 4)).join(", ")}); the modulus exponent is an estimate.`,
      data: { slopes: near.slopes },
    });
  }
  const directLocal = models.direct?.local ?? null;
  if (models.direct && directLocal && !directLocal.stable) {
    out.push({
      code: "analysis-unknown",
      clause: "loss",
      reason: "unstable-estimate",
      message: `The power of the direct bound near 0 is not stable (local slopes ${directLocal.slopes.slice(-3).map((s) => fmt(s, 4)).join(", ")}); its exponent is an estimate.`,
      data: { slopes: directLocal.slopes },
    });
  }
  return out;
}

/** Both exponents, the sentence on why they differ, and a finding when the modulus exponent beats the tight direct one. */
function exponentsStep(
  models: BoundModels,
  threshold: number,
  lam: LambdaStep,
  features: WeightFeatures,
  weight: RealFn,
  findings: Finding[],
): CurvatureResult["exponents"] {
  const near = models.modulus?.nearZero ?? null;
  const viaModulus = near && near.power > 0 ? 1 / near.power : null;
  const directExp = models.direct?.exponent ?? null;
  const explanation = explainExponents({
    viaModulus,
    direct: directExp,
    threshold,
    vacuousBelow: models.modulus?.vacuousBelow ?? null,
    lambda: lam.lambda,
    lambdaAt: lam.lambdaAt,
    features,
    vanishing: lam.estimate?.vanishingOrder ?? null,
    weightAtC: weight(threshold),
  });
  if (viaModulus !== null && directExp !== null && viaModulus > directExp + EXPONENT_SAME_TOL) {
    findings.push({
      code: "analysis-unknown",
      clause: "loss",
      reason: "unstable-estimate",
      message: `The modulus exponent ${fmt(viaModulus, 4)} exceeds the tight direct exponent ${fmt(directExp, 4)}, which is impossible in exact arithmetic: the numerics are unreliable for this loss.`,
    });
  }
  return { viaModulus, direct: directExp, explanation };
}

/** The surrogate regret that guarantees each decision regret of INVERSE_TABLE_TARGETS, by each route. */
function inverseTableOf(models: BoundModels, threshold: number): InverseTableRow[] {
  const { modulus, direct, psi } = models;
  const vacuousBelow = modulus?.vacuousBelow ?? null;
  return INVERSE_TABLE_TARGETS.map((a) => {
    let viaM: number | null = null;
    if (modulus && !(vacuousBelow !== null && a <= vacuousBelow)) {
      const v = 2 * modulus.envelope.value(a);
      viaM = v > 0 && Number.isFinite(v) ? v : null;
    }
    let dir: number | null = null;
    if (direct && a <= direct.alphaMax) {
      const v = direct.envelope.value(a);
      dir = v > 0 && Number.isFinite(v) ? v : null;
    }
    let ps: number | null = null;
    if (psi && Math.abs(threshold - 0.5) < 1e-12 && 2 * a <= 1) {
      const v = psi.psi(2 * a);
      ps = v > 0 && Number.isFinite(v) ? v : null;
    }
    return { decisionRegret: a, viaModulus: viaM, direct: dir, psiTransform: ps };
  });
}

/** Surrogate regret at which the routes are compared in a note. */
const ROUTE_COMPARISON_REGRET = 0.01;

/** Notes on strong properness (or λ = 0), on the ψ-transform at another threshold, and comparing the routes at one regret. */
function boundNotes(lambda: number | null, lambdaAt: LambdaStep["lambdaAt"], models: BoundModels, threshold: number): Note[] {
  const { modulus, direct, psi } = models;
  const notes: Note[] = [];
  if (lambda !== null) {
    if (lambda > 0) {
      notes.push({ kind: "strong-properness", text: `λ-strongly proper with λ = ${fmt(lambda)}: R(η,q) ≥ ${fmt(lambda / 2)}·(η−q)² for all η, q (Agarwal 2014, Def. 7 / Thm 10), so |η−q| ≤ √(2R/λ).` });
    } else {
      notes.push({ kind: "lambda-zero", text: `λ = 0 (${lambdaAt?.approached ? "approached at q = " : "attained at q = "}${fmt(lambdaAt?.q ?? NaN)}): no strong-properness bound R ≥ (λ/2)(η−q)² holds with λ > 0.` });
    }
  }
  if (psi && psi.calibrated && Math.abs(threshold - 0.5) >= 1e-12) {
    notes.push({ kind: "psi-threshold", text: "The ψ-transform bounds the decision at threshold ½ only; this loss's threshold differs, so the table omits it." });
  }
  const compareAt = ROUTE_COMPARISON_REGRET;
  const parts: string[] = [];
  if (modulus) parts.push(`modulus route ≤ ${fmt(modulusRouteBound(modulus, compareAt))}`);
  if (direct) parts.push(`direct ≤ ${fmt(direct.inverse(compareAt))}`);
  if (psi && Math.abs(threshold - 0.5) < 1e-12) parts.push(`ψ-transform ≤ ${fmt(psi.inverse(compareAt) / 2)}`);
  if (parts.length > 0) {
    notes.push({ kind: "route-comparison", text: `At surrogate regret ${fmt(compareAt)} the cost-${fmt(threshold)} regret is bounded by: ${parts.join(", ")} (the direct bound is tight, RW09 Thm 3).` });
  }
  return notes;
}

function simonenkoOf(modulus: ModulusModel | null, findings: Finding[]): SimonenkoRange | null {
  try {
    return modulus ? modulus.simonenkoRange(0.5) : null;
  } catch (err) {
    findings.push(internalError("Simonenko order", err));
    return null;
  }
}

/** One line for a code lens, e.g. "λ = 4 · δ ≈ 0.5ε² · exponents ½ / ½". */
function summaryLine(lambda: number | null, lambdaAt: LambdaStep["lambdaAt"], models: BoundModels): string {
  const vacuousBelow = models.modulus?.vacuousBelow ?? null;
  const near = models.modulus?.nearZero ?? null;
  const directLocal = models.direct?.local ?? null;
  const lambdaText =
    lambda === null ? "λ unknown" : lambda === 0 ? `λ = 0${lambdaAt?.approached ? ` (approached at ${fmt(lambdaAt.q)})` : ""}` : `λ = ${fmt(lambda, 4)}`;
  const modulusText =
    vacuousBelow !== null
      ? `δ** = 0 below ε = ${fmt(vacuousBelow, 4)}`
      : near
        ? `δ ≈ ${formatPowerLaw(near.coefficient, near.power, { ...MESSAGE_STYLE, digits: 4 })}`
        : "δ unknown";
  return `${lambdaText} · ${modulusText} · exponents ${formatExponent(near?.power ?? null)} / ${formatExponent(directLocal?.power ?? null)}`;
}

/**
 * Analyses the curvature of a loss and its surrogate-regret bounds. Never throws: failures become
 * findings ("internal-error", "analysis-unknown") and the affected fields are null.
 */
export function analyseCurvature(fns: LossFunctions, options?: CurvatureOptions): CurvatureResult {
  const findings: Finding[] = [];
  let threshold = 0.5;
  try {
    const overBudget = budgetCheck(options, findings);
    threshold = checkedThreshold(fns, findings);
    const f = boundedUnitFn((q) => -fns.bayes(q));
    const grid = sampleUnitGrid(f);
    if (grid.nonFiniteAt !== null) {
      findings.push({
        code: "analysis-unknown",
        clause: "bayes",
        reason: "non-finite",
        message: `The Bayes risk is not finite at q = ${fmt(grid.nonFiniteAt)}, so its curvature cannot be analysed.`,
        data: { q: grid.nonFiniteAt },
      });
      return emptyResult(threshold, findings, "the Bayes risk is not finite");
    }
    const notes: Note[] = [];
    const { weight, weightIsNumeric } = weightOf(fns, f, notes);
    const features = weightFeaturesOf(grid, findings);
    const lam = lambdaStep(weight, weightIsNumeric, f, features, findings, notes);
    const models = boundModels(fns, f, grid, threshold, features, options, overBudget, findings);
    modelCache.set(fns, { f, grid, weight, weightIsNumeric, ...models });
    findings.push(...modelFindings(models, features));
    const exponents = exponentsStep(models, threshold, lam, features, weight, findings);
    const inverseTable = inverseTableOf(models, threshold);
    notes.push(...boundNotes(lam.lambda, lam.lambdaAt, models, threshold));
    const simonenko = simonenkoOf(models.modulus, findings);
    const near = models.modulus?.nearZero ?? null;
    return {
      lambda: lam.lambda,
      lambdaAt: lam.lambdaAt,
      weightFeatures: features,
      modulus: near ? { coefficient: near.coefficient, power: near.power } : null,
      vacuousBelow: models.modulus?.vacuousBelow ?? null,
      exponents,
      threshold,
      inverseTable,
      findings,
      summary: summaryLine(lam.lambda, lam.lambdaAt, models),
      units: unitsFor(threshold),
      simonenko,
      notes,
    };
  } catch (err) {
    findings.push(internalError("analyseCurvature", err));
    return emptyResult(threshold, findings, "internal error");
  }
}
