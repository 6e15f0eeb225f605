/**
 * Tests of margin losses φ(yv): implied link (Reid & Williamson 2010, Cor. 14), Bayes risk and the BJM
 * ψ-transform values (table P), calibration (Bartlett, Jordan & McAuliffe 2006) and convexity.
 * Row ids (C…, F…, K…, L…, N…, P…) are rows of test/reference/proper-losses.md, which gives each one's source.
 */
import { describe, expect, it } from "vitest";
import { analyseProperness } from "../../server/src/analysis/properness.js";
import {
  checkMarginCalibration,
  impliedInverseLink,
  isDifferentiableAtZero,
  marginBayes,
  scanConvexity,
  scanMarginLink,
} from "../../server/src/analysis/margin.js";
import { nearlyEqual } from "../../server/src/analysis/numeric/tolerance.js";
import type { RealFn } from "../../server/src/loss-model.js";
import { MARGIN_EXP, MARGIN_HINGE, MARGIN_LOGISTIC, MARGIN_SQUARED, familyOf, margin } from "./standard-losses.js";

const codesOf = (phi: RealFn, dphi?: RealFn) => analyseProperness(familyOf(margin("m", phi, dphi))).findings.map((f) => f.code);

describe("verdicts of the margin losses of tables K and P", () => {
  it.each([
    // RW10 Cor. 14: e^{−v} is proper composite with the half-logit link.
    ["exponential", MARGIN_EXP, "strictly-proper", []],
    // Logistic with the logit link is log loss (Agarwal 2014, Ex. 2).
    ["logistic", MARGIN_LOGISTIC, "strictly-proper", []],
    // (1−v)² with link 2q−1 is the Ag14 squared loss (Agarwal 2014, Ex. 3).
    ["squared", MARGIN_SQUARED, "strictly-proper", []],
    // Hinge: calibrated but no invertible link (RW10 Cor. 14 text; BJM06); the notation makes the verdict improper (test/reference/notation.md, "Verdicts").
    ["hinge", MARGIN_HINGE, "improper", ["margin-no-link"]],
  ] as const)("%s → %s", (_n, spec, verdict, expectedCodes) => {
    const r = analyseProperness(familyOf(spec));
    expect(r.verdict).toBe(verdict);
    expect(r.findings.map((f) => f.code)).toEqual(expectedCodes);
  });

  it("hinge: the margin-no-link finding says it is classification-calibrated (Bartlett, Jordan & McAuliffe 2006)", () => {
    const r = analyseProperness(familyOf(MARGIN_HINGE));
    expect(r.findings[0]!.message).toMatch(/classification-calibrated/);
  });
});

describe("Bayes risk by minimisation over the score, and the ψ-transform ψ(θ) = φ(0) − H((1+θ)/2) (table P, computed: closed forms checked by 1-D minimisation)", () => {
  it.each([
    ["exponential", MARGIN_EXP.margin!, [0.00501256289338, 0.133974596216, 0.564110105646]],
    ["logistic", MARGIN_LOGISTIC.margin!, [0.00500836684636, 0.130812035941, 0.494631937214]],
    ["squared", MARGIN_SQUARED.margin!, [0.01, 0.25, 0.81]],
    ["truncated quadratic", (v: number) => Math.max(0, 1 - v) ** 2, [0.01, 0.25, 0.81]],
    ["hinge", MARGIN_HINGE.margin!, [0.1, 0.5, 0.9]],
  ] as const)("%s at θ = 0.1, 0.5, 0.9", (_n, phi, values) => {
    const H = marginBayes(phi);
    [0.1, 0.5, 0.9].forEach((theta, i) => {
      expect(Math.abs(phi(0) - H((1 + theta) / 2) - values[i]!)).toBeLessThan(1e-9);
    });
  });
});

describe("implied link ψ⁻¹(v) = φ'(−v)/(φ'(−v)+φ'(v)) (Reid & Williamson 2010, Cor. 14)", () => {
  it("exponential: ψ⁻¹(v) = 1/(1+e^{−2v})", () => {
    const inv = impliedInverseLink(MARGIN_EXP.dmargin!);
    for (const v of [-3, -0.5, 0, 1, 4]) expect(nearlyEqual(inv(v), 1 / (1 + Math.exp(-2 * v)))).toBe(true);
    expect(scanMarginLink(inv).invertible).toBe(true);
  });
  it("squared: valid on v ∈ [−1, 1] (ψ = 2q − 1)", () => {
    const s = scanMarginLink(impliedInverseLink(MARGIN_SQUARED.dmargin!));
    expect(s.invertible).toBe(true);
    expect(Math.abs(s.vlo + 1)).toBeLessThan(1e-12);
    expect(Math.abs(s.vhi - 1)).toBeLessThan(1e-12);
  });
  it("hinge: ψ⁻¹ ≡ ½ on (−1, 1), not invertible, with the flat interval as evidence", () => {
    const s = scanMarginLink(impliedInverseLink(MARGIN_HINGE.dmargin!));
    expect(s.invertible).toBe(false);
    expect(s.flat![0]).toBeGreaterThanOrEqual(-1);
    expect(s.flat![1]).toBeLessThanOrEqual(1);
  });
});

