/** Document symbols (the outline): losses with their parameters, clauses and claims as children; global parameters; helpers. */
import type { Span } from "../issue.js";
import { describeForm } from "../semantics/model.js";
import { printExpr } from "../semantics/symbolic.js";
import type { DocumentAnalysis } from "../pipeline/stages.js";

export type SymbolKind = "loss" | "param" | "def" | "clause" | "expect";

export interface DocumentSymbol {
  name: string;
  kind: SymbolKind;
  detail: string;
  /** The whole item. */
  span: Span;
  /** The name to reveal and select. */
  selectionSpan: Span;
  children: DocumentSymbol[];
}

/** The outline of a document, in source order. */
export function computeDocumentSymbols(doc: DocumentAnalysis): DocumentSymbol[] {
  const out: DocumentSymbol[] = [];
  const lossInfo = new Map(doc.model.losses.map((l) => [l.decl, l]));
  for (const item of doc.model.ast.items) {
    if (item.kind === "param") {
      out.push({ name: item.name.name, kind: "param", detail: item.value ? `= ${printExpr(item.value)}` : "", span: item.span, selectionSpan: item.name.span, children: [] });
    } else if (item.kind === "def") {
      out.push({
        name: item.name.name, kind: "def", detail: `(${item.params.map((p) => p.name).join(", ")})`,
        span: item.span, selectionSpan: item.name.span, children: [],
      });
    } else {
      const info = lossInfo.get(item);
      const children: DocumentSymbol[] = [];
      for (const p of item.params) {
        children.push({ name: p.name.name, kind: "param", detail: p.value ? `= ${printExpr(p.value)}` : "", span: p.span, selectionSpan: p.name.span, children: [] });
      }
      for (const c of item.clauses) {
        if (c.kind === "expect") {
          const words = c.words.map((w) => w.name).join(" ");
          const value = c.op && c.value ? ` ${c.op.text} ${printExpr(c.value)}` : "";
          children.push({ name: `expect ${words}${value}`, kind: "expect", detail: "", span: c.span, selectionSpan: c.words[0]?.span ?? c.span, children: [] });
        } else {
          const v = c.variable ? `(${c.variable.name})` : "";
          children.push({ name: `${c.name.name}${v}`, kind: "clause", detail: c.canonical ? "= canonical" : "", span: c.span, selectionSpan: c.name.span, children: [] });
        }
      }
      const report = doc.losses.find((r) => r.info.decl === item);
      const detail = report?.analysis ? report.analysis.summary : info?.form ? describeForm(info.form) : "";
      out.push({ name: item.name.name, kind: "loss", detail, span: item.span, selectionSpan: item.name.span, children });
    }
  }
  return out;
}
