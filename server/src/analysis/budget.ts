/**
 * The engine's time budget, a last resort. Every search is bounded by step counts (named constants
 * beside each loop), so verdicts and figures are a function of the input alone; the wall-clock deadline
 * only stops a stage that would otherwise run too long (slow user closures, a huge family), and a stage
 * stopped by it says so: an "analysis-unknown" finding with reason "time-budget".
 *
 * The clock is injected (`AnalyseOptions.clock`, default `Date.now`), so tests decide when the deadline
 * passes: a frozen clock never reaches it, a clock that jumps after N readings reaches it at a known point.
 */

/** Milliseconds, never decreasing (Date.now, or a test's fake clock). */
export type Clock = () => number;

/** The deadline of one stage of the analysis. */
export interface Deadline {
  /** True once the clock has passed the deadline (reads the clock once). */
  expired(): boolean;
}

/** A deadline `ms` milliseconds after now on `clock` (the clock is read once here, and once per `expired()`). */
export function deadlineAfter(ms: number, clock: Clock = Date.now): Deadline {
  const end = clock() + ms;
  return { expired: () => clock() > end };
}

/** A deadline that never passes (for callers that bound the work themselves). */
export const NO_DEADLINE: Deadline = { expired: () => false };

/**
 * Rows of a table scan between two readings of the clock. Reading it costs a system call; a row costs
 * one pass over the table (≈ 300 risk evaluations), so 32 rows keep the readings far below 1% of the work.
 */
export const CLOCK_STRIDE = 32;
