/**
 * analyseCurvature: λ = inf w (Agarwal 2014, "Surrogate Regret Bounds for Bipartite Ranking via Strongly
 * Proper Losses", JMLR 15, Def. 7 / Thm 10), weight features, modulus near 0 (Bao 2023, COLT, Def. 4,
 * Thm 10), exponents by both routes, inverse table, findings and summary.
 * Row ids (C…, F…, K…, L…, N…, P…) are rows of test/reference/proper-losses.md, which gives each one's source.
 */
import { describe, expect, it } from "vitest";
import { analyseCurvature } from "../../server/src/analysis/curvature.js";
import { sampleCurves } from "../../server/src/analysis/curves.js";
import { nearlyEqual } from "../../server/src/analysis/numeric/tolerance.js";
import {
  ag14Squared,
  betaHalfHalf,
  betaTwoTwo,
  boosting,
  brier,
  costWeighted,
  fromBayes,
  halfBrier,
  hingeBayes,
  logBits,
  logNats,
  logisticMargin,
  polynomial,
  pseudoSpherical,
  spherical,
  tsallis,
  zeroOne,
  type FixtureInput,
} from "./curvature-table.js";

/** λ from a closed-form weight: interior minima are exact to rounding; endpoint limits are Aitken-extrapolated from t = 1e-6…1e-12, good to ≈1e-12. */
const LAMBDA_REL_TOL = 1e-9;
/** λ from second differences of H (no weight closure): rounding ≈ 4·ulp·|H|/h² with h = 1e-4, ≈ 1e-7; 1e-5 leaves margin for the endpoint extrapolation. */
const LAMBDA_NUMERIC_REL_TOL = 1e-5;

function lambdaOf(input: FixtureInput, withoutWeight = false) {
  const fns = fromBayes(withoutWeight ? { ...input, weight: null } : input);
  return analyseCurvature(fns);
}

describe("λ = inf w (rows N1–N6, L5, L10b, N37)", () => {
  const rows: { name: string; input: FixtureInput; lambda: number; approached: boolean; source: string }[] = [
    // Row N1: Agarwal 2014, Example 2 / Table 1.
    { name: "log (nats)", input: logNats, lambda: 4, approached: false, source: "Ag14 Ex. 2 / Table 1" },
    // Row N2: computed, 4/ln 2 (row L1 scaled).
    { name: "log (bits)", input: logBits, lambda: 5.770780163555854, approached: false, source: "N2, computed" },
    // Row N3: Agarwal 2014, Example 1.
    { name: "exponential (Buja scale)", input: boosting, lambda: 4, approached: false, source: "Ag14 Ex. 1" },
    // Row N4: Agarwal 2014, Example 3.
    { name: "Ag14 squared 4(1−q)², 4q²", input: ag14Squared, lambda: 8, approached: false, source: "Ag14 Ex. 3" },
    // Row N5: Agarwal 2014, Table 1 (canonical squared (1−q)², q²).
    { name: "canonical squared", input: brier, lambda: 2, approached: false, source: "Ag14 Table 1" },
    // Row N6: Agarwal 2014, Table 1; the infimum sits at the endpoints.
    { name: "spherical", input: spherical, lambda: 1, approached: true, source: "Ag14 Table 1" },
    // Row L5 (½-Brier, w = 1: Reid & Williamson 2010, Table 1).
    { name: "½-Brier", input: halfBrier, lambda: 1, approached: false, source: "L5; RW10 Table 1" },
    // Row L10b: Beta(½,½), λ = w(½) = 4^{1−a} = 2 (computed).
    { name: "Beta(½,½)", input: betaHalfHalf, lambda: 2, approached: false, source: "L10b, computed" },
    // Row N37: Tsallis λ(α) = inf of w = −H'', computed.
    { name: "Tsallis α = 0.5", input: tsallis(0.5), lambda: 2.828427124746190, approached: false, source: "N37, computed" },
    { name: "Tsallis α = 1.5", input: tsallis(1.5), lambda: 4.242640687119285, approached: false, source: "N37, computed" },
    { name: "Tsallis α = 2", input: tsallis(2), lambda: 4, approached: false, source: "N37, computed" },
    { name: "Tsallis α = 2.5", input: tsallis(2.5), lambda: 2.5, approached: true, source: "N37, computed" },
    { name: "Tsallis α = 3", input: tsallis(3), lambda: 3, approached: false, source: "N37, computed" },
    { name: "Tsallis α = 4", input: tsallis(4), lambda: 2, approached: false, source: "N37, computed" },
  ];
  for (const r of rows) {
    it(`${r.name}: λ = ${r.lambda} (${r.source})`, () => {
      const res = lambdaOf(r.input);
      expect(res.lambda).not.toBeNull();
      expect(nearlyEqual(res.lambda!, r.lambda, LAMBDA_REL_TOL, 1e-12)).toBe(true);
      expect(res.lambdaAt?.approached).toBe(r.approached);
      expect(res.findings.filter((f) => f.code === "internal-error")).toEqual([]);
    });
  }

  it("log loss and spherical without a weight closure (second differences of H) give the same λ", () => {
    // Ag14 Table 1 values (4 and 1), recovered numerically.
    const log = lambdaOf(logNats, true);
    expect(nearlyEqual(log.lambda!, 4, LAMBDA_NUMERIC_REL_TOL)).toBe(true);
    expect(log.notes.some((n) => n.kind === "numeric-weight" && n.text.includes("second differences"))).toBe(true);
    const sph = lambdaOf(spherical, true);
    expect(nearlyEqual(sph.lambda!, 1, LAMBDA_NUMERIC_REL_TOL)).toBe(true);
    expect(sph.lambdaAt?.approached).toBe(true);
  });

  it("Beta(2,2): λ = 0 approached at an endpoint (row L10c, computed)", () => {
    const res = lambdaOf(betaTwoTwo);
    expect(res.lambda).toBe(0);
    expect(res.lambdaAt?.approached).toBe(true);
    expect([0, 1]).toContain(res.lambdaAt?.q);
    expect(res.summary.startsWith("λ = 0")).toBe(true);
    expect(res.notes.some((n) => n.kind === "lambda-zero" && n.text.startsWith("λ = 0"))).toBe(true);
  });

  it("the strong-properness statement uses R ≥ (λ/2)(η−q)² (Agarwal 2014, Def. 7)", () => {
    const res = lambdaOf(logNats);
    expect(res.notes.some((n) => n.kind === "strong-properness" && n.text.includes("R(η,q) ≥ 2·(η−q)²") && n.text.includes("Agarwal 2014"))).toBe(true);
  });
});

