/**
 * JAX emitter: `jax.numpy` and `jax.nn` only, jit-safe (piecewise definitions become `jnp.where`; the only
 * Python branches test `weight is None` and the static `reduction` string). Gradients come from `jax.grad`.
 */
import { emitPythonModule, pythonDialect, type EmitInput, type PyTarget } from "./emit-python-common.js";
import { sanitiseName } from "./names.js";
import { helperCall } from "./print.js";

const SPECIAL = ["jax.scipy.special"];

/** The printer's dialect for jax. */
export const JAX_DIALECT = pythonDialect({
  lib: "jnp",
  calls: {
    sigmoid: "jax.nn.sigmoid",
    softplus: "jax.nn.softplus",
    asin: "jnp.arcsin",
    acos: "jnp.arccos",
    atan: "jnp.arctan",
    erf: helperCall("jax.scipy.special.erf", SPECIAL),
    normcdf: helperCall("jax.scipy.special.ndtr", SPECIAL),
    probit: helperCall("jax.scipy.special.ndtri", SPECIAL),
    min: "jnp.minimum",
    max: "jnp.maximum",
  },
  where: (c, a, b) => `jnp.where(${c}, ${a}, ${b})`,
});

const target: PyTarget = {
  target: "jax",
  dialect: JAX_DIALECT,
  imports: ["import jax", "import jax.numpy as jnp"],
  notes: ['JAX: jit with the reduction static, e.g. jax.jit(f, static_argnames="reduction"); differentiate with jax.grad.'],
  asArray: (p) => `jnp.asarray(${p})`,
  labels: (t, like) => `jnp.asarray(${t}, dtype=${like}.dtype)`,
  clamp: (x, lo, hi) => (lo && hi ? `jnp.clip(${x}, ${lo}, ${hi})` : lo ? `jnp.maximum(${x}, ${lo})` : `jnp.minimum(${x}, ${hi})`),
  helperSources: {},
  // The special functions live in a submodule that `import jax` does not load.
  helperImports: { "jax.scipy.special": ["import jax.scipy.special"] },
  gradients: false,
};

/** The JAX module text for the lowered losses of one file. */
export function emitJax(input: EmitInput): string {
  return emitPythonModule(input, target, (n) => sanitiseName(n, "python"));
}
