/**
 * Power-law fits g(x) ≈ c·x^p as x → 0⁺ and rational snapping of exponents. Expected powers and coefficients
 * are those of the closed forms in each row (by hand). The spacing claim behind POWER_SNAP_TOL — distinct
 * rationals n/d with d ≤ 4 are at least 1/12 apart — follows from |a/b − c/d| ≥ 1/(bd) (common practice).
 */
import { describe, expect, it } from "vitest";
import { fitPowerLawAtZero, POWER_SNAP_TOL, snapRational } from "../../../server/src/analysis/numeric/fits.js";

type Fn = (x: number) => number;

describe("snapRational", () => {
  it.each<[number, number | null, string]>([
    // [p, snapped, why]
    [0.6666667, 2 / 3, "within 3.3e-8 of 2/3"],
    [1.5, 1.5, "exactly 3/2"],
    [0.25, 0.25, "exactly 1/4"],
    [-0.5, -0.5, "negative powers snap too"],
    [1.0004, 1, "within POWER_SNAP_TOL = 1e-3 of 1"],
    [1.002, null, "2e-3 from 1: outside POWER_SNAP_TOL"],
    [0.33, null, "3.3e-3 from 1/3"],
    [0.7, null, "1/30 from 2/3 and 1/20 from 3/4"],
    [0.3, null, "1/30 from 1/3 and 1/20 from 1/4"],
    [NaN, null, "not finite"],
    [Infinity, null, "not finite"],
  ])("snapRational(%s) = %s (%s)", (p, expected) => {
    const got = snapRational(p);
    if (expected === null) expect(got).toBeNull();
    else expect(Math.abs(got! - expected)).toBeLessThan(1e-15);
  });

  it("a wider tolerance picks the nearest candidate: 0.7 with tol 0.05 → 2/3 (not 3/4, at distance 0.05)", () => {
    expect(snapRational(0.7, 0.05)).toBeCloseTo(2 / 3, 15);
  });

  it("distinct rationals n/d with d ≤ 4 in [−3, 3] are at least 1/12 apart, so POWER_SNAP_TOL < 1/24 never snaps ambiguously", () => {
    const values = new Set<number>();
    for (let d = 1; d <= 4; d++) for (let n = -3 * d; n <= 3 * d; n++) values.add(n / d);
    const sorted = [...values].sort((a, b) => a - b);
    let gap = Infinity;
    for (let i = 1; i < sorted.length; i++) gap = Math.min(gap, sorted[i]! - sorted[i - 1]!);
    expect(Math.abs(gap - 1 / 12)).toBeLessThan(1e-15);
    expect(POWER_SNAP_TOL).toBeLessThan(1 / 24);
  });
});

describe("fitPowerLawAtZero (ladder x0·2^-i, x0 = 0.1, 8 points)", () => {
  it.each<[string, Fn, number, number, boolean, number]>([
    // [name, g, power, coefficient, snapped, coefficient tolerance (relative)]
    ["3x²", (x) => 3 * x * x, 2, 3, true, 1e-12],
    ["x^1.5", (x) => x ** 1.5, 1.5, 1, true, 1e-12],
    ["2√x", (x) => 2 * Math.sqrt(x), 0.5, 2, true, 1e-12],
    ["5·x^(2/3)", (x) => 5 * x ** (2 / 3), 2 / 3, 5, true, 1e-12],
    ["1/x", (x) => 1 / x, -1, 1, true, 1e-12],
    ["x^0.3 (no simple rational within 1e-3)", (x) => x ** 0.3, 0.3, 1, false, 1e-12],
    // The correction x³ makes the local slopes approach 2 geometrically (ratio ½), which Aitken removes; the
    // coefficient sequence 1 + x is geometric too. Tolerance: the remaining second-order terms.
    ["x² + x³", (x) => x * x + x ** 3, 2, 1, true, 1e-9],
    ["x²(1 + 10x)", (x) => x * x * (1 + 10 * x), 2, 1, true, 1e-9],
  ])("%s → power %s, coefficient %s", (_n, g, power, coefficient, snapped, tol) => {
    const fit = fitPowerLawAtZero(g, 0.1)!;
    expect(fit).not.toBeNull();
    expect(Math.abs(fit.power - power)).toBeLessThan(snapped ? 1e-15 : 1e-12);
    expect(fit.snapped).toBe(snapped);
    expect(fit.stable).toBe(true);
    expect(Math.abs(fit.coefficient - coefficient)).toBeLessThan(tol * coefficient);
    expect(fit.slopes.length).toBe(7);
  });

  it.each<[string, Fn]>([
    ["−x (negative)", (x) => -x],
    ["NaN", () => NaN],
    ["0", () => 0],
  ])("not positive and finite on the ladder → null: %s", (_n, g) => {
    expect(fitPowerLawAtZero(g, 0.1)).toBeNull();
  });

  it("x − 0.01 turns negative after four points: the ladder stops there and the fit is flagged unstable", () => {
    const fit = fitPowerLawAtZero((x) => x - 0.01, 0.1)!;
    expect(fit.slopes.length).toBe(3);
    expect(fit.stable).toBe(false);
  });

  it("a floor 1e4 above a noise level of 1e-14 stops the ladder before the noise bends the slopes of x² (16 points from 1e-3)", () => {
    const g: Fn = (x) => x * x + 1e-14;
    const withFloor = fitPowerLawAtZero(g, 1e-3, 16, 1e-10)!;
    expect(withFloor.power).toBe(2);
    expect(Math.abs(withFloor.coefficient - 1)).toBeLessThan(1e-4);
    const without = fitPowerLawAtZero(g, 1e-3, 16)!;
    expect(Math.abs(without.power - 2)).toBeGreaterThan(0.1);
  });
});