describe("weight features: point masses and zero intervals", () => {
  it("0-1 loss: point mass 2 at ½ (RW10 footnote 6 / Table 1: w = 2δ(c − ½)); H affine on [0,½] and [½,1]", () => {
    const res = analyseCurvature(fromBayes(zeroOne));
    expect(res.weightFeatures.pointMasses.length).toBe(1);
    const pm = res.weightFeatures.pointMasses[0]!;
    expect(Math.abs(pm.q - 0.5)).toBeLessThan(1e-8);
    expect(Math.abs(pm.mass - 2)).toBeLessThan(1e-6);
    expect(res.weightFeatures.zeroIntervals.length).toBe(2);
    const [a, b] = res.weightFeatures.zeroIntervals;
    expect(a![0]).toBe(0);
    expect(Math.abs(a![1] - 0.5)).toBeLessThan(1e-8);
    expect(Math.abs(b![0] - 0.5)).toBeLessThan(1e-8);
    expect(b![1]).toBe(1);
    expect(res.lambda).toBe(0);
  });

  it("ℓ_c with c = 0.3: point mass 1 at c (RW10 Table 1: w = δ(q − c)); vacuous below max(c, 1−c) = 0.7 (row L12)", () => {
    const res = analyseCurvature(fromBayes(costWeighted(0.3)));
    expect(res.weightFeatures.pointMasses.length).toBe(1);
    expect(Math.abs(res.weightFeatures.pointMasses[0]!.q - 0.3)).toBeLessThan(1e-8);
    expect(Math.abs(res.weightFeatures.pointMasses[0]!.mass - 1)).toBeLessThan(1e-6);
    expect(res.vacuousBelow).not.toBeNull();
    expect(Math.abs(res.vacuousBelow! - 0.7)).toBeLessThan(1e-8);
    expect(res.findings.some((f) => f.code === "vacuous-bound" && f.message.includes("vacuous below ε = 0.7"))).toBe(true);
  });

  it("smooth losses have no point masses or zero intervals (log, spherical, Beta(2,2), cubic polynomial)", () => {
    for (const input of [logNats, spherical, betaTwoTwo, polynomial(3)]) {
      const res = analyseCurvature(fromBayes(input));
      expect(res.weightFeatures).toEqual({ pointMasses: [], zeroIntervals: [] });
    }
  });

  it("a log loss plus a 0-1 loss: the point mass is found on top of a smooth weight (mixture of rows L1 and L13)", () => {
    const mix = fromBayes({ bayes: (q) => logNats.bayes(q) + zeroOne.bayes(q), weight: null });
    const res = analyseCurvature(mix);
    expect(res.weightFeatures.pointMasses.length).toBe(1);
    expect(Math.abs(res.weightFeatures.pointMasses[0]!.mass - 2)).toBeLessThan(1e-5);
    // The smooth part still has λ = 4 (Ag14 Table 1 for the log part).
    expect(nearlyEqual(res.lambda!, 4, LAMBDA_NUMERIC_REL_TOL)).toBe(true);
    // A point mass at c makes the direct bound linear while the modulus route stays at ½.
    expect(res.exponents.direct).toBeCloseTo(1, 6);
    expect(res.exponents.viaModulus).toBeCloseTo(0.5, 6);
    expect(res.exponents.explanation).toContain("point mass");
  });

  it("a flat middle: H affine on [0.4, 0.6] (proper, not strictly) gives that zero interval and vacuous below 0.2", () => {
    // H = −(q−0.4)² for q < 0.4, 0 on [0.4, 0.6], −(q−0.6)² above: concave, C¹, w = 2 off the flat part.
    const flat = fromBayes({
      bayes: (q) => (q < 0.4 ? -((q - 0.4) ** 2) : q > 0.6 ? -((q - 0.6) ** 2) : 0),
      weight: (q) => (q < 0.4 || q > 0.6 ? 2 : 0),
    });
    const res = analyseCurvature(flat);
    expect(res.weightFeatures.pointMasses).toEqual([]);
    expect(res.weightFeatures.zeroIntervals.length).toBe(1);
    const [a, b] = res.weightFeatures.zeroIntervals[0]!;
    expect(Math.abs(a - 0.4)).toBeLessThan(1e-4);
    expect(Math.abs(b - 0.6)).toBeLessThan(1e-4);
    expect(res.lambda).toBe(0);
    expect(res.vacuousBelow).not.toBeNull();
    expect(Math.abs(res.vacuousBelow! - 0.2)).toBeLessThan(1e-4);
  });
});

