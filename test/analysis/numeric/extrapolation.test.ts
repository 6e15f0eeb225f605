/**
 * Aitken's Δ² process and its iteration (Shanks' transformation) on sequences with known limits.
 * Sources: Aitken 1926, "On Bernoulli's numerical solution of algebraic equations", Proc. Roy. Soc.
 * Edinburgh 46 (Δ² is exact on s_n = L + c·rⁿ; from memory); Shanks 1955, "Non-linear transformations of
 * divergent and slowly convergent sequences", J. Math. Phys. 34, 1–42 (iterating Δ² removes one geometric
 * component per pass); ln 2 = Σ_{k≥1} 1/(k·2^k) from ln(1 + z) at z = −½ (Abramowitz & Stegun 1964, 4.1.24);
 * e = Σ 1/k! (A&S 4.2.1); π/4 = Σ (−1)^k/(2k+1) (Leibniz; common practice).
 * The kernels extrapolate only a shrinking, same-sign correction (ratio of differences in (0, 0.95)); anything
 * else keeps the last term by design, which the last table checks.
 */
import { describe, expect, it } from "vitest";
import { aitkenLimit, shanksLimit } from "../../../server/src/analysis/numeric/extrapolation.js";

const partialSums = (term: (k: number) => number, n: number, from = 0): number[] => {
  const out: number[] = [];
  let s = 0;
  for (let k = from; k < from + n; k++) out.push((s += term(k)));
  return out;
};
const factorial = (k: number): number => (k <= 1 ? 1 : k * factorial(k - 1));
const geometric = (L: number, c: number, r: number, n: number) => Array.from({ length: n }, (_, i) => L + c * r ** i);

describe("aitkenLimit is exact on geometric sequences L + c·rⁿ (Aitken 1926)", () => {
  it.each([
    // [L, c, r]
    [1, 1, 0.5],
    [-2, 3, 0.1],
    [10, -10, 0.9],
    [0.25, 1e-3, 0.01],
  ])("L = %s, c = %s, r = %s: three terms give L to 1e-12", (L, c, r) => {
    expect(Math.abs(aitkenLimit(geometric(L, c, r, 3)) - L)).toBeLessThan(1e-12 * Math.max(1, Math.abs(L)));
    // Only the last three terms matter.
    expect(Math.abs(aitkenLimit(geometric(L, c, r, 7)) - L)).toBeLessThan(1e-12 * Math.max(1, Math.abs(L)));
  });
});

describe("shanksLimit on series with known sums", () => {
  it.each<[string, number[], number, number, string]>([
    // [name, partial sums, limit, tolerance, source]
    ["Σ 1/(k·2^k), 11 terms (last term off by 3.8e-5)", partialSums((k) => 1 / (k * 2 ** k), 11, 1), Math.LN2, 1e-9, "ln 2, A&S 4.1.24"],
    ["Σ 1/k!, 8 terms (last term off by 2.8e-5)", partialSums((k) => 1 / factorial(k), 8), Math.E, 2e-6, "e, A&S 4.2.1"],
    ["Σ 0.9^k, 11 terms (geometric: exact)", partialSums((k) => 0.9 ** k, 11), 10, 1e-10, "1/(1 − 0.9)"],
    // Two components (ratios 1/10 and 1/100) need two passes, 5 terms; differences of 4 + O(1e-5) lose ~11 digits to rounding there.
    ["λ + a·t + b·t² at t = 10^-i, i = 1..5 (the ladder of the doc comment)", [1, 2, 3, 4, 5].map((i) => 4 + 3 * 10 ** -i - 7 * 10 ** (-2 * i)), 4, 1e-7, "two geometric components (Shanks 1955)"],
  ])("%s → %s within %s (%s)", (_n, seq, limit, tol) => {
    expect(Math.abs(shanksLimit(seq) - limit)).toBeLessThan(tol);
    // And it beats the last term by at least a factor of 10.
    expect(Math.abs(shanksLimit(seq) - limit)).toBeLessThan(0.1 * Math.abs(seq[seq.length - 1]! - limit));
  });
});

describe("sequences the kernels deliberately do not extrapolate (the last term is kept)", () => {
  const leibniz = partialSums((k) => (k % 2 ? -1 : 1) / (2 * k + 1), 11);
  it.each<[string, number[]]>([
    ["Leibniz partial sums of π/4 (alternating: ratio of differences < 0)", leibniz],
    ["alternating geometric 1 + (−½)ⁿ", geometric(1, 1, -0.5, 6)],
    ["growing 1, 2, 4, 8 (ratio 2)", [1, 2, 4, 8]],
    ["slow geometric, ratio 0.97 ≥ 0.95", geometric(0, 1, 0.97, 5)],
    ["constant tail (zero difference)", [3, 5, 5]],
    ["two terms", [1, 2]],
  ])("%s", (_n, seq) => {
    expect(aitkenLimit(seq)).toBe(seq[seq.length - 1]);
    expect(shanksLimit(seq)).toBe(seq[seq.length - 1]);
  });
  it("the Leibniz row: the kept last term is still within the alternating-series bound 1/(2n+1) of π/4 (common practice)", () => {
    expect(Math.abs(shanksLimit(leibniz) - Math.PI / 4)).toBeLessThan(1 / (2 * 11 + 1));
  });
  it("an empty sequence has no limit (NaN)", () => {
    expect(aitkenLimit([])).toBeNaN();
    expect(shanksLimit([])).toBeNaN();
  });
});
