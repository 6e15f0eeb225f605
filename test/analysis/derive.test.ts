/**
 * Tests of the derivation of the common model (partial losses, Bayes risk, weight, link) from every
 * definition form. Each check names its published source, or says "computed" and how.
 * Row ids (C…, F…, K…, L…, N…, P…) are rows of test/reference/proper-losses.md, which gives each one's source.
 */
import { describe, expect, it } from "vitest";
import { deriveLossFunctions } from "../../server/src/analysis/derive.js";
import type { LossSpec } from "../../server/src/loss-model.js";
import { nearlyEqual } from "../../server/src/analysis/numeric/tolerance.js";
import {
  BOOSTING,
  LOG_NATS,
  MARGIN_EXP,
  MARGIN_HINGE,
  MARGIN_LOGISTIC,
  MARGIN_SQUARED,
  bayes,
  partials,
  tsallis,
  weight,
} from "./standard-losses.js";

const entropy = (q: number) => -q * Math.log(q) - (1 - q) * Math.log(1 - q);
const logit = (q: number) => Math.log(q / (1 - q));
const probe = [0.001, 0.01, 0.1, 0.25, 0.3, 0.5, 0.7, 0.9, 0.99, 0.999];

function fnsOf(spec: LossSpec) {
  const r = deriveLossFunctions(spec);
  expect(r.fns, JSON.stringify(r.findings)).not.toBeNull();
  return r.fns!;
}

describe("weight form (integral representation, Reid & Williamson 2010, Thm 6 eq. (5))", () => {
  it("w = 1/(q(1−q)) gives log loss: l1 = −ln q and l0 = −ln(1−q) to 1e-8 at 1000 points (Reid & Williamson 2010, Table 1)", () => {
    const f = fnsOf(weight("beta00", (q) => 1 / (q * (1 - q))));
    let worst = 0;
    for (let i = 1; i < 1000; i++) {
      const q = i / 1000;
      worst = Math.max(worst, Math.abs(f.l1(q) + Math.log(q)), Math.abs(f.l0(q) + Math.log(1 - q)));
    }
    expect(worst).toBeLessThan(1e-8);
    // Near the endpoints the comparison uses −ln of the same doubles (1 − q is exact for these q).
    for (const q of [1e-9, 1e-6, 1 - 1e-6, 1 - 1e-9]) {
      expect(nearlyEqual(f.l1(q), -Math.log(q), 1e-8, 1e-8)).toBe(true);
      expect(nearlyEqual(f.l0(q), -Math.log(1 - q), 1e-8, 1e-8)).toBe(true);
    }
    expect(f.l1(0)).toBe(Infinity);
    expect(f.l1(1)).toBe(0);
  });

  it.each([
    // Row L10b (computed: closed form of the Beta(½,½) integrals of Reid & Williamson 2010, Thm 6; stationarity checked with sympy).
    ["Beta(1/2,1/2)", (q: number) => 1 / Math.sqrt(q * (1 - q)), (q: number) => Math.acos(Math.sqrt(q)) - Math.sqrt(q * (1 - q)), (q: number) => Math.asin(Math.sqrt(q)) - Math.sqrt(q * (1 - q))],
    // Row L10c (computed: Beta(2,2) weight q(1−q) integrated by Reid & Williamson 2010, Thm 6 eq. (5)).
    ["Beta(2,2)", (q: number) => q * (1 - q), (q: number) => 1 / 12 - q ** 2 / 2 + (2 * q ** 3) / 3 - q ** 4 / 4, (q: number) => q ** 3 / 3 - q ** 4 / 4],
    // Reid & Williamson 2010, Table 1: w = 1 gives the half-Brier loss (1−q)²/2, q²/2.
    ["Beta(1,1)", () => 1, (q: number) => (1 - q) ** 2 / 2, (q: number) => q ** 2 / 2],
  ])("%s weight reproduces the closed-form partial losses", (_n, w, l1, l0) => {
    const f = fnsOf(weight("w", w));
    for (const q of probe) {
      expect(nearlyEqual(f.l1(q), l1(q), 1e-9, 1e-11)).toBe(true);
      expect(nearlyEqual(f.l0(q), l0(q), 1e-9, 1e-11)).toBe(true);
      expect(nearlyEqual(f.weight!(q), w(q))).toBe(true);
    }
  });

  it.each([
    ["1/q² (diverges at 0 for l0)", (q: number) => 1 / (q * q), 0],
    ["1/(1−q)² (diverges at 1 for l1)", (q: number) => 1 / ((1 - q) * (1 - q)), 1],
  ])("a non-integrable weight %s gives weight-not-integrable with where", (_n, w, where) => {
    const r = deriveLossFunctions(weight("bad", w));
    expect(r.fns).toBeNull();
    const f = r.findings.find((x) => x.code === "weight-not-integrable");
    expect(f?.clause).toBe("weight");
    expect(f?.data?.["q"]).toBe(where);
  });

  it("a weight that is infinite inside (0,1) gives non-finite-value with the point", () => {
    const r = deriveLossFunctions(weight("bad", (q) => 1 / (q - 0.5)));
    expect(r.fns).toBeNull();
    const f = r.findings.find((x) => x.code === "non-finite-value");
    expect(f?.data?.["q"]).toBe(0.5);
  });

  it("a barely integrable endpoint singularity (w = q^-1.9, so c·w = c^-0.9) is not flagged (computed: ∫_0 c^-0.9 dc = 10 converges)", () => {
    const r = deriveLossFunctions(weight("edge", (q) => Math.pow(q, -1.9)));
    expect(r.findings.map((f) => f.code)).not.toContain("weight-not-integrable");
  });
});

