/**
 * Cross-cutting tolerances and the one `nearlyEqual` every analysis compares numbers with.
 */

/** Relative tolerance for comparing two evaluations of the same closed form (a few ulps of double rounding through ~1e3 operations). */
export const REL_TOL = 1e-9;
/** Absolute tolerance for values that should be exactly zero after cancellation of O(1) terms. */
export const ABS_TOL = 1e-12;

/**
 * Compares two numbers with a relative and an absolute tolerance.
 * NaN equals nothing; two infinities are equal when they have the same sign.
 */
export function nearlyEqual(a: number, b: number, relTol = REL_TOL, absTol = ABS_TOL): boolean {
  if (Number.isNaN(a) || Number.isNaN(b)) return false;
  if (a === b) return true;
  if (!Number.isFinite(a) || !Number.isFinite(b)) return false;
  const diff = Math.abs(a - b);
  if (diff <= absTol) return true;
  return diff <= relTol * Math.max(Math.abs(a), Math.abs(b));
}
