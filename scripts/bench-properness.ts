/**
 * Benchmark of the properness engine: median wall time of `analyseProperness` at the defaults for a set
 * of standard losses (every definition form), and for families with one and two parameter ranges.
 * Plain TypeScript (no test runner); the caller prints or records the figures.
 */
import type { LossFamily } from "../server/src/loss-model.js";
import { analyseProperness } from "../server/src/analysis/properness.js";
import {
  BOOSTING,
  costWeighted,
  familyOf,
  focal,
  focalFamily,
  LOG_NATS,
  MARGIN_EXP,
  MARGIN_HINGE,
  partials,
  tsallis,
  weight,
} from "../test/analysis/standard-losses.js";

/** Repetitions per case; the median is reported. */
export const BENCH_REPEATS = 21;
/** Warm-up runs per case before timing (lets the JIT compile the hot loops, as in a long-running language server). */
export const BENCH_WARMUP = 5;

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m]! : 0.5 * (s[m - 1]! + s[m]!);
}

/** A two-parameter family (a perturbed Brier loss), proper only at a = 0. */
function twoParamFamily(): LossFamily {
  return {
    name: "two-param",
    form: "partials",
    params: [
      { name: "a", default: 0, lo: 0, hi: 1 },
      { name: "b", default: 1, lo: 0.5, hi: 2 },
    ],
    claims: [],
    instantiate: (v) => partials("two-param", (q) => v["b"]! * (1 - q) ** 2 + v["a"]! * 0.1 * q * (1 - q), (q) => v["b"]! * q * q),
  };
}

/** Runs every case BENCH_REPEATS times and returns the median time per case in milliseconds. */
export async function benchProperness(): Promise<{ name: string; medianMs: number }[]> {
  const cases: [string, LossFamily][] = [
    ["defaults: log (partials)", familyOf(LOG_NATS)],
    ["defaults: boosting (partials)", familyOf(BOOSTING)],
    ["defaults: 0-1 / cost-weighted (partials, flat)", familyOf(costWeighted(0.2))],
    ["defaults: Tsallis 1/2 (bayes)", familyOf(tsallis(0.5))],
    ["defaults: Beta(1/2,1/2) (weight)", familyOf(weight("beta-half", (q) => 1 / Math.sqrt(q * (1 - q))))],
    ["defaults: exponential (margin)", familyOf(MARGIN_EXP)],
    ["defaults: hinge (margin, no link)", familyOf(MARGIN_HINGE)],
    ["defaults: focal g=2 (improper)", familyOf(focal(2))],
    ["range: focal g in [0,5]", focalFamily()],
    ["range: two parameters", twoParamFamily()],
  ];
  const out: { name: string; medianMs: number }[] = [];
  for (const [name, fam] of cases) {
    for (let i = 0; i < BENCH_WARMUP; i++) analyseProperness(fam);
    const times: number[] = [];
    for (let i = 0; i < BENCH_REPEATS; i++) {
      const t0 = performance.now();
      analyseProperness(fam);
      times.push(performance.now() - t0);
    }
    out.push({ name, medianMs: Number(median(times).toFixed(2)) });
  }
  return out;
}