describe("Bayes form (Savage representation, Bao 2023, Thm 1; Reid & Williamson 2010, Thm 4)", () => {
  it("Tsallis α = ½ gives the closed-form partial losses and weight (row L11c, computed by the Savage form, Bao 2023 Thm 1; checked with sympy)", () => {
    const f = fnsOf(tsallis(0.5));
    for (const q of probe) {
      expect(nearlyEqual(f.l1(q), (1 + q) / Math.sqrt(q) + Math.sqrt(1 - q) - 2, 1e-9, 1e-12)).toBe(true);
      expect(nearlyEqual(f.l0(q), Math.sqrt(q) + (2 - q) / Math.sqrt(1 - q) - 2, 1e-9, 1e-12)).toBe(true);
      // The weight −H'' is a central difference of the closed-form H'; 1e-5 relative covers its truncation near the endpoints.
      expect(nearlyEqual(f.weight!(q), 0.5 * (q ** -1.5 + (1 - q) ** -1.5), 1e-5)).toBe(true);
    }
  });

  it("H = η(1−η) gives the Brier loss (1−q)², q² and w = 2 (Bao 2023, §4)", () => {
    const f = fnsOf(bayes("gini", (q) => q * (1 - q), (q) => 1 - 2 * q));
    for (const q of probe) {
      expect(nearlyEqual(f.l1(q), (1 - q) ** 2)).toBe(true);
      expect(nearlyEqual(f.l0(q), q * q, 1e-9, 1e-12)).toBe(true);
      expect(nearlyEqual(f.weight!(q), 2, 1e-6)).toBe(true);
      expect(nearlyEqual(f.bayes(q), q * (1 - q))).toBe(true);
    }
  });

  it("without a closed-form H' the numeric derivative still gives log loss from the entropy (computed: central differences)", () => {
    const f = fnsOf(bayes("entropy", entropy));
    for (const q of [0.01, 0.3, 0.5, 0.8, 0.99]) expect(nearlyEqual(f.l1(q), -Math.log(q), 1e-7)).toBe(true);
  });
});

