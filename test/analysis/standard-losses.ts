/**
 * A table of standard binary losses as `LossSpec`s built from JS closures (the rows of table L of
 * test/reference/proper-losses.md, plus composite and margin examples of table K), with the verdict their
 * published sources give. Reusable by other analysis tests: `familyOf(spec)` wraps a spec into a parameter-free family.
 * Row ids (C…, F…, K…, L…, N…, P…) are rows of test/reference/proper-losses.md, which gives each one's source.
 */
import type { Claim, LossFamily, LossSpec, RealFn } from "../../server/src/loss-model.js";

/** The expected verdict of a row, with the source it comes from. */
export interface StandardLoss {
  id: string;
  spec: LossSpec;
  verdict: "strictly-proper" | "proper" | "improper";
  /** Published source (or "computed: how") of the verdict. */
  source: string;
  /** For proper-not-strict rows: the affine pieces of H. */
  flatIntervals?: [number, number][];
}

const LN2 = Math.LN2;

/** A partials-form spec from closures (threshold ½). */
export function partials(name: string, l1: RealFn, l0: RealFn, dl1?: RealFn, dl0?: RealFn, extra: Partial<LossSpec> = {}): LossSpec {
  const spec: LossSpec = { name, form: "partials", params: {}, threshold: 0.5, l1, l0, ...extra };
  if (dl1) spec.dl1 = dl1;
  if (dl0) spec.dl0 = dl0;
  return spec;
}

/** A Bayes-risk-form spec. */
export function bayes(name: string, H: RealFn, dH?: RealFn, extra: Partial<LossSpec> = {}): LossSpec {
  const spec: LossSpec = { name, form: "bayes", params: {}, threshold: 0.5, bayes: H, ...extra };
  if (dH) spec.dbayes = dH;
  return spec;
}

/** A weight-form spec. */
export function weight(name: string, w: RealFn, extra: Partial<LossSpec> = {}): LossSpec {
  return { name, form: "weight", params: {}, threshold: 0.5, weight: w, ...extra };
}

/** A margin-form spec. */
export function margin(name: string, phi: RealFn, dphi?: RealFn, d2phi?: RealFn): LossSpec {
  const spec: LossSpec = { name, form: "margin", params: {}, threshold: 0.5, margin: phi };
  if (dphi) spec.dmargin = dphi;
  if (d2phi) spec.d2margin = d2phi;
  return spec;
}

/** Wraps one spec into a family with no parameters (and optional claims). */
export function familyOf(spec: LossSpec, claims: Claim[] = []): LossFamily {
  return { name: spec.name, form: spec.form, params: [], claims, instantiate: () => spec };
}

const sq = (x: number) => x * x;
const logit = (q: number) => Math.log(q / (1 - q));

export const LOG_NATS = partials("log", (q) => -Math.log(q), (q) => -Math.log(1 - q), (q) => -1 / q, (q) => 1 / (1 - q));
export const BOOSTING = partials(
  "boosting",
  (q) => Math.sqrt((1 - q) / q),
  (q) => Math.sqrt(q / (1 - q)),
  (q) => -0.5 / (Math.sqrt((1 - q) / q) * q * q),
  (q) => 0.5 / (Math.sqrt(q / (1 - q)) * (1 - q) * (1 - q)),
);

/** Spherical score partial losses (row L7): 1 − q/‖(q,1−q)‖₂ and 1 − (1−q)/‖(q,1−q)‖₂. */
function spherical(): LossSpec {
  const n = (q: number) => Math.sqrt(q * q + (1 - q) * (1 - q));
  return partials("spherical", (q) => 1 - q / n(q), (q) => 1 - (1 - q) / n(q));
}

/** Pseudo-spherical α = 3 (row L15): 1 − q^{α−1}/‖q‖_α^{α−1}. */
function pseudoSpherical(alpha: number): LossSpec {
  const norm = (q: number) => Math.pow(Math.pow(q, alpha) + Math.pow(1 - q, alpha), 1 / alpha);
  return partials(
    `pseudo-spherical-${alpha}`,
    (q) => 1 - Math.pow(q, alpha - 1) / Math.pow(norm(q), alpha - 1),
    (q) => 1 - Math.pow(1 - q, alpha - 1) / Math.pow(norm(q), alpha - 1),
  );
}

/** Tsallis entropy H = (1 − η^α − (1−η)^α)/(α−1) (row L11) in the Bayes form. */
export function tsallis(alpha: number): LossSpec {
  return bayes(
    `tsallis-${alpha}`,
    (q) => (1 - Math.pow(q, alpha) - Math.pow(1 - q, alpha)) / (alpha - 1),
    (q) => (-alpha * Math.pow(q, alpha - 1) + alpha * Math.pow(1 - q, alpha - 1)) / (alpha - 1),
  );
}

