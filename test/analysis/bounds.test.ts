/**
 * Surrogate-regret bounds: Reid & Williamson's tight direct bound (RW09 "Surrogate Regret Bounds for Proper
 * Losses", ICML, Thm 3 = RW11 "Information, Divergence and Risk for Binary Experiments", JMLR 12, Thm 25,
 * with the min of the branches, row C11), the ψ-transform (Bartlett, Jordan & McAuliffe 2006,
 * "Convexity, Classification, and Risk Bounds", JASA 101, as restated in RW11 App. D), and the modulus
 * route (Bao 2023, "Proper Losses, Moduli of Convexity, and Surrogate Regret Bounds", COLT, Cor. 7).
 * Row ids (C…, F…, K…, L…, N…, P…) are rows of test/reference/proper-losses.md, which gives each one's source.
 */
import { describe, expect, it } from "vitest";
import { buildDirectBound, buildPsiTransform, modulusRouteBound } from "../../server/src/analysis/bounds.js";
import { boundedUnitFn } from "../../server/src/analysis/numeric/limits.js";
import { buildModulusModel } from "../../server/src/analysis/modulus.js";
import { analyseCurvature } from "../../server/src/analysis/curvature.js";
import type { RealFn } from "../../server/src/loss-model.js";
import {
  boosting,
  brier,
  costWeighted,
  entropyOneSided,
  exponentialMargin,
  fromBayes,
  hingeBayes,
  hingeMargin,
  logNats,
  logisticBitsMargin,
  logisticMargin,
  squaredMargin,
  truncatedQuadraticMargin,
  zeroOne,
  type FixtureInput,
} from "./curvature-table.js";

/** The bound values of rows N24–N34 and P1–P6 are printed to 10–12 significant digits (computed, mpmath); 1e-10 absolute checks them to their printed precision. */
const VALUE_TOL = 1e-10;
/** Inverses are printed to 10 digits; the root finder stops at 1e-13 in the argument. */
const INVERSE_TOL = 1e-9;

const fOf = (input: FixtureInput): RealFn => boundedUnitFn((q) => -input.bayes(q));
const slopeOf = (input: FixtureInput, c: number) => {
  const fns = fromBayes(input);
  return fns.l0(c) - fns.l1(c);
};
const direct = (input: FixtureInput, c: number) => buildDirectBound(fOf(input), c, slopeOf(input, c));