describe("partials form", () => {
  it("hinge with linear partials: L(0.7,0.7) = 0.84, L(0.7,1) = 0.60 and H(0.7) = inf_q L = 0.6, not L(η,η) (N38, computed)", () => {
    const f = fnsOf(partials("hinge-linear", (q) => 2 * (1 - q), (q) => 2 * q));
    expect(nearlyEqual(f.risk(0.7, 0.7), 0.84)).toBe(true);
    expect(nearlyEqual(f.risk(0.7, 1), 0.6)).toBe(true);
    expect(nearlyEqual(f.bayes(0.7), 0.6, 1e-9)).toBe(true);
  });

  it("log loss: H(η) = L(η,η) = the entropy exactly, w = 1/(q(1−q)) (Reid & Williamson 2010, Table 1)", () => {
    const f = fnsOf(LOG_NATS);
    for (const q of probe) {
      expect(nearlyEqual(f.bayes(q), entropy(q))).toBe(true);
      expect(nearlyEqual(f.weight!(q), 1 / (q * (1 - q)))).toBe(true);
    }
    expect(f.risk(0, 0)).toBe(0);
    expect(f.risk(1, 1)).toBe(0);
  });

  it("boosting loss weight ½[q(1−q)]^{-3/2} from the stationarity ratio (row L8: Agarwal 2014, Ex. 1; Reid & Williamson 2010, Thm 1)", () => {
    const f = fnsOf(BOOSTING);
    for (const q of probe) expect(nearlyEqual(f.weight!(q), 0.5 * (q * (1 - q)) ** -1.5, 1e-9)).toBe(true);
  });

  it.each([
    // Canonical link ψ' = w (Reid & Williamson 2010, §6.1): log loss → logit, half-Brier (w = 1) → q − ½.
    ["log", LOG_NATS, logit],
    ["half-Brier", partials("hb", (q) => (1 - q) ** 2 / 2, (q) => q * q / 2, (q) => -(1 - q), (q) => q), (q: number) => q - 0.5],
    // Boosting proper loss √((1−q)/q), √(q/(1−q)): canonical link (2q − 1)/√(q(1−q)) (Agarwal 2014, Table 1, "canonical exponential").
    ["boosting", BOOSTING, (q: number) => (2 * q - 1) / Math.sqrt(q * (1 - q))],
    // The same loss given by its weight function ½[q(1−q)]^{−3/2} (row L8).
    ["boosting by weight", { name: "bw", form: "weight" as const, params: {}, threshold: 0.5, weight: (q: number) => 0.5 * (q * (1 - q)) ** -1.5 }, (q: number) => (2 * q - 1) / Math.sqrt(q * (1 - q))],
  ])("canonical link of %s", (_n, spec, expected) => {
    const f = fnsOf({ ...spec, canonicalLink: true });
    for (const q of [0.01, 0.2, 0.5, 0.7, 0.95]) expect(nearlyEqual(f.link!(q), expected(q), 1e-8, 1e-10)).toBe(true);
    expect(nearlyEqual(f.inverseLink!(f.link!(0.3)), 0.3, 1e-9)).toBe(true);
  });

  it("a declared inverse that is not the link's inverse gives inverse-mismatch with the point", () => {
    const r = deriveLossFunctions({ ...LOG_NATS, link: logit, inverse: (v) => 1 / (1 + Math.exp(-2 * v)) });
    const f = r.findings.find((x) => x.code === "inverse-mismatch");
    expect(f?.clause).toBe("inverse");
    expect(typeof f?.data?.["q"]).toBe("number");
  });

  it("a non-monotone link gives link-not-monotone", () => {
    const r = deriveLossFunctions({ ...LOG_NATS, link: (q) => (q - 0.5) ** 2 });
    expect(r.findings.find((x) => x.code === "link-not-monotone")?.clause).toBe("link");
  });
});

describe("score-partials form", () => {
  const logistic: LossSpec = {
    name: "logistic",
    form: "score-partials",
    params: {},
    threshold: 0.5,
    l1: (v) => Math.log1p(Math.exp(-v)),
    l0: (v) => Math.log1p(Math.exp(v)),
    link: logit,
    inverse: (v) => 1 / (1 + Math.exp(-v)),
  };
  it("logistic loss with the logit link is log loss on q (Agarwal 2014, Ex. 2; Reid & Williamson 2010, §6.1)", () => {
    const r = deriveLossFunctions(logistic);
    expect(r.findings).toEqual([]);
    for (const q of probe) {
      expect(nearlyEqual(r.fns!.l1(q), -Math.log(q), 1e-9)).toBe(true);
      expect(nearlyEqual(r.fns!.weight!(q), 1 / (q * (1 - q)), 1e-5)).toBe(true);
    }
  });
  it("a wrong declared inverse is reported with the point", () => {
    const r = deriveLossFunctions({ ...logistic, inverse: (v) => 1 / (1 + Math.exp(-2 * v)) });
    expect(r.findings.map((f) => f.code)).toContain("inverse-mismatch");
  });
  it("score partials without a link cannot be analysed (analysis-unknown with a reason)", () => {
    const { link: _l, ...noLink } = logistic;
    const r = deriveLossFunctions(noLink as LossSpec);
    expect(r.fns).toBeNull();
    expect(r.findings[0]?.code).toBe("analysis-unknown");
  });
});

