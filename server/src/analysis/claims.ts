/**
 * The `expect` claims of a loss, evaluated against the properness result at the defaults and the figures
 * computed elsewhere (λ, the bound exponent, convexity in the score). A refuted claim is an
 * "expect-failed" error on its clause `expect:N`; an undecided one is "expect-undecided".
 */
import type { Claim, Finding, LossFamily, LossFunctions } from "../loss-model.js";
import { fmt } from "../display.js";
import { internalError } from "./derive.js";
import { checkCompositeConvexity } from "./composite.js";
import { claimFailedFinding, claimUndecidedFinding, counterexampleReason, type Counterexample } from "./messages.js";
import type { PropernessVerdict } from "./verdict.js";

/** What the claims read from the properness result at the defaults (a `PropernessResult` has all of it). */
export interface ClaimEvidence {
  verdict: PropernessVerdict;
  counterexample: Counterexample | null;
  flatInterval: [number, number] | null;
  /** The derived model, for convexity in the score when it is not supplied. */
  fns: LossFunctions | null;
}

/** Values computed elsewhere (curvature, bounds) that some claims need; null means "could not be computed". */
export interface ClaimExtras {
  lambda?: number | null;
  exponent?: number | null;
  convex?: boolean | null;
}

/** The claim as written in the loss. */
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
export function evaluateClaims(family: LossFamily, properness: ClaimEvidence, extra: ClaimExtras = {}): Finding[] {
  const out: Finding[] = [];
  for (const claim of family.claims) {
    try {
      const clause = `expect:${claim.index}` as const;
      const fail = (why: string, data?: Record<string, unknown>) => out.push(claimFailedFinding(clause, claimText(claim), why, data));
      const undecided = (why: string) => out.push(claimUndecidedFinding(clause, claimText(claim), why));
      const v = properness.verdict;
      const ce = properness.counterexample;
      const ceText = counterexampleReason(ce);
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