describe("Reid & Williamson direct bound ψ_RW(c, α) = min of the two Bregman branches", () => {
  it("log loss, c = ½, α = 0.1: H(½) − H(0.6) = 0.02013551355 (RW11 Cor. 27; N30, computed)", () => {
    expect(Math.abs(direct(logNats, 0.5).psi(0.1) - 0.02013551355)).toBeLessThan(VALUE_TOL);
  });

  it("exponential loss, α = 0.1: 1 − √(1 − 4α²) = 0.02020410289 (RW11 App. D eq. (82); N31)", () => {
    expect(Math.abs(direct(boosting, 0.5).psi(0.1) - (1 - Math.sqrt(1 - 0.04)))).toBeLessThan(VALUE_TOL);
    expect(Math.abs(direct(boosting, 0.5).psi(0.1) - 0.02020410289)).toBeLessThan(VALUE_TOL);
  });

  it("log loss: the second-order bound (w(½)/2)α² = 0.02 lies below the exact 0.0201355 (RW11 Cor. 29; N32)", () => {
    const d = direct(logNats, 0.5);
    for (const a of [0.01, 0.1, 0.3]) expect(d.psi(a)).toBeGreaterThanOrEqual(2 * a * a);
  });

  it("log loss, c = 0.3, α = 0.1: branches 0.02258242108 and 0.02573209248; the bound is the MIN (C11: RW11 eq. (46) prints a max; N33)", () => {
    const d = direct(logNats, 0.3);
    const b = d.branches(0.1);
    expect(Math.abs(b.upper! - 0.02258242108)).toBeLessThan(VALUE_TOL);
    expect(Math.abs(b.lower! - 0.02573209248)).toBeLessThan(VALUE_TOL);
    expect(d.psi(0.1)).toBe(Math.min(b.upper!, b.lower!));
    // The max form is refuted by η = 0.4, q = 0.3 (cost-0.3 regret 0.1, regret KL(0.4∥0.3) below the max).
    const fns = fromBayes(logNats);
    const regret = fns.risk(0.4, 0.3) - fns.bayes(0.4);
    expect(regret).toBeLessThan(Math.max(b.upper!, b.lower!));
    expect(regret).toBeGreaterThanOrEqual(d.psi(0.1) - 1e-12);
  });

  it("asymmetric H = −η ln η (w = 1/q) at c = ½, α = 0.1: branches 0.009392934076 and 0.01074257947 → min (N34, computed)", () => {
    const d = direct(entropyOneSided, 0.5);
    const b = d.branches(0.1);
    expect(Math.abs(b.upper! - 0.009392934076)).toBeLessThan(VALUE_TOL);
    expect(Math.abs(b.lower! - 0.01074257947)).toBeLessThan(VALUE_TOL);
    expect(Math.abs(d.psi(0.1) - 0.009392934076)).toBeLessThan(VALUE_TOL);
  });

  it("Brier at c = 0.3, α = 0.1: the upper branch is exactly 0.01 = R(0.4, 0.3) (C12 sign check, computed)", () => {
    const d = direct(brier, 0.3);
    expect(Math.abs(d.branches(0.1).upper! - 0.01)).toBeLessThan(1e-12);
    const fns = fromBayes(brier);
    expect(Math.abs(fns.risk(0.4, 0.3) - fns.bayes(0.4) - 0.01)).toBeLessThan(1e-12);
  });

  it("local exponents: ½ for w(c) ∈ (0,∞) (log), 1 for a point mass at c (ℓ_c: regret = |η − c|, L12: RW11 Lemma 26)", () => {
    expect(direct(logNats, 0.3).exponent).toBe(0.5);
    const lc = buildDirectBound(fOf(costWeighted(0.3)), 0.3);
    expect(lc.exponent).toBe(1);
    for (const a of [0.05, 0.2, 0.6]) expect(Math.abs(lc.psi(a) - a)).toBeLessThan(1e-8);
    // Beyond max(c, 1−c) no η exists: the bound is +∞ there and the hull domain stops at α_max.
    expect(lc.alphaMax).toBe(0.7);
  });

  it("a point mass at c: the lower branch uses the loss's own supergradient at q = c (hinge R ≥ 2α vs 4ℓ_½ R ≥ 4α, L14, computed)", () => {
    // 4ℓ_½ (l1 = 2[q < ½], l0 = 2[q ≥ ½]): the regret of a wrong decision is 4α on both sides (computed from the partials).
    const proper = buildDirectBound(fOf(hingeBayes), 0.5, slopeOf(hingeBayes, 0.5), true);
    expect(Math.abs(proper.psi(0.1) - 0.4)).toBeLessThan(1e-8);
    const fns = fromBayes(hingeBayes);
    expect(Math.abs(fns.risk(0.4, 0.5) - fns.bayes(0.4) - 0.4)).toBeLessThan(1e-12);
    // Hinge at the boundary score v = 0 has φ(0) = 1 for both labels (supergradient 0): R ≥ 2α, as row L14 states (computed).
    const hinge = buildDirectBound(fOf(hingeMargin), 0.5, slopeOf(hingeMargin, 0.5), true);
    expect(Math.abs(hinge.psi(0.1) - 0.2)).toBeLessThan(1e-8);
    const hf = fromBayes(hingeMargin);
    expect(Math.abs(hf.risk(0.4, 0.5) - hf.bayes(0.4) - 0.2)).toBeLessThan(1e-12);
    expect(hinge.exponent).toBe(1);
  });

  it("inverse of ψ_RW**: log loss at R = 0.01 and 0.1 gives 0.07059257027 and 0.2197946262 (N24–N25, computed from RW11 Cor. 27)", () => {
    const d = direct(logNats, 0.5);
    expect(Math.abs(d.inverse(0.01) - 0.07059257027)).toBeLessThan(INVERSE_TOL);
    expect(Math.abs(d.inverse(0.1) - 0.2197946262)).toBeLessThan(INVERSE_TOL);
    // The direct bound beats the sharp Pinsker route √(R/2) (N24) and the modulus route.
    expect(d.inverse(0.01)).toBeLessThan(Math.sqrt(0.005));
  });

  it("Brier at R = 0.01: direct bound √R = 0.1 (the exact |η − q|), modulus route √(2R) = 0.1414213562 (N26)", () => {
    expect(Math.abs(direct(brier, 0.5).inverse(0.01) - 0.1)).toBeLessThan(INVERSE_TOL);
    const m = buildModulusModel(fOf(brier));
    expect(Math.abs(modulusRouteBound(m, 0.01) - 0.1414213562)).toBeLessThan(INVERSE_TOL);
  });

  it("modulus route for log loss at R = 0.01 and 0.1: 0.09991657615 and 0.3135631967 (N24–N25; Bao 2023 Cor. 7)", () => {
    const m = buildModulusModel(fOf(logNats));
    expect(Math.abs(modulusRouteBound(m, 0.01) - 0.09991657615)).toBeLessThan(INVERSE_TOL);
    expect(Math.abs(modulusRouteBound(m, 0.1) - 0.3135631967)).toBeLessThan(INVERSE_TOL);
  });

  it("the hull ψ** is convex, below ψ, and non-decreasing (log loss, c = 0.3: the min of two convex branches)", () => {
    const d = direct(logNats, 0.3);
    const as = Array.from({ length: 71 }, (_, i) => (0.7 * i) / 70);
    const env = as.map((a) => d.envelope.value(a));
    for (let i = 0; i < as.length; i++) expect(env[i]!).toBeLessThanOrEqual(d.psi(as[i]!) + 1e-12);
    for (let i = 1; i < as.length; i++) expect(env[i]!).toBeGreaterThanOrEqual(env[i - 1]! - 1e-12);
    for (let i = 1; i + 1 < as.length; i++) expect(env[i - 1]! - 2 * env[i]! + env[i + 1]!).toBeGreaterThanOrEqual(-1e-10);
  });
});

