/**
 * NumPy emitter: vectorised (`np.where`, `np.logaddexp` for softplus; erf, Φ, log Φ and Φ⁻¹ by rational
 * approximations in array operations, no np.vectorize), computing in the input's float dtype, with a
 * closed-form gradient `<name>_grad` from the symbolic derivative.
 */
import { emitPythonModule, pythonDialect, type EmitInput, type PyTarget } from "./emit-python-common.js";
import { sanitiseName } from "./names.js";
import { helperCall } from "./print.js";

/** The printer's dialect for numpy. */
export const NUMPY_DIALECT = pythonDialect({
  lib: "np",
  calls: {
    sigmoid: helperCall("_sigmoid", ["_sigmoid"]),
    // softplus(x) = log(e^0 + e^x), which np.logaddexp evaluates without overflow.
    softplus: { print: ([a]) => `np.logaddexp(0.0, ${a})` },
    asin: "np.arcsin",
    acos: "np.arccos",
    atan: "np.arctan",
    // Helpers are listed in dependency order: they are printed in the order of HELPERS.
    erf: helperCall("_erf", ["_erfc", "_erf"]),
    normcdf: helperCall("_normcdf", ["_erfc", "_normcdf"]),
    lognormcdf: helperCall("_lognormcdf", ["_erfc", "_normcdf", "_lognormcdf"]),
    probit: helperCall("_probit", ["_erfc", "_normcdf", "_probit"]),
    min: "np.minimum",
    max: "np.maximum",
  },
  where: (c, a, b) => `np.where(${c}, ${a}, ${b})`,
});

/**
 * W. J. Cody, "Rational Chebyshev approximations for the error function", Math. Comp. 23 (1969), 631–637:
 * the coefficients of his double-precision routine (erf for |x| ≤ 0.46875; e^(x²)·erfc(x) for
 * 0.46875 < x ≤ 4 and for x > 4, the last in 1/x²), maximal relative error below 6e-19 in exact
 * arithmetic, so the float64 result is correct to a few units in the last place. Evaluated with array
 * operations only (every branch on every element, then np.where), so no Python loop runs per element.
 */
