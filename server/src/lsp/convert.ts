/**
 * The edge between the offset-based core and LSP: offsets ↔ positions and ranges, issues ↔ diagnostics,
 * and the service's plain results → LSP shapes. The only place (with server.ts) that knows LSP types.
 */
import {
  CodeActionKind, CompletionItemKind, DiagnosticSeverity, DiagnosticTag, FoldingRangeKind, InsertTextFormat, SymbolKind,
  type CodeAction as LspCodeAction, type CompletionItem as LspCompletionItem, type Diagnostic, type DocumentSymbol as LspDocumentSymbol,
  type FoldingRange as LspFoldingRange, type Position, type Range, type TextEdit as LspTextEdit,
} from "vscode-languageserver/node";
import type { TextDocument } from "vscode-languageserver-textdocument";
import type { Issue, Severity, Span } from "../issue.js";
import { isIssueCode } from "../issues.js";
import type { CodeAction } from "../service/code-actions.js";
import type { CompletionItem } from "../service/completion.js";
import type { FoldingRange } from "../service/folding.js";
import type { TextEdit } from "../service/navigation.js";
import type { DocumentSymbol } from "../service/symbols.js";

/** The `source` of every diagnostic this server publishes. */
export const DIAGNOSTIC_SOURCE = "propriety";

/** The LSP range of an offset span. */
export function toRange(doc: TextDocument, span: Span): Range {
  return { start: doc.positionAt(span.start), end: doc.positionAt(span.end) };
}

/**
 * The offset of a position, or null when the position lies outside the document (a line past the
 * last, or a character past the end of its line): such requests get an empty answer.
 */
export function toOffset(doc: TextDocument, pos: Position): number | null {
  if (pos.line < 0 || pos.character < 0 || pos.line >= doc.lineCount) return null;
  const lineStart = doc.offsetAt({ line: pos.line, character: 0 });
  const next = pos.line + 1 < doc.lineCount ? doc.offsetAt({ line: pos.line + 1, character: 0 }) : doc.getText().length;
  const text = doc.getText({ start: { line: pos.line, character: 0 }, end: { line: pos.line, character: next - lineStart } });
  const lineLength = text.replace(/\r?\n$|\r$/, "").length;
  if (pos.character > lineLength) return null;
  return lineStart + pos.character;
}

/** The offset span of an LSP range (positions past the end clamp to the end). */
export function toSpan(doc: TextDocument, range: Range): Span {
  return { start: doc.offsetAt(range.start), end: doc.offsetAt(range.end) };
}

function toSeverity(s: Severity): DiagnosticSeverity {
  switch (s) {
    case "error": return DiagnosticSeverity.Error;
    case "warning": return DiagnosticSeverity.Warning;
    case "information": return DiagnosticSeverity.Information;
    case "hint": return DiagnosticSeverity.Hint;
  }
}

function fromSeverity(s: DiagnosticSeverity | undefined): Severity {
  switch (s) {
    case DiagnosticSeverity.Warning: return "warning";
    case DiagnosticSeverity.Information: return "information";
    case DiagnosticSeverity.Hint: return "hint";
    default: return "error";
  }
}

/** An issue as an LSP diagnostic (code, data and related information copied; related spans folded into the message for clients without support). */
export function toDiagnostic(doc: TextDocument, issue: Issue, relatedSupport: boolean): Diagnostic {
  const d: Diagnostic = {
    range: toRange(doc, issue.span),
    severity: toSeverity(issue.severity),
    code: issue.code,
    source: DIAGNOSTIC_SOURCE,
    message: issue.message,
  };
  if (issue.data) d.data = issue.data;
  if (issue.code === "shadowed-name" && issue.severity === "information") d.tags = [DiagnosticTag.Unnecessary];
  if (issue.related && issue.related.length > 0) {
    if (relatedSupport) {
      d.relatedInformation = issue.related.map((r) => ({ location: { uri: doc.uri, range: toRange(doc, r.span) }, message: r.message }));
    } else {
      // Clients without related information still see the evidence, appended to the message.
      d.message = issue.message + issue.related.map((r) => ` (${r.message} at line ${doc.positionAt(r.span.start).line + 1})`).join("");
    }
  }
  return d;
}

