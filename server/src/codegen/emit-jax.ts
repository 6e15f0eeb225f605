/**
 * JAX emitter: `jax.numpy` and `jax.nn` only, jit-safe (piecewise definitions become `jnp.where`; the only
 * Python branches test `weight is None` and the static `reduction` string). Gradients come from `jax.grad`.
 */
import { emitPythonModule, type EmitInput, type PyDialect, type PyTarget } from "./emit-python-common.js";
import { sanitiseName } from "./names.js";

const dialect: PyDialect = {
  lib: "jnp",
  calls: {
    sigmoid: { print: ([a]) => `jax.nn.sigmoid(${a})` },
    softplus: { print: ([a]) => `jax.nn.softplus(${a})` },
    asin: { print: ([a]) => `jnp.arcsin(${a})` },
    acos: { print: ([a]) => `jnp.arccos(${a})` },
    atan: { print: ([a]) => `jnp.arctan(${a})` },
    erf: { print: ([a]) => `jax.scipy.special.erf(${a})`, helper: "jax.scipy.special" },
    normcdf: { print: ([a]) => `jax.scipy.special.ndtr(${a})`, helper: "jax.scipy.special" },
    probit: { print: ([a]) => `jax.scipy.special.ndtri(${a})`, helper: "jax.scipy.special" },
  },
  where: (c, a, b) => `jnp.where(${c}, ${a}, ${b})`,
  minimum: (a, b) => `jnp.minimum(${a}, ${b})`,
  maximum: (a, b) => `jnp.maximum(${a}, ${b})`,
};

const target: PyTarget = {
  target: "jax",
  dialect,
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
