/**
 * The engine's entry point for one loss family: properness (with evidence and parameter sweeps),
 * curvature and surrogate-regret bounds for proper losses, and the `expect` claims.
 * Pure: takes a `LossFamily`, returns figures and clause-attributed findings; never throws.
 */
import { ISSUE_CODES, type IssueCode, type Severity } from "../issues.js";
import { DEFAULT_SETTINGS, settingSpec } from "../settings.js";
import { analyseCurvature, type CurvatureResult } from "./curvature.js";
import type { Finding, LossFamily, LossFunctions, Note } from "../loss-model.js";
import { fmt, verdictText as verdictWords } from "../display.js";
import { analyseProperness, evaluateClaims, type PropernessResult } from "./properness.js";
import type { Clock } from "./budget.js";

/** The fewest grid points the scans accept (the setting's documented minimum). */
const MIN_GRID = settingSpec("analysis.gridResolution").minimum ?? 11;

export type Verdict = "strictly-proper" | "proper" | "improper" | "unknown";

export interface LossAnalysis {
  verdict: Verdict;
  counterexample: { eta: number; q: number; riskAtEta: number; riskAtQ: number } | null;
  flatInterval: [number, number] | null;
  lambda: number | null;
  modulus: { coefficient: number; power: number } | null;
  exponents: { viaModulus: number | null; direct: number | null };
  threshold: number;
  params: Record<string, number>;
  /** One line for code lenses and the status bar. */
  summary: string;
  findings: Finding[];
  /** Surrogate regret needed to guarantee each decision regret, by each route (units stated in `boundUnits`). */
  boundTable?: { decisionRegret: number; viaModulus: number | null; direct: number | null; psiTransform: number | null }[];
  boundUnits?: string;
  /** One sentence on why the two exponents differ, when they do. */
  exponentNote?: string | null;
  /** Where λ is attained or approached. */
  lambdaAt?: { q: number; approached: boolean } | null;
  /** For improper losses: sampled minimiser q*(η) and the posterior-recovery map, when it exists. */
  minimiser?: { etas: number[]; qs: number[] } | null;
  recovery?: { maxError: number; monotone: boolean } | null;
  /** E.g. "improper for g > 0; proper at g = 0". */
  paramReport?: string | null;
  /** Where the modulus bound is vacuous: δ** = 0 on (0, ε0]. */
  vacuousBelow?: number | null;
  /** Statements for hovers and reports (strong properness, route comparisons, numerical notes). */
  notes?: Note[];
  /** The derived model at the defaults and the full curvature result, for curves (not serialised). */
  fns?: LossFunctions | null;
  curvature?: CurvatureResult | null;
}

export interface AnalyseOptions {
  /**
   * Wall-clock budget in milliseconds for properness and for curvature, each. A last resort: every search
   * is bounded in steps, so results do not depend on the machine's speed unless a stage runs out of this
   * budget, and then it says so ("analysis-unknown" findings with reason "time-budget").
   */
  deadlineMs?: number;
  /** The clock the budgets are read from (default Date.now), passed to every stage; tests inject one. */
  clock?: Clock;
  seed?: number;
  /** Grid resolution of the properness scans over q and η (the engine's default when absent). */
  gridResolution?: number;
  /** Threshold c of losses without a `threshold` clause (1/2 when absent); read when the loss is compiled. */
  defaultThreshold?: number;
}

/** Findings that only say "this loss is improper"; downgraded to warnings when the loss claims `expect improper`. */
const IMPROPERNESS_EVIDENCE = new Set<string>(["improper", "l1-increasing", "l0-decreasing", "stationarity-mismatch"]);


/**
 * The properness findings as shown: the range sweep appended to the verdict the user reads first, and the
 * evidence of impropriety as warnings when the loss says `expect improper`.
 */
function presentedFindings(family: LossFamily, prop: PropernessResult): Finding[] {
  // A loss declared `expect improper` is used knowingly (a focal loss with its recovery map, say): the
  // evidence of impropriety is still shown, as warnings, so a CI gate on errors passes.
  const acknowledged = prop.verdict === "improper" && family.claims.some((c) => c.kind === "improper");
  return withImproperError(prop).map((f) => {
    let out = f;
    // The range sweep belongs with the verdict the user reads first ("improper for g > 0; proper at g = 0").
    if (f.code === "improper" && prop.paramReport) out = { ...out, message: `${out.message} Over the declared ranges: ${prop.paramReport}.`, data: { ...out.data, paramReport: prop.paramReport } };
    if (acknowledged && IMPROPERNESS_EVIDENCE.has(f.code) && severityOf(f) === "error") {
      out = { ...out, severity: "warning", message: `${out.message} (Expected: the loss says \`expect improper\`.)` };
    }
    return out;
  });
}

function severityOf(f: Finding): Severity {
  return f.severity ?? ISSUE_CODES[f.code as IssueCode]?.severity ?? "error";
}

