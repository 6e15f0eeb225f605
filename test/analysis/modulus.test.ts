/**
 * Modulus of convexity δ of f = −H (Bao 2023, "Proper Losses, Moduli of Convexity, and Surrogate Regret
 * Bounds", COLT, Def. 4 eq. (9): midpoint form, "≥ ε", no extra factor), its biconjugate δ**, the
 * inverse of δ** and the behaviour near 0, against rows C7–C10, L… and N… of the reference tables.
 * Row ids (C…, F…, K…, L…, N…, P…) are rows of test/reference/proper-losses.md, which gives each one's source.
 */
import { describe, expect, it } from "vitest";
import { buildModulusModel, modulusOfConvexity } from "../../server/src/analysis/modulus.js";
import { boundedUnitFn } from "../../server/src/analysis/numeric/limits.js";
import type { RealFn } from "../../server/src/loss-model.js";
import {
  betaHalfHalf,
  betaTwoTwo,
  boosting,
  brier,
  brierTwice,
  hingeBayes,
  logBits,
  logNats,
  polynomial,
  pseudoSpherical,
  spherical,
  tsallis,
  zeroOne,
  type FixtureInput,
} from "./curvature-table.js";

/**
 * δ is a minimum of differences of O(1) values; 1e-8 absolute on numerically minimised moduli is the
 * tolerance of row C16 (common practice).
 */
const DELTA_ABS_TOL = 1e-8;

const negH = (input: FixtureInput): RealFn => (q: number) => -input.bayes(q);

