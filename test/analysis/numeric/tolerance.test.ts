/**
 * The one `nearlyEqual` and the shared tolerances REL_TOL, ABS_TOL. Each row names why the expected answer
 * holds; the comparison rule itself (a difference within an absolute floor or a relative band) is common
 * practice, and NaN / infinity handling follows IEEE 754-2008 semantics (NaN equals nothing).
 */
import { describe, expect, it } from "vitest";
import { ABS_TOL, nearlyEqual, REL_TOL } from "../../../server/src/analysis/numeric/tolerance.js";

const EPS = Number.EPSILON;

describe("nearlyEqual with the default tolerances", () => {
  it.each([
    // [a, b, expected, why]
    [1, 1, true, "identical values (common practice)"],
    [0, -0, true, "+0 and −0 compare equal in IEEE 754"],
    [1, 1 + 1e3 * EPS, true, "REL_TOL's stated purpose: a few ulps of rounding through ~1e3 operations"],
    [1, 1 + 1e-10, true, "relative difference 1e-10 < REL_TOL = 1e-9"],
    [1, 1 + 1e-8, false, "relative difference 1e-8 > REL_TOL = 1e-9"],
    [1e20, 1e20 * (1 + 5e-10), true, "relative band scales with magnitude (5e-10 < REL_TOL)"],
    [1e20, 1e20 + 1e12, false, "an absolute 1e12 is relative 1e-8 at 1e20 (> REL_TOL)"],
    [-3, -3 * (1 + 5e-10), true, "the relative band is symmetric in sign"],
    [-3, 3, false, "opposite signs of an O(1) value"],
    [0, 5e-324, true, "0 vs the smallest subnormal: within ABS_TOL = 1e-12"],
    [0, 1e-13, true, "0 vs 1e-13: within ABS_TOL = 1e-12"],
    [0, 1e-11, false, "0 vs 1e-11: outside ABS_TOL and no relative band around 0"],
    [1e-13, -1e-13, true, "two tiny values of opposite sign differ by 2e-13 < ABS_TOL"],
    [NaN, NaN, false, "NaN equals nothing, not even NaN (IEEE 754)"],
    [NaN, 1, false, "NaN equals nothing (IEEE 754)"],
    [0, NaN, false, "NaN equals nothing (IEEE 754)"],
    [Infinity, Infinity, true, "two infinities of the same sign are equal"],
    [-Infinity, -Infinity, true, "two infinities of the same sign are equal"],
    [Infinity, -Infinity, false, "infinities of opposite sign differ"],
    [Infinity, Number.MAX_VALUE, false, "an infinity never equals a finite number"],
    [Number.MAX_VALUE, Number.MAX_VALUE * (1 - 1e-12), true, "no overflow in the relative test near MAX_VALUE"],
  ] as const)("nearlyEqual(%s, %s) = %s: %s", (a, b, expected, _why) => {
    expect(nearlyEqual(a, b)).toBe(expected);
    // The comparison is symmetric.
    expect(nearlyEqual(b, a)).toBe(expected);
  });
});

describe("nearlyEqual with explicit tolerances", () => {
  it.each([
    // [a, b, relTol, absTol, expected, why]
    [100, 101, 0.02, 0, true, "|Δ| = 1 ≤ 0.02·101"],
    [100, 101, 0.005, 0, false, "|Δ| = 1 > 0.005·101"],
    [0, 0.5, 0, 1, true, "absolute floor 1 covers 0.5"],
    [0, 0.5, 0, 0.1, false, "absolute floor 0.1 does not cover 0.5"],
    [1, 1 + 1e-10, 0, 0, false, "zero tolerances accept only exact equality"],
    [2, 2, 0, 0, true, "zero tolerances accept exact equality"],
  ] as const)("nearlyEqual(%s, %s, rel %s, abs %s) = %s: %s", (a, b, rel, abs, expected, _why) => {
    expect(nearlyEqual(a, b, rel, abs)).toBe(expected);
    expect(nearlyEqual(b, a, rel, abs)).toBe(expected);
  });
});

describe("the shared tolerances", () => {
  it("REL_TOL leaves room for ~1e3 operations' rounding yet stays far below a meaningful relative error (common practice)", () => {
    expect(REL_TOL).toBeGreaterThan(1e3 * EPS);
    expect(REL_TOL).toBeLessThan(1e-6);
  });
  it("ABS_TOL is above the rounding of O(1) cancellations (a few EPS) and below any O(1) signal (common practice)", () => {
    expect(ABS_TOL).toBeGreaterThan(10 * EPS);
    expect(ABS_TOL).toBeLessThan(1e-9);
  });
});
