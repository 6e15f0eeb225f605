/**
 * Finite differences with named steps: a scaled central difference, five-point first and second
 * differences whose stencils stay inside (0,1), and differences on the real (score) line.
 */

/** Central finite difference with a step scaled to x (used by tests and by checks without a symbolic derivative). */
export function centralDiff(f: (x: number) => number, x: number, h = 1e-6): number {
  const step = h * Math.max(1, Math.abs(x));
  return (f(x + step) - f(x - step)) / (2 * step);
}

/**
 * Step of the five-point first difference away from the endpoints: truncation ~h⁴·f⁽⁵⁾/30 and rounding
 * ~eps·|f|/h balance near h ≈ eps^{1/5} ≈ 1e-3; 2e-4 keeps truncation below 1e-14 for O(1) derivatives.
 */
export const DIFF_STEP = 2e-4;
/**
 * Fraction of the distance d to the nearest endpoint used as the step there (the stencil reaches 2h = d/25,
 * staying inside (0,1)); truncation is then ~(h/d)⁴ ≈ 2e-7 (times the derivative's growth constant) for functions singular at the endpoint.
 */
export const DIFF_ENDPOINT_FRACTION = 0.02;
/** Step of the five-point second difference (rounding grows like eps/h², so it is larger than for first differences). */
export const DIFF2_STEP = 1e-3;

/** First derivative of f at x ∈ (0,1) by a five-point central difference whose stencil never leaves (0,1); NaN at or outside the endpoints. */
export function diffInUnit(f: (x: number) => number, x: number): number {
  const d = Math.min(x, 1 - x);
  if (!(d > 0)) return NaN;
  const h = Math.min(DIFF_STEP, d * DIFF_ENDPOINT_FRACTION);
  return (f(x - 2 * h) - 8 * f(x - h) + 8 * f(x + h) - f(x + 2 * h)) / (12 * h);
}

/** Second derivative of f at x ∈ (0,1) by a five-point central second difference staying inside (0,1). */
export function diff2InUnit(f: (x: number) => number, x: number): number {
  const d = Math.min(x, 1 - x);
  if (!(d > 0)) return NaN;
  const h = Math.min(DIFF2_STEP, d * DIFF_ENDPOINT_FRACTION);
  return (-f(x - 2 * h) + 16 * f(x - h) - 30 * f(x) + 16 * f(x + h) - f(x + 2 * h)) / (12 * h * h);
}

/** Step of first differences on the score line (truncation ~h², rounding ~eps/h balance near 1e-6 for O(1) scales; second differences use LINE_STEP2 since rounding grows like eps/h²). */
export const LINE_STEP = 1e-6;
/** Step of second differences on the score line. */
export const LINE_STEP2 = 1e-4;

/** First derivative of f at a real x (score scale), step relative to |x|. */
export function diffOnLine(f: (x: number) => number, x: number): number {
  const h = LINE_STEP * Math.max(1, Math.abs(x));
  return (f(x + h) - f(x - h)) / (2 * h);
}

/** Second derivative of f at a real x (score scale). */
export function diff2OnLine(f: (x: number) => number, x: number): number {
  const h = LINE_STEP2 * Math.max(1, Math.abs(x));
  return (f(x + h) - 2 * f(x) + f(x - h)) / (h * h);
}
