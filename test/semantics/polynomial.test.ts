// The polynomial and rational-function kernel of the derived formulas (server/src/semantics/derived/polynomial.ts),
// checked on a table of identities of elementary algebra. Each expected value was expanded by hand and is
// re-checked below by multiplying back (common practice); polynomials are coefficient arrays by ascending
// degree, [a0, a1, a2, …]. The gcd is Euclid's algorithm on polynomials (Knuth, "The Art of Computer
// Programming", vol. 2, §4.6.1, from memory); a gcd is defined up to a constant factor, so it is compared monic.
import { describe, expect, it } from "vitest";
import {
  deg,
  gcdPoly,
  polyAdd,
  polyDivide,
  polyEval,
  polyMul,
  polyScale,
  rAdd,
  reduce,
  rMul,
  trim,
  type Poly,
  type Rational,
} from "../../server/src/semantics/derived/polynomial.js";

/** Agreement of coefficients computed in double precision from small integers (a few roundings at most). */
const COEF_CHECK_TOL = 1e-9;

function expectPoly(actual: Poly, expected: Poly): void {
  const a = trim(actual, COEF_CHECK_TOL);
  expect(a.length, `degree of [${actual.join(", ")}] vs [${expected.join(", ")}]`).toBe(expected.length);
  expected.forEach((c, i) => expect(Math.abs(a[i]! - c), `coefficient ${i} of [${actual.join(", ")}]`).toBeLessThan(COEF_CHECK_TOL));
}

/** The polynomial scaled so its leading coefficient is 1 (a gcd is unique only up to a constant). */
function monic(p: Poly): Poly {
  const t = trim(p, COEF_CHECK_TOL);
  return t.map((c) => c / t[t.length - 1]!);
}

/** Cross-multiplied equality of two rational functions: a.num·b.den = b.num·a.den. */
function expectSameRational(a: Rational, b: Rational): void {
  expectPoly(polyAdd(polyMul(a.num, b.den), polyMul(b.num, a.den), -1), [0]);
}

describe("polynomial arithmetic", () => {
  it.each<[string, Poly, Poly, Poly]>([
    ["(1 + x) + (1 − x) = 2", [1, 1], [1, -1], [2]],
    ["(1 + 2x + 3x²) + (−3x²) = 1 + 2x (the top degree cancels)", [1, 2, 3], [0, 0, -3], [1, 2]],
    ["x² + (−x²) = 0", [0, 0, 1], [0, 0, -1], [0]],
  ])("add: %s", (_, a, b, sum) => expectPoly(polyAdd(a, b), sum));

  it("subtracts with sign −1: (x² + 1) − (x² − 1) = 2", () => expectPoly(polyAdd([1, 0, 1], [-1, 0, 1], -1), [2]));

  it.each<[string, Poly, Poly, Poly]>([
    ["(1 + x)(1 − x) = 1 − x²", [1, 1], [1, -1], [1, 0, -1]],
    ["(x − 1)(x − 2) = x² − 3x + 2", [-1, 1], [-2, 1], [2, -3, 1]],
    ["(x − 1)(x² + x + 1) = x³ − 1", [-1, 1], [1, 1, 1], [-1, 0, 0, 1]],
    ["(1 − x)³ = 1 − 3x + 3x² − x³ (by two products)", [1, -2, 1], [1, -1], [1, -3, 3, -1]],
    ["0 · (1 + x) = 0", [0], [1, 1], [0]],
  ])("multiply: %s", (_, a, b, product) => expectPoly(polyMul(a, b), product));

  it("scales and evaluates: 2·(x² + x + 1) at x = 2 is 14; at x = −1 it is 2", () => {
    const p = polyScale([1, 1, 1], 2);
    expectPoly(p, [2, 2, 2]);
    expect(polyEval(p, 2)).toBe(14);
    expect(polyEval(p, -1)).toBe(2);
  });

  it.each<[string, Poly, Poly, Poly, Poly]>([
    ["(x³ − 1)/(x − 1) = x² + x + 1, remainder 0", [-1, 0, 0, 1], [-1, 1], [1, 1, 1], [0]],
    ["(x² + 1)/(x − 1) = x + 1, remainder 2", [1, 0, 1], [-1, 1], [1, 1], [2]],
    ["(x⁴ − 1)/(x² + 1) = x² − 1, remainder 0", [-1, 0, 0, 0, 1], [1, 0, 1], [-1, 0, 1], [0]],
    ["(2x² + 3x + 1)/(2x + 1) = x + 1, remainder 0", [1, 3, 2], [1, 2], [1, 1], [0]],
    ["(x + 5)/(x² + 1) = 0, remainder x + 5 (divisor of higher degree)", [5, 1], [1, 0, 1], [0], [5, 1]],
  ])("divide: %s", (_, p, d, quotient, remainder) => {
    const r = polyDivide(p, d);
    expectPoly(r.quotient, quotient);
    expectPoly(r.remainder, remainder);
    // p = quotient·d + remainder, multiplied back.
    expectPoly(polyAdd(polyMul(r.quotient, d), r.remainder), trim(p));
  });

  it("degree ignores rounding residue in the top coefficient", () => {
    expect(deg([1, 2, 1e-15])).toBe(1);
    expect(deg([0, 0, 3])).toBe(2);
    expect(deg([7])).toBe(0);
  });
});

