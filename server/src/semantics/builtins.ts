/**
 * The built-in functions and constants of the notation: arity, numeric kernel and a one-line definition
 * shown on hover. This is the whitelist: the compiler calls nothing else.
 */

export interface Builtin {
  name: string;
  arity: number;
  /** Parameter names, for signature help. */
  params: string[];
  fn: (...args: number[]) => number;
  doc: string;
}

/** Error function: Taylor series for |x| < 1, the continued fraction of erfc above (common practice; ~5e-16 relative, computed against 40-digit values). */
export function erf(x: number): number {
  if (Number.isNaN(x)) return NaN;
  const ax = Math.abs(x);
  if (ax < 1) {
    // Taylor series: below 1 its terms stay under 1 in size, so little is lost to cancellation, while the
    // continued fraction below converges too slowly there (it was off by ~7e-14 relative at x = 0.5).
    let term = x;
    let sum = x;
    const x2 = x * x;
    for (let n = 1; n < 30; n++) {
      term *= -x2 / n;
      const add = term / (2 * n + 1);
      sum += add;
      if (Math.abs(add) < 1e-17 * Math.abs(sum)) break;
    }
    return (2 / Math.sqrt(Math.PI)) * sum;
  }
  const r = erfc(ax);
  return x > 0 ? 1 - r : r - 1;
}

/** Complementary error function; for x ≥ 1 by Lentz's continued fraction (accurate to ~4e-15 relative, computed against 40-digit values). */
export function erfc(x: number): number {
  if (x < 1) return 1 - erf(x);
  if (x > 27) return 0;
  // erfc(x) = exp(-x^2)/sqrt(pi) * 1/(x + 1/2/(x + 1/(x + 3/2/(x + ...)))).
  const tiny = 1e-300;
  let f = x;
  let c = x;
  let d = 0;
  for (let n = 1; n < 500; n++) {
    const a = n / 2;
    d = x + a * d;
    d = Math.abs(d) < tiny ? tiny : d;
    c = x + a / c;
    c = Math.abs(c) < tiny ? tiny : c;
    d = 1 / d;
    const delta = c * d;
    f *= delta;
    if (Math.abs(delta - 1) < 1e-16) break;
  }
  return Math.exp(-x * x) / Math.sqrt(Math.PI) / f;
}

/** Standard normal CDF, Φ(x) = erfc(−x/√2)/2 (stable in both tails). */
export function normcdf(x: number): number {
  const t = -x / Math.SQRT2;
  return t >= 0.5 ? 0.5 * erfc(t) : 0.5 * (1 - erf(t));
}

/** Inverse normal CDF (Acklam's rational approximation refined by one Halley step; common practice). */
export function probit(p: number): number {
  if (Number.isNaN(p) || p < 0 || p > 1) return NaN;
  if (p === 0) return -Infinity;
  if (p === 1) return Infinity;
  const a = [-3.969683028665376e1, 2.209460984245205e2, -2.759285104469687e2, 1.38357751867269e2, -3.066479806614716e1, 2.506628277459239];
  const b = [-5.447609879822406e1, 1.615858368580409e2, -1.556989798598866e2, 6.680131188771972e1, -1.328068155288572e1];
  const c = [-7.784894002430293e-3, -3.223964580411365e-1, -2.400758277161838, -2.549732539343734, 4.374664141464968, 2.938163982698783];
  const d = [7.784695709041462e-3, 3.224671290700398e-1, 2.445134137142996, 3.754408661907416];
  const lo = 0.02425;
  let x: number;
  if (p < lo) {
    const q = Math.sqrt(-2 * Math.log(p));
    x = (((((c[0]! * q + c[1]!) * q + c[2]!) * q + c[3]!) * q + c[4]!) * q + c[5]!) / ((((d[0]! * q + d[1]!) * q + d[2]!) * q + d[3]!) * q + 1);
  } else if (p <= 1 - lo) {
    const q = p - 0.5;
    const r = q * q;
    x = ((((((a[0]! * r + a[1]!) * r + a[2]!) * r + a[3]!) * r + a[4]!) * r + a[5]!) * q) / (((((b[0]! * r + b[1]!) * r + b[2]!) * r + b[3]!) * r + b[4]!) * r + 1);
  } else {
    const q = Math.sqrt(-2 * Math.log(1 - p));
    x = -(((((c[0]! * q + c[1]!) * q + c[2]!) * q + c[3]!) * q + c[4]!) * q + c[5]!) / ((((d[0]! * q + d[1]!) * q + d[2]!) * q + d[3]!) * q + 1);
  }
  // One Halley step against the accurate CDF.
  const e = normcdf(x) - p;
  const u = e * Math.sqrt(2 * Math.PI) * Math.exp((x * x) / 2);
  return x - u / (1 + (x * u) / 2);
}