/**
 * An improper verdict is an error whatever the definition form (a CI gate on errors must catch it): when
 * the evidence behind it is only warnings (a margin loss without an invertible link, say), an `improper`
 * error on the loss says so and points at them.
 */
function withImproperError(prop: PropernessResult): Finding[] {
  if (prop.verdict !== "improper" || prop.findings.some((f) => severityOf(f) === "error")) return prop.findings;
  const evidence = prop.findings.filter((f) => f.code !== "posterior-recovery").map((f) => `\`${f.code}\``);
  const because = evidence.length > 0 ? ` (see ${evidence.join(", ")})` : "";
  return [{ code: "improper", clause: "loss", message: `Not proper: no prediction rule recovers η from this loss${because}. A loss used knowingly says \`expect improper\`.` }, ...prop.findings];
}

/** Both routes bound the decision regret, so the guaranteed exponent is the better of the two. */
function bestExponent(exponents: { viaModulus: number | null; direct: number | null }): number | null {
  const known = [exponents.viaModulus, exponents.direct].filter((x): x is number => x !== null && Number.isFinite(x));
  return known.length > 0 ? Math.max(...known) : null;
}

/** One line for code lenses and the status bar: the verdict, then the curvature or the counterexample, then the ranges. */
function summaryLine(prop: PropernessResult, curvature: CurvatureResult | null): string {
  const verdictText = verdictWords(prop.verdict);
  let summary = verdictText;
  if (curvature) summary = `${verdictText} · ${curvature.summary}`;
  else if (prop.verdict === "improper" && prop.counterexample) {
    const c = prop.counterexample;
    summary = `${verdictText}: at η = ${fmt(c.eta, 4)}, q = ${fmt(c.q, 4)} beats q = η`;
  }
  if (prop.paramReport) summary += ` · ${prop.paramReport}`;
  return summary;
}

/** Analyses a loss at its parameter defaults, and across declared ranges where the checks support it. */
export function analyseFamily(family: LossFamily, options: AnalyseOptions = {}): LossAnalysis {
  const deadlineMs = options.deadlineMs ?? DEFAULT_SETTINGS.deadlineMs;
  const clock = options.clock ? { clock: options.clock } : {};
  const defaults = Object.fromEntries(family.params.map((p) => [p.name, p.default]));
  let spec: ReturnType<LossFamily["instantiate"]> | null = null;
  try {
    spec = family.instantiate(defaults);
  } catch (err) {
    return emptyAnalysis(defaults, 0.5, [{ code: "internal-error", clause: "loss", message: `internal error while instantiating the loss: ${String(err)}` }]);
  }
  const prop: PropernessResult = analyseProperness(family, {
    deadlineMs,
    ...clock,
    ...(options.seed !== undefined ? { seed: options.seed } : {}),
    ...(options.gridResolution !== undefined ? { resolution: Math.max(MIN_GRID, Math.round(options.gridResolution)) } : {}),
  });
  const findings = presentedFindings(family, prop);

  // Curvature and bounds are about the Bayes risk of a proper loss; for an improper loss the regret is
  // not a Bregman divergence of −H and the bounds would not apply.
  let curvature: CurvatureResult | null = null;
  if (prop.fns && (prop.verdict === "strictly-proper" || prop.verdict === "proper")) {
    curvature = analyseCurvature(prop.fns, { deadlineMs, ...clock });
    findings.push(...curvature.findings);
  }

  const exponents = curvature?.exponents ?? { viaModulus: null, direct: null, explanation: null };
  findings.push(...evaluateClaims(family, prop, { lambda: curvature?.lambda ?? null, exponent: bestExponent(exponents) }));

  const result: LossAnalysis = {
    verdict: prop.verdict,
    counterexample: prop.counterexample,
    flatInterval: prop.flatInterval,
    lambda: curvature?.lambda ?? null,
    modulus: curvature?.modulus ?? null,
    exponents: { viaModulus: exponents.viaModulus, direct: exponents.direct },
    threshold: spec.threshold,
    params: spec.params,
    summary: summaryLine(prop, curvature),
    findings,
    exponentNote: exponents.explanation,
    lambdaAt: curvature?.lambdaAt ?? null,
    minimiser: prop.minimiser ?? null,
    recovery: prop.recovery ? { maxError: prop.recovery.maxError, monotone: prop.recovery.monotone } : null,
    paramReport: prop.paramReport ?? null,
    vacuousBelow: curvature?.vacuousBelow ?? null,
    notes: curvature?.notes ?? [],
    fns: prop.fns,
    curvature,
  };
  if (curvature) {
    result.boundTable = curvature.inverseTable;
    result.boundUnits = `decision regret: ${curvature.units.decisionRegret}; surrogate regret: ${curvature.units.surrogateRegret}`;
  }
  return result;
}

function emptyAnalysis(params: Record<string, number>, threshold: number, findings: Finding[]): LossAnalysis {
  return {
    verdict: "unknown", counterexample: null, flatInterval: null, lambda: null, modulus: null,
    exponents: { viaModulus: null, direct: null }, threshold, params, summary: verdictWords("unknown"), findings,
  };
}