const CODY = [
  "# W. J. Cody, \"Rational Chebyshev approximations for the error function\", Math. Comp. 23 (1969) 631-637:",
  "# erf on |x| <= 0.46875 (A, B); exp(x^2) erfc(x) on 0.46875 < x <= 4 (C, D) and on x > 4 in 1/x^2 (P, Q).",
  "_CODY_A = (3.16112374387056560e00, 1.13864154151050156e02, 3.77485237685302021e02, 3.20937758913846947e03, 1.85777706184603153e-1)",
  "_CODY_B = (2.36012909523441209e01, 2.44024637934444173e02, 1.28261652607737228e03, 2.84423683343917062e03)",
  "_CODY_C = (5.64188496988670089e-1, 8.88314979438837594e00, 6.61191906371416295e01, 2.98635138197400131e02,",
  "           8.81952221241769090e02, 1.71204761263407058e03, 2.05107837782607147e03, 1.23033935479799725e03,",
  "           2.15311535474403846e-8)",
  "_CODY_D = (1.57449261107098347e01, 1.17693950891312499e02, 5.37181101862009858e02, 1.62138957456669019e03,",
  "           3.29079923573345963e03, 4.36261909014324716e03, 3.43936767414372164e03, 1.23033935480374942e03)",
  "_CODY_P = (3.05326634961232344e-1, 3.60344899949804439e-1, 1.25781726111229246e-1, 1.60837851487422766e-2,",
  "           6.58749161529837803e-4, 1.63153871373020978e-2)",
  "_CODY_Q = (2.56852019228982242e00, 1.87295284992346047e00, 5.27905102951428412e-1, 6.05183413124413191e-2,",
  "           2.33520497626869185e-3)",
  "",
  "",
  "def _erf_small(x):",
  '    """erf(x) for |x| <= 0.46875 (Cody 1969, first interval); x outside is clipped (the caller discards it)."""',
  "    x = np.clip(x, -0.46875, 0.46875)",
  "    z = x * x",
  "    num = _CODY_A[4] * z",
  "    den = z",
  "    for i in range(3):",
  "        num = (num + _CODY_A[i]) * z",
  "        den = (den + _CODY_B[i]) * z",
  "    return x * (num + _CODY_A[3]) / (den + _CODY_B[3])",
  "",
  "",
  "def _erfcx(y):",
  '    """exp(y^2) * erfc(y) for y >= 0.46875 (Cody 1969, second and third intervals), elementwise."""',
  "    with np.errstate(divide=\"ignore\", invalid=\"ignore\", over=\"ignore\"):",
  "        m = np.clip(y, 0.46875, 4.0)",
  "        num = _CODY_C[8] * m",
  "        den = m",
  "        for i in range(7):",
  "            num = (num + _CODY_C[i]) * m",
  "            den = (den + _CODY_D[i]) * m",
  "        mid = (num + _CODY_C[7]) / (den + _CODY_D[7])",
  "        b = np.maximum(y, 4.0)",
  "        z = 1.0 / (b * b)",
  "        num = _CODY_P[5] * z",
  "        den = z",
  "        for i in range(4):",
  "            num = (num + _CODY_P[i]) * z",
  "            den = (den + _CODY_Q[i]) * z",
  "        big = (0.5641895835477563 - z * (num + _CODY_P[4]) / (den + _CODY_Q[4])) / b",
  "    return np.where(y <= 4.0, mid, big)",
  "",
  "",
  "def _exp_neg_sq(y):",
  '    """exp(-y^2) with y^2 split as in Cody\'s routine (y16 = trunc(16 y)/16), so rounding y^2 costs no accuracy."""',
  "    y16 = np.trunc(y * 16.0) / 16.0",
  "    return np.exp(-y16 * y16) * np.exp(-(y - y16) * (y + y16))",
  "",
  "",
  "def _erfc(x):",
  '    """Complementary error function, elementwise, in the dtype of x (Cody 1969)."""',
  "    x = _as_float(x)",
  "    y = np.abs(x)",
  "    tail = _exp_neg_sq(y) * _erfcx(np.maximum(y, 0.46875))",
  "    return np.where(y <= 0.46875, 1.0 - _erf_small(x), np.where(x > 0, tail, 2.0 - tail))",
] as const;

