/**
 * The verdict for one instance of a loss (one parameter assignment): derive the common model, tabulate
 * it, search for a counterexample (re-evaluated from the closures), and, when there is none, look for
 * affine pieces of the Bayes risk. Proper means L(η, η) = inf_q L(η, q) for all η; strictly proper means
 * q = η is the unique minimiser (Reid & Williamson 2010, "Composite Binary Losses", JMLR 11, §3, Thm 1,
 * Cor. 2; Bao 2023, "Proper Losses, Moduli of Convexity, and Surrogate Regret Bounds", COLT, §2).
 */
import type { Finding, LossFunctions, LossSpec } from "../loss-model.js";
import type { Deadline } from "./budget.js";
import { deriveLossFunctions } from "./derive.js";
import { checkMarginConvexity } from "./composite.js";
import { checkMarginCalibration, marginDerivative, safeCall } from "./margin.js";
import { buildGrid, buildTable, extendTable, jumpPoints, NUMERIC_DERIVATIVE_EDGE_EXPONENT, RISK_TOL, RISK_TOL_DIRECT, type Table } from "./risk-table.js";
import { searchCounterexample, type Counterexample } from "./search.js";
import { findFlatIntervals, FLAT_VARIATION_TOL, FLAT_VARIATION_TOL_NUMERIC } from "./flat.js";
import { monotonicityFindings, stationarityFinding } from "./stationarity.js";
import { identityScan } from "./identity-scan.js";
import { checkBayesConcavity, checkDeclaredBayes, checkWeightSign } from "./clause-checks.js";
import {
  improperFinding,
  MARGIN_CALIBRATED_SUFFIX,
  nonFiniteUnknownFinding,
  nonFiniteValueFinding,
  notDerivedFinding,
  properNotStrictFinding,
  searchTimedOutFinding,
  strictnessTimedOutFinding,
} from "./messages.js";

export type PropernessVerdict = "strictly-proper" | "proper" | "improper" | "unknown";

/**
 * What a verdict without a counterexample rests on: the scan table's resolution and, for partial losses
 * with closed-form derivatives, the derivative check of `identity-scan.ts` (null when the derivatives are
 * numeric, so the verdict rests on sampling alone).
 */
export interface SamplingEvidence {
  /** Points of the scan table (uniform, geometric near the endpoints, seeded random, around jumps). */
  gridPoints: number;
  identity: { points: number; refinedCells: number; unexplainedAt: number | null } | null;
}

/** The outcome for one instance; `table` and `slopePoints` are kept for the recovery map and the evidence. */
export interface InstanceResult {
  verdict: PropernessVerdict;
  counterexample: Counterexample | null;
  flatInterval: [number, number] | null;
  findings: Finding[];
  fns: LossFunctions | null;
  table: Table | null;
  slopePoints: number[];
  /** Present when no counterexample was found: what the positive (or unknown) verdict rests on. */
  evidence?: SamplingEvidence;
}

/**
 * Whether the derivatives of the partial losses on q are closed forms (the user's or symbolic ones), so
 * the stationarity identity and the sign of w can back the verdict: partial losses with both derivatives,
 * on q or on the score (the link's derivative is a common factor of both ratios and cancels in the
 * identity), and every form whose weight is exact (a weight clause; a Bayes risk with H''), where the
 * identity holds by construction and the check is the sign of w on the refined grid.
 */
function exactDerivatives(spec: LossSpec, fns: LossFunctions): boolean {
  if (spec.form === "partials" || spec.form === "score-partials") return !!spec.dl1 && !!spec.dl0;
  return fns.weightExact === true && (spec.form === "weight" || spec.form === "bayes");
}

/** The first finding's message, for building "unknown" reasons. */
function firstMessage(findings: Finding[]): string {
  return findings.length > 0 ? findings[0]!.message : "no reason given";
}

/** Convexity and classification calibration of a margin function (the diagnostics of a margin loss). */
function marginFindings(spec: LossSpec, findings: Finding[], noLink: boolean): void {
  const phi = (v: number) => safeCall(spec.margin!, v);
  const conv = checkMarginConvexity(phi);
  findings.push(...conv.findings);
  const cal = checkMarginCalibration(phi, marginDerivative(phi, spec.dmargin), conv.convex === true);
  findings.push(...cal.findings);
  if (noLink && cal.calibrated) {
    const f = findings.find((x) => x.code === "margin-no-link");
    if (f) f.message += MARGIN_CALIBRATED_SUFFIX;
  }
}

/** The scan table of an instance: grid and tolerances by form, with extra points around jumps where jumps can occur. */
function scanTable(spec: LossSpec, fns: LossFunctions, deadline: Deadline, seed: number, resolution: number): Table {
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
  return probeJumps ? extendTable(fns, coarse, jumpPoints(fns, coarse, deadline)) : coarse;
}

