/**
 * The properness engine for a loss family: the verdict at the parameter defaults with its evidence
 * (`verdict.ts`: a global search for a counterexample L(η, q) < L(η, η), re-evaluated from the closures,
 * or the affine pieces of the Bayes risk), convexity in the score of a composite loss, the minimiser and
 * the posterior-recovery map of an improper loss, and the sweep over declared parameter ranges
 * (`ranges.ts`). The `expect` claims are evaluated by `claims.ts`, the sentences built by `messages.ts`.
 *
 * Definitions follow Reid & Williamson 2010, "Composite Binary Losses", JMLR 11 (§3, Thm 1, Cor. 2) and
 * Bao 2023, "Proper Losses, Moduli of Convexity, and Surrogate Regret Bounds", COLT (§2): proper means
 * L(η, η) = inf_q L(η, q) for all η; strictly proper means q = η is the unique minimiser.
 */
import { DEFAULT_SETTINGS } from "../settings.js";
import type { Finding, LossFamily, LossFunctions } from "../loss-model.js";
import { internalError } from "./derive.js";
import { computeRecovery, minimiseRisk, RECOVERY_ETAS, type RecoveryMap } from "./recovery.js";
import { checkCompositeConvexity } from "./composite.js";
import { analyseSpec, type InstanceResult, type PropernessVerdict, type SamplingEvidence } from "./verdict.js";
import { analyseRanges, defaultsOf } from "./ranges.js";
import { minimiserTimedOutFinding, posteriorRecoveryFinding, samplingEvidenceNote, type Counterexample } from "./messages.js";
import { deadlineAfter, type Clock } from "./budget.js";

/** Re-exported so callers of `analyseProperness` get the types of its result from one module. */
export type { RecoveryMap } from "./recovery.js";
export type { Counterexample } from "./messages.js";
export type { PropernessVerdict, SamplingEvidence } from "./verdict.js";
export { evaluateClaims, type ClaimExtras } from "./claims.js";

/** The outcome of the properness analysis of a loss family (verdict at the defaults). */
export interface PropernessResult {
  verdict: PropernessVerdict;
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
  /** When no counterexample was found: the resolution of the search and whether the derivative identities backed it. */
  evidence?: SamplingEvidence;
}

/** Options of `analyseProperness`. */
export interface PropernessOptions {
  /**
   * Wall-clock budget for the whole analysis, in milliseconds (default: the `propriety.analysis.deadlineMs` setting's): a last resort,
   * since every search is bounded in steps; a stage it stops says "unknown" with reason "time-budget".
   */
  deadlineMs?: number;
  /** The clock the deadline is read from (default Date.now); tests inject one. */
  clock?: Clock;
  /** Seed of the random sample points (default DEFAULT_SEED). */
  seed?: number;
  /** Grid resolution of the q and η scans (default GRID_RESOLUTION); lower is faster and coarser. */
  resolution?: number;
}

/** Default seed of the random sample points (any fixed value makes runs reproducible). */
export const DEFAULT_SEED = 20260101;
/**
 * Uniform part of the scan grid (plus geometric points near both endpoints and seeded random points):
 * the `propriety.analysis.gridResolution` default, so a direct call of the engine scans the grid the
 * editor and the CLI scan.
 */
export const GRID_RESOLUTION = DEFAULT_SETTINGS.gridResolution;
/** Largest recovery error over the sampled η for which the posterior-recovery finding is reported. */
export const RECOVERY_TOL = 1e-6;
/** A sampled minimiser counts as moved away from η when |q* − η| exceeds this (well above minimiser accuracy ~1e-12). */
export const RECOVERY_MOVED = 1e-6;

/** For a loss found proper the Bayes risk is L(η, η); this replaces the per-point minimisation, which callers evaluating H densely would pay for. */
function withBayesOnDiagonal(fns: LossFunctions, evidence: SamplingEvidence | undefined): LossFunctions {
  const risk = fns.risk;
  const notes = [...fns.notes, { kind: "bayes-on-diagonal" as const, text: "H(η) = L(η, η), since the loss was found proper." }];
  if (evidence) notes.push({ kind: "verdict-evidence", text: samplingEvidenceNote(evidence.gridPoints, evidence.identity) });
  return { ...fns, bayes: (eta: number) => risk(eta, eta), notes };
}

/** The minimiser curve q*(η) of an improper loss and, when q* is monotone, the posterior-recovery map with its finding. */
function minimiserAndRecovery(fns: LossFunctions, core: InstanceResult & { table: NonNullable<InstanceResult["table"]> }, result: PropernessResult): void {
  const table = core.table;
  // The minimiser curve is sampled for every improper loss (also when it sits at the endpoints and no recovery exists).
  result.minimiser = { etas: [...RECOVERY_ETAS], qs: RECOVERY_ETAS.map((eta) => minimiseRisk(fns, eta, table).q) };
  const rec = computeRecovery(fns, RECOVERY_ETAS, table, result.minimiser.qs);
  if (!rec) {
    result.recovery = null;
    return;
  }
  result.recovery = rec.monotone ? rec : null;
  // Recovery is only news when the minimiser moves away from η on most samples (not for a loss broken on a small set).
  const moved = rec.samples.filter((x) => Math.abs(x.qStar - x.eta) > RECOVERY_MOVED).length;
  if (rec.monotone && rec.maxError <= RECOVERY_TOL && 2 * moved > rec.samples.length) result.findings.push(posteriorRecoveryFinding(rec.maxError, rec.samples));
}

/**
 * Decides properness of a loss family at its parameter defaults, with diagnostics, and sweeps the
 * declared parameter ranges. Never throws: failures become "internal-error" findings with verdict
 * "unknown"; a search that runs out of time says so ("analysis-unknown").
 */
export function analyseProperness(family: LossFamily, options: PropernessOptions = {}): PropernessResult {
  const deadline = deadlineAfter(options.deadlineMs ?? DEFAULT_SETTINGS.deadlineMs, options.clock ?? Date.now);
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
    if (core.evidence) result.evidence = core.evidence;
    let fns = core.fns;
    if (fns && (core.verdict === "proper" || core.verdict === "strictly-proper")) {
      fns = withBayesOnDiagonal(fns, core.evidence);
      result.fns = fns;
    }
    if (fns && fns.link && spec.form !== "margin") {
      const conv = checkCompositeConvexity(fns, core.verdict === "strictly-proper", spec.d2link ?? null);
      result.findings.push(...conv.findings);
    }
    const table = core.table;
    if (fns && core.verdict === "improper" && core.counterexample && table) {
      if (deadline.expired()) result.findings.push(minimiserTimedOutFinding());
      else minimiserAndRecovery(fns, { ...core, table }, result);
    }
    const ranges = analyseRanges(family, core.verdict, deadline, seed);
    if (ranges.report) result.paramReport = ranges.report;
    result.findings.push(...ranges.findings);
    return result;
  } catch (e) {
    return { verdict: "unknown", counterexample: null, flatInterval: null, findings: [internalError("the properness analysis", e)], fns: null };
  }
}