describe("modulusOfConvexity against table N (values computed with mpmath, test/reference/recompute.py)", () => {
  const cases: { name: string; input: FixtureInput; eps: number; value: number; source: string }[] = [
    // Row N9: Bao 2023 §4 (δ = ε²/4 for the Brier loss).
    { name: "Brier δ(0.2)", input: brier, eps: 0.2, value: 0.01, source: "Bao23 §4; N9" },
    // Row N10: computed (N9 scaled by 2, row C17).
    { name: "Brier×2 δ(0.2)", input: brierTwice, eps: 0.2, value: 0.02, source: "N10, computed" },
    // Row N11: Bao 2023 §4 closed form δ⁽¹⁾, minimiser m = ½; values computed (mpmath).
    { name: "log δ(0.1)", input: logNats, eps: 0.1, value: 0.00500836684636, source: "Bao23 §4; N11" },
    { name: "log δ(0.2)", input: logNats, eps: 0.2, value: 0.0201355135507, source: "Bao23 §4; N11" },
    { name: "log δ(0.5)", input: logNats, eps: 0.5, value: 0.130812035941, source: "Bao23 §4; N11" },
    // Row N12: computed (mpmath).
    { name: "log bits δ(0.2)", input: logBits, eps: 0.2, value: 0.0290494055453, source: "N12, computed" },
    // Row N13: Bao 2023 §4 formula 1 − √(1−ε²).
    { name: "exponential δ(0.2)", input: boosting, eps: 0.2, value: 0.0202041028867, source: "Bao23 §4; N13" },
    { name: "exponential δ(0.5)", input: boosting, eps: 0.5, value: 0.133974596216, source: "Bao23 §4; N13" },
    // Row N14: endpoint minimiser (Bao 2023 §4, δ⁽²⁾); computed (mpmath).
    { name: "spherical δ(0.1)", input: spherical, eps: 0.1, value: 0.00145437738485, source: "N14, computed" },
    { name: "spherical δ(0.2)", input: spherical, eps: 0.2, value: 0.00677204874802, source: "N14, computed" },
    { name: "spherical δ(0.5)", input: spherical, eps: 0.5, value: 0.0629839755512, source: "N14, computed" },
    // Row N15: computed (mpmath).
    { name: "Beta(½,½) δ(0.2)", input: betaHalfHalf, eps: 0.2, value: 0.0100337406357, source: "N15, computed" },
    // Row N16: Bao 2023 App. B.5, δ = (ε/2)^α.
    { name: "cubic polynomial δ(0.2)", input: polynomial(3), eps: 0.2, value: 0.001, source: "Bao23 App. B.5; N16" },
    // Row N17: computed (mpmath).
    { name: "Beta(2,2) δ(0.1)", input: betaTwoTwo, eps: 0.1, value: 5.88541666667e-5, source: "N17, computed" },
    { name: "Beta(2,2) δ(0.2)", input: betaTwoTwo, eps: 0.2, value: 4.41666666667e-4, source: "N17, computed" },
    // Row N18: computed (mpmath).
    { name: "pseudo-spherical α=3 δ(0.2)", input: pseudoSpherical(3), eps: 0.2, value: 0.00166124124954, source: "N18, computed" },
    // Row N19: computed (mpmath).
    { name: "Tsallis ½ δ(0.2)", input: tsallis(0.5), eps: 0.2, value: 0.0143227221959, source: "N19, computed" },
  ];
  for (const c of cases) {
    it(`${c.name} = ${c.value} (${c.source})`, () => {
      expect(Math.abs(modulusOfConvexity(negH(c.input), c.eps) - c.value)).toBeLessThanOrEqual(DELTA_ABS_TOL);
      // The grid-based model must agree with the direct minimisation.
      const model = buildModulusModel(negH(c.input));
      expect(Math.abs(model.delta(c.eps) - c.value)).toBeLessThanOrEqual(DELTA_ABS_TOL);
    });
  }

  it("a stricter accuracy target still reproduces the closed form (log δ(0.2), N11: Bao 2023 §4)", () => {
    const model = buildModulusModel(negH(logNats), undefined, { accuracy: 1e-14 });
    expect(Math.abs(model.delta(0.2) - 0.0201355135507)).toBeLessThanOrEqual(1e-12);
  });

  it("log δ(ε) equals the Bao 2023 §4 closed form δ⁽¹⁾ on a range of ε", () => {
    // Bao 2023 §4: δ(ε) = ((1+ε)/2)ln((1+ε)/2) + ((1−ε)/2)ln((1−ε)/2) + ln 2.
    const closed = (e: number) => ((1 + e) / 2) * Math.log((1 + e) / 2) + ((1 - e) / 2) * Math.log((1 - e) / 2) + Math.LN2;
    const model = buildModulusModel(negH(logNats));
    for (const e of [0.01, 0.03, 0.3, 0.7, 0.9, 0.99]) {
      expect(Math.abs(model.delta(e) - closed(e))).toBeLessThanOrEqual(DELTA_ABS_TOL);
      expect(Math.abs(model.envelope.value(e) - closed(e))).toBeLessThanOrEqual(DELTA_ABS_TOL);
    }
  });

  it("edge arguments: δ(0) = 0, δ(ε > 1) = +∞ (empty infimum), NaN in gives NaN, never throws", () => {
    expect(modulusOfConvexity(negH(logNats), 0)).toBe(0);
    expect(modulusOfConvexity(negH(logNats), 1.5)).toBe(Infinity);
    expect(Number.isNaN(modulusOfConvexity(negH(logNats), NaN))).toBe(true);
    expect(Number.isNaN(modulusOfConvexity(() => { throw new Error("boom"); }, 0.3))).toBe(true);
  });
});

