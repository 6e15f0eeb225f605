/**
 * LossFunctions fixtures for the curvature tests, built by hand from closures (the losses of tables L and N
 * of test/reference/proper-losses.md). Partial losses come from the Bayes risk through the Savage
 * representation l1 = H + (1−q)H', l0 = H − qH' (Bao 2023, COLT, Thm 1 eqs. (2)–(3); Reid & Williamson
 * 2010, "Composite Binary Losses", JMLR 11, Thm 4).
 */
import type { LossFunctions, RealFn } from "../../server/src/loss-model.js";
import { centralDiff } from "../../server/src/analysis/numeric/differences.js";

export interface FixtureInput {
  bayes: RealFn;
  /** H' (right derivative at kinks). */
  dbayes?: RealFn;
  /** w = −H'' where it is a function; omit to make the engine use second differences of H. */
  weight?: RealFn | null;
  threshold?: number;
  margin?: RealFn | null;
  link?: RealFn | null;
  inverseLink?: RealFn | null;
  form?: LossFunctions["form"];
}

/** LossFunctions from a Bayes risk (and optionally H', w, margin and link closures). */
export function fromBayes(input: FixtureInput): LossFunctions {
  const H = input.bayes;
  const dH = input.dbayes ?? ((q: number) => centralDiff(H, q, 1e-6));
  const w = input.weight ?? null;
  const l1 = (q: number) => H(q) + (1 - q) * dH(q);
  const l0 = (q: number) => H(q) - q * dH(q);
  const dl1 = w ? (q: number) => -(1 - q) * w(q) : (q: number) => centralDiff(l1, q);
  const dl0 = w ? (q: number) => q * w(q) : (q: number) => centralDiff(l0, q);
  return {
    form: input.form ?? (input.margin ? "margin" : "bayes"),
    threshold: input.threshold ?? 0.5,
    l1,
    l0,
    dl1,
    dl0,
    risk: (eta, q) => eta * l1(q) + (1 - eta) * l0(q),
    bayes: H,
    weight: w,
    link: input.link ?? null,
    dlink: null,
    inverseLink: input.inverseLink ?? null,
    margin: input.margin ?? null,
    notes: [],
  };
}

/** x·ln x with the limit 0 at 0. */
const xlnx = (x: number) => (x <= 0 ? 0 : x * Math.log(x));
const logit = (q: number) => Math.log(q / (1 - q));

/** Scales a loss (H, H', w by k): λ and δ scale linearly (test/reference/proper-losses.md, row C17, computed). */
export function scaled(input: FixtureInput, k: number): FixtureInput {
  const w = input.weight;
  const dH = input.dbayes;
  return {
    ...input,
    bayes: (q) => k * input.bayes(q),
    dbayes: dH ? (q) => k * dH(q) : undefined,
    weight: w ? (q) => k * w(q) : w,
    margin: input.margin ? ((m: RealFn) => (v: number) => k * m(v))(input.margin) : input.margin,
  };
}