describe("BJM ψ-transform (table P, computed; the exponential one published in RW11 App. D)", () => {
  const table: { name: string; input: FixtureInput; psi: [number, number, number]; inv01?: number; inv1?: number }[] = [
    { name: "exponential", input: exponentialMargin, psi: [0.00501256289338, 0.133974596216, 0.564110105646], inv01: 0.1410673598, inv1: 0.4358898944 },
    { name: "logistic (nats)", input: logisticMargin, psi: [0.00500836684636, 0.130812035941, 0.494631937214], inv01: 0.1411851405, inv1: 0.4395892523 },
    { name: "logistic (log₂)", input: logisticBitsMargin, psi: [0.00722554601219, 0.188721875541, 0.713603042884], inv01: 0.1176047775 },
    { name: "squared", input: squaredMargin, psi: [0.01, 0.25, 0.81], inv01: 0.1, inv1: 0.316227766 },
    { name: "truncated quadratic", input: truncatedQuadraticMargin, psi: [0.01, 0.25, 0.81], inv01: 0.1, inv1: 0.316227766 },
    { name: "hinge", input: hingeMargin, psi: [0.1, 0.5, 0.9] },
  ];
  for (const row of table) {
    it(`${row.name}: ψ(0.1), ψ(0.5), ψ(0.9) = ${row.psi.join(", ")}${row.inv01 ? `; ψ⁻¹(0.01) = ${row.inv01}` : ""}`, () => {
      const fns = fromBayes(row.input);
      const p = buildPsiTransform(fns.margin!, boundedUnitFn(fns.bayes));
      expect(p.calibrated).toBe(true);
      [0.1, 0.5, 0.9].forEach((t, i) => expect(Math.abs(p.psi(t) - row.psi[i]!)).toBeLessThan(VALUE_TOL));
      if (row.inv01 !== undefined) expect(Math.abs(p.inverse(0.01) - row.inv01)).toBeLessThan(INVERSE_TOL);
      if (row.inv1 !== undefined) expect(Math.abs(p.inverse(0.1) - row.inv1)).toBeLessThan(INVERSE_TOL);
    });
  }

  it("convex calibrated φ: H⁻(η) = φ(0) (BJM06 convex case, from memory; row C18, confirmed numerically)", () => {
    const fns = fromBayes(exponentialMargin);
    const p = buildPsiTransform(fns.margin!, boundedUnitFn(fns.bayes));
    for (const eta of [0.55, 0.7, 0.95]) expect(Math.abs(p.wrongSignRisk(eta) - 1)).toBeLessThan(1e-12);
  });

  it("ψ_logistic(θ) = δ_log(θ) for all θ (P2, N28, computed): the two analyses agree", () => {
    const fns = fromBayes(logisticMargin);
    const p = buildPsiTransform(fns.margin!, boundedUnitFn(fns.bayes));
    const m = buildModulusModel(fOf(logNats));
    for (const t of [0.02, 0.1, 0.37, 0.5, 0.8, 0.99]) expect(Math.abs(p.psi(t) - m.delta(t))).toBeLessThan(1e-9);
  });

  it("a margin loss that is not calibrated (φ(v) = max(0, −v), H ≡ 0) gives ψ = 0 and a finding", () => {
    const fns = fromBayes({ bayes: () => 0, weight: () => 0, margin: (v) => Math.max(0, -v) });
    const p = buildPsiTransform(fns.margin!, boundedUnitFn(fns.bayes));
    expect(p.calibrated).toBe(false);
    const res = analyseCurvature(fns);
    expect(res.findings.some((f) => f.clause === "margin")).toBe(true);
  });
});

