/**
 * The seam between the semantic layer and the analysis engine.
 *
 * The semantic layer compiles a `loss` block into a `LossFamily`: a parameterised factory of `LossSpec`s
 * (plain closures on numbers). The engine never sees text or positions: its findings name the clause
 * they are about (`ClauseKey`), and the service maps clauses back to source spans.
 */
import type { IssueCode } from "./issues.js";
import type { Severity } from "./issue.js";

export type RealFn = (x: number) => number;

/** The primary definition form of a loss (exactly one per loss). */
export type DefinitionForm = "partials" | "score-partials" | "bayes" | "weight" | "margin";

/**
 * One loss at one parameter assignment, as written by the user (nothing derived yet).
 * Closures take the clause variable: q ∈ [0,1] for probability clauses, v ∈ ℝ for score clauses.
 * Derivatives (`d…`) are compiled from symbolic differentiation when it succeeded; absent otherwise.
 */
export interface LossSpec {
  name: string;
  form: DefinitionForm;
  /** Parameter values used for this instance (globals and loss-locals). */
  params: Record<string, number>;
  /** Decision threshold c ∈ (0,1) for cost-weighted bounds (1/2 unless the loss says otherwise). */
  threshold: number;

  /** Partial losses: on q for form "partials", on v for form "score-partials". */
  l1?: RealFn;
  l0?: RealFn;
  dl1?: RealFn;
  dl0?: RealFn;
  d2l1?: RealFn;
  d2l0?: RealFn;

  /** Bayes risk H(q): the primary form for "bayes", a declared consistency claim otherwise. */
  bayes?: RealFn;
  dbayes?: RealFn;
  d2bayes?: RealFn;

  /** Weight function w(q) (form "weight"). */
  weight?: RealFn;
  dweight?: RealFn;

  /** Margin function φ(v) (form "margin"): loss φ(v) on y = 1 and φ(−v) on y = 0. */
  margin?: RealFn;
  dmargin?: RealFn;
  d2margin?: RealFn;

  /** Link ψ(q) mapping probabilities to scores, and its derivatives. */
  link?: RealFn;
  dlink?: RealFn;
  d2link?: RealFn;
  /** `link = canonical`: the engine derives ψ with ψ' = w. */
  canonicalLink?: boolean;
  /** Declared inverse link ψ⁻¹(v), checked against `link`. */
  inverse?: RealFn;
}

export interface ParamRange {
  name: string;
  default: number;
  /** Declared range; absent when the parameter has no `in [lo, hi]`. */
  lo?: number;
  hi?: number;
  /** True when the parameter only enters the decision threshold (it cannot change properness). */
  thresholdOnly?: boolean;
}

/** An `expect` claim as written (index = position among the loss's claims). */
export type Claim =
  | { index: number; kind: "proper" }
  | { index: number; kind: "strictly-proper" }
  | { index: number; kind: "improper" }
  | { index: number; kind: "convex" }
  | { index: number; kind: "lambda-at-least"; value: number }
  | { index: number; kind: "exponent-at-least"; value: number };

/** A loss as a parameterised family: the engine instantiates it at defaults and across ranges. */
export interface LossFamily {
  name: string;
  form: DefinitionForm;
  /** Only the parameters this loss actually uses (loss-local and referenced globals). */
  params: ParamRange[];
  claims: Claim[];
  instantiate(values: Record<string, number>): LossSpec;
}

/** The part of a loss a finding is about; the service maps it to a source span. */
export type ClauseKey =
  | "loss"
  | "l1"
  | "l0"
  | "bayes"
  | "weight"
  | "margin"
  | "link"
  | "inverse"
  | "threshold"
  | `expect:${number}`
  | `param:${string}`;

/**
 * Why an "analysis-unknown" finding could not decide, as data: consumers and tests branch on this, never
 * on the message's wording.
 * - "time-budget": the wall-clock budget ran out (a last resort; every search is bounded in steps first);
 * - "not-derivable": the loss functions could not be derived;
 * - "non-finite": a value needed (a partial loss, H, w) is not finite inside (0, 1);
 * - "negative-weight": w < 0 somewhere, so the curvature figures would assume a properness the loss lacks;
 * - "threshold-outside": the threshold is outside (0, 1) and ½ is used instead;
 * - "not-calibrated": the ψ-transform of a margin loss vanishes for some θ > 0;
 * - "unstable-estimate": a fitted power near 0 is not stable, or two estimates contradict each other.
 */