describe("δ** and its inverse", () => {
  it("0-1 and hinge-Bayes losses: δ** = [ε−½]₊ and 2[ε−½]₊ (Bao 2023 §5; N42: δ**(0.4) = 0, δ**(0.8) = 0.3)", () => {
    const zo = buildModulusModel(negH(zeroOne));
    expect(zo.envelope.value(0.4)).toBeLessThanOrEqual(DELTA_ABS_TOL);
    expect(Math.abs(zo.envelope.value(0.8) - 0.3)).toBeLessThanOrEqual(DELTA_ABS_TOL);
    expect(zo.vacuousBelow).not.toBeNull();
    expect(Math.abs(zo.vacuousBelow! - 0.5)).toBeLessThanOrEqual(1e-9);
    expect(zo.nearZero).toBeNull();
    // The direct minimisation agrees with the grid model on the kinked f (δ itself is [ε−½]₊ here).
    expect(Math.abs(modulusOfConvexity(negH(zeroOne), 0.8) - 0.3)).toBeLessThanOrEqual(DELTA_ABS_TOL);
    expect(modulusOfConvexity(negH(zeroOne), 0.4)).toBeLessThanOrEqual(DELTA_ABS_TOL);
    const hb = buildModulusModel(negH(hingeBayes));
    expect(Math.abs(hb.envelope.value(0.8) - 0.6)).toBeLessThanOrEqual(DELTA_ABS_TOL);
  });

  it("Brier: (δ**)⁻¹(R/2) = √(2R), at R = 0.01 it is 0.1414213562 (N26, computed; Bao 2023 Cor. 7)", () => {
    const m = buildModulusModel(negH(brier));
    expect(Math.abs(m.inverse(0.005) - Math.sqrt(0.02))).toBeLessThanOrEqual(1e-9);
  });

  it("log loss: (δ**)⁻¹(R/2) at R = 0.01 and 0.1 (N24–N25, computed by bisection on the Bao 2023 §4 closed form: 0.09991657615, 0.3135631967)", () => {
    const m = buildModulusModel(negH(logNats));
    expect(Math.abs(m.inverse(0.005) - 0.09991657615)).toBeLessThanOrEqual(1e-9);
    expect(Math.abs(m.inverse(0.05) - 0.3135631967)).toBeLessThanOrEqual(1e-9);
  });

  it("pseudo-spherical α = 3: δ** ≤ δ everywhere and δ** is convex (Bao 2023 footnote: δ itself need not be convex)", () => {
    const m = buildModulusModel(negH(pseudoSpherical(3)));
    const es = Array.from({ length: 41 }, (_, i) => 0.02 + (0.96 * i) / 40);
    const env = es.map((e) => m.envelope.value(e));
    for (let i = 0; i < es.length; i++) expect(env[i]!).toBeLessThanOrEqual(m.delta(es[i]!) + 1e-12);
    // Discrete convexity on equally spaced points (second differences ≥ −rounding).
    for (let i = 1; i + 1 < es.length; i++) expect(env[i - 1]! - 2 * env[i]! + env[i + 1]!).toBeGreaterThanOrEqual(-1e-10);
  });
});

describe("behaviour near 0: δ**(ε) ≈ c·ε^p", () => {
  /** Coefficients are extrapolated from ε ≥ 4e-4; 1e-4 relative is well above the observed error and far below any modelling difference. */
  const COEF_REL_TOL = 1e-4;
  const cases: { name: string; input: FixtureInput; c: number; p: number; source: string }[] = [
    // Row L1 and Bao 2023 §4 (limit of S̃ is 2): λ/8 = ½.
    { name: "log", input: logNats, c: 0.5, p: 2, source: "L1; Bao23 §4" },
    // Row L2: 1/(2 ln 2), computed (L1 scaled by 1/ln 2).
    { name: "log bits", input: logBits, c: 1 / (2 * Math.LN2), p: 2, source: "L2, computed" },
    // Row L3: δ = ε²/4 exactly (Bao 2023 §4).
    { name: "Brier", input: brier, c: 0.25, p: 2, source: "L3; Bao23 §4" },
    // Row L7: 1/8 with an endpoint minimiser (Bao 2023 §4, δ⁽²⁾; the coefficient computed).
    { name: "spherical", input: spherical, c: 0.125, p: 2, source: "L7; Bao23 δ⁽²⁾" },
    // Row L10c: 1/16, p = 3 (endpoint), computed.
    { name: "Beta(2,2)", input: betaTwoTwo, c: 1 / 16, p: 3, source: "L10c, computed" },
    // Row N18: lim δ/ε³ = 1/8 for pseudo-spherical α = 3, computed; row L15: (½ − 2^{−α})/α (Gneiting & Raftery 2007 family).
    { name: "pseudo-spherical α=3", input: pseudoSpherical(3), c: 0.125, p: 3, source: "N18, computed; L15" },
    // Row L16 (Bao 2023 App. B.5): δ = (ε/2)^α, so c = 2^{−α}.
    { name: "polynomial α=3", input: polynomial(3), c: 0.125, p: 3, source: "L16; Bao23 App. B.5" },
    // Row L11c: √2/4, computed.
    { name: "Tsallis ½", input: tsallis(0.5), c: Math.SQRT2 / 4, p: 2, source: "L11c, computed" },
  ];
  for (const c of cases) {
    it(`${c.name}: c = ${c.c.toPrecision(6)}, p = ${c.p} (${c.source})`, () => {
      const m = buildModulusModel(negH(c.input));
      expect(m.nearZero).not.toBeNull();
      expect(m.nearZero!.power).toBe(c.p);
      expect(m.nearZero!.snapped).toBe(true);
      expect(m.nearZero!.stable).toBe(true);
      expect(Math.abs(m.nearZero!.coefficient / c.c - 1)).toBeLessThanOrEqual(COEF_REL_TOL);
    });
  }
});

