/** Code lenses (one line above each loss with the engine's summary) and the loss summary for the status bar. */
import { formatNumber, PROSE_STYLE, verdictText } from "../display.js";
import type { Span } from "../issue.js";
import type { LossAnalysis } from "../analysis/analyse.js";
import type { DocumentAnalysis } from "../pipeline/stages.js";
import type { LossSummaryResult } from "../protocol.js";
import { findLossAt } from "./navigation.js";

export interface CodeLens {
  span: Span;
  loss: string;
  title: string;
}

/** A short figure line: verdict · λ · both exponents. */
export function shortSummary(a: LossAnalysis): string {
  const figure = (x: number | null) => formatNumber(x, PROSE_STYLE);
  return `${verdictText(a.verdict)} · λ ${figure(a.lambda)} · exponents ${figure(a.exponents.viaModulus)} / ${figure(a.exponents.direct)}`;
}

/** One lens per loss, titled with the engine summary (or why there is none yet). */
export function computeCodeLenses(doc: DocumentAnalysis): CodeLens[] {
  return doc.losses.map((r) => {
    const title = r.analysis
      ? r.analysis.summary || shortSummary(r.analysis)
      : r.info.hasErrors || !r.compiled ? "not analysed: the loss has errors" : "analysing…";
    return { span: r.info.decl.name.span, loss: r.info.name, title };
  });
}

/** What the status bar shows for the loss under the cursor. */
/** The status bar's figures (the protocol type: the client reads exactly this). */
export type LossSummary = LossSummaryResult;

/** The status-bar summary of the loss containing the offset, or null outside losses. */
export function computeLossSummary(doc: DocumentAnalysis, offset: number): LossSummary | null {
  const info = findLossAt(doc.model, offset);
  if (!info) return null;
  const r = doc.losses.find((x) => x.info === info);
  if (!r?.analysis) {
    return { loss: info.name, verdict: null, text: `${info.name}: ${info.hasErrors ? "has errors" : "not analysed"}`, summary: "" };
  }
  return { loss: info.name, verdict: r.analysis.verdict, text: `${info.name}: ${shortSummary(r.analysis)}`, summary: r.analysis.summary };
}
