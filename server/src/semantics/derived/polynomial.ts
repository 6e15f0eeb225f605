/**
 * The numeric polynomial and rational-function kernel of the derived formulas: polynomials of one variable
 * with numeric coefficients (add, multiply, scale, evaluate, long division) and rational functions num/den
 * (add, multiply, Euclid's gcd, reduction to lowest terms). The printer (`pretty.ts`) uses the rational
 * form; the weight integrator (`weight-integral.ts`) uses the polynomials.
 *
 * Plain arrays of numbers; no expression trees, nothing throws.
 */

// ---------------------------------------------------------------------------------------------------
// Polynomials of one variable with numeric coefficients, by degree: [a0, a1, a2, …].

export type Poly = number[];

/** Coefficients below this are rounding noise from exact small-integer arithmetic (relative to 1). */
export const COEF_TOL = 1e-12;

/** Drops trailing coefficients of magnitude at most `tol` (exact zeros by default). */
export function trim(p: Poly, tol = 0): Poly {
  const out = [...p];
  while (out.length > 1 && Math.abs(out[out.length - 1]!) <= tol) out.pop();
  return out.length === 0 ? [0] : out;
}

export function polyAdd(a: Poly, b: Poly, sign = 1): Poly {
  const out: Poly = [];
  for (let i = 0; i < Math.max(a.length, b.length); i++) out.push((a[i] ?? 0) + sign * (b[i] ?? 0));
  return trim(out);
}

export function polyMul(a: Poly, b: Poly): Poly {
  const out: Poly = new Array<number>(a.length + b.length - 1).fill(0);
  a.forEach((x, i) => b.forEach((y, j) => (out[i + j]! += x * y)));
  return trim(out);
}

export const polyScale = (p: Poly, s: number): Poly => trim(p.map((v) => v * s));
export const polyEval = (p: Poly, x: number): number => p.reduceRight((acc, v) => acc * x + v, 0);

/** Polynomial long division p = quotient·d + remainder. */
export function polyDivide(p: Poly, d: Poly): { quotient: Poly; remainder: Poly } {
  const r = p.slice();
  const dd = trim(d);
  if (r.length < dd.length) return { quotient: [0], remainder: trim(r) };
  const quotient = new Array<number>(r.length - dd.length + 1).fill(0);
  for (let i = r.length - dd.length; i >= 0; i--) {
    const coef = r[i + dd.length - 1]! / dd[dd.length - 1]!;
    quotient[i] = coef;
    for (let j = 0; j < dd.length; j++) r[i + j]! -= coef * dd[j]!;
  }
  return { quotient: trim(quotient), remainder: trim(r.slice(0, dd.length - 1)) };
}

/** A rational function num/den of one variable. */
export interface Rational {
  num: Poly;
  den: Poly;
}

/** Largest degree of the display's rational form; the partial losses people write are low-degree, and this bounds the work. */
export const MAX_RATIONAL_DEGREE = 24;

export const deg = (p: Poly): number => trim(p, COEF_TOL).length - 1;
export const isZero = (p: Poly): boolean => p.every((c) => Math.abs(c) <= COEF_TOL);

function rMulPoly(a: Poly, b: Poly): Poly | null {
  return deg(a) + deg(b) > MAX_RATIONAL_DEGREE ? null : trim(polyMul(a, b), COEF_TOL);
}

export function rAdd(a: Rational, b: Rational, sign: number): Rational | null {
  const n1 = rMulPoly(a.num, b.den);
  const n2 = rMulPoly(b.num, a.den);
  const d = rMulPoly(a.den, b.den);
  return n1 && n2 && d ? { num: trim(polyAdd(n1, n2, sign), COEF_TOL), den: d } : null;
}

export function rMul(a: Rational, b: Rational): Rational | null {
  const n = rMulPoly(a.num, b.num);
  const d = rMulPoly(a.den, b.den);
  return n && d ? { num: n, den: d } : null;
}

/** Division with near-zero leading coefficients dropped first, so rounding noise does not raise a degree. */
export function divideTol(a: Poly, b: Poly): { q: Poly; r: Poly } {
  const { quotient, remainder } = polyDivide(trim(a, COEF_TOL), trim(b, COEF_TOL));
  return { q: trim(quotient, COEF_TOL), r: trim(remainder, COEF_TOL) };
}

/** Scales a polynomial so its largest coefficient has magnitude 1 (keeps Euclid's remainders well-conditioned). */
function normalisePoly(p: Poly): Poly {
  const m = Math.max(...p.map((c) => Math.abs(c)));
  return m > 0 ? trim(p.map((c) => c / m), COEF_TOL) : p;
}

/** Greatest common divisor of two polynomials by Euclid's algorithm, with remainders below a relative tolerance taken as zero. */
export function gcdPoly(a: Poly, b: Poly): Poly {
  let x = normalisePoly(trim(a, COEF_TOL));
  let y = normalisePoly(trim(b, COEF_TOL));
  for (let i = 0; i < 2 * MAX_RATIONAL_DEGREE + 2 && !isZero(y); i++) {
    const r = normalisePoly(trim(divideTol(x, y).r.map((c) => (Math.abs(c) < 1e-9 ? 0 : c)), COEF_TOL));
    x = y;
    y = r;
  }
  return x;
}

/** Cancels the common factor of numerator and denominator, and makes the denominator's leading coefficient positive. */
export function reduce(r: Rational): Rational {
  const g = gcdPoly(r.num, r.den);
  let top = r.num;
  let bottom = r.den;
  if (deg(g) > 0) {
    const n = divideTol(r.num, g);
    const d = divideTol(r.den, g);
    const small = (p: Poly) => p.every((c) => Math.abs(c) < 1e-9);
    if (small(n.r) && small(d.r)) {
      top = n.q;
      bottom = d.q;
    }
  }
  const dd = trim(bottom, COEF_TOL);
  const lead = dd[dd.length - 1]!;
  // A monic-like denominator: divide both by its leading coefficient when that keeps the numbers short.
  const scale = Number.isInteger(1 / lead) || Number.isInteger(lead) ? lead : 1;
  const out = { num: trim(top, COEF_TOL).map((c) => c / scale), den: dd.map((c) => c / scale) };
  // A numerator with only negative coefficients reads better with the signs moved into the denominator.
  if (out.num.every((c) => c <= 0) && out.num.some((c) => c < 0)) return { num: out.num.map((c) => -c), den: out.den.map((c) => -c) };
  return out;
}