describe("Simonenko order (Bao 2023, Def. 9, Thm 10)", () => {
  /** S̃ is a ratio with a numerical derivative of δ** (central difference, step 1e-5·t); 1e-7 covers its error. */
  const S_TOL = 1e-7;
  it("S̃_log(0.5) = 2.099600929, S̃_exp(0.5) = 2.154700538, S̃_Brier ≡ 2 (N22, computed from the Bao 2023 §4 formulas)", () => {
    expect(Math.abs(buildModulusModel(negH(logNats)).simonenko(0.5) - 2.099600929)).toBeLessThanOrEqual(S_TOL);
    expect(Math.abs(buildModulusModel(negH(boosting)).simonenko(0.5) - 2.154700538)).toBeLessThanOrEqual(S_TOL);
    const b = buildModulusModel(negH(brier));
    for (const t of [0.01, 0.2, 0.5, 0.9]) expect(Math.abs(b.simonenko(t) - 2)).toBeLessThanOrEqual(S_TOL);
  });

  it("Thm 10 constants for log loss at ε* = 0.5: p = 2.099600929, κ₁ = 0.5606483696 (N23, computed; Bao 2023 Thm 10)", () => {
    const r = buildModulusModel(negH(logNats)).simonenkoRange(0.5);
    expect(r).not.toBeNull();
    expect(Math.abs(r!.sup - 2.099600929)).toBeLessThanOrEqual(S_TOL);
    expect(Math.abs(r!.kappa1 - 0.5606483696)).toBeLessThanOrEqual(1e-7);
    // Row N23: q_log = 2 (the infimum is the limit at 0; the sampled range starts at ε*·10⁻³).
    expect(Math.abs(r!.inf - 2)).toBeLessThanOrEqual(1e-6);
    // Bao 2023 Thm 10: κ₁ε^p ≤ δ**(ε) ≤ κ₂ε^q on [0, ε*].
    const m = buildModulusModel(negH(logNats));
    for (const e of [0.001, 0.01, 0.1, 0.3, 0.5]) {
      const v = m.envelope.value(e);
      expect(v).toBeGreaterThanOrEqual(r!.kappa1 * e ** r!.sup * (1 - 1e-9));
      expect(v).toBeLessThanOrEqual(r!.kappa2 * e ** r!.inf * (1 + 1e-9));
    }
  });
});

describe("boundedUnitFn endpoint limits", () => {
  it("uses the limit when the closure gives NaN at an endpoint (0·ln 0), as row C14 asks (Bao 2023 §2, regularity)", () => {
    const f = boundedUnitFn((q) => q * Math.log(q) + (1 - q) * Math.log(1 - q));
    // The limit is taken at the probe 1e-300, where x·ln x ≈ −6.9e-298: zero to every printed digit.
    expect(Math.abs(f(0))).toBeLessThan(1e-290);
    // At 1 the nearest probe is 1 − 2⁻⁵³, where the (1−x)·ln(1−x) term is ≈ −4e-15.
    expect(Math.abs(f(1))).toBeLessThan(1e-14);
    expect(f(-1)).toBe(f(0));
  });
});
