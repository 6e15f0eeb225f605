/**
 * Seeded sampling and the deterministic grids. The uniform-distribution moments (mean 1/2, variance 1/12)
 * and the standard error σ/√n of a sample mean are common practice; expected grids are computed by hand
 * from the constructions documented in sampling.ts.
 */
import { describe, expect, it } from "vitest";
import { linspace, probabilityGrid, seededRandom, tabulationNodes } from "../../../server/src/analysis/numeric/sampling.js";

const draw = (seed: number, n: number): number[] => {
  const r = seededRandom(seed);
  return Array.from({ length: n }, () => r());
};

describe("seededRandom", () => {
  it.each([[0], [1], [42], [2 ** 32 - 1]])("seed %s reproduces the same sequence on a second generator", (seed) => {
    expect(draw(seed, 200)).toEqual(draw(seed, 200));
  });

  it.each([
    [0, 1],
    [1, 2],
    [42, 43],
    [12345, 54321],
  ])("seeds %s and %s give different sequences", (s, t) => {
    const a = draw(s, 50);
    const b = draw(t, 50);
    // Independent uniform streams agree at a given index with probability ~2^-32; demand all 50 differ.
    expect(a.filter((x, i) => x === b[i]).length).toBe(0);
  });

  it("the seed is taken modulo 2^32 (it is coerced with >>> 0)", () => {
    expect(draw(2 ** 32 + 7, 20)).toEqual(draw(7, 20));
  });

  it.each([[3], [2024]])("seed %s: 10^5 draws lie in [0, 1) with mean 1/2 ± 5σ/√n and variance 1/12 ± 2% (uniform moments, common practice)", (seed) => {
    const n = 100_000;
    const xs = draw(seed, n);
    expect(xs.every((x) => x >= 0 && x < 1)).toBe(true);
    const mean = xs.reduce((s, x) => s + x, 0) / n;
    const variance = xs.reduce((s, x) => s + (x - mean) ** 2, 0) / (n - 1);
    expect(Math.abs(mean - 0.5)).toBeLessThan(5 * Math.sqrt(1 / 12 / n));
    expect(Math.abs(variance - 1 / 12)).toBeLessThan(0.02 / 12);
  });
});

describe("linspace", () => {
  it.each([
    // [a, b, n, expected] (by hand: a + (b − a)·i/n)
    [0, 1, 4, [0, 0.25, 0.5, 0.75, 1]],
    [-1, 1, 2, [-1, 0, 1]],
    [2, 0, 2, [2, 1, 0]],
    [3, 3, 3, [3, 3, 3, 3]],
    [0, 10, 1, [0, 10]],
  ] as const)("linspace(%s, %s, %s)", (a, b, n, expected) => {
    const xs = linspace(a, b, n);
    expect(xs.length).toBe(n + 1);
    // Both ends are exact; interior points to rounding of one multiply-add.
    expect(xs[0]).toBe(a);
    expect(xs[n]).toBe(b);
    xs.forEach((x, i) => expect(Math.abs(x - expected[i]!)).toBeLessThanOrEqual(4 * Number.EPSILON * Math.max(1, Math.abs(a), Math.abs(b))));
  });
});

describe("probabilityGrid", () => {
  it("n = 10, minExponent = 3: the 9 points i/10 and {1, 3}·10^-k with their mirrors for k = 2, 3 (17 points, by hand)", () => {
    const expected = [0.001, 0.003, 0.01, 0.03, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 0.97, 0.99, 0.997, 0.999];
    const xs = probabilityGrid(10, 3);
    expect(xs.length).toBe(expected.length);
    xs.forEach((x, i) => expect(Math.abs(x - expected[i]!)).toBeLessThan(1e-15));
  });

  it.each([
    [50, 8],
    [200, 6],
  ])("n = %s, minExponent = %s: strictly increasing inside (0,1), reaching 10^-minExponent at both ends, symmetric under q ↦ 1 − q", (n, k) => {
    const xs = probabilityGrid(n, k);
    for (let i = 1; i < xs.length; i++) expect(xs[i]!).toBeGreaterThan(xs[i - 1]!);
    expect(xs[0]).toBeCloseTo(10 ** -k, 20);
    expect(Math.abs(xs[xs.length - 1]! - (1 - 10 ** -k))).toBeLessThan(1e-15);
    expect(xs.every((x) => x > 0 && x < 1)).toBe(true);
    // Symmetry: every point's mirror is on the grid (to the rounding of 1 − x).
    for (const x of xs) expect(xs.some((y) => Math.abs(y - (1 - x)) < 1e-15)).toBe(true);
  });
});

describe("tabulationNodes", () => {
  const xs = tabulationNodes();
  it("40 quarter-decade nodes 10^-12 … 10^-2.25 at each end plus the 99 points i/100: 179 nodes (by hand)", () => {
    expect(xs.length).toBe(179);
  });
  it("strictly increasing inside (0,1), from 10^-12 to 1 − 10^-12", () => {
    for (let i = 1; i < xs.length; i++) expect(xs[i]!).toBeGreaterThan(xs[i - 1]!);
    expect(Math.abs(xs[0]! - 1e-12)).toBeLessThan(1e-27);
    expect(Math.abs(xs[xs.length - 1]! - (1 - 1e-12))).toBeLessThan(1e-15);
  });
  it("contains 1/2 exactly (UnitIntegral anchors its signed integral there)", () => {
    expect(xs.indexOf(0.5)).toBeGreaterThan(0);
  });
  it.each([[1e-12], [10 ** -2.25], [0.01], [0.37], [0.99], [1 - 1e-6]])("contains %s (to a relative 1e-14)", (x) => {
    expect(xs.some((y) => Math.abs(y - x) <= 1e-14 * x)).toBe(true);
  });
});
