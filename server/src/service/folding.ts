/** Folding ranges: loss blocks, multi-line helpers and parameters, and runs of two or more comment lines. */
import type { Span } from "../issue.js";
import type { DocumentAnalysis } from "../pipeline/stages.js";

export interface FoldingRange {
  span: Span;
  kind: "region" | "comment";
}

function lineBreakBetween(text: string, span: Span): boolean {
  for (let i = span.start; i < span.end; i++) {
    const ch = text.charCodeAt(i);
    if (ch === 10 || ch === 13) return true;
  }
  return false;
}

/** Foldable regions in document order (the LSP layer turns them into line ranges). */
export function computeFoldingRanges(doc: DocumentAnalysis): FoldingRange[] {
  const text = doc.text;
  const out: FoldingRange[] = [];
  for (const item of doc.model.ast.items) {
    if (lineBreakBetween(text, item.span)) out.push({ span: item.span, kind: "region" });
  }
  // Consecutive comments with only whitespace (and one line break) between them form a block.
  const comments = doc.model.ast.comments;
  let i = 0;
  while (i < comments.length) {
    let j = i;
    while (j + 1 < comments.length) {
      const gap = text.slice(comments[j]!.span.end, comments[j + 1]!.span.start);
      if (!/^[ \t]*(\r\n|\n|\r)[ \t]*$/.test(gap)) break;
      j++;
    }
    if (j > i) out.push({ span: { start: comments[i]!.span.start, end: comments[j]!.span.end }, kind: "comment" });
    i = j + 1;
  }
  out.sort((a, b) => a.span.start - b.span.start);
  return out;
}