describe("exponents by both routes (row C15 and the exponents column of table L; Bao 2023 §5)", () => {
  it("log loss: ½ and ½, no explanation needed (row L1)", () => {
    const res = analyseCurvature(fromBayes(logNats));
    expect(res.exponents.viaModulus).toBe(0.5);
    expect(res.exponents.direct).toBe(0.5);
    expect(res.exponents.explanation).toBeNull();
    expect(res.modulus!.power).toBe(2);
    expect(Math.abs(res.modulus!.coefficient - 0.5)).toBeLessThan(1e-5);
    expect(res.summary).toBe("λ = 4 · δ ≈ 0.5·ε² · exponents ½ / ½");
  });

  it("Beta(2,2): modulus exponent ⅓, direct ½, explained by w vanishing at an endpoint (row L10c, computed)", () => {
    const res = analyseCurvature(fromBayes(betaTwoTwo));
    expect(res.exponents.viaModulus).toBeCloseTo(1 / 3, 12);
    expect(res.exponents.direct).toBe(0.5);
    expect(res.exponents.explanation).toMatch(/w vanishes at an endpoint \(w ~ (q|\(1−q\))\^1 near [01]\): this slows only the modulus route/);
    expect(res.summary).toContain("exponents ⅓ / ½");
  });

  it("pseudo-spherical α = 3: modulus exponent ⅓ (endpoint), direct ½ (row L15, computed)", () => {
    const res = analyseCurvature(fromBayes(pseudoSpherical(3)));
    expect(res.exponents.viaModulus).toBeCloseTo(1 / 3, 12);
    expect(res.exponents.direct).toBe(0.5);
    expect(res.exponents.explanation).toContain("endpoint");
  });

  it("pseudo-spherical α = 2.5 (no weight closure): δ ≈ ((½ − 2^{−α})/α)·ε^α, modulus exponent 2/5, direct ½ (row L15, computed)", () => {
    const res = analyseCurvature(fromBayes(pseudoSpherical(2.5)));
    expect(res.lambda).toBe(0);
    expect(res.lambdaAt).toEqual({ q: 0, approached: true });
    expect(res.modulus!.power).toBe(2.5);
    expect(Math.abs(res.modulus!.coefficient / ((0.5 - 2 ** -2.5) / 2.5) - 1)).toBeLessThan(1e-4);
    expect(res.exponents.viaModulus).toBeCloseTo(0.4, 12);
    expect(res.exponents.direct).toBe(0.5);
    expect(res.summary).toContain("exponents 2/5 / ½");
    expect(res.exponents.explanation).toContain("w ~ q^0.5 near 0");
  });

  it("pseudo-spherical α = 5 (w ~ q³ at the endpoints): strictly proper, so never reported as vacuous (rows C4, L15; Bao 2023 Thm 2)", () => {
    const res = analyseCurvature(fromBayes(pseudoSpherical(5)));
    expect(res.vacuousBelow).toBeNull();
    expect(res.weightFeatures.zeroIntervals).toEqual([]);
    expect(res.lambda).toBe(0);
    expect(res.lambdaAt?.approached).toBe(true);
    // p = α = 5 (row L15, computed); the estimate is within 1e-2 (rounding of H limits the smallest usable ε).
    expect(Math.abs(res.modulus!.power - 5)).toBeLessThan(1e-2);
  });

  it("cubic polynomial entropy: ⅓ by both routes; ψ_RW(½, a) = a³ exactly (row L16; Bao 2023 App. B.5)", () => {
    const res = analyseCurvature(fromBayes(polynomial(3)));
    expect(res.exponents.viaModulus).toBeCloseTo(1 / 3, 12);
    expect(res.exponents.direct).toBeCloseTo(1 / 3, 12);
    expect(res.exponents.explanation).toBeNull();
    expect(res.lambda).toBe(0);
    expect(res.lambdaAt?.approached).toBe(false);
    expect(Math.abs(res.lambdaAt!.q - 0.5)).toBeLessThan(1e-6);
  });

  it("polynomial entropy α = 1.5 (w → ∞ at ½): direct exponent 1/α = ⅔ beats the modulus route's ½ (Bao 2023 §5 limitation)", () => {
    const res = analyseCurvature(fromBayes(polynomial(1.5)));
    expect(res.exponents.direct).toBeCloseTo(2 / 3, 9);
    expect(res.exponents.viaModulus).toBeCloseTo(0.5, 9);
    expect(res.exponents.explanation).toContain("unbounded at the threshold");
  });

  it("0-1 loss: modulus route vacuous below ½ (no exponent), direct exponent 1 from the point mass (row L13; Bao 2023 §5)", () => {
    const res = analyseCurvature(fromBayes(zeroOne));
    expect(res.vacuousBelow).toBeCloseTo(0.5, 9);
    expect(res.modulus).toBeNull();
    expect(res.exponents.viaModulus).toBeNull();
    expect(res.exponents.direct).toBe(1);
    expect(res.exponents.explanation).toContain("δ** = 0 below ε = 0.5");
    expect(res.summary).toBe("λ = 0 · δ** = 0 below ε = 0.5 · exponents — / 1");
    // Never a NaN in anything shown to the user.
    for (const text of [res.summary, ...res.notes.map((n) => n.text), ...res.findings.map((f) => f.message)]) expect(text).not.toMatch(/NaN/);
  });
});

