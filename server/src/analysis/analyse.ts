/**
 * The engine's entry point for one loss family: properness, curvature and bounds, and `expect` claims.
 * Pure: takes a `LossFamily`, returns figures and clause-attributed findings.
 */
import type { Finding, LossFamily } from "./loss-model.js";

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
}

export interface AnalyseOptions {
  deadlineMs?: number;
  seed?: number;
}

/** Analyses a loss at its parameter defaults (and across declared ranges where the checks support it). */
export function analyseFamily(family: LossFamily, _options: AnalyseOptions = {}): LossAnalysis {
  const defaults = Object.fromEntries(family.params.map((p) => [p.name, p.default]));
  const spec = family.instantiate(defaults);
  return {
    verdict: "unknown",
    counterexample: null,
    flatInterval: null,
    lambda: null,
    modulus: null,
    exponents: { viaModulus: null, direct: null },
    threshold: spec.threshold,
    params: spec.params,
    summary: "not analysed yet",
    findings: [{ code: "analysis-not-implemented", clause: "loss", message: "the properness and curvature engine is not available in this build; the verdict is unknown" }],
  };
}