describe("units (row C13: Bao 2023 §2.4; RW11): cost-½ regret α vs 0-1 regret θ = 2α", () => {
  it("0-1 loss: cost-½ regret α is guaranteed by surrogate regret 2α; the hinge ψ(θ) = |θ| matches with θ = 2α", () => {
    const d = buildDirectBound(fOf(zeroOne), 0.5);
    // 0-1 loss regret is |2η − 1| = 2α when the decision is wrong (RW11: B_½ is half the 0-1 regret).
    expect(Math.abs(d.psi(0.1) - 0.2)).toBeLessThan(1e-8);
    const hinge = fromBayes(hingeMargin);
    const p = buildPsiTransform(hinge.margin!, boundedUnitFn(hinge.bayes));
    // Hinge surrogate regret R guarantees 0-1 regret θ ≤ R, i.e. cost-½ regret α ≤ R/2.
    expect(Math.abs(p.inverse(0.2) - 0.2)).toBeLessThan(INVERSE_TOL);
  });

  it("the curvature result compares the routes in cost-½ units (logistic: ψ-transform bound = direct bound)", () => {
    const res = analyseCurvature(fromBayes(logisticMargin));
    const note = res.notes.find((n) => n.kind === "route-comparison")?.text;
    expect(note?.startsWith("At surrogate regret 0.01")).toBe(true);
    expect(note).toBeDefined();
    // Direct 0.07059257027 (N24) and ψ⁻¹(0.01)/2 = 0.1411851405/2 (P2) agree to the printed digits.
    expect(note).toContain("direct ≤ 0.0705926");
    expect(note).toContain("ψ-transform ≤ 0.0705926");
    expect(note).toContain("modulus route ≤ 0.0999166");
  });
});