describe("inverse table (decision regret in cost-c units; surrogate regret in the loss's units)", () => {
  it("Brier: modulus route needs 2δ(a) = a²/2, direct needs a² (row C12 sign check, computed: Brier at c = ½ gives α²)", () => {
    const res = analyseCurvature(fromBayes(brier));
    for (const row of res.inverseTable) {
      const a = row.decisionRegret;
      expect(Math.abs(row.viaModulus! - a * a / 2)).toBeLessThan(1e-12);
      expect(Math.abs(row.direct! - a * a)).toBeLessThan(1e-12);
      expect(row.psiTransform).toBeNull();
    }
    expect(res.inverseTable.map((r) => r.decisionRegret)).toEqual([0.1, 0.05, 0.01, 0.001]);
    expect(res.units.decisionRegret).toContain("half the usual 0-1 regret");
  });

  it("logistic margin loss: the ψ-transform column equals ψ(2a) = δ_log(2a) (rows P2 and N28, computed: ψ_logistic = δ_log)", () => {
    const res = analyseCurvature(fromBayes(logisticMargin));
    const closed = (e: number) => ((1 + e) / 2) * Math.log((1 + e) / 2) + ((1 - e) / 2) * Math.log((1 - e) / 2) + Math.LN2;
    for (const row of res.inverseTable) {
      expect(Math.abs(row.psiTransform! - closed(2 * row.decisionRegret))).toBeLessThan(1e-10);
      // RW Cor. 27 for symmetric H at ½: ψ_RW(α) = H(½) − H(½+α), which is the same closed form at θ = 2α.
      expect(Math.abs(row.direct! - closed(2 * row.decisionRegret))).toBeLessThan(1e-10);
    }
  });

  it("0-1 loss: the modulus column is null (vacuous), the direct column is linear: ψ_RW(½, a) = 2a for mass 2", () => {
    const res = analyseCurvature(fromBayes(zeroOne));
    for (const row of res.inverseTable) {
      expect(row.viaModulus).toBeNull();
      expect(Math.abs(row.direct! - 2 * row.decisionRegret)).toBeLessThan(1e-8);
    }
  });
});

