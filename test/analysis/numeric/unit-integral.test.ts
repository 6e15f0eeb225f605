/**
 * Integrals over (0,1) with endpoint singularities: `endpointSafe`, `endpointIntegral` (decade sums with a
 * geometric tail and divergence detection) and the tabulated `UnitIntegral`, against closed forms.
 * Sources: ∫₀¹ x^(a−1)(1−x)^(b−1) dx = B(a,b) = Γ(a)Γ(b)/Γ(a+b) (Abramowitz & Stegun 1964, Handbook of
 * Mathematical Functions, 6.2.1–6.2.2), Γ(½) = √π (6.1.8), so B(½,½) = π; d/dq 2·arcsin√q = 1/√(q(1−q))
 * and d/dq ln(q/(1−q)) = 1/(q(1−q)) (elementary); ∫₀ᵇ x^p dx = b^(p+1)/(p+1) for p > −1 and divergence for
 * p ≤ −1 (elementary).
 */
import { describe, expect, it } from "vitest";
import { integrate } from "../../../server/src/analysis/numeric/quadrature.js";
import { ENDPOINT_ULPS, endpointIntegral, endpointSafe, UnitIntegral } from "../../../server/src/analysis/numeric/unit-integral.js";

type Fn = (x: number) => number;
const { PI, sqrt, log, asin } = Math;

describe("endpointSafe", () => {
  it.each([
    // [name, g, x, expected]
    ["1/x at 0 (∞ on the endpoint) counts as 0", (x: number) => 1 / x, 0, 0],
    ["1/(1−x) at 1 counts as 0", (x: number) => 1 / (1 - x), 1, 0],
    ["1/(1−x) at 1 − 2^-53 (within ENDPOINT_ULPS of 1) counts as 0", (x: number) => (x === 1 - 2 ** -53 ? Infinity : 1 / (1 - x)), 1 - 2 ** -53, 0],
    ["finite values pass through unchanged", (x: number) => 1 / x, 0.25, 4],
    ["a non-finite value inside (0,1) is kept (NaN)", (x: number) => (x === 0.5 ? NaN : x), 0.5, NaN],
    ["a non-finite value inside (0,1) is kept (∞)", (x: number) => (x === 0.5 ? Infinity : x), 0.5, Infinity],
  ] as const)("%s", (_n, g, x, expected) => {
    expect(endpointSafe(g)(x)).toBe(expected);
  });

  it("ENDPOINT_ULPS covers the two doubles just below 1 (spacing 2^-53 = 1.1e-16) and no more than a few ulps", () => {
    expect(1 - (1 - 2 * 2 ** -53)).toBeLessThanOrEqual(ENDPOINT_ULPS);
    expect(ENDPOINT_ULPS).toBeLessThan(1e-15);
  });

  it("makes plain integrate reach B(½,½) = π (A&S 6.2.2): the dropped node next to 1 carries at most 2√ENDPOINT_ULPS ≈ 4e-8", () => {
    const r = integrate(endpointSafe((x) => 1 / sqrt(x * (1 - x))), 0, 1);
    expect(Math.abs(r.value - PI)).toBeLessThan(2 * sqrt(ENDPOINT_ULPS) + 1e-9);
  });
});

describe("endpointIntegral", () => {
  // [name, g, a, b, exact (NaN = divergent), relative tolerance]
  const CASES: [string, Fn, number, number, number, number][] = [
    ["x^(−1/2) on [0, 0.01]", (x) => 1 / sqrt(x), 0, 0.01, 0.2, 1e-12],
    ["ln x on [0, 0.01]", log, 0, 0.01, 0.01 * log(0.01) - 0.01, 1e-12],
    // The geometric tail beyond the 12 resolved decades carries 10^-1.2 of the total here: it is exact for pure powers.
    ["x^(−0.9) on [0, 0.01]", (x) => x ** -0.9, 0, 0.01, 0.01 ** 0.1 / 0.1, 1e-12],
    ["x^(−0.99) on [0, 0.01] (close to the divergence threshold)", (x) => x ** -0.99, 0, 0.01, 0.01 ** 0.01 / 0.01, 1e-12],
    ["3 on [0, 0.01]", () => 3, 0, 0.01, 0.03, 1e-12],
    // Next to 1 doubles resolve 1 − x only to ~1e-16, so a relative 1e-8 is asked (observed ~8e-10).
    ["(1−x)^(−1/2) on [0.99, 1]", (x) => 1 / sqrt(1 - x), 0.99, 1, 0.2, 1e-8],
    ["ln(1−x) on [0.99, 1]", (x) => log(1 - x), 0.99, 1, 0.01 * log(0.01) - 0.01, 1e-8],
    ["3 on [0.99, 1]", () => 3, 0.99, 1, 0.03, 1e-12],
    ["1/x on [0, 0.01] (diverges)", (x) => 1 / x, 0, 0.01, NaN, 0],
    ["x^(−1.01) on [0, 0.01] (diverges)", (x) => x ** -1.01, 0, 0.01, NaN, 0],
    ["1/x² on [0, 0.01] (diverges)", (x) => 1 / (x * x), 0, 0.01, NaN, 0],
    ["1/(1−x) on [0.99, 1] (diverges)", (x) => 1 / (1 - x), 0.99, 1, NaN, 0],
  ];
  it.each(CASES)("%s", (_n, g, a, b, exact, tol) => {
    const r = endpointIntegral(g, a, b);
    if (Number.isNaN(exact)) {
      expect(r.finite).toBe(false);
      expect(r.value).toBeNaN();
    } else {
      expect(r.finite).toBe(true);
      expect(Math.abs(r.value - exact)).toBeLessThanOrEqual(tol * Math.abs(exact));
    }
  });
});

