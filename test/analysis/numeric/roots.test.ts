/**
 * Root finding against roots known in closed form or to full double precision.
 * Sources: √2 and ln 2 are elementary; the roots of (x − 1)(x − 2)(x − 3) are its factors; the fixed point
 * of cos (the "Dottie number") 0.7390851332151607 is common practice (from memory); the real root of
 * Wallis's cubic x³ − 2x − 5, 2.0945514815423265, is the classic example of Newton's method (from memory).
 * Bisection halves the bracket each step; the Illinois variant of regula falsi converges superlinearly
 * (Dowell & Jarratt 1971, "A modified regula falsi method for computing the root of an equation", BIT 11,
 * 168–174, order ≈ 1.442; from memory).
 */
import { describe, expect, it } from "vitest";
import { bisect, findRootBracketed, invertMonotone } from "../../../server/src/analysis/numeric/roots.js";

type Fn = (x: number) => number;
const DOTTIE = 0.7390851332151607;
const WALLIS = 2.0945514815423265;
const cubic: Fn = (x) => (x - 1) * (x - 2) * (x - 3);

// [name, f, a, b, root]; f is increasing through the root on [a, b] so the same rows serve findRootBracketed.
const ROOTS: [string, Fn, number, number, number][] = [
  ["x² − 2", (x) => x * x - 2, 0, 2, Math.SQRT2],
  ["eˣ − 2", (x) => Math.exp(x) - 2, -1, 3, Math.LN2],
  ["x − cos x (Dottie number)", (x) => x - Math.cos(x), 0, 1, DOTTIE],
  ["x³ − 2x − 5 (Wallis)", (x) => x ** 3 - 2 * x - 5, 2, 3, WALLIS],
  ["(x−1)(x−2)(x−3) near 1", cubic, 0, 1.5, 1],
  ["−(x−1)(x−2)(x−3) near 2", (x) => -cubic(x), 1.5, 2.5, 2],
  ["(x−1)(x−2)(x−3) near 3", cubic, 2.5, 10, 3],
  ["x^(1/3) (infinite slope at the root)", (x) => Math.cbrt(x), -1, 2, 0],
  ["tan x − 1 on [0, 1.2]", (x) => Math.tan(x) - 1, 0, 1.2, Math.PI / 4],
];

/** Absolute accuracy demanded: the kernels stop at a relative bracket of ~1e-14; 1e-13 leaves rounding room. */
const ROOT_TOL = 1e-13;

describe("bisect", () => {
  it.each(ROOTS)("%s on [%s, %s] → %s", (_n, f, a, b, root) => {
    const x = bisect(f, a, b);
    expect(x).not.toBeNull();
    expect(Math.abs(x! - root)).toBeLessThan(ROOT_TOL * Math.max(1, Math.abs(root)));
  });

  it.each([
    // [name, f, a, b, expected]
    ["no sign change (x² + 1)", (x: number) => x * x + 1, -1, 1, null],
    ["NaN at an end", (x: number) => (x > 0.9 ? NaN : x - 0.5), 0, 1, null],
    ["root at the left end is returned exactly", (x: number) => x, 0, 1, 0],
    ["root at the right end is returned exactly", (x: number) => x - 1, 0, 1, 1],
  ] as const)("%s", (_n, f, a, b, expected) => {
    expect(bisect(f, a, b)).toBe(expected);
  });
});

describe("findRootBracketed (Illinois)", () => {
  it.each(ROOTS)("%s on [%s, %s] → %s", (_n, f, a, b, root) => {
    const x = findRootBracketed(f, a, b);
    expect(Math.abs(x - root)).toBeLessThan(ROOT_TOL * Math.max(1, Math.abs(root)));
    expect(x >= a && x <= b).toBe(true);
  });

  it.each(ROOTS.slice(0, 4))("%s: fewer evaluations than bisection needs for the same bracket (superlinear, Dowell & Jarratt 1971)", (_n, f, a, b) => {
    let calls = 0;
    findRootBracketed((x) => (calls++, f(x)), a, b);
    // Bisection needs log2((b − a)/(1e-14·(1 + |a|))) ≈ 46–48 halvings here.
    expect(calls).toBeLessThan(30);
  });

  it("a step function still converges to its jump (the periodic bisection step)", () => {
    const x = findRootBracketed((t) => (t < 0.3 ? -1 : 1), 0, 1);
    expect(Math.abs(x - 0.3)).toBeLessThan(1e-13);
  });

  it.each([
    // g(a) and g(b) on the same side: the end with the smaller |g| is returned (documented).
    ["both positive", (x: number) => x + 1, 0, 1, 0],
    ["both negative", (x: number) => x - 5, 0, 1, 1],
    ["root at the left end", (x: number) => x, 0, 1, 0],
    ["root at the right end", (x: number) => x - 1, 0, 1, 1],
  ] as const)("%s → %s", (_n, g, a, b, expected) => {
    expect(findRootBracketed(g, a, b)).toBe(expected);
  });
});

describe("invertMonotone", () => {
  it.each([
    // [name, f, y, lo, hi, expected x with f(x) = y]
    ["x³ at 2", (x: number) => x ** 3, 2, 0, 2, Math.cbrt(2)],
    ["exp at 1", Math.exp, 1, -1, 1, 0],
    ["logit at ln 3", (x: number) => Math.log(x / (1 - x)), Math.log(3), 0.01, 0.99, 0.75],
    ["1/x (decreasing) at 1", (x: number) => 1 / x, 1, 0.5, 4, 1],
    ["cos (decreasing on [0, π]) at 1/2", Math.cos, 0.5, 0, Math.PI, Math.PI / 3],
    ["x³ above the range clamps to hi", (x: number) => x ** 3, 5, 0, 1, 1],
    ["x³ below the range clamps to lo", (x: number) => x ** 3, -1, 0, 1, 0],
    ["1/x above its range (decreasing) clamps to lo", (x: number) => 1 / x, 10, 0.5, 4, 0.5],
    ["1/x below its range (decreasing) clamps to hi", (x: number) => 1 / x, 0.1, 0.5, 4, 4],
  ] as const)("%s → %s", (_n, f, y, lo, hi, expected) => {
    expect(Math.abs(invertMonotone(f, y, lo, hi) - expected)).toBeLessThan(1e-13);
  });
});
