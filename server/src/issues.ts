/**
 * The registry of issue codes: one stable kebab-case id per kind of finding, with its default severity
 * and a one-line description (used by docs, SARIF rules and quick-fix dispatch).
 * Codes are part of the public contract (CLI JSON, SARIF, quick fixes): never rename one; add new ones.
 */
/** How serious an issue is (the LSP's four levels). */
export type Severity = "error" | "warning" | "information" | "hint";

export interface IssueCodeInfo {
  severity: Severity;
  description: string;
}

function code(severity: Severity, description: string): IssueCodeInfo {
  return { severity, description };
}

export const ISSUE_CODES = {
  // Lexical and syntax (parser layer).
  "lex-invalid-character": code("error", "A character that is not part of the notation."),
  "parse-unexpected-token": code("error", "The parser expected something else here."),
  "parse-missing-token": code("error", "A token is missing (recovered by insertion)."),
  "parse-too-deep": code("error", "Expression nesting is deeper than the parser supports."),
  "parse-file-too-large": code("error", "The file is larger than the size the tool analyses."),

  // Names and structure (semantic layer).
  "unknown-name": code("error", "A name that is neither a parameter, a helper, a built-in nor the clause variable."),
  "unknown-function": code("error", "A call of a function that is neither a built-in nor a `def` helper."),
  "unknown-clause": code("error", "A clause name that the notation does not define."),
  "wrong-arity": code("error", "A call with the wrong number of arguments."),
  "wrong-variable": code("error", "A clause uses the variable of the other scale (`q` for probabilities, `v` for scores)."),
  "clause-variable-name": code("error", "A clause is declared with a variable other than its own."),
  "duplicate-name": code("error", "Two definitions with the same name in one scope."),
  "duplicate-clause": code("error", "A clause given twice in one loss."),
  "missing-primary-form": code("error", "A loss with no primary definition form (partials, bayes, weight or margin)."),
  "multiple-primary-forms": code("error", "A loss with more than one primary definition form."),
  "missing-partial": code("error", "Only one of `l1` and `l0` is given."),
  "score-partials-need-link": code("error", "Partial losses written in the score `v` need a `link(q)` clause."),
  "default-out-of-range": code("error", "A parameter default outside its declared range."),
  "empty-range": code("error", "A parameter range whose lower end exceeds its upper end."),
  "recursive-def": code("error", "A `def` helper that calls itself, directly or through others."),
  "shadowed-name": code("warning", "A name that hides a built-in or an outer parameter."),
  "non-constant-expression": code("error", "An expression that must be constant uses a variable."),
  "threshold-out-of-range": code("error", "A decision threshold outside (0, 1)."),
  "invalid-expect": code("error", "An `expect` claim the notation does not know."),
  "condition-as-value": code("error", "A comparison or logical expression used where a number is expected."),
  "value-as-condition": code("error", "A number used where a condition is expected."),

  // Analysis (engine layer).
  "analysis-unknown": code("warning", "The engine could not decide a property; the message says why."),
  "improper": code("error", "The loss is not proper: some prediction q ≠ η has lower conditional risk than η."),
  "proper-not-strict": code("warning", "The loss is proper but not strictly: the Bayes risk is affine on an interval."),
  "improper-in-range": code("warning", "The loss is proper at the defaults but not over the whole declared parameter range."),
  "l1-increasing": code("error", "The partial loss l1 increases somewhere (a proper loss has l1 non-increasing)."),
  "l0-decreasing": code("error", "The partial loss l0 decreases somewhere (a proper loss has l0 non-decreasing)."),
  "stationarity-mismatch": code("error", "The stationarity ratios −l1'/(1−q) and l0'/q disagree."),
  "bayes-not-concave": code("error", "A declared or derived Bayes risk that is not concave."),
  "bayes-mismatch": code("error", "A declared Bayes risk that disagrees with the partial losses (Savage links)."),
  "link-not-monotone": code("error", "A link that is not strictly monotone, hence not invertible."),
  "inverse-mismatch": code("error", "An `inverse` clause that is not the inverse of the link."),
  "not-convex-in-score": code("warning", "The composite loss is not convex in the score."),
  "margin-not-calibrated": code("warning", "The margin loss is not classification-calibrated."),
  "margin-no-link": code("warning", "The margin loss has no invertible link: probabilities cannot be recovered."),
  "non-finite-value": code("error", "A value that is NaN or infinite inside (0, 1)."),
  "weight-negative": code("error", "A weight function that is negative somewhere."),
  "weight-not-integrable": code("error", "A weight function whose integrals for the partial losses diverge."),
  "posterior-recovery": code("information", "The map that recovers η from the minimiser of an improper loss."),
  "expect-failed": code("error", "An `expect` claim that the engine refutes."),
  "expect-undecided": code("warning", "An `expect` claim that the engine could not decide."),
  "vacuous-bound": code("information", "A surrogate-regret bound that is vacuous below some regret level."),
  "internal-error": code("error", "An internal error in a check; reported instead of crashing."),
} as const satisfies Record<string, IssueCodeInfo>;

export type IssueCode = keyof typeof ISSUE_CODES;

export function isIssueCode(s: string): s is IssueCode {
  return Object.prototype.hasOwnProperty.call(ISSUE_CODES, s);
}