/** Polynomial entropy H = 2^{−α} − |η − ½|^α (row L16). */
function polynomialEntropy(alpha: number): LossSpec {
  return bayes(
    `polynomial-${alpha}`,
    (q) => Math.pow(2, -alpha) - Math.pow(Math.abs(q - 0.5), alpha),
    (q) => -alpha * Math.pow(Math.abs(q - 0.5), alpha - 1) * Math.sign(q - 0.5),
  );
}

/** Cost-weighted misclassification loss ℓ_c (row L12): (1−c)[q < c], c[q ≥ c]. */
export function costWeighted(c: number, scale = 1): LossSpec {
  return partials(`cost-${c}`, (q) => (q < c ? scale * (1 - c) : 0), (q) => (q >= c ? scale * c : 0), undefined, undefined, { threshold: c });
}

/** Focal loss (row L17): −(1−q)^γ ln q, −q^γ ln(1−q), with closed-form derivatives. */
export function focal(g: number): LossSpec {
  return partials(
    `focal-${g}`,
    (q) => -Math.pow(1 - q, g) * Math.log(q),
    (q) => -Math.pow(q, g) * Math.log(1 - q),
    (q) => g * Math.pow(1 - q, g - 1) * Math.log(q) - Math.pow(1 - q, g) / q,
    (q) => -g * Math.pow(q, g - 1) * Math.log(1 - q) + Math.pow(q, g) / (1 - q),
    { params: { g } },
  );
}

/** The focal family with g ∈ [0, 5], default 2 (a parameterised family for range sweeps). */
export function focalFamily(claims: Claim[] = [], def = 2): LossFamily {
  return { name: "focal", form: "partials", params: [{ name: "g", default: def, lo: 0, hi: 5 }], claims, instantiate: (v) => focal(v["g"]!) };
}

