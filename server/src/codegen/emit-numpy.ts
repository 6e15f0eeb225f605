/**
 * NumPy emitter: vectorised (`np.where`, `np.logaddexp` for softplus), computing in float64, with a
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
    erf: helperCall("_erf", ["_erf"]),
    normcdf: helperCall("_normcdf", ["_normcdf"]),
    probit: helperCall("_probit", ["_probit"]),
    min: "np.minimum",
    max: "np.maximum",
  },
  where: (c, a, b) => `np.where(${c}, ${a}, ${b})`,
});

const HELPERS: Record<string, string[]> = {
  _sigmoid: [
    "def _sigmoid(x):",
    '    """Logistic function as exp(-softplus(-x)): no overflow and full relative accuracy in both tails."""',
    "    return np.exp(-np.logaddexp(0.0, -np.asarray(x, dtype=float)))",
  ],
  _erf: [
    "def _erf(x):",
    '    """Error function, elementwise (NumPy has none; math.erf is exact to double rounding)."""',
    "    return np.vectorize(math.erf, otypes=[float])(x)",
  ],
  _normcdf: [
    "def _normcdf(x):",
    '    """Standard normal CDF as erfc(-x/sqrt(2))/2, accurate in the lower tail."""',
    "    return 0.5 * np.vectorize(math.erfc, otypes=[float])(-np.asarray(x, dtype=float) / math.sqrt(2.0))",
  ],
  _probit: [
    "def _probit(p):",
    '    """Inverse standard normal CDF, elementwise; -inf at 0 and inf at 1."""',
    "    inv = statistics.NormalDist().inv_cdf",
    "    return np.vectorize(lambda u: -math.inf if u <= 0 else math.inf if u >= 1 else inv(u), otypes=[float])(p)",
  ],
};

const target: PyTarget = {
  target: "numpy",
  dialect: NUMPY_DIALECT,
  imports: ["import numpy as np"],
  notes: ["NumPy: inputs are converted to float64 arrays; <name>_grad gives the gradient in closed form."],
  asArray: (p) => `np.asarray(${p}, dtype=float)`,
  labels: (t) => `np.asarray(${t}, dtype=float)`,
  clamp: (x, lo, hi) => `np.clip(${x}, ${lo ?? "None"}, ${hi ?? "None"})`,
  helperSources: HELPERS,
  helperImports: { _erf: ["import math"], _normcdf: ["import math"], _probit: ["import math", "import statistics"] },
  gradients: true,
};

/** The NumPy module text for the lowered losses of one file. */
export function emitNumpy(input: EmitInput): string {
  return emitPythonModule(input, target, (n) => sanitiseName(n, "python"));
}