/** Logistic sigmoid, evaluated without overflow for large |x|. */
export function sigmoid(x: number): number {
  if (x >= 0) return 1 / (1 + Math.exp(-x));
  const z = Math.exp(x);
  return z / (1 + z);
}

/** log(1 + e^x) without overflow. */
export function softplus(x: number): number {
  return x > 0 ? x + Math.log1p(Math.exp(-x)) : Math.log1p(Math.exp(x));
}

export function logit(p: number): number {
  return Math.log(p) - Math.log1p(-p);
}

function b(name: string, params: string[], fn: (...args: number[]) => number, doc: string): Builtin {
  return { name, arity: params.length, params, fn, doc };
}

const list: Builtin[] = [
  b("ln", ["x"], Math.log, "natural logarithm ln(x)"),
  b("log", ["x"], Math.log, "natural logarithm (same as ln)"),
  b("log2", ["x"], Math.log2, "base-2 logarithm"),
  b("log10", ["x"], Math.log10, "base-10 logarithm"),
  b("exp", ["x"], Math.exp, "exponential e^x"),
  b("sqrt", ["x"], Math.sqrt, "square root"),
  b("abs", ["x"], Math.abs, "absolute value |x|"),
  b("min", ["a", "b"], Math.min, "smaller of a and b"),
  b("max", ["a", "b"], Math.max, "larger of a and b"),
  b("pow", ["x", "y"], Math.pow, "x raised to the power y (same as x^y)"),
  b("sin", ["x"], Math.sin, "sine"),
  b("cos", ["x"], Math.cos, "cosine"),
  b("tan", ["x"], Math.tan, "tangent"),
  b("asin", ["x"], Math.asin, "inverse sine"),
  b("acos", ["x"], Math.acos, "inverse cosine"),
  b("atan", ["x"], Math.atan, "inverse tangent"),
  b("sinh", ["x"], Math.sinh, "hyperbolic sine"),
  b("cosh", ["x"], Math.cosh, "hyperbolic cosine"),
  b("tanh", ["x"], Math.tanh, "hyperbolic tangent"),
  b("log1p", ["x"], Math.log1p, "ln(1 + x), accurate for small x"),
  b("expm1", ["x"], Math.expm1, "e^x − 1, accurate for small x"),
  b("sigmoid", ["x"], sigmoid, "logistic function 1/(1 + e^(−x)), the inverse of logit"),
  b("logit", ["p"], logit, "log-odds ln(p/(1 − p)), the inverse of sigmoid"),
  b("softplus", ["x"], softplus, "ln(1 + e^x), computed without overflow"),
  b("erf", ["x"], erf, "error function (2/√π)∫₀ˣ e^(−t²) dt"),
  b("normcdf", ["x"], normcdf, "standard normal CDF Φ(x) = (1 + erf(x/√2))/2"),
  b("probit", ["p"], probit, "inverse standard normal CDF Φ⁻¹(p)"),
];

/** Built-in functions by name (a Map, so `constructor` or `__proto__` can never resolve to anything). */
export const BUILTINS: ReadonlyMap<string, Builtin> = new Map(list.map((x) => [x.name, x]));

export const CONSTANTS: ReadonlyMap<string, { value: number; doc: string }> = new Map([
  ["pi", { value: Math.PI, doc: "π = 3.14159…" }],
  ["e", { value: Math.E, doc: "Euler's number e = 2.71828…" }],
]);
