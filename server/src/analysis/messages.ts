/**
 * The wording of the properness findings: every sentence the properness engine shows, built from the
 * evidence the checks return (points, values, intervals). The checks decide; this module only phrases,
 * so a finding's code, clause and data never depend on its text.
 */
import type { ClauseKey, DefinitionForm, Finding } from "../loss-model.js";
import { fmt } from "../display.js";

/** A pair (η, q) with L(η, q) < L(η, η), both risks re-evaluated from the closures. */
export interface Counterexample {
  eta: number;
  q: number;
  riskAtEta: number;
  riskAtQ: number;
}

/** The clause a diagnostic about the whole loss belongs to, by definition form. */
export function primaryClause(form: DefinitionForm): "l1" | "bayes" | "weight" | "margin" {
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

/** The clause of a finding about one partial loss: that partial for partials forms, the primary clause otherwise. */
export function partialClause(form: DefinitionForm, which: "l1" | "l0"): "l1" | "l0" | "bayes" | "weight" | "margin" {
  return form === "partials" || form === "score-partials" ? which : primaryClause(form);
}

/** "at η = …, q = … has risk … < …", the counterexample as a clause inside another sentence. */
function counterexampleClause(ce: Counterexample): string {
  return `at η = ${fmt(ce.eta)}, q = ${fmt(ce.q)} has risk ${fmt(ce.riskAtQ)} < ${fmt(ce.riskAtEta)}`;
}

// ---- The verdict ----

export function improperFinding(ce: Counterexample): Finding {
  return {
    code: "improper",
    clause: "loss",
    message: `Not proper: at η = ${fmt(ce.eta)}, predicting q = ${fmt(ce.q)} has conditional risk ${fmt(ce.riskAtQ)} < L(η, η) = ${fmt(ce.riskAtEta)}.`,
    data: { eta: ce.eta, q: ce.q, riskAtEta: ce.riskAtEta, riskAtQ: ce.riskAtQ },
  };
}

export function properNotStrictFinding(runs: { a: number; b: number }[]): Finding {
  const list = runs.map((r) => `[${fmt(r.a)}, ${fmt(r.b)}]`).join(" and ");
  return {
    code: "proper-not-strict",
    clause: "loss",
    message: `Proper but not strictly proper: the Bayes risk is affine on ${list} (the weight has no mass there), so several predictions are optimal for each η inside (Bao 2023, Thm 2).`,
    data: { intervals: runs.map((r) => [r.a, r.b]) },
  };
}

export function nonFiniteValueFinding(form: DefinitionForm, nf: { q: number; which: "l1" | "l0"; value: number }): Finding {
  return {
    code: "non-finite-value",
    clause: partialClause(form, nf.which),
    message: `${nf.which}(q) is ${fmt(nf.value)} at q = ${fmt(nf.q)}, inside (0, 1).`,
    data: { q: nf.q, value: String(nf.value) },
  };
}

/** The sentence appended to "margin-no-link" when the margin loss is classification-calibrated. */
export const MARGIN_CALIBRATED_SUFFIX = " It is classification-calibrated (Bartlett, Jordan & McAuliffe 2006).";

// ---- Undecided outcomes ----

export function notDerivedFinding(firstReason: string): Finding {
  return { code: "analysis-unknown", clause: "loss", reason: "not-derivable", message: `Cannot decide properness: the loss functions could not be derived (${firstReason}).` };
}

export function searchTimedOutFinding(): Finding {
  return { code: "analysis-unknown", clause: "loss", reason: "time-budget", message: "Cannot decide properness: the time limit was reached before the search finished." };
}

export function nonFiniteUnknownFinding(nf: { q: number; which: "l1" | "l0" }): Finding {
  return {
    code: "analysis-unknown",
    clause: "loss",
    reason: "non-finite",
    message: `Cannot decide properness: ${nf.which} is not finite at q = ${fmt(nf.q)}, and no counterexample was found elsewhere.`,
  };
}

export function strictnessTimedOutFinding(): Finding {
  return { code: "analysis-unknown", clause: "loss", reason: "time-budget", message: "Strict properness not decided: the time limit was reached before the Bayes risk was examined for affine pieces." };
}

export function minimiserTimedOutFinding(): Finding {
  return {
    code: "analysis-unknown",
    clause: "loss",
    reason: "time-budget",
    message: "The minimiser q*(η) and the posterior-recovery map were not computed: the time limit was reached.",
  };
}

// ---- Evidence on the clauses (Reid & Williamson 2010, Thm 1 and Thm 6; Bao 2023, §2 and Thm 1) ----

export function monotonicityFinding(
  form: DefinitionForm,
  which: "l1" | "l0",
  ev: { q: number; q2: number; value: number; value2: number },
): Finding {
  const code = which === "l1" ? "l1-increasing" : "l0-decreasing";
  const verb = which === "l1" ? "increases" : "decreases";
  return {
    code,
    clause: partialClause(form, which),
    message: `${which} ${verb} on [${fmt(ev.q)}, ${fmt(ev.q2)}] (from ${fmt(ev.value)} to ${fmt(ev.value2)}); a proper loss has l1 non-increasing and l0 non-decreasing (Reid & Williamson 2010, Thm 1).`,
    data: { q: ev.q, q2: ev.q2, value: ev.value, value2: ev.value2 },
  };
}

export function stationarityMismatchFinding(form: DefinitionForm, at: number, r1: number, r0: number): Finding {
  const clause = partialClause(form, "l1");
  return {
    code: "stationarity-mismatch",
    clause,
    message: `The stationarity ratios disagree at q = ${fmt(at)}: −l1'/(1−q) = ${fmt(r1)} but l0'/q = ${fmt(r0)} (difference ${fmt(r1 - r0)}); a proper loss has them equal (Reid & Williamson 2010, Thm 1).`,
    data: { q: at, ratio1: r1, ratio0: r0, difference: r1 - r0 },
    related: clause === "l1" ? [{ clause: "l0", message: `l0'/q = ${fmt(r0)} at q = ${fmt(at)}` }] : [],
  };
}

export function bayesNotConcaveFinding(declared: boolean, at: number, secondDerivative: number): Finding {
  return {
    code: "bayes-not-concave",
    clause: "bayes",
    message: `The ${declared ? "declared " : ""}Bayes risk is not concave near q = ${fmt(at)} (second derivative ≈ ${fmt(secondDerivative)} > 0); a Bayes risk is an infimum of affine functions, hence concave (Bao 2023, §2).`,
    data: { q: at, secondDerivative },
  };
}

/** Where a declared Bayes risk disagrees with the loss: against inf_q L, or against a Savage link for one partial loss. */
export type BayesMismatch =
  | { against: "infimum"; q: number; declared: number; derived: number }
  | { against: "savage"; q: number; partial: "l1" | "l0"; savage: number; given: number };

export function bayesMismatchFinding(m: BayesMismatch): Finding {
  let msg: string;
  let data: Record<string, unknown>;
  if (m.against === "infimum") {
    msg = `at q = ${fmt(m.q)} the declared H(q) = ${fmt(m.declared)} but inf over predictions of L(q, ·) = ${fmt(m.derived)} (difference ${fmt(m.declared - m.derived)})`;
    data = { q: m.q, declared: m.declared, derived: m.derived, difference: m.declared - m.derived };
  } else {
    const form = m.partial === "l1" ? "H + (1−q)H'" : "H − qH'";
    msg = `at q = ${fmt(m.q)} the Savage link gives ${m.partial} = ${form} = ${fmt(m.savage)} but ${m.partial}(q) = ${fmt(m.given)} (difference ${fmt(m.savage - m.given)})`;
    data = { q: m.q, partial: m.partial, savage: m.savage, given: m.given, difference: m.savage - m.given };
  }
  return {
    code: "bayes-mismatch",
    clause: "bayes",
    message: `The declared Bayes risk disagrees with the partial losses: ${msg} (Savage representation, Bao 2023, Thm 1).`,
    data,
  };
}

export function weightNegativeFinding(q: number, value: number): Finding {
  return {
    code: "weight-negative",
    clause: "weight",
    message: `The weight function is negative at q = ${fmt(q)} (w = ${fmt(value)}); a proper loss has w ≥ 0 (Reid & Williamson 2010, Thm 6).`,
    data: { q, value },
  };
}

export function posteriorRecoveryFinding(maxError: number, samples: unknown[]): Finding {
  return {
    code: "posterior-recovery",
    clause: "loss",
    message: `η can be recovered from the minimiser q* by η = l0'(q*)/(l0'(q*) − l1'(q*)) (Reid & Williamson 2010, Cor. 12); checked on ${samples.length} values of η, largest error ${fmt(maxError, 3)}.`,
    data: { maxError, samples },
  };
}

// ---- Parameter ranges ----

export function rangesTimedOutFinding(param: string): Finding {
  return {
    code: "analysis-unknown",
    clause: `param:${param}`,
    reason: "time-budget",
    message: "The declared parameter ranges were only partly sampled: the time limit was reached.",
  };
}

export function improperInRangeFinding(param: string, value: number, ce: Counterexample | null, values: Record<string, number>, sweepText: string): Finding {
  return {
    code: "improper-in-range",
    clause: `param:${param}`,
    message: `Proper at the defaults but improper at ${param} = ${fmt(value, 4)}${ce ? ` (${counterexampleClause(ce)})` : ""}: ${sweepText}.`,
    data: { values, counterexample: ce },
  };
}

export function improperAtJointFinding(params: string[], values: Record<string, number>, ce: Counterexample | null): Finding {
  return {
    code: "improper-in-range",
    clause: `param:${params[0]!}`,
    message: `Proper at the defaults but improper at ${params.map((p) => `${p} = ${fmt(values[p]!, 4)}`).join(", ")}.`,
    data: { values, counterexample: ce },
  };
}

// ---- Claims ----

/** A finding's sentence reused inside another sentence: no capital at the start, no full stop at the end. */
export function asClause(sentence: string): string {
  const s = sentence.trim().replace(/\.$/, "");
  return /^[A-Z][a-z]/.test(s) ? s[0]!.toLowerCase() + s.slice(1) : s;
}

export function claimFailedFinding(clause: ClauseKey, claimText: string, why: string, data?: Record<string, unknown>): Finding {
  return { code: "expect-failed", clause, message: `Claim "${claimText}" fails: ${asClause(why)}.`, ...(data ? { data } : {}) };
}

export function claimUndecidedFinding(clause: ClauseKey, claimText: string, why: string): Finding {
  return { code: "expect-undecided", clause, message: `Claim "${claimText}" could not be decided: ${why}.` };
}

/** The counterexample as the reason a properness claim fails. */
export function counterexampleReason(ce: Counterexample | null): string {
  return ce ? `at η = ${fmt(ce.eta)}, q = ${fmt(ce.q)} has risk ${fmt(ce.riskAtQ)} < L(η, η) = ${fmt(ce.riskAtEta)}` : "the loss is improper";
}

/**
 * The note beside a verdict found by sampling: no counterexample at the scan's resolution, and whether the
 * stationarity identity −l1'/(1−q) = l0'/q with w ≥ 0 (Reid & Williamson 2010, Thm 1) backed it.
 */
export function samplingEvidenceNote(gridPoints: number, identity: { points: number; refinedCells: number; unexplainedAt: number | null } | null): string {
  const base = `No counterexample at resolution ${gridPoints} grid points`;
  if (!identity) return `${base}; the derivatives are not all closed forms, so this verdict rests on sampling alone (a feature narrower than the grid can go unseen).`;
  const refined = identity.refinedCells > 0 ? `, ${identity.refinedCells} cell${identity.refinedCells === 1 ? "" : "s"} refined` : "";
  if (identity.unexplainedAt !== null) {
    return `${base}; the stationarity identity −l1'(q)/(1−q) = l0'(q)/q with w ≥ 0 fails near q = ${fmt(identity.unexplainedAt)}, but no descent from there beat the tolerance (checked at ${identity.points} points${refined}).`;
  }
  return `${base}; the stationarity identity −l1'(q)/(1−q) = l0'(q)/q with w ≥ 0 holds at ${identity.points} points (adaptive grid${refined}).`;
}