describe("calibration (Bartlett, Jordan & McAuliffe 2006: convex φ is calibrated iff differentiable at 0 with φ'(0) < 0)", () => {
  it.each([
    ["exponential e^{−v}", (v: number) => Math.exp(-v), (v: number) => -Math.exp(-v), true],
    ["hinge max(0, 1−v)", (v: number) => Math.max(0, 1 - v), (v: number) => (v < 1 ? -1 : 0), true],
    ["e^{v} (φ'(0) = 1 > 0)", (v: number) => Math.exp(v), (v: number) => Math.exp(v), false],
    ["max(0, −v) (kink at 0)", (v: number) => Math.max(0, -v), (v: number) => (v < 0 ? -1 : 0), false],
    ["steep exponential e^{−1000v} (smooth at 0)", (v: number) => Math.exp(-1000 * v), (v: number) => -1000 * Math.exp(-1000 * v), true],
  ] as const)("%s → calibrated = %s", (_n, phi, dphi, calibrated) => {
    expect(checkMarginCalibration(phi, dphi, true).calibrated).toBe(calibrated);
  });

  it("a non-convex φ is checked by the definition H⁻(η) > H(η): the sigmoid loss 1 − tanh v is calibrated (computed: H = 1 − |1−2η|, H⁻ = 1)", () => {
    const phi = (v: number) => 1 - Math.tanh(v);
    expect(scanConvexity(phi).convex).toBe(false);
    expect(checkMarginCalibration(phi, (v) => -1 / Math.cosh(v) ** 2, false).calibrated).toBe(true);
  });

  it("kink test: |v| has a kink at 0, e^{−v} has none (common practice: one-sided difference quotients)", () => {
    expect(isDifferentiableAtZero(Math.abs).differentiable).toBe(false);
    expect(isDifferentiableAtZero((v) => Math.exp(-v)).differentiable).toBe(true);
  });
});

describe("bad margin input", () => {
  it("non-convex margin (sigmoid loss): not-convex-in-score and margin-no-link, no throw", () => {
    const c = codesOf((v) => 1 - Math.tanh(v));
    expect(c).toContain("not-convex-in-score");
    expect(c).toContain("margin-no-link");
  });
  it("not calibrated (e^{v}): margin-not-calibrated", () => {
    expect(codesOf((v) => Math.exp(v))).toContain("margin-not-calibrated");
  });
  it("overflow (e^{−1000v} overflows for v < −0.71): analysed without throwing, proper composite with link ψ = logit/2000 (computed from RW10 Cor. 14)", () => {
    const r = analyseProperness(familyOf(margin("steep", (v) => Math.exp(-1000 * v), (v) => -1000 * Math.exp(-1000 * v))));
    expect(r.verdict).toBe("strictly-proper");
    expect(nearlyEqual(r.fns!.link!(0.7), Math.log(0.7 / 0.3) / 2000, 1e-8)).toBe(true);
  });
});

describe("convexity of φ against rounding in the tail", () => {
  // Each φ is convex (the logistic, exponential and squared-hinge losses: Bartlett, Jordan & McAuliffe 2006,
  // Table 1), written as a user writes it: ln(1 + exp(−v)) loses all relative accuracy for v > ~30, where
  // φ < 1e-13 is rounding noise of ln near 1. Its second differences there must not read as non-convexity.
  it.each([
    ["logistic written ln(1 + exp(−v))", (v: number) => Math.log(1 + Math.exp(-v))],
    ["logistic written log1p(exp(−v))", (v: number) => Math.log1p(Math.exp(-v))],
    ["logistic in base 2, ln(1 + exp(−v))/ln 2", (v: number) => Math.log(1 + Math.exp(-v)) / Math.LN2],
    ["exponential exp(−v)", (v: number) => Math.exp(-v)],
    ["squared hinge max(0, 1 − v)²", (v: number) => Math.max(0, 1 - v) ** 2],
  ] as const)("%s is convex on the whole scan", (_n, phi) => {
    expect(scanConvexity(phi)).toEqual({ convex: true, where: null, secondDifference: null });
  });

  it("a real dent far smaller than φ(0) is still found in the tail: ln(1 + exp(−v)) + 1e-6·exp(−(v − 20)²)", () => {
    // At v = 20 the logistic φ'' is ~2e-9 while the bump's is −2e-6 at its centre (computed, by hand), so φ is
    // not convex there; its second difference (~2e-6·h², h ≈ 0.125) is far above the rounding floor (16 ulps of ln 2).
    const s = scanConvexity((v) => Math.log(1 + Math.exp(-v)) + 1e-6 * Math.exp(-((v - 20) ** 2)));
    expect(s.convex).toBe(false);
    expect(Math.abs(s.where! - 20)).toBeLessThan(1);
  });
});
