/**
 * Completion: keywords at top level, clause names and `expect` at the start of a loss-body line, the
 * words of a claim after `expect`, and inside expressions the names in scope (the clause variable,
 * loss-local and global parameters, helpers with their signatures, built-ins and constants).
 * Works on half-typed text: the context comes from the characters before the cursor, the scope from the model.
 */
import { BUILTINS, CONSTANTS } from "../semantics/builtins.js";
import { CLAUSE_DOCS, CLAUSE_NAMES, CLAUSE_VARIABLES, type LossInfo, type SemanticModel } from "../semantics/model.js";
import { printExpr } from "../semantics/symbolic.js";
import type { DocumentAnalysis } from "../pipeline/stages.js";
import { findClauseAt, touches } from "./navigation.js";

export type CompletionKind = "keyword" | "clause" | "claim" | "function" | "helper" | "parameter" | "variable" | "constant";

/** One completion proposal. `insertText` is a snippet (with `$1` tab stops) when `isSnippet` is set. */
export interface CompletionItem {
  label: string;
  kind: CompletionKind;
  detail?: string;
  documentation?: string;
  insertText?: string;
  isSnippet?: boolean;
  /** Orders groups: lower first. */
  sortGroup: number;
}

const WORD_BEFORE = /[\p{L}_][\p{L}\p{N}_]*$/u;

/** Brace depth at the offset (outside comments): > 0 inside a loss body. */
function braceDepth(text: string, offset: number): number {
  let depth = 0;
  let inComment = false;
  for (let i = 0; i < offset; i++) {
    const ch = text[i];
    if (inComment) {
      if (ch === "\n" || ch === "\r") inComment = false;
      continue;
    }
    if (ch === "#") inComment = true;
    else if (ch === "{") depth++;
    else if (ch === "}") depth = Math.max(0, depth - 1);
  }
  return depth;
}

/** The loss whose body the cursor is in: by span, or else the last loss header before the cursor (an unterminated block). */
function enclosingLoss(model: SemanticModel, offset: number): LossInfo | null {
  let last: LossInfo | null = null;
  for (const l of model.losses) {
    if (touches(l.decl.span, offset)) return l;
    if (l.decl.span.start <= offset) last = l;
  }
  return last;
}

function keywordItems(): CompletionItem[] {
  return [
    { label: "param", kind: "keyword", detail: "global parameter", insertText: "param ${1:name} = ${2:0.5} in [${3:0}, ${4:1}]", isSnippet: true, sortGroup: 0 },
    { label: "def", kind: "keyword", detail: "helper function", insertText: "def ${1:name}(${2:x}) = ${3:x}", isSnippet: true, sortGroup: 0 },
    { label: "loss", kind: "keyword", detail: "loss block", insertText: "loss ${1:name} {\n  l1(q) = ${2:(1 - q)^2}\n  l0(q) = ${3:q^2}\n}", isSnippet: true, sortGroup: 0 },
  ];
}

function clauseItems(loss: LossInfo | null): CompletionItem[] {
  const out: CompletionItem[] = [];
  for (const c of CLAUSE_NAMES) {
    if (loss?.clauses.has(c)) continue;
    const vars = CLAUSE_VARIABLES[c];
    const insertText = vars.length === 0 ? `${c} = \${1:0.5}` : `${c}(${vars[0]}) = \${1}`;
    out.push({ label: c, kind: "clause", detail: vars.length === 0 ? `${c} = …` : `${c}(${vars.join(" | ")}) = …`, documentation: CLAUSE_DOCS[c], insertText, isSnippet: true, sortGroup: 0 });
  }
  if (!loss?.clauses.has("link")) {
    out.push({ label: "link = canonical", kind: "clause", detail: "canonical link ψ′ = w", documentation: CLAUSE_DOCS.link, insertText: "link = canonical", sortGroup: 1 });
  }
  out.push({ label: "expect", kind: "keyword", detail: "a claim the engine checks", insertText: "expect ", sortGroup: 1 });
  return out;
}

function claimItems(afterStrictly: boolean): CompletionItem[] {
  if (afterStrictly) return [{ label: "proper", kind: "claim", detail: "expect strictly proper", sortGroup: 0 }];
  return [
    { label: "proper", kind: "claim", detail: "the loss is proper", sortGroup: 0 },
    { label: "strictly proper", kind: "claim", detail: "the loss is strictly proper", sortGroup: 0 },
    { label: "improper", kind: "claim", detail: "the loss is improper", sortGroup: 0 },
    { label: "convex", kind: "claim", detail: "convex in the score", sortGroup: 0 },
    { label: "lambda >=", kind: "claim", detail: "λ (inf of the weight) at least a value", insertText: "lambda >= ${1:0.1}", isSnippet: true, sortGroup: 0 },
    { label: "exponent >=", kind: "claim", detail: "surrogate-regret exponent at least a value", insertText: "exponent >= ${1:0.5}", isSnippet: true, sortGroup: 0 },
  ];
}

