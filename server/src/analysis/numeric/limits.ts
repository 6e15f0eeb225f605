/**
 * Functions on [0,1] evaluated safely: endpoint values as limits from inside, and the clamped, cached,
 * exception-free wrapper `boundedUnitFn` the curvature and regret analyses evaluate through.
 */
import type { RealFn } from "../../loss-model.js";

/** Points tried, in order, for the limit of a function at 0 when f(0) itself is not finite (e.g. 0·ln 0 evaluated as NaN). */
const LEFT_LIMIT_PROBES = [0, 1e-300, 1e-200, 1e-100, 1e-50, 1e-20, 1e-16];
/** The same probes mirrored at 1 (1 − 2⁻⁵³ is the largest double below 1). */
const RIGHT_LIMIT_PROBES = [1, 1 - 2 ** -53, 1 - 2 ** -52, 1 - 1e-15, 1 - 1e-12];

/**
 * The value of f at an endpoint of [0,1] as a limit: f(x) when finite, otherwise f at the nearest probe
 * point where it is finite. Returns NaN when no probe gives a finite value.
 */
export function endpointLimit(f: RealFn, at: 0 | 1): number {
  const probes = at === 0 ? LEFT_LIMIT_PROBES : RIGHT_LIMIT_PROBES;
  for (const x of probes) {
    let y: number;
    try {
      y = f(x);
    } catch {
      y = NaN;
    }
    if (Number.isFinite(y)) return y;
  }
  return NaN;
}

/** Slots of the direct-mapped evaluation cache of `boundedUnitFn` (a power of two). */
const CACHE_SLOTS = 8192;

/**
 * Wraps f on [0,1]: arguments are clamped into [0,1], the endpoint values are the limits from
 * `endpointLimit`, thrown exceptions become NaN, and evaluations are cached in a small direct-mapped
 * table keyed by the bits of x (the analyses revisit grid points and bracket ends, and f may be
 * expensive when H is itself a minimisation). A Map keyed by doubles was measured to cost more than
 * evaluating a closed-form H, hence the fixed table.
 */
export function boundedUnitFn(f: RealFn): RealFn {
  const f0 = endpointLimit(f, 0);
  const f1 = endpointLimit(f, 1);
  const keys = new Float64Array(CACHE_SLOTS).fill(NaN);
  const vals = new Float64Array(CACHE_SLOTS);
  const scratch = new Float64Array(1);
  const bits = new Uint32Array(scratch.buffer);
  return (x: number) => {
    if (!(x > 0)) return f0;
    if (!(x < 1)) return f1;
    scratch[0] = x;
    const slot = (bits[0]! ^ Math.imul(bits[1]!, 0x9e3779b1)) & (CACHE_SLOTS - 1);
    if (keys[slot] === x) return vals[slot]!;
    let y: number;
    try {
      y = f(x);
    } catch {
      y = NaN;
    }
    keys[slot] = x;
    vals[slot] = y;
    return y;
  };
}
