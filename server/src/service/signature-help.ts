/**
 * Signature help for calls of built-ins and `def` helpers: the innermost unclosed call before the cursor
 * and the argument the cursor is in. Text-based, so it works while the call is still being typed.
 */
import { BUILTINS } from "../semantics/builtins.js";
import { printExpr } from "../semantics/symbolic.js";
import type { DocumentAnalysis } from "../pipeline/stages.js";

export interface SignatureHelp {
  /** E.g. `min(a, b)`. */
  label: string;
  documentation: string;
  /** Parameter labels as [start, end) offsets into `label`. */
  parameters: { label: [number, number]; name: string }[];
  activeParameter: number;
}

/** How far back to look for the opening parenthesis (a call is written on a few lines at most). */
const MAX_LOOKBACK = 2000;

/** The signature of the innermost call around the offset, with the argument the cursor is in; null outside calls. */
export function computeSignatureHelp(doc: DocumentAnalysis, offset: number): SignatureHelp | null {
  const text = doc.text;
  if (offset < 0 || offset > text.length) return null;
  let depth = 0;
  let commas = 0;
  const stop = Math.max(0, offset - MAX_LOOKBACK);
  for (let i = offset - 1; i >= stop; i--) {
    const ch = text[i];
    if (ch === ")") depth++;
    else if (ch === "(") {
      if (depth > 0) {
        depth--;
        continue;
      }
      const m = /([\p{L}_][\p{L}\p{N}_]*)\s*$/u.exec(text.slice(Math.max(0, i - 100), i));
      if (!m) {
        // A plain parenthesis: keep looking for an enclosing call.
        commas = 0;
        continue;
      }
      return signatureOf(doc, m[1]!, commas);
    } else if (ch === "," && depth === 0) commas++;
    else if (ch === "=" || ch === "{" || ch === "}") return null;
  }
  return null;
}

function signatureOf(doc: DocumentAnalysis, callee: string, active: number): SignatureHelp | null {
  const b = BUILTINS.get(callee);
  const d = doc.model.defs.get(callee)?.decl;
  const params = b ? b.params : d ? d.params.map((p) => p.name) : null;
  if (!params) return null;
  let label = `${callee}(`;
  const parameters: SignatureHelp["parameters"] = [];
  params.forEach((p, i) => {
    if (i > 0) label += ", ";
    parameters.push({ label: [label.length, label.length + p.length], name: p });
    label += p;
  });
  label += ")";
  const documentation = b ? b.doc : d && d.body ? `def ${callee}(${params.join(", ")}) = ${printExpr(d.body)}${d.doc ? `\n\n${d.doc}` : ""}` : "";
  return { label, documentation, parameters, activeParameter: Math.min(active, Math.max(0, params.length - 1)) };
}
