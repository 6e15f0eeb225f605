/**
 * Semantic tokens: what each name resolves to (loss, parameter, helper, built-in, constant, clause
 * variable) and the clause names, which the TextMate grammar can only guess from their position.
 */
import type { Span } from "../issue.js";
import type { DocumentAnalysis } from "../pipeline/stages.js";

/** Token types, in legend order (LSP standard names). */
export const TOKEN_TYPES = ["class", "function", "parameter", "variable", "property", "keyword"] as const;
/** Token modifiers, in legend order (bit i = modifier i). */
export const TOKEN_MODIFIERS = ["declaration", "readonly", "defaultLibrary"] as const;

export type TokenType = (typeof TOKEN_TYPES)[number];
export type TokenModifier = (typeof TOKEN_MODIFIERS)[number];

export interface SemanticToken {
  span: Span;
  type: TokenType;
  modifiers: TokenModifier[];
}

/** Tokens in document order, non-overlapping. */
export function computeSemanticTokens(doc: DocumentAnalysis): SemanticToken[] {
  const out: SemanticToken[] = [];
  for (const r of doc.model.references) {
    const decl: TokenModifier[] = r.isDeclaration ? ["declaration"] : [];
    switch (r.target.kind) {
      case "loss": out.push({ span: r.span, type: "class", modifiers: decl }); break;
      case "def": out.push({ span: r.span, type: "function", modifiers: decl }); break;
      case "builtin": out.push({ span: r.span, type: "function", modifiers: ["defaultLibrary"] }); break;
      case "constant": out.push({ span: r.span, type: "variable", modifiers: ["readonly", "defaultLibrary"] }); break;
      case "global-param": out.push({ span: r.span, type: "variable", modifiers: [...decl, "readonly"] }); break;
      case "local-param":
      case "def-param": out.push({ span: r.span, type: "parameter", modifiers: decl }); break;
      case "variable": out.push({ span: r.span, type: "parameter", modifiers: decl }); break;
    }
  }
  for (const l of doc.model.losses) {
    for (const c of l.decl.clauses) {
      if (c.kind === "clause") out.push({ span: c.name.span, type: "property", modifiers: ["declaration"] });
      else for (const w of c.words) out.push({ span: w.span, type: "keyword", modifiers: [] });
    }
  }
  out.sort((a, b) => a.span.start - b.span.start || a.span.end - b.span.end);
  // Drop overlaps (a name recorded twice, e.g. by recovery), keeping the first.
  const clean: SemanticToken[] = [];
  for (const t of out) {
    const prev = clean[clean.length - 1];
    if (t.span.end <= t.span.start) continue;
    if (prev && t.span.start < prev.span.end) continue;
    clean.push(t);
  }
  return clean;
}
