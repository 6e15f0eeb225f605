/**
 * Power-law fits g(x) ≈ c·x^p as x → 0⁺ from a geometric ladder of samples, with the exponent snapped to a
 * simple rational.
 */
import type { RealFn } from "../../loss-model.js";
import { aitkenLimit } from "./extrapolation.js";

export interface PowerLaw {
  /** Estimated power p (after snapping, when snapped). */
  power: number;
  /** The estimate before snapping. */
  rawPower: number;
  coefficient: number;
  /** True when the power was replaced by a nearby simple rational. */
  snapped: boolean;
  /** True when the last local log-log slopes agree to POWER_STABILITY_TOL. */
  stable: boolean;
  /** Local log-log slopes from the largest x to the smallest. */
  slopes: number[];
}

/** Two successive local log-log slopes must agree to this for the power to count as stable (common practice: a 5% band on the exponent). */
export const POWER_STABILITY_TOL = 0.05;
/**
 * A power within this of a rational n/d with d ≤ 4 is snapped to it. The Aitken-extrapolated slopes of
 * the losses of test/reference/proper-losses.md land within 1e-6 of their exact powers, and distinct rationals with d ≤ 4 are at least
 * 1/12 apart, so 1e-3 snaps only genuine ties.
 */
export const POWER_SNAP_TOL = 1e-3;

/** Snaps p to a rational n/d (d = 1..4) within tol; returns null when none is that close. */
export function snapRational(p: number, tol = POWER_SNAP_TOL): number | null {
  if (!Number.isFinite(p)) return null;
  let best: number | null = null;
  let bestErr = Infinity;
  for (let d = 1; d <= 4; d++) {
    const r = Math.round(p * d) / d;
    const err = Math.abs(p - r);
    if (err <= tol && err < bestErr - 1e-15) {
      best = r;
      bestErr = err;
    }
  }
  return best;
}

/**
 * Fits g(x) ≈ coefficient·x^power as x → 0⁺ from g at x0·2^{−i}, i = 0..n−1: local log-log slopes,
 * Aitken-extrapolated, snapped to a simple rational within POWER_SNAP_TOL, then the coefficient
 * g(x)/x^power extrapolated the same way. The ladder stops early where g falls below `floor` (its rounding
 * level). Returns null when g is not positive and finite on the ladder.
 */
export function fitPowerLawAtZero(g: RealFn, x0: number, n = 8, floor = 0): PowerLaw | null {
  const xs: number[] = [];
  const ys: number[] = [];
  for (let i = 0; i < n; i++) {
    const x = x0 * 2 ** -i;
    const y = g(x);
    // Values below `floor` are dominated by rounding in g; the ladder stops there (keeping at least four points).
    if (xs.length >= 4 && y < floor) break;
    if (!(Number.isFinite(y) && y > 0)) return null;
    xs.push(x);
    ys.push(y);
  }
  n = xs.length;
  const slopes: number[] = [];
  for (let i = 0; i + 1 < n; i++) slopes.push(Math.log2(ys[i]! / ys[i + 1]!));
  const rawPower = aitkenLimit(slopes);
  const last = slopes[slopes.length - 1]!;
  const prev = slopes[slopes.length - 2] ?? last;
  const stable = Math.abs(last - prev) <= POWER_STABILITY_TOL && Math.abs(rawPower - last) <= POWER_STABILITY_TOL;
  const snappedTo = snapRational(rawPower);
  const power = snappedTo ?? rawPower;
  const coefs = ys.map((y, i) => y / xs[i]! ** power);
  const coefficient = aitkenLimit(coefs);
  return { power, rawPower, coefficient, snapped: snappedTo !== null, stable, slopes };
}