function expressionItems(doc: DocumentAnalysis, offset: number, loss: LossInfo | null, lineBefore: string): CompletionItem[] {
  const model = doc.model;
  const out: CompletionItem[] = [];
  // The clause variable: from the parsed clause, or from the half-typed line `name(x) = …`.
  let variable: string | null = null;
  const clause = loss ? findClauseAt(loss, offset) : null;
  if (clause?.variable) variable = clause.variable.name;
  const m = /^\s*([\p{L}_][\p{L}\p{N}_]*)\s*\(\s*([\p{L}_][\p{L}\p{N}_]*)\s*\)\s*=/u.exec(lineBefore);
  if (m) variable = m[2]!;
  const parsedDef = [...model.defs.values()].find((d) => touches(d.decl.span, offset))?.decl;
  // A helper whose body is still being typed may not parse yet: read its header from the line.
  const header = /^\s*def\s+([\p{L}_][\p{L}\p{N}_]*)\s*\(([^)]*)\)\s*=/u.exec(lineBefore);
  const def = parsedDef
    ? { name: parsedDef.name.name, params: parsedDef.params.map((p) => p.name) }
    : header ? { name: header[1]!, params: header[2]!.split(",").map((p) => p.trim()).filter((p) => p.length > 0) } : null;
  if (def) {
    for (const p of def.params) out.push({ label: p, kind: "parameter", detail: `parameter of ${def.name}`, sortGroup: 0 });
  } else if (variable) {
    out.push({ label: variable, kind: "variable", detail: variable === "q" ? "clause variable: probability" : "clause variable: score", sortGroup: 0 });
  }
  if (loss && !def) {
    for (const [n, p] of loss.localParams) out.push({ label: n, kind: "parameter", detail: `${loss.name} parameter = ${p.value ?? "?"}`, sortGroup: 0 });
  }
  for (const [n, p] of model.globals) {
    if (loss?.localParams.has(n)) continue;
    out.push({ label: n, kind: "parameter", detail: `global parameter = ${p.value ?? "?"}`, documentation: p.decl.doc ?? undefined, sortGroup: 1 });
  }
  for (const [n, d] of model.defs) {
    if (def && n === def.name) continue;
    const params = d.decl.params.map((p) => p.name);
    out.push({
      label: n, kind: "helper", detail: `def ${n}(${params.join(", ")})${d.decl.body ? ` = ${printExpr(d.decl.body)}` : ""}`,
      documentation: d.decl.doc ?? undefined, insertText: `${n}(${params.map((p, i) => `\${${i + 1}:${p}}`).join(", ")})`, isSnippet: true, sortGroup: 2,
    });
  }
  for (const b of BUILTINS.values()) {
    out.push({
      label: b.name, kind: "function", detail: `${b.name}(${b.params.join(", ")})`, documentation: b.doc,
      insertText: `${b.name}(${b.params.map((p, i) => `\${${i + 1}:${p}}`).join(", ")})`, isSnippet: true, sortGroup: 3,
    });
  }
  for (const [n, c] of CONSTANTS) out.push({ label: n, kind: "constant", detail: c.doc, sortGroup: 3 });
  for (const k of ["if", "then", "else", "and", "or", "not"]) out.push({ label: k, kind: "keyword", sortGroup: 4 });
  return out;
}

/** Completion proposals at an offset (empty inside comments and past the end). */
export function computeCompletions(doc: DocumentAnalysis, offset: number): CompletionItem[] {
  const text = doc.text;
  if (offset < 0 || offset > text.length) return [];
  let lineStart = offset;
  while (lineStart > 0 && text[lineStart - 1] !== "\n" && text[lineStart - 1] !== "\r") lineStart--;
  const lineBefore = text.slice(lineStart, offset);
  if (lineBefore.includes("#")) return [];
  const word = WORD_BEFORE.exec(lineBefore)?.[0] ?? "";
  const before = lineBefore.slice(0, lineBefore.length - word.length);
  if (/\bexpect\s+strictly\s+$/u.test(before)) return claimItems(true);
  if (/\bexpect\s+$/u.test(before)) return claimItems(false);
  if (/^\s*link\s*=\s*$/u.test(before)) {
    return [{ label: "canonical", kind: "keyword", detail: "link = canonical: ψ′ = w", documentation: CLAUSE_DOCS.link, sortGroup: 0 }];
  }
  const depth = braceDepth(text, offset);
  if (depth === 0) {
    // At top level: a keyword at the start of a line, otherwise an expression (a default, a helper body).
    if (/^\s*$/.test(before)) return keywordItems();
    const inHeader = /^\s*loss\s+[\p{L}_][\p{L}\p{N}_]*\s*\(/u.test(before) && !/\{/.test(before);
    const loss = inHeader ? enclosingLoss(doc.model, offset) : null;
    return expressionItems(doc, offset, loss, lineBefore);
  }
  const loss = enclosingLoss(doc.model, offset);
  if (/^\s*$/.test(before) || /\{\s*$/.test(before)) return clauseItems(loss);
  return expressionItems(doc, offset, loss, lineBefore);
}