/** Checks of the declared weight and Bayes-risk clauses (the full analysis only). */
function clauseFindings(spec: LossSpec, fns: LossFunctions): Finding[] {
  const out: Finding[] = [];
  if (spec.form === "weight") {
    const f = checkWeightSign(spec);
    if (f) out.push(f);
  }
  if (spec.form === "bayes" && spec.bayes) {
    const f = checkBayesConcavity((q) => safeCall(spec.bayes!, q), false);
    if (f) out.push(f);
  } else if (spec.bayes) {
    const f = checkBayesConcavity((q) => safeCall(spec.bayes!, q), true);
    if (f) out.push(f);
    const m = checkDeclaredBayes(spec, fns);
    if (m) out.push(m);
  }
  return out;
}

/** The evidence on the clauses that explains an impropriety: monotonicity and the stationarity ratios. */
function impropernessEvidence(spec: LossSpec, fns: LossFunctions, table: Table, slopePoints: number[], ce: Counterexample): Finding[] {
  const out: Finding[] = [];
  if (spec.form === "partials" || spec.form === "score-partials") out.push(...monotonicityFindings(table, spec.form));
  if (spec.form !== "weight" && spec.form !== "bayes") {
    const st = stationarityFinding(fns, table, spec.form, slopePoints, ce.eta);
    if (st) out.push(st);
  }
  return out;
}

/** The analysis of one instance (one parameter assignment). `full` adds the diagnostics beyond the verdict. */
export function analyseSpec(spec: LossSpec, deadline: Deadline, seed: number, resolution: number, full: boolean): InstanceResult {
  const derived = deriveLossFunctions(spec);
  const findings: Finding[] = [...derived.findings];
  const fns = derived.fns;
  const base = { counterexample: null, flatInterval: null, table: null, slopePoints: [] as number[] };
  if (!fns) {
    if (!findings.some((f) => f.code === "analysis-unknown" || f.code === "internal-error")) findings.push(notDerivedFinding(firstMessage(findings)));
    return { ...base, verdict: "unknown", findings, fns: null };
  }
  const noLink = findings.some((f) => f.code === "margin-no-link");
  if (spec.form === "margin" && full && spec.margin) marginFindings(spec, findings, noLink);
  if (noLink) {
    // A margin loss without an invertible link is improper: it elicits no probability.
    return { ...base, verdict: "improper", findings, fns };
  }
  const table = scanTable(spec, fns, deadline, seed, resolution);
  const s = searchCounterexample(fns, table, deadline);
  if (s.nonFinite) findings.push(nonFiniteValueFinding(spec.form, s.nonFinite));
  if (full) findings.push(...clauseFindings(spec, fns));
  let ce = s.counterexample;
  let slopePoints = s.slopePoints;
  let identity: SamplingEvidence["identity"] = null;
  let timedOut = s.timedOut;
  // No counterexample on the table: the derivative identities, refined where they fail, look between grid points.
  if (!ce && !timedOut && !s.nonFinite && exactDerivatives(spec, fns)) {
    const id = identityScan(fns, table, deadline);
    identity = { points: id.points, refinedCells: id.refinedCells, unexplainedAt: id.unexplainedAt };
    timedOut = id.timedOut;
    if (id.counterexample) {
      ce = id.counterexample;
      slopePoints = id.slopePoints;
    }
  }
  if (ce) {
    findings.push(improperFinding(ce));
    if (full) findings.push(...impropernessEvidence(spec, fns, table, slopePoints, ce));
    return { ...base, verdict: "improper", counterexample: ce, findings, fns, table, slopePoints };
  }
  const evidence: SamplingEvidence = { gridPoints: table.qs.length, identity };
  if (timedOut) {
    findings.push(searchTimedOutFinding());
    return { ...base, verdict: "unknown", findings, fns, table, evidence };
  }
  if (s.nonFinite) {
    findings.push(nonFiniteUnknownFinding(s.nonFinite));
    return { ...base, verdict: "unknown", findings, fns, table, evidence };
  }
  if (full && deadline.expired()) {
    // No counterexample was found, but strictness was not examined: claim only properness and say why.
    findings.push(strictnessTimedOutFinding());
    return { ...base, verdict: "proper", findings, fns, table, evidence };
  }
  const runs = full ? findFlatIntervals(fns, table) : [];
  if (runs.length > 0) {
    const widest = runs.reduce((x, y) => (y.b - y.a > x.b - x.a ? y : x));
    findings.push(properNotStrictFinding(runs));
    return { ...base, verdict: "proper", flatInterval: [widest.a, widest.b], findings, fns, table, evidence };
  }
  return { ...base, verdict: "strictly-proper", findings, fns, table, evidence };
}
