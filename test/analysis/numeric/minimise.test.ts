/**
 * One-dimensional minimisation against minima known in closed form (found by setting the derivative to
 * zero by hand) and on standard multi-modal test functions.
 *
 * Tolerance on the minimiser: near a smooth minimum f(x* + δ) − f(x*) ≈ ½f''δ², so rounding of f at
 * ~1e-16 leaves δ undetermined below ~√EPS ≈ 1.5e-8 (common practice); the value itself is asserted to
 * 1e-12. At a kink (|x − c|) the minimiser is determined to the bracket tolerance.
 */
import { describe, expect, it } from "vitest";
import { globalMin, goldenMin, robustMin } from "../../../server/src/analysis/numeric/minimise.js";

type Fn = (x: number) => number;
/** Rastrigin's function in one dimension: global minimum 0 at x = 0, local minima near every integer (Rastrigin 1974; common benchmark, from memory). */
const rastrigin: Fn = (x) => x * x - 10 * Math.cos(2 * Math.PI * x) + 10;
/** sin x + sin(10x/3) on [2.7, 7.5]: global minimum −1.899599 at x = 5.145735, with two other local minima (a standard univariate global-optimisation test problem; values from memory, 6 digits). */
const sinSum: Fn = (x) => Math.sin(x) + Math.sin((10 * x) / 3);

// [name, f, a, b, x*, f(x*), tolerance on x, source]
const UNIMODAL: [string, Fn, number, number, number, number, number, string][] = [
  ["x² − 2x", (x) => x * x - 2 * x, -3, 4, 1, -1, 1e-7, "f' = 2x − 2 = 0 (by hand)"],
  ["(x − 0.3)² + 1", (x) => (x - 0.3) ** 2 + 1, 0, 1, 0.3, 1, 1e-7, "vertex of the parabola (by hand)"],
  ["cos x on [2, 4]", Math.cos, 2, 4, Math.PI, -1, 1e-7, "cos has its minimum −1 at π"],
  ["x ln x on [0.05, 1]", (x) => x * Math.log(x), 0.05, 1, 1 / Math.E, -1 / Math.E, 1e-7, "f' = ln x + 1 = 0 at 1/e (by hand)"],
  ["eˣ − 2x on [0, 2]", (x) => Math.exp(x) - 2 * x, 0, 2, Math.LN2, 2 - 2 * Math.LN2, 1e-7, "f' = eˣ − 2 = 0 at ln 2 (by hand)"],
  ["|x − 0.7| (kink)", (x) => Math.abs(x - 0.7), 0, 1, 0.7, 0, 1e-11, "minimum at the kink (by hand)"],
  ["x on [2, 5] (minimum at the left end)", (x) => x, 2, 5, 2, 2, 1e-11, "monotone increasing (by hand)"],
  ["−x on [2, 5] (minimum at the right end)", (x) => -x, 2, 5, 5, -5, 1e-11, "monotone decreasing (by hand)"],
  ["NaN below 0.5, (x − 0.8)² above", (x) => (x < 0.5 ? NaN : (x - 0.8) ** 2), 0, 1, 0.8, 0, 1e-7, "NaN counts as +∞ (documented), vertex at 0.8"],
];

describe("goldenMin on unimodal functions", () => {
  it.each(UNIMODAL)("%s → x* = %s (%s)", (_n, f, a, b, xStar, fStar, xTol) => {
    const m = goldenMin(f, a, b);
    expect(Math.abs(m.x - xStar)).toBeLessThan(xTol);
    expect(Math.abs(m.fx - fStar)).toBeLessThan(1e-12);
    expect(m.fx).toBe(Number.isNaN(f(m.x)) ? Infinity : f(m.x));
  });
});

// [name, f, a, b, x*, f(x*), tolerance on x, tolerance on f]
const MULTIMODAL: [string, Fn, number, number, number, number, number, number][] = [
  ["Rastrigin on [−5.12, 5.12]", rastrigin, -5.12, 5.12, 0, 0, 1e-7, 1e-12],
  ["Rastrigin shifted to 0.5 on [−4, 4.5]", (x) => rastrigin(x - 0.5), -4, 4.5, 0.5, 0, 1e-7, 1e-12],
  ["sin x + sin(10x/3) on [2.7, 7.5]", sinSum, 2.7, 7.5, 5.145735, -1.899599, 1e-6, 1e-6],
  ["cos(3x) + x/10 on [−4, 4] (minimum near the left end)", (x) => Math.cos(3 * x) + x / 10, -4, 4, (-3 * Math.PI - Math.asin(1 / 30)) / 3, Math.cos(-3 * Math.PI - Math.asin(1 / 30)) + (-3 * Math.PI - Math.asin(1 / 30)) / 30, 1e-7, 1e-12],
];
// The last row: f' = −3 sin 3x + 1/10 = 0 ⇒ sin 3x = 1/30, and the minima of cos 3x sit near 3x = (2k+1)π, so
// 3x = (2k+1)π − asin(1/30); each period to the left lowers the value by 2π/30, so the lowest inside
// 3x ∈ [−12, 12] is k = −2, 3x = −3π − asin(1/30) (by hand).

describe("global searches on multi-modal functions", () => {
  it.each(MULTIMODAL)("globalMin: %s → x* = %s, f* = %s", (_n, f, a, b, xStar, fStar, xTol, fTol) => {
    const m = globalMin(f, a, b);
    expect(Math.abs(m.x - xStar)).toBeLessThan(xTol);
    expect(Math.abs(m.fx - fStar)).toBeLessThan(fTol);
  });
  it.each(MULTIMODAL)("robustMin: %s → x* = %s, f* = %s", (_n, f, a, b, xStar, fStar, xTol, fTol) => {
    const m = robustMin(f, a, b, 200);
    expect(Math.abs(m.x - xStar)).toBeLessThan(xTol);
    expect(Math.abs(m.fx - fStar)).toBeLessThan(fTol);
  });
  it.each(UNIMODAL.filter(([n]) => !n.startsWith("NaN")))("robustMin with goldenMin's bracket tolerance (1e-12) agrees with the unimodal table: %s", (_n, f, a, b, xStar, fStar, xTol) => {
    const m = robustMin(f, a, b, 64, 3, 1e-12);
    expect(Math.abs(m.x - xStar)).toBeLessThan(xTol);
    expect(Math.abs(m.fx - fStar)).toBeLessThan(1e-12);
  });
  it("robustMin on a degenerate interval evaluates the single point", () => {
    expect(robustMin((x) => x * x, 3, 3)).toEqual({ x: 3, fx: 9 });
  });
});