/** A diagnostic sent back in a code-action request, as the issue it came from (only ours carry a known code). */
export function fromDiagnostic(doc: TextDocument, d: Diagnostic): Issue | null {
  if (typeof d.code !== "string" || !isIssueCode(d.code)) return null;
  const issue: Issue = { code: d.code, severity: fromSeverity(d.severity), message: typeof d.message === "string" ? d.message : d.message.value, span: toSpan(doc, d.range) };
  if (d.data && typeof d.data === "object") issue.data = d.data as Record<string, unknown>;
  return issue;
}

/** A service edit as an LSP text edit. */
export function toTextEdit(doc: TextDocument, e: TextEdit): LspTextEdit {
  return { range: toRange(doc, e.span), newText: e.newText };
}

const COMPLETION_KINDS: Record<CompletionItem["kind"], CompletionItemKind> = {
  keyword: CompletionItemKind.Keyword,
  clause: CompletionItemKind.Property,
  claim: CompletionItemKind.EnumMember,
  function: CompletionItemKind.Function,
  helper: CompletionItemKind.Function,
  parameter: CompletionItemKind.Variable,
  variable: CompletionItemKind.Variable,
  constant: CompletionItemKind.Constant,
};

/** A completion proposal as an LSP item (snippets only for clients that support them). */
export function toCompletionItem(c: CompletionItem, snippetSupport: boolean): LspCompletionItem {
  const item: LspCompletionItem = { label: c.label, kind: COMPLETION_KINDS[c.kind], sortText: `${c.sortGroup}${c.label}` };
  if (c.detail) item.detail = c.detail;
  if (c.documentation) item.documentation = { kind: "markdown", value: c.documentation };
  if (c.insertText) {
    if (c.isSnippet && snippetSupport) {
      item.insertText = c.insertText;
      item.insertTextFormat = InsertTextFormat.Snippet;
    } else {
      // Without snippet support the tab stops are dropped, keeping their placeholder text.
      item.insertText = c.isSnippet ? c.insertText.replace(/\$\{\d+:([^}]*)\}/g, "$1").replace(/\$\{?\d+\}?/g, "") : c.insertText;
    }
  }
  return item;
}

const SYMBOL_KINDS: Record<DocumentSymbol["kind"], SymbolKind> = {
  loss: SymbolKind.Class,
  param: SymbolKind.Constant,
  def: SymbolKind.Function,
  clause: SymbolKind.Property,
  expect: SymbolKind.Event,
};

/** An outline entry as an LSP document symbol, with its children. */
export function toDocumentSymbol(doc: TextDocument, s: DocumentSymbol): LspDocumentSymbol {
  const out: LspDocumentSymbol = {
    name: s.name || "(unnamed)",
    kind: SYMBOL_KINDS[s.kind],
    range: toRange(doc, s.span),
    selectionRange: toRange(doc, s.selectionSpan),
    children: s.children.map((c) => toDocumentSymbol(doc, c)),
  };
  if (s.detail) out.detail = s.detail;
  return out;
}

/** A folding region as LSP line numbers, or null when it covers a single line. */
export function toFoldingRange(doc: TextDocument, f: FoldingRange): LspFoldingRange | null {
  const start = doc.positionAt(f.span.start).line;
  let end = doc.positionAt(f.span.end).line;
  // Keep a block's closing brace visible: fold up to the line before it.
  if (f.kind === "region" && doc.getText().charAt(f.span.end - 1) === "}" && end > start) end--;
  if (end <= start) return null;
  return { startLine: start, endLine: end, kind: f.kind === "comment" ? FoldingRangeKind.Comment : FoldingRangeKind.Region };
}

/** A service code action as an LSP code action with a workspace edit, linked to the diagnostics it fixes. */
export function toCodeAction(doc: TextDocument, a: CodeAction, diagnostics: Diagnostic[]): LspCodeAction {
  const action: LspCodeAction = {
    title: a.title,
    kind: a.kind === "quickfix" ? CodeActionKind.QuickFix : CodeActionKind.RefactorRewrite,
    edit: { changes: { [doc.uri]: a.edits.map((e) => toTextEdit(doc, e)) } },
  };
  if (a.isPreferred) action.isPreferred = true;
  if (a.issue) {
    const matching = diagnostics.filter((d) => d.code === a.issue!.code && doc.offsetAt(d.range.start) === a.issue!.span.start);
    if (matching.length > 0) action.diagnostics = matching;
  }
  return action;
}