describe("guards", () => {
  it("a Bayes risk that throws becomes an internal-error or analysis-unknown finding, not an exception", () => {
    const bad = fromBayes({ bayes: () => { throw new Error("boom"); }, weight: () => { throw new Error("boom"); } });
    const res = analyseCurvature(bad);
    expect(res.lambda).toBeNull();
    expect(res.findings.length).toBeGreaterThan(0);
    expect(res.summary).not.toMatch(/NaN/);
  });

  it("a NaN Bayes risk in the interior is reported with the point, and nothing is computed from it", () => {
    const bad = fromBayes({ bayes: (q) => (q > 0.4 && q < 0.45 ? NaN : q * (1 - q)), weight: () => 2 });
    const res = analyseCurvature(bad);
    expect(res.findings.some((f) => f.code === "analysis-unknown" && f.clause === "bayes")).toBe(true);
    expect(res.modulus).toBeNull();
  });

  it("a zero time budget stops before the modulus with analysis-unknown findings, and still returns a result", () => {
    const res = analyseCurvature(fromBayes(logNats), { deadlineMs: -1 });
    expect(res.findings.some((f) => f.code === "analysis-unknown" && f.message.includes("budget"))).toBe(true);
    expect(res.modulus).toBeNull();
    expect(res.lambda).toBe(4);
    expect(res.summary).not.toMatch(/NaN/);
  });

  it("a threshold outside (0,1) falls back to ½ with a finding", () => {
    const res = analyseCurvature({ ...fromBayes(brier), threshold: 1.5 });
    expect(res.threshold).toBe(0.5);
    expect(res.findings.some((f) => f.clause === "threshold")).toBe(true);
  });

  it("a negative weight (improper loss) is reported, with λ withheld", () => {
    const convexH = fromBayes({ bayes: (q) => q * q, weight: () => -2 });
    const res = analyseCurvature(convexH);
    expect(res.lambda).toBeNull();
    expect(res.findings.some((f) => f.code === "analysis-unknown" && f.message.includes("negative"))).toBe(true);
  });
});

describe("sampleCurves", () => {
  it("returns plain arrays with nulls for non-finite values and notes saying so", () => {
    const fns = fromBayes(logisticMargin);
    const res = analyseCurvature(fns);
    const curves = sampleCurves(fns, res, { points: 101 });
    expect(curves.partials.map((s) => s.id)).toEqual(["l1", "l0"]);
    for (const s of [...curves.partials, curves.bayes, ...curves.modulus, ...curves.bounds]) {
      expect(s.x.length).toBe(s.y.length);
      for (const y of s.y) expect(y === null || Number.isFinite(y)).toBe(true);
    }
    // l1 = −ln q is infinite at q = 0: replaced by null, with a note.
    expect(curves.partials[0]!.y[0]).toBeNull();
    expect(curves.notes.some((n) => n.kind === "loss-samples" && n.text.includes("l1"))).toBe(true);
    expect(curves.modulus.map((s) => s.id)).toEqual(["delta", "delta-envelope"]);
    expect(curves.bounds.map((s) => s.id)).toEqual(["bound-modulus", "bound-direct", "bound-psi"]);
    expect(curves.link).not.toBeNull();
    expect(curves.weight).not.toBeNull();
    // δ on the curve agrees with the closed form (Bao 2023 §4) at ε = 0.5 (index 50 of 101).
    const closed = 0.130812035941;
    const i = curves.modulus[0]!.x.indexOf(0.5);
    expect(i).toBeGreaterThan(0);
    expect(Math.abs(curves.modulus[0]!.y[i]! - closed)).toBeLessThan(1e-8);
  });

  it("works without a prior analysis (rebuilds the models) and for the hinge Bayes loss (point mass)", () => {
    const fns = fromBayes(hingeBayes);
    const res = analyseCurvature(fns);
    const curves = sampleCurves(fromBayes(hingeBayes), res);
    expect(curves.bayes.y.every((y) => y !== null)).toBe(true);
    expect(curves.notes.some((n) => n.kind === "point-mass" && n.text.includes("point mass"))).toBe(true);
  });
});