describe("margin form (Reid & Williamson 2010, Cor. 14; Bartlett, Jordan & McAuliffe 2006)", () => {
  it.each([
    // Exponential: ψ⁻¹(v) = 1/(1+e^{−2v}) so ψ = ½ logit; l1 = √((1−q)/q); H = 2√(η(1−η)) (RW10 §4.3; RW11 App. D).
    ["exponential", MARGIN_EXP, (q: number) => 0.5 * logit(q), (q: number) => Math.sqrt((1 - q) / q), (q: number) => 2 * Math.sqrt(q * (1 - q))],
    // Logistic: ψ = logit, l1 = −ln q, H = entropy (Agarwal 2014, Ex. 2; rows K1, P2).
    ["logistic", MARGIN_LOGISTIC, logit, (q: number) => -Math.log(q), entropy],
    // Squared (1−v)²: ψ = 2q−1, l1 = 4(1−q)², H = 4η(1−η) (Agarwal 2014, Ex. 3; rows K3, P4).
    ["squared", MARGIN_SQUARED, (q: number) => 2 * q - 1, (q: number) => 4 * (1 - q) ** 2, (q: number) => 4 * q * (1 - q)],
  ])("%s: implied link, partial losses and Bayes risk", (_n, spec, link, l1, H) => {
    const r = deriveLossFunctions(spec);
    expect(r.findings).toEqual([]);
    const f = r.fns!;
    for (const q of [0.01, 0.2, 0.5, 0.7, 0.95]) {
      expect(nearlyEqual(f.link!(q), link(q), 1e-9, 1e-12)).toBe(true);
      expect(nearlyEqual(f.l1(q), l1(q), 1e-9, 1e-12)).toBe(true);
      expect(nearlyEqual(f.bayes(q), H(q), 1e-9, 1e-12)).toBe(true);
    }
  });

  it("exponential margin weight ½[q(1−q)]^{-3/2} (row L8; Reid & Williamson 2010, Cor. 14)", () => {
    const f = fnsOf(MARGIN_EXP);
    for (const q of [0.1, 0.3, 0.5, 0.8]) expect(nearlyEqual(f.weight!(q), 0.5 * (q * (1 - q)) ** -1.5, 1e-6)).toBe(true);
  });

  it("hinge: no invertible link (margin-no-link) and H = 2 min(η, 1−η) (Reid & Williamson 2010, Cor. 14; rows K5, P6)", () => {
    const r = deriveLossFunctions(MARGIN_HINGE);
    expect(r.findings.map((f) => f.code)).toEqual(["margin-no-link"]);
    expect(r.fns!.link).toBeNull();
    for (const q of [0.1, 0.3, 0.5, 0.7, 0.9]) expect(nearlyEqual(r.fns!.bayes(q), 2 * Math.min(q, 1 - q), 1e-9, 1e-12)).toBe(true);
  });
});

describe("guards", () => {
  it("an exception while reading the spec becomes an internal-error finding, not a throw", () => {
    const spec = { name: "x", form: "weight", params: {}, threshold: 0.5 } as LossSpec;
    Object.defineProperty(spec, "weight", {
      get() {
        throw new Error("broken clause");
      },
    });
    const r = deriveLossFunctions(spec);
    expect(r.fns).toBeNull();
    expect(r.findings[0]?.code).toBe("internal-error");
  });

  it("a closure that throws evaluates to NaN instead of throwing", () => {
    const f = fnsOf(partials("t", () => {
      throw new Error("boom");
    }, (q) => q));
    expect(Number.isNaN(f.l1(0.3))).toBe(true);
  });
});