const HELPERS: Record<string, string[]> = {
  _sigmoid: [
    "def _sigmoid(x):",
    '    """Logistic function as exp(-softplus(-x)): no overflow and full relative accuracy in both tails."""',
    "    return np.exp(-np.logaddexp(0.0, -_as_float(x)))",
  ],
  _erfc: [...CODY],
  _erf: [
    "def _erf(x):",
    '    """Error function, elementwise, in the dtype of x (Cody 1969; relative error a few float64 ulps)."""',
    "    x = _as_float(x)",
    "    y = np.abs(x)",
    "    tail = _exp_neg_sq(y) * _erfcx(np.maximum(y, 0.46875))",
    "    return np.where(y <= 0.46875, _erf_small(x), np.sign(x) * (1.0 - tail))",
  ],
  _normcdf: [
    "def _normcdf(x):",
    '    """Standard normal CDF as erfc(-x/sqrt(2))/2, accurate in the lower tail (Abramowitz & Stegun 1964, 26.2.29)."""',
    "    return 0.5 * _erfc(-_as_float(x) * 0.7071067811865476)",
  ],
  _lognormcdf: [
    "def _lognormcdf(x):",
    '    """log Phi(x) without underflow: for x < -0.66, log(erfcx(t)/2) - t^2 with t = -x/sqrt(2) (Cody 1969),',
    '    since Phi(x) = erfc(t)/2 (Abramowitz & Stegun 1964, 26.2.29; 7.1.23 gives the tail e^(-t^2)/(t sqrt(pi)));',
    '    log1p(-Phi(-x)) above."""',
    "    x = _as_float(x)",
    "    t = -x * 0.7071067811865476",
    "    with np.errstate(divide=\"ignore\"):",
    "        low = np.log(0.5 * _erfcx(np.maximum(t, 0.46875))) - t * t",
    "        high = np.log1p(-0.5 * _erfc(x * 0.7071067811865476))",
    "    return np.where(t > 0.46875, low, high)",
  ],
  _probit: [
    "def _probit(p):",
    '    """Inverse standard normal CDF, elementwise: P. J. Acklam\'s rational approximation (relative error',
    "    1.15e-9) on s = min(p, 1 - p) (exact for p >= 0.5, Sterbenz), refined by one Halley step on _normcdf in",
    '    the lower tail, where it is accurate; probit(p) = -probit(1 - p). -inf at 0, inf at 1, nan outside [0, 1]."""',
    "    p = _as_float(p)",
    "    s = np.minimum(p, 1.0 - p)",
    "    with np.errstate(divide=\"ignore\", invalid=\"ignore\", over=\"ignore\"):",
    "        a = (-3.969683028665376e1, 2.209460984245205e2, -2.759285104469687e2, 1.38357751867269e2, -3.066479806614716e1, 2.506628277459239)",
    "        b = (-5.447609879822406e1, 1.615858368580409e2, -1.556989798598866e2, 6.680131188771972e1, -1.328068155288572e1)",
    "        c = (-7.784894002430293e-3, -3.223964580411365e-1, -2.400758277161838, -2.549732539343734, 4.374664141464968, 2.938163982698783)",
    "        d = (7.784695709041462e-3, 3.224671290700398e-1, 2.445134137142996, 3.754408661907416)",
    "        t = np.sqrt(-2.0 * np.log(np.clip(s, 0.0, 0.5)))",
    "        lower = (((((c[0] * t + c[1]) * t + c[2]) * t + c[3]) * t + c[4]) * t + c[5]) / ((((d[0] * t + d[1]) * t + d[2]) * t + d[3]) * t + 1.0)",
    "        u = s - 0.5",
    "        r = u * u",
    "        central = (((((a[0] * r + a[1]) * r + a[2]) * r + a[3]) * r + a[4]) * r + a[5]) * u / (((((b[0] * r + b[1]) * r + b[2]) * r + b[3]) * r + b[4]) * r + 1.0)",
    "        x = np.where(s < 0.02425, lower, central)",
    "        e = _normcdf(x) - s",
    "        # h = e / phi(x) = e sqrt(2 pi) exp(x^2 / 2), in logarithms so it cannot overflow for tiny s.",
    "        h = np.sign(e) * np.exp(np.log(np.abs(e)) + 0.5 * x * x + 0.9189385332046728)",
    "        x = x - h / (1.0 + 0.5 * x * h)",
    "    x = np.where(s == 0.0, -np.inf, x)",
    "    x = np.where(p > 0.5, -x, x)",
    "    return np.where((p < 0.0) | (p > 1.0) | np.isnan(p), np.nan, x)",
  ],
};

const target: PyTarget = {
  target: "numpy",
  dialect: NUMPY_DIALECT,
  imports: ["import numpy as np"],
  notes: ["NumPy: float32 input is computed in float32, any other input in float64 (the dtype of pred is kept); <name>_grad gives the gradient in closed form."],
  preamble: [
    "def _as_float(x):",
    '    """x as a float array: float32 and float64 keep their dtype, anything else (ints, lists) becomes float64."""',
    "    x = np.asarray(x)",
    "    return x if x.dtype in (np.float32, np.float64) else x.astype(np.float64)",
  ],
  asArray: (p) => `_as_float(${p})`,
  labels: (t, like) => `np.asarray(${t}, dtype=${like}.dtype)`,
  clamp: (x, lo, hi) => `np.clip(${x}, ${lo ?? "None"}, ${hi ?? "None"})`,
  helperSources: HELPERS,
  gradients: true,
};

/** The NumPy module text for the lowered losses of one file. */
export function emitNumpy(input: EmitInput): string {
  return emitPythonModule(input, target, (n) => sanitiseName(n, "python"));
}