export const logNats: FixtureInput = {
  bayes: (q) => -xlnx(q) - xlnx(1 - q),
  dbayes: (q) => Math.log((1 - q) / q),
  weight: (q) => 1 / (q * (1 - q)),
};
export const logBits: FixtureInput = scaled(logNats, 1 / Math.LN2);
export const brier: FixtureInput = { bayes: (q) => q * (1 - q), dbayes: (q) => 1 - 2 * q, weight: () => 2 };
export const brierTwice: FixtureInput = scaled(brier, 2);
export const halfBrier: FixtureInput = scaled(brier, 0.5);
/** Agarwal 2014 squared loss 4(1−q)², 4q² (H = 4η(1−η), w = 8). */
export const ag14Squared: FixtureInput = scaled(brier, 4);
export const spherical: FixtureInput = {
  bayes: (q) => 1 - Math.hypot(q, 1 - q),
  dbayes: (q) => -(2 * q - 1) / Math.hypot(q, 1 - q),
  weight: (q) => (q * q + (1 - q) * (1 - q)) ** -1.5,
};
/** Boosting / exponential proper loss, BSS05 scale: H = 2√(η(1−η)), w = ½[q(1−q)]^{−3/2}. */
export const boosting: FixtureInput = {
  bayes: (q) => 2 * Math.sqrt(q * (1 - q)),
  dbayes: (q) => (1 - 2 * q) / Math.sqrt(q * (1 - q)),
  weight: (q) => 0.5 * (q * (1 - q)) ** -1.5,
};
export const betaHalfHalf: FixtureInput = {
  bayes: (q) => q * Math.acos(Math.sqrt(q)) + (1 - q) * Math.asin(Math.sqrt(q)) - Math.sqrt(q * (1 - q)),
  dbayes: (q) => Math.acos(Math.sqrt(q)) - Math.asin(Math.sqrt(q)),
  weight: (q) => (q * (1 - q)) ** -0.5,
};
export const betaTwoTwo: FixtureInput = {
  bayes: (q) => (q - 2 * q ** 3 + q ** 4) / 12,
  dbayes: (q) => (1 - 6 * q * q + 4 * q ** 3) / 12,
  weight: (q) => q * (1 - q),
};
/** Tsallis / α-entropy: H = (1 − η^α − (1−η)^α)/(α−1), w = α(q^{α−2} + (1−q)^{α−2}). */
export function tsallis(alpha: number): FixtureInput {
  return {
    bayes: (q) => (1 - q ** alpha - (1 - q) ** alpha) / (alpha - 1),
    dbayes: (q) => (alpha * ((1 - q) ** (alpha - 1) - q ** (alpha - 1))) / (alpha - 1),
    weight: (q) => alpha * (q ** (alpha - 2) + (1 - q) ** (alpha - 2)),
  };
}
/** Pseudo-spherical α: H = 1 − ‖(η, 1−η)‖_α; weight given in closed form for α = 3 only. */
export function pseudoSpherical(alpha: number): FixtureInput {
  const norm = (q: number) => (q ** alpha + (1 - q) ** alpha) ** (1 / alpha);
  return {
    bayes: (q) => 1 - norm(q),
    dbayes: (q) => -((q ** alpha + (1 - q) ** alpha) ** (1 / alpha - 1)) * (q ** (alpha - 1) - (1 - q) ** (alpha - 1)),
    weight: alpha === 3 ? (q) => (2 * q * (1 - q)) / (3 * q * q - 3 * q + 1) ** (5 / 3) : null,
  };
}
/** Polynomial entropy (Bao 2023 App. B.5): H = 2^{−α} − |η−½|^α, w = α(α−1)|q−½|^{α−2}. */
export function polynomial(alpha: number): FixtureInput {
  return {
    bayes: (q) => 2 ** -alpha - Math.abs(q - 0.5) ** alpha,
    dbayes: (q) => -alpha * Math.sign(q - 0.5) * Math.abs(q - 0.5) ** (alpha - 1),
    weight: (q) => alpha * (alpha - 1) * Math.abs(q - 0.5) ** (alpha - 2),
  };
}
/** Cost-weighted misclassification ℓ_c (RW10 Table 1): H = min((1−c)η, c(1−η)); w = δ(q−c). */
export function costWeighted(c: number, k = 1): FixtureInput {
  return {
    bayes: (q) => k * Math.min((1 - c) * q, c * (1 - q)),
    dbayes: (q) => k * (q < c ? 1 - c : -c),
    weight: null,
    threshold: c,
  };
}
export const zeroOne: FixtureInput = costWeighted(0.5, 2);
/** The proper loss with the hinge Bayes risk 2 min(η, 1−η) (= 4ℓ_½, test/reference/proper-losses.md row L14). */
export const hingeBayes: FixtureInput = costWeighted(0.5, 4);
/** Asymmetric H = −η ln η (w = 1/q), test/reference/proper-losses.md row N34. */
export const entropyOneSided: FixtureInput = {
  bayes: (q) => -xlnx(q),
  dbayes: (q) => -Math.log(q) - 1,
  weight: (q) => 1 / q,
};

/** Margin losses (φ(v) on y = 1), with their Bayes risk H(η) = inf_v ηφ(v) + (1−η)φ(−v) (test/reference/proper-losses.md, table P). */
const softplusNeg = (v: number) => (v > 0 ? Math.log1p(Math.exp(-v)) : -v + Math.log1p(Math.exp(v)));
export const logisticMargin: FixtureInput = { ...logNats, margin: softplusNeg, link: logit, threshold: 0.5 };
export const logisticBitsMargin: FixtureInput = { ...logBits, margin: (v) => softplusNeg(v) / Math.LN2, link: logit };
export const exponentialMargin: FixtureInput = { ...boosting, margin: (v) => Math.exp(-v), link: (q) => 0.5 * logit(q) };
export const squaredMargin: FixtureInput = { ...ag14Squared, margin: (v) => (1 - v) ** 2, link: (q) => 2 * q - 1 };
export const truncatedQuadraticMargin: FixtureInput = { ...ag14Squared, margin: (v) => Math.max(0, 1 - v) ** 2, link: (q) => 2 * q - 1 };
/**
 * Hinge margin loss: its partial losses at the boundary q = ½ are φ(0) = 1 for both labels, i.e. the
 * supergradient H'(½) = 0 (elsewhere those of 4ℓ_½).
 */
export const hingeMargin: FixtureInput = {
  ...hingeBayes,
  dbayes: (q) => (q < 0.5 ? 2 : q > 0.5 ? -2 : 0),
  margin: (v) => Math.max(0, 1 - v),
};

/** A named fixture with its known strong-properness constant λ (a lower bound on inf w). */
export interface TableEntry {
  id: string;
  input: FixtureInput;
  lambda: number;
}

/** The strictly proper fixtures with their λ (test/reference/proper-losses.md, column λ of table L and rows N1–N6), for property tests. */
export const STRICTLY_PROPER_TABLE: TableEntry[] = [
  { id: "log-nats", input: logNats, lambda: 4 },
  { id: "log-bits", input: logBits, lambda: 4 / Math.LN2 },
  { id: "brier", input: brier, lambda: 2 },
  { id: "ag14-squared", input: ag14Squared, lambda: 8 },
  { id: "spherical", input: spherical, lambda: 1 },
  { id: "boosting", input: boosting, lambda: 4 },
  { id: "beta-half-half", input: betaHalfHalf, lambda: 2 },
  { id: "beta-two-two", input: betaTwoTwo, lambda: 0 },
  { id: "tsallis-half", input: tsallis(0.5), lambda: 2 * Math.SQRT2 },
  { id: "tsallis-2.5", input: tsallis(2.5), lambda: 2.5 },
  { id: "pseudo-spherical-3", input: pseudoSpherical(3), lambda: 0 },
  { id: "polynomial-3", input: polynomial(3), lambda: 0 },
];
