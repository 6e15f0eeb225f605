/**
 * The engine reference of support.ts (`referenceFor`), memoised, and for the weight form tabulated at a known
 * set of points in one sweep: l0(q) = ∫_0^q c w(c) dc and l1(q) = ∫_q^1 (1 − c) w(c) dc (Reid & Williamson
 * 2010, "Composite Binary Losses", JMLR 11, Thm 6 eq. (5)) accumulated over the intervals between
 * consecutive sorted points, instead of one quadrature over (0, q) per point. Same integrand, same
 * quadrature, same tolerances; the short pieces converge in a panel or two, so 1,200 points cost seconds.
 */
import { integrate } from "../../server/src/analysis/numeric/quadrature.js";
import type { LossReport } from "../../server/src/pipeline/stages.js";
import { referenceFor, type Reference } from "./support.js";

/** As support.ts's weight-form reference (tight, so the reference is good to ~1e-13 per piece). */
const QUAD_ABS = 1e-15;
const QUAD_REL = 1e-14;

function memo(f: (x: number) => number, table = new Map<number, number>()): (x: number) => number {
  return (x) => {
    let v = table.get(x);
    if (v === undefined) table.set(x, (v = f(x)));
    return v;
  };
}

/** `referenceFor(report, input)` with memoised closures; weight-form values at `points` precomputed cumulatively. */
export function pointReference(report: LossReport, input: "prob" | "score", points: number[]): Reference | null {
  const ref = referenceFor(report, input);
  if (!ref) return null;
  const spec = report.compiled!.family.instantiate({});
  const l1 = new Map<number, number>();
  const l0 = new Map<number, number>();
  if (input === "prob" && spec.form === "weight") {
    const w = spec.weight!;
    const xs = [...new Set(points)].filter((x) => x > 0 && x < 1).sort((a, b) => a - b);
    let acc0 = 0;
    let prev = 0;
    for (const x of xs) {
      acc0 += integrate((c) => c * w(c), prev, x, QUAD_ABS, QUAD_REL).value;
      l0.set(x, acc0);
      prev = x;
    }
    let acc1 = 0;
    let next = 1;
    for (const x of [...xs].reverse()) {
      acc1 += integrate((c) => (1 - c) * w(c), x, next, QUAD_ABS, QUAD_REL).value;
      l1.set(x, acc1);
      next = x;
    }
  }
  return { l1: memo(ref.l1, l1), l0: memo(ref.l0, l0), dl1: ref.dl1 && memo(ref.dl1), dl0: ref.dl0 && memo(ref.dl0) };
}
