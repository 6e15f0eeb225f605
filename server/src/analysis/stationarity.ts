/**
 * The evidence on the partial losses once a loss is found improper: the monotonicity of l1 and l0 and
 * the stationarity ratios −l1'/(1−q) = l0'/q. A proper loss has l1 non-increasing, l0 non-decreasing and
 * both ratios equal (to the weight w(q)) (Reid & Williamson 2010, "Composite Binary Losses", JMLR 11,
 * Thm 1). These point at the clause at fault; the verdict itself rests on a re-evaluated counterexample.
 */
import type { DefinitionForm, Finding, LossFunctions } from "../loss-model.js";
import { safeCall } from "./margin.js";
import { monotonicityFinding, stationarityMismatchFinding } from "./messages.js";
import type { Table } from "./risk-table.js";

/** Relative disagreement of the stationarity ratios −l1'/(1−q) and l0'/q reported as a mismatch (well above difference noise). */
export const STATIONARITY_TOL = 1e-5;
/** Increase of l1 (or decrease of l0) between grid neighbours, relative to the loss's scale and the two values, that counts as a monotonicity failure. */
export const MONOTONE_TOL = 1e-9;

/**
 * The first stretch of the table (interior, finite values) on which `sign`·values increases, from the
 * grid point before the first increase beyond MONOTONE_TOL to the end of the increasing run.
 */
function firstIncrease(t: Table, vals: number[], sign: 1 | -1): { q: number; q2: number; value: number; value2: number } | null {
  let prev = -1;
  for (let j = 0; j < t.qs.length; j++) {
    if (!t.interior[j] || !Number.isFinite(vals[j]!)) continue;
    if (prev >= 0) {
      const d = sign * (vals[j]! - vals[prev]!);
      if (d > MONOTONE_TOL * (t.scale + Math.abs(vals[j]!) + Math.abs(vals[prev]!))) {
        let k = j;
        while (k + 1 < t.qs.length && t.interior[k + 1] && sign * (vals[k + 1]! - vals[k]!) > 0) k++;
        return { q: t.qs[prev]!, q2: t.qs[k]!, value: vals[prev]!, value2: vals[k]! };
      }
    }
    prev = j;
  }
  return null;
}

/** l1-increasing / l0-decreasing on the table (interior, finite values), with the interval of the failure. */
export function monotonicityFindings(t: Table, form: DefinitionForm): Finding[] {
  const out: Finding[] = [];
  const up1 = firstIncrease(t, t.l1, 1);
  if (up1) out.push(monotonicityFinding(form, "l1", up1));
  const down0 = firstIncrease(t, t.l0, -1);
  if (down0) out.push(monotonicityFinding(form, "l0", down0));
  return out;
}

interface RatioMismatch {
  q: number;
  r1: number;
  r0: number;
}

/** The two ratios at q when they disagree beyond STATIONARITY_TOL, else null. */
function ratioMismatch(fns: LossFunctions, q: number): RatioMismatch | null {
  const r1 = -safeCall(fns.dl1, q) / (1 - q);
  const r0 = safeCall(fns.dl0, q) / q;
  if (!Number.isFinite(r1) || !Number.isFinite(r0)) return null;
  const rel = Math.abs(r1 - r0) / Math.max(Math.abs(r1), Math.abs(r0), 1e-300);
  return rel > STATIONARITY_TOL ? { q, r1, r0 } : null;
}

/**
 * Stationarity ratios −l1'/(1−q) and l0'/q (used only once impropriety is proven). The reported point is
 * the confirmed descent point nearest the counterexample's η, else the worst disagreement on [0.01, 0.99].
 */
export function stationarityFinding(fns: LossFunctions, t: Table, form: DefinitionForm, hint: number[], nearEta: number): Finding | null {
  const ratios = (q: number) => ratioMismatch(fns, q);
  let pick: RatioMismatch | null = null;
  const inner = hint.filter((q) => q >= 0.01 && q <= 0.99);
  // Evidence inside [0.01, 0.99] reads better than a point next to an endpoint, where both ratios blow up.
  const byDistance = (xs: number[]) => [...xs].sort((a, b) => Math.abs(a - nearEta) - Math.abs(b - nearEta));
  for (const q of byDistance(inner)) {
    pick = ratios(q);
    if (pick) break;
  }
  if (!pick) {
    let worst = 0;
    for (const q of t.qs) {
      if (q < 0.01 || q > 0.99) continue;
      const r = ratios(q);
      if (!r) continue;
      const d = Math.abs(r.r1 - r.r0) / (Math.abs(r.r1) + Math.abs(r.r0));
      if (d > worst) {
        worst = d;
        pick = r;
      }
    }
  }
  if (!pick) {
    for (const q of byDistance(hint)) {
      pick = ratios(q);
      if (pick) break;
    }
  }
  if (!pick) return null;
  return stationarityMismatchFinding(form, pick.q, pick.r1, pick.r0);
}