describe("UnitIntegral", () => {
  const TOL = 1e-9; // the tabulation cells are integrated to 1e-13 absolute and 1e-10 relative; 1e-9 leaves room for their sum.

  it("1/√(q(1−q)): head(q) = 2·arcsin√q, head(1) = B(½,½) = π, tail(q) = π − 2·arcsin√q (A&S 6.2.2, 6.1.8)", () => {
    const U = new UnitIntegral((q) => 1 / sqrt(q * (1 - q)));
    expect(U.headStatus).toEqual({ finite: true, where: null });
    expect(U.tailStatus).toEqual({ finite: true, where: null });
    for (const q of [1e-10, 1e-3, 0.25, 0.5, 0.8, 1 - 1e-6]) {
      expect(Math.abs(U.head(q) - 2 * asin(sqrt(q)))).toBeLessThan(TOL);
      expect(Math.abs(U.tail(q) - (PI - 2 * asin(sqrt(q))))).toBeLessThan(TOL);
      expect(Math.abs(U.fromHalf(q) - (2 * asin(sqrt(q)) - PI / 2))).toBeLessThan(TOL);
    }
    expect(Math.abs(U.head(1) - PI)).toBeLessThan(TOL);
    expect(Math.abs(U.tail(0) - PI)).toBeLessThan(TOL);
  });

  it("q^(−1/2): head(q) = 2√q, tail(q) = 2 − 2√q, head(1) = 2", () => {
    const U = new UnitIntegral((q) => 1 / sqrt(q));
    for (const q of [1e-13, 1e-5, 0.3, 0.9, 1 - 1e-9]) {
      expect(Math.abs(U.head(q) - 2 * sqrt(q))).toBeLessThan(TOL);
      expect(Math.abs(U.tail(q) - (2 - 2 * sqrt(q)))).toBeLessThan(TOL);
    }
    expect(Math.abs(U.head(1) - 2)).toBeLessThan(TOL);
  });

  it("1/(q(1−q)) (the log-loss weight) diverges at both ends; fromHalf(q) = ln(q/(1−q)) stays finite inside", () => {
    const U = new UnitIntegral((q) => 1 / (q * (1 - q)));
    expect(U.headStatus).toEqual({ finite: false, where: 0 });
    expect(U.tailStatus).toEqual({ finite: false, where: 1 });
    for (const q of [1e-9, 0.1, 0.5, 0.9, 1 - 1e-9]) expect(Math.abs(U.fromHalf(q) - log(q / (1 - q)))).toBeLessThan(TOL * Math.max(1, Math.abs(log(q / (1 - q)))));
    expect(U.head(0.3)).toBeNaN();
    expect(U.tail(0.3)).toBeNaN();
    expect(U.fromHalf(0)).toBe(-Infinity);
    expect(U.fromHalf(1)).toBe(Infinity);
  });

  it.each([
    // [q, head(q), tail(q)] for the constant 2 (by hand); outside [0,1] both are NaN, at the ends 0 or the full 2.
    [0, 0, 2],
    [1e-14, 2e-14, 2],
    [0.3, 0.6, 1.4],
    [1, 2, 0],
    [-1, NaN, 2],
    [2, 2, NaN],
  ])("constant 2 at q = %s: head = %s, tail = %s", (q, head, tail) => {
    const U = new UnitIntegral(() => 2);
    const check = (got: number, want: number) => (Number.isNaN(want) ? expect(got).toBeNaN() : expect(Math.abs(got - want)).toBeLessThan(1e-13));
    check(U.head(q), head);
    check(U.tail(q), tail);
  });

  it("an interior cell with infinite values is reported (cell [0.40, 0.41] → its midpoint 0.405)", () => {
    const U = new UnitIntegral((q) => (q >= 0.4 && q <= 0.41 ? Infinity : 1));
    expect(U.interiorDivergence).toBeCloseTo(0.405, 12);
    expect(new UnitIntegral(() => 1).interiorDivergence).toBeNull();
  });
});