describe("polynomial gcd (Euclid)", () => {
  it.each<[string, Poly, Poly, Poly]>([
    ["gcd((x − 1)(x − 2), (x − 1)(x + 3)) = x − 1", [2, -3, 1], [-3, 2, 1], [-1, 1]],
    ["gcd(x⁴ − 1, x² − 1) = x² − 1", [-1, 0, 0, 0, 1], [-1, 0, 1], [-1, 0, 1]],
    ["gcd((x − 1)²(x + 2), (x − 1)(x + 2)²) = (x − 1)(x + 2) = x² + x − 2", [2, -3, 0, 1], [-4, 0, 3, 1], [-2, 1, 1]],
    ["gcd(x − 1, x + 1) = 1 (coprime)", [-1, 1], [1, 1], [1]],
    ["gcd(2x + 2, 3x + 3) = x + 1 (constant factors ignored)", [2, 2], [3, 3], [1, 1]],
    ["gcd(x² − 1, 0) = x² − 1", [-1, 0, 1], [0], [-1, 0, 1]],
  ])("%s", (_, a, b, g) => {
    const out = gcdPoly(a, b);
    expectPoly(monic(out), g);
    // The gcd divides both inputs exactly.
    expectPoly(polyDivide(a, out).remainder, [0]);
    if (deg(b) > 0) expectPoly(polyDivide(b, out).remainder, [0]);
  });
});

describe("rational functions", () => {
  it("1/x + 1/(1 − x) = 1/(x(1 − x))", () => {
    const sum = rAdd({ num: [1], den: [0, 1] }, { num: [1], den: [1, -1] }, 1)!;
    expectSameRational(sum, { num: [1], den: [0, 1, -1] });
  });

  it("x/(x + 1) − 1 = −1/(x + 1)", () => {
    const diff = rAdd({ num: [0, 1], den: [1, 1] }, { num: [1], den: [1] }, -1)!;
    expectSameRational(diff, { num: [-1], den: [1, 1] });
  });

  it("(x − 1)/(x + 2) · (x + 2)/x = (x − 1)/x", () => {
    const product = rMul({ num: [-1, 1], den: [2, 1] }, { num: [2, 1], den: [0, 1] })!;
    expectSameRational(product, { num: [-1, 1], den: [0, 1] });
  });

  it.each<[string, Rational, Rational]>([
    ["(x² − 1)/(x² − 2x + 1) = (x + 1)/(x − 1)", { num: [-1, 0, 1], den: [1, -2, 1] }, { num: [1, 1], den: [-1, 1] }],
    ["(x³ − 1)/(x − 1) = x² + x + 1", { num: [-1, 0, 0, 1], den: [-1, 1] }, { num: [1, 1, 1], den: [1] }],
    ["(2x + 2)/(4x² − 4) = (1/2)/(x − 1)", { num: [2, 2], den: [-4, 0, 4] }, { num: [0.5], den: [-1, 1] }],
    ["−3/(x + 1) keeps its value with the sign moved into the denominator: 3/(−x − 1)", { num: [-3], den: [1, 1] }, { num: [3], den: [-1, -1] }],
  ])("reduces %s", (_, r, lowest) => {
    const out = reduce(r);
    expectPoly(out.num, lowest.num);
    expectPoly(out.den, lowest.den);
    expectSameRational(out, r);
  });
});