export const STANDARD_LOSSES: StandardLoss[] = [
  { id: "1 log (nats)", spec: LOG_NATS, verdict: "strictly-proper", source: "Agarwal 2014, JMLR 15, Ex. 2; Reid & Williamson 2010, Table 1" },
  {
    id: "2 log (bits)",
    spec: partials("log2", (q) => -Math.log2(q), (q) => -Math.log2(1 - q), (q) => -1 / (q * LN2), (q) => 1 / ((1 - q) * LN2)),
    verdict: "strictly-proper",
    source: "Agarwal 2014, JMLR 15, Table 1 (scaled by 1/ln 2)",
  },
  { id: "3 Brier", spec: partials("brier", (q) => sq(1 - q), (q) => q * q, (q) => -2 * (1 - q), (q) => 2 * q), verdict: "strictly-proper", source: "Bao 2023, COLT, §4 (Gini/Brier)" },
  { id: "4 Brier x2", spec: partials("brier2", (q) => 2 * sq(1 - q), (q) => 2 * q * q), verdict: "strictly-proper", source: "Bao 2023, COLT, §4 (scaled Brier)" },
  { id: "5 half-Brier", spec: partials("brier-half", (q) => sq(1 - q) / 2, (q) => (q * q) / 2), verdict: "strictly-proper", source: "Reid & Williamson 2010, Table 1 (w = 1)" },
  { id: "6 Ag14 squared", spec: partials("ag14-squared", (q) => 4 * sq(1 - q), (q) => 4 * q * q), verdict: "strictly-proper", source: "Agarwal 2014, JMLR 15, Ex. 3" },
  { id: "7 spherical", spec: spherical(), verdict: "strictly-proper", source: "Agarwal 2014, JMLR 15, Table 1" },
  { id: "8 boosting", spec: BOOSTING, verdict: "strictly-proper", source: "Agarwal 2014, JMLR 15, Ex. 1" },
  {
    id: "9 boosting x2",
    spec: partials("boosting2", (q) => 2 * Math.sqrt((1 - q) / q), (q) => 2 * Math.sqrt(q / (1 - q))),
    verdict: "strictly-proper",
    source: "Reid & Williamson 2010, Table 1 (w = [q(1−q)]^{−3/2})",
  },
  { id: "10 Beta(1/2,1/2) weight", spec: weight("beta-half", (q) => 1 / Math.sqrt(q * (1 - q))), verdict: "strictly-proper", source: "Reid & Williamson 2010, Thm 6 (w ≥ 0 generates a proper loss); w > 0 on (0,1)" },
  {
    id: "10b Beta(1/2,1/2) partials",
    spec: partials("beta-half-partials", (q) => Math.acos(Math.sqrt(q)) - Math.sqrt(q * (1 - q)), (q) => Math.asin(Math.sqrt(q)) - Math.sqrt(q * (1 - q))),
    verdict: "strictly-proper",
    source: "computed: closed form of the Beta(½,½) integrals of Reid & Williamson 2010, Thm 6 (row L10b; stationarity checked with sympy)",
  },
  { id: "10c Beta(2,2) weight", spec: weight("beta-2-2", (q) => q * (1 - q)), verdict: "strictly-proper", source: "Bao 2023, COLT, Thm 2 via Reid & Williamson 2010 (w > 0 on (0,1))" },
  { id: "10a Beta(0,0) weight = log", spec: weight("beta-0-0", (q) => 1 / (q * (1 - q))), verdict: "strictly-proper", source: "Reid & Williamson 2010, Table 1 (w = 1/(c(1−c)) is log loss)" },
  { id: "11 Tsallis 1/2", spec: tsallis(0.5), verdict: "strictly-proper", source: "computed: w = α(q^{α−2} + (1−q)^{α−2}) > 0 (row L11); Bao 2023, Thm 2" },
  { id: "11 Tsallis 1.5", spec: tsallis(1.5), verdict: "strictly-proper", source: "computed: w > 0 (row L11); Bao 2023, Thm 2" },
  { id: "11b Tsallis 3", spec: tsallis(3), verdict: "strictly-proper", source: "computed: w = 3 (row L11b); Bao 2023, Thm 2" },
  {
    id: "12 cost-weighted c=0.2",
    spec: costWeighted(0.2),
    verdict: "proper",
    flatIntervals: [
      [0, 0.2],
      [0.2, 1],
    ],
    source: "Reid & Williamson 2010, Table 1 and Thm 6 (w = δ(q − c))",
  },
  {
    id: "13 0-1",
    spec: partials("zero-one", (q) => (q < 0.5 ? 1 : 0), (q) => (q >= 0.5 ? 1 : 0)),
    verdict: "proper",
    flatIntervals: [
      [0, 0.5],
      [0.5, 1],
    ],
    source: "Reid & Williamson 2010, footnote 6 (w = 2δ(c − ½))",
  },
  {
    id: "14 hinge proper version 4ℓ_½",
    spec: costWeighted(0.5, 4),
    verdict: "proper",
    flatIntervals: [
      [0, 0.5],
      [0.5, 1],
    ],
    source: "computed: w = 4δ(q − ½), four times the cost-½ loss of Reid & Williamson 2010, Table 1 (row L14)",
  },
  { id: "14b hinge, linear partials", spec: partials("hinge-linear", (q) => 2 * (1 - q), (q) => 2 * q, () => -2, () => 2), verdict: "improper", source: "computed: L(0.7,0.7) = 0.84 > L(0.7,1) = 0.6 (row N38)" },
  { id: "15 pseudo-spherical 3", spec: pseudoSpherical(3), verdict: "strictly-proper", source: "Gneiting & Raftery 2007, JASA 102 (pseudo-spherical family, from memory); row L15" },
  { id: "16 polynomial entropy 3", spec: polynomialEntropy(3), verdict: "strictly-proper", source: "Bao 2023, COLT, App. B.5 (w = 0 only at ½)" },
  { id: "16 polynomial entropy 4", spec: polynomialEntropy(4), verdict: "strictly-proper", source: "Bao 2023, COLT, App. B.5" },
  { id: "17 focal γ=2", spec: focal(2), verdict: "improper", source: "Charoenphakdee et al. 2021, CVPR (not strictly proper); computed: row N35" },
  { id: "17 focal γ=1", spec: focal(1), verdict: "improper", source: "Charoenphakdee et al. 2021, CVPR" },
];

/** Composite examples (table K): a proper loss on probabilities with a link. */
export const HALF_LOGIT = (q: number) => 0.5 * logit(q);
export function withLink(spec: LossSpec, name: string, link: RealFn, dlink?: RealFn, d2link?: RealFn): LossSpec {
  const s: LossSpec = { ...spec, name, link };
  if (dlink) s.dlink = dlink;
  if (d2link) s.d2link = d2link;
  return s;
}

export const MARGIN_EXP = margin("exp-margin", (v) => Math.exp(-v), (v) => -Math.exp(-v), (v) => Math.exp(-v));
/** Logistic margin ln(1 + e^{−v}), written stably for large |v|. */
export const MARGIN_LOGISTIC = margin(
  "logistic-margin",
  (v) => (v > 0 ? Math.log1p(Math.exp(-v)) : -v + Math.log1p(Math.exp(v))),
  (v) => -1 / (1 + Math.exp(v)),
  (v) => {
    const s = 1 / (1 + Math.exp(-v));
    return s * (1 - s);
  },
);
export const MARGIN_SQUARED = margin("squared-margin", (v) => sq(1 - v), (v) => -2 * (1 - v), () => 2);
export const MARGIN_HINGE = margin("hinge-margin", (v) => Math.max(0, 1 - v), (v) => (v < 1 ? -1 : 0), () => 0);
