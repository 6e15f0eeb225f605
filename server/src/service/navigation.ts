/**
 * Navigation over the semantic model's reference table: go to definition, find references, rename and
 * prepare-rename, plus the small lookups every other editor feature shares (the reference, loss and
 * clause under an offset). Offsets and plain data only.
 */
import { CLAUSE_NAMES, type LossInfo, type Reference, type SemanticModel, type SymbolRef } from "../semantics/model.js";
import { BUILTINS, CONSTANTS } from "../semantics/builtins.js";
import type { Span } from "../issue.js";
import type { DefineClause } from "../syntax/ast.js";

/** A replacement of the text in `span` by `newText` (offsets into the document the edit was computed for). */
export interface TextEdit {
  span: Span;
  newText: string;
}

/** Reserved words of the notation (grammar/tokens.ts keywords); never valid as a new name. */
export const KEYWORDS = ["param", "def", "loss", "in", "if", "then", "else", "and", "or", "not", "expect", "canonical"] as const;

const IDENTIFIER = /^[\p{L}_][\p{L}\p{N}_]*$/u;

/** True when `offset` lies in the half-open span or exactly at its end (a cursor right after a word is on it). */
export function touches(span: Span, offset: number): boolean {
  return span.start <= offset && offset <= span.end;
}

/** A stable key for a symbol, so references to the same thing compare equal. */
export function symbolKey(t: SymbolRef): string {
  switch (t.kind) {
    case "local-param": return `local-param:${t.loss}:${t.name}`;
    case "def-param": return `def-param:${t.def}:${t.name}`;
    default: return `${t.kind}:${t.name}`;
  }
}

/** The reference (declaration or use) under the cursor; a span that strictly contains the offset wins over one that merely ends there. */
export function findReferenceAt(model: SemanticModel, offset: number): Reference | null {
  let best: Reference | null = null;
  for (const r of model.references) {
    if (!touches(r.span, offset)) continue;
    if (!best || (r.span.start <= offset && offset < r.span.end)) best = r;
  }
  return best;
}

/** The loss whose block contains the offset. */
export function findLossAt(model: SemanticModel, offset: number): LossInfo | null {
  for (const l of model.losses) if (touches(l.decl.span, offset)) return l;
  return null;
}

/** The define-clause (not `expect`) of a loss that contains the offset. */
export function findClauseAt(loss: LossInfo, offset: number): DefineClause | null {
  for (const c of loss.decl.clauses) if (c.kind === "clause" && touches(c.span, offset)) return c;
  return null;
}

/** Every occurrence of the symbol: declarations first, then uses in document order. */
export function occurrencesOf(model: SemanticModel, target: SymbolRef): Reference[] {
  const key = symbolKey(target);
  return model.references
    .filter((r) => symbolKey(r.target) === key)
    .sort((a, b) => Number(b.isDeclaration) - Number(a.isDeclaration) || a.span.start - b.span.start);
}

/** Go to definition: the declaration span(s) of the symbol under the cursor; empty for built-ins, constants and unknown names. */
export function findDefinition(model: SemanticModel, offset: number): Span[] {
  const ref = findReferenceAt(model, offset);
  if (!ref || !isRenamable(ref.target)) return [];
  return occurrencesOf(model, ref.target).filter((r) => r.isDeclaration).map((r) => r.span);
}

/** Find references: every occurrence of the symbol under the cursor. */
export function findReferences(model: SemanticModel, offset: number, includeDeclaration: boolean): Span[] {
  const ref = findReferenceAt(model, offset);
  if (!ref || ref.target.kind === "variable") return [];
  return occurrencesOf(model, ref.target)
    .filter((r) => includeDeclaration || !r.isDeclaration)
    .map((r) => r.span);
}

/** Parameters, helpers, helper parameters and losses can be renamed; built-ins, constants and clause variables cannot. */
function isRenamable(t: SymbolRef): boolean {
  return t.kind === "global-param" || t.kind === "local-param" || t.kind === "def" || t.kind === "def-param" || t.kind === "loss";
}

/** The span and current name of a renamable symbol under the cursor, or null. */
export function prepareRename(model: SemanticModel, text: string, offset: number): { span: Span; placeholder: string } | null {
  const ref = findReferenceAt(model, offset);
  if (!ref || !isRenamable(ref.target)) return null;
  return { span: ref.span, placeholder: text.slice(ref.span.start, ref.span.end) };
}

export type RenameResult = { ok: true; edits: TextEdit[] } | { ok: false; message: string };

/** Why `newName` cannot be used as a name, or null when it can. */
export function validateNewName(newName: string): string | null {
  if (!IDENTIFIER.test(newName)) return `\`${newName}\` is not a valid name: use letters, digits and \`_\`, starting with a letter or \`_\``;
  if ((KEYWORDS as readonly string[]).includes(newName)) return `\`${newName}\` is a keyword of the notation`;
  if (newName === "q" || newName === "v") return `\`${newName}\` is a clause variable`;
  if (BUILTINS.has(newName) || CONSTANTS.has(newName)) return `\`${newName}\` is a built-in`;
  return null;
}

/** Names a renamed symbol would collide with in its scope. */
function namesInScope(model: SemanticModel, t: SymbolRef): Set<string> {
  const out = new Set<string>();
  if (t.kind === "loss") {
    for (const l of model.losses) out.add(l.name);
    return out;
  }
  if (t.kind === "def-param") {
    const def = model.defs.get(t.def);
    for (const p of def?.decl.params ?? []) out.add(p.name);
    // A helper parameter that took a global's name would silently hide it inside the body.
    for (const g of model.globals.keys()) out.add(g);
    for (const d of model.defs.keys()) out.add(d);
    return out;
  }
  for (const g of model.globals.keys()) out.add(g);
  for (const d of model.defs.keys()) out.add(d);
  if (t.kind === "local-param") {
    const loss = model.losses.find((l) => l.name === t.loss);
    for (const p of loss?.localParams.keys() ?? []) out.add(p);
  } else {
    // A global may not take the name of any loss-local parameter either: the local would hide it.
    for (const l of model.losses) for (const p of l.localParams.keys()) out.add(p);
  }
  for (const c of CLAUSE_NAMES) out.delete(c);
  return out;
}

/** Rename the symbol under the cursor everywhere it occurs; refuses invalid names and collisions. */
export function renameSymbol(model: SemanticModel, offset: number, newName: string): RenameResult {
  const ref = findReferenceAt(model, offset);
  if (!ref || !isRenamable(ref.target)) return { ok: false, message: "nothing to rename here: put the cursor on a parameter, helper or loss name" };
  const invalid = validateNewName(newName);
  if (invalid) return { ok: false, message: invalid };
  if (newName === ref.target.name) return { ok: true, edits: [] };
  if (namesInScope(model, ref.target).has(newName)) return { ok: false, message: `\`${newName}\` is already used in this scope` };
  const edits = occurrencesOf(model, ref.target)
    .map((r) => ({ span: r.span, newText: newName }))
    .sort((a, b) => a.span.start - b.span.start);
  return { ok: true, edits };
}

/** Applies non-overlapping edits to a text (used by tests and by the CLI's fix mode, if any). */
export function applyEdits(text: string, edits: readonly TextEdit[]): string {
  const sorted = [...edits].sort((a, b) => b.span.start - a.span.start || b.span.end - a.span.end);
  let out = text;
  for (const e of sorted) out = out.slice(0, e.span.start) + e.newText + out.slice(e.span.end);
  return out;
}