export type UnknownReason = "time-budget" | "not-derivable" | "non-finite" | "negative-weight" | "threshold-outside" | "not-calibrated" | "unstable-estimate";

export interface Finding {
  code: IssueCode;
  clause: ClauseKey;
  message: string;
  /** For "analysis-unknown" findings of the engine: why it could not decide. */
  reason?: UnknownReason;
  /** Overrides the registry's default severity. */
  severity?: Severity;
  /** Evidence: the point(s) and values where the property fails, suggested text for quick fixes, … */
  data?: Record<string, unknown>;
  related?: { clause: ClauseKey; message: string }[];
}

/**
 * The common model every definition form is derived into (by `analysis/derive.ts`): partial losses,
 * Bayes risk and weight on q ∈ [0,1], and the link where there is one.
 * Endpoint values may be ±Infinity (regular losses allow l1(0) = ∞ and l0(1) = ∞); callers use limits.
 */
export interface LossFunctions {
  form: DefinitionForm;
  threshold: number;
  /** Partial losses on probabilities. */
  l1: RealFn;
  l0: RealFn;
  /** Their first derivatives in q (closed form when available, otherwise numeric). */
  dl1: RealFn;
  dl0: RealFn;
  /** Conditional risk L(η, q) = η·l1(q) + (1−η)·l0(q). */
  risk(eta: number, q: number): number;
  /** Conditional Bayes risk H(η) = inf_q L(η, q) (for a proper loss, L(η, η)). */
  bayes: RealFn;
  /** Weight function w = −H'' where it exists as a function (closed form or numeric); null if unavailable. */
  weight: RealFn | null;
  /**
   * True when `weight` comes from closed forms (the user's weight clause, or symbolic derivatives), so a
   * positive value is real curvature and not difference noise; checks may then trust its sign.
   */
  weightExact?: boolean;
  /** Link ψ: q ↦ v, its derivative, and its inverse, for composite and margin losses. */
  link: RealFn | null;
  dlink: RealFn | null;
  inverseLink: RealFn | null;
  /** Margin function φ for margin losses. */
  margin: RealFn | null;
  /** Notes from the derivation the user should see (e.g. "H computed by minimisation over v ∈ [−40, 40]"). */
  notes: Note[];
}

/**
 * What an engine note is about. Notes are statements for hovers, reports and the curve viewer; consumers
 * choose them by kind (e.g. the curves of an improper loss leave out the notes about curves that are not
 * drawn) and show `text`, never matching the wording.
 */
export type NoteKind =
  // How the derived model was obtained (derive.ts, properness.ts).
  | "derivation" // how the partial losses and H were obtained (Savage form, integral representation, minimisation)
  | "numeric-derivative" // a derivative is a central difference (no closed form was given)
  | "link" // how the link was obtained (canonical, implied by a margin function)
  | "bayes-on-diagonal" // H(η) = L(η, η) because the loss was found proper
  | "verdict-evidence" // what a proper verdict rests on: the sampled search's resolution, and the derivative identities when checked
  // Curvature (curvature.ts).
  | "numeric-weight" // w from second differences of H
  | "lambda-cross-check" // λ taken from second differences of H instead of the supplied weight
  | "strong-properness" // λ > 0: R(η,q) ≥ (λ/2)(η−q)²
  | "lambda-zero" // λ = 0, with where it is attained or approached
  | "psi-threshold" // the ψ-transform is left out at a threshold other than ½
  | "route-comparison" // the bounds of the routes at one surrogate regret
  // Sampled curves (curves.ts).
  | "loss-samples" // non-finite samples of l1, l0, H or the link
  | "weight-samples" // non-finite samples of w
  | "modulus-samples" // non-finite samples of δ or δ**
  | "bound-samples" // non-finite samples of a bound curve
  | "point-mass" // w has a point mass, not drawn as a function
  | "modulus-unavailable" // δ and δ** could not be drawn
  | "modulus-vacuous" // the modulus-route bound curve stops where δ** = 0
  | "bound-axes" // what the axes of the bound curves are
  | "curves-failed"; // the curves could not be sampled

/** One engine note: its kind (data) and its sentence (for display only). */
export interface Note {
  kind: NoteKind;
  text: string;
}
