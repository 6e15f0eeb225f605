/**
 * Code actions: quick fixes dispatched on issue codes, and loss-level refactors. The closed-form formulas
 * they insert (the Savage partials of a declared Bayes risk, the missing partial loss by the integral
 * form, the posterior-recovery map) come from the semantic layer's derivations (semantics/derived/),
 * applied to the clauses as written with helpers inlined.
 */
import type { Expr } from "../syntax/ast.js";
import type { Issue, Span } from "../issue.js";
import { show, showBest } from "../semantics/derived/pretty.js";
import { recoveryMap, savagePartials } from "../semantics/derived/savage.js";
import { completePartial } from "../semantics/derived/weight-integral.js";
import { helperBodies } from "../semantics/family.js";
import type { ClauseName, LossInfo, SemanticModel } from "../semantics/model.js";
import { suggest } from "../semantics/suggest.js";
import type { DocumentAnalysis } from "../pipeline/stages.js";
import { findLossAt, type TextEdit } from "./navigation.js";
import { dependsOn, differentiate, inlineDefs } from "../semantics/symbolic.js";

/** A clause's expression with helpers inlined, its variable, and its first derivative (null when no rule applies). */
export interface ClauseExpr {
  variable: string;
  expr: Expr;
  d1: Expr | null;
}

/** The expanded expression of one clause of a loss, or null when the clause is absent, canonical or broken. */
export function clauseExpr(model: SemanticModel, loss: LossInfo, clause: ClauseName): ClauseExpr | null {
  const c = loss.clauses.get(clause);
  if (!c || c.canonical || !c.value || !c.variable) return null;
  let expr: Expr;
  try {
    expr = inlineDefs(c.value, helperBodies(model));
  } catch {
    return null;
  }
  const variable = c.variable.name;
  return { variable, expr, d1: derivative(expr, variable) };
}

/** d/dx, or null when some call has no derivative rule or the expression has a hole. */
export function derivative(e: Expr, x: string): Expr | null {
  try {
    return differentiate(e, x);
  } catch {
    // Usually NotDifferentiable (a call without a rule). Anything else is treated the same: a derived
    // formula is an extra for hovers and fixes, never required.
    return null;
  }
}

// ---------------------------------------------------------------------------------------------------
// Code actions, dispatched on issue codes (and a few loss-level refactors).

/** One code action: a titled set of edits on the document. */
export interface CodeAction {
  title: string;
  /** "quickfix" fixes an issue; "refactor" rewrites a correct loss. */
  kind: "quickfix" | "refactor";
  edits: TextEdit[];
  /** The issue the action fixes (quick fixes only). */
  issue?: Issue;
  isPreferred?: boolean;
}

const EXPECT_CLAIMS = ["proper", "strictly proper", "improper", "convex"];

function overlaps(a: Span, b: Span): boolean {
  return a.start <= b.end && b.start <= a.end;
}

/** The whitespace that starts the line holding `offset`. */
function indentAt(text: string, offset: number): string {
  let s = offset;
  while (s > 0 && text[s - 1] !== "\n" && text[s - 1] !== "\r") s--;
  const m = /^[ \t]*/.exec(text.slice(s, offset));
  return m ? m[0] : "";
}

/** The document's line ending (CRLF when it already uses one). */
function eolOf(text: string): string {
  return text.includes("\r\n") ? "\r\n" : "\n";
}

function lossOf(doc: DocumentAnalysis, issue: { span: Span; data?: Record<string, unknown> }): LossInfo | null {
  const named = typeof issue.data?.["loss"] === "string" ? doc.model.losses.find((l) => l.name === issue.data!["loss"]) : undefined;
  return named ?? findLossAt(doc.model, issue.span.start);
}

/** Replace a misspelt name, clause or claim by the suggestion the checker made. */
function fixSuggestion(doc: DocumentAnalysis, issue: Issue): CodeAction[] {
  const s = issue.data?.["suggestion"];
  if (issue.code === "invalid-expect") {
    const loss = lossOf(doc, issue);
    const ex = loss?.expects.find((e) => overlaps(e.clause.span, issue.span));
    if (!ex) return [];
    const words = ex.clause.words.map((w) => w.name).join(" ");
    const pick = typeof s === "string" ? s : suggest(words, EXPECT_CLAIMS);
    if (!pick || pick.includes("…")) return [];
    return [{ title: `Change to \`expect ${pick}\``, kind: "quickfix", issue, isPreferred: true, edits: [{ span: ex.clause.span, newText: `expect ${pick}` }] }];
  }
  if (typeof s !== "string") return [];
  return [{ title: `Change to \`${s}\``, kind: "quickfix", issue, isPreferred: true, edits: [{ span: issue.span, newText: s }] }];
}

/** Complete the missing partial loss from the given one by the integral form (when it is closed-form and proper). */
function fixMissingPartial(doc: DocumentAnalysis, issue: Issue): CodeAction[] {
  const loss = lossOf(doc, issue);
  if (!loss) return [];
  const missing = issue.data?.["missing"] === "l1" ? "l1" : issue.data?.["missing"] === "l0" ? "l0" : null;
  if (!missing) return [];
  const given = missing === "l1" ? "l0" : "l1";
  const c = clauseExpr(doc.model, loss, given);
  if (!c || c.variable !== "q" || !c.d1) return [];
  const body = completePartial(given, c.d1, "q");
  if (!body) return [];
  const clause = loss.clauses.get(given)!;
  const newText = `${eolOf(doc.text)}${indentAt(doc.text, clause.span.start)}${missing}(q) = ${body}`;
  return [{
    title: `Add \`${missing}(q) = ${body}\` (the proper completion of \`${given}\`)`,
    kind: "quickfix", issue, isPreferred: true,
    edits: [{ span: { start: clause.span.end, end: clause.span.end }, newText }],
  }];
}

/** Replace the partial losses by the Savage partials of the declared Bayes risk. */
function fixBayesMismatch(doc: DocumentAnalysis, issue: Issue): CodeAction[] {
  const loss = lossOf(doc, issue);
  if (!loss) return [];
  const h = clauseExpr(doc.model, loss, "bayes");
  const l1 = loss.clauses.get("l1");
  const l0 = loss.clauses.get("l0");
  if (!h || !h.d1 || h.variable !== "q" || !l1?.value || !l0?.value || l1.variable?.name !== "q" || l0.variable?.name !== "q") return [];
  const s = savagePartials(h.expr, h.d1, "q");
  return [{
    title: "Replace `l1` and `l0` by the Savage partials of the declared `bayes`",
    kind: "quickfix", issue,
    edits: [
      { span: l1.value.span, newText: showBest(s.l1, "q") },
      { span: l0.value.span, newText: showBest(s.l0, "q") },
    ],
  }];
}

/** A name for a new helper that collides with nothing in the file. */
function freshName(doc: DocumentAnalysis, base: string): string {
  const taken = (n: string) => doc.model.defs.has(n) || doc.model.globals.has(n) || doc.model.losses.some((l) => l.name === n);
  if (!taken(base)) return base;
  for (let i = 2; i < 1000; i++) if (!taken(`${base}_${i}`)) return `${base}_${i}`;
  return `${base}_${Date.now() % 100000}`;
}

/** Insert the posterior-recovery map η(q) = l0'(q)/(l0'(q) − l1'(q)) of an improper loss as a helper. */
function actionRecovery(doc: DocumentAnalysis, loss: LossInfo, issue?: Issue): CodeAction[] {
  const a = clauseExpr(doc.model, loss, "l1");
  const b = clauseExpr(doc.model, loss, "l0");
  if (!a?.d1 || !b?.d1 || a.variable !== "q" || b.variable !== "q") return [];
  const map = recoveryMap(a.d1, b.d1);
  // A map that does not depend on q recovers nothing (linear partials: the minimiser sits at 0 or 1).
  if (!dependsOn(map, "q")) return [];
  const body = show(map);
  // Loss-local parameters are not in scope at top level, so they become extra helper parameters.
  const extra = [...loss.localParams.keys()].filter((p) => new RegExp(`\\b${p}\\b`, "u").test(body));
  const helper = freshName(doc, `${loss.name}_recovery`);
  const eol = eolOf(doc.text);
  const newText = `${eol}${eol}# Posterior recovery for \`${loss.name}\`: maps the minimiser q of the conditional risk back to η.${eol}def ${helper}(${["q", ...extra].join(", ")}) = ${body}`;
  const action: CodeAction = {
    title: `Insert the posterior-recovery map of \`${loss.name}\` as \`def ${helper}\``,
    kind: issue ? "quickfix" : "refactor",
    edits: [{ span: { start: loss.decl.span.end, end: loss.decl.span.end }, newText }],
  };
  if (issue) action.issue = issue;
  return [action];
}

/** Add `link = canonical` to a loss given by partials on probabilities with no link. */
function actionCanonicalLink(doc: DocumentAnalysis, loss: LossInfo): CodeAction[] {
  if (loss.form !== "partials" || loss.clauses.has("link") || loss.hasErrors) return [];
  // The canonical link ψ′ = w is defined for proper losses only; an improper verdict rules it out.
  const verdict = doc.losses.find((r) => r.info === loss)?.analysis?.verdict;
  if (verdict === "improper") return [];
  const last = loss.decl.clauses[loss.decl.clauses.length - 1];
  if (!last) return [];
  const newText = `${eolOf(doc.text)}${indentAt(doc.text, last.span.start)}link = canonical`;
  return [{ title: "Add `link = canonical`", kind: "refactor", edits: [{ span: { start: last.span.end, end: last.span.end }, newText }] }];
}

/**
 * The code actions for a range: quick fixes for the given issues (the diagnostics the editor sent, or
 * else the document's issues overlapping the range), then loss-level refactors at the range.
 */
export function computeCodeActions(doc: DocumentAnalysis, range: Span, contextIssues?: readonly Issue[]): CodeAction[] {
  const issues = contextIssues && contextIssues.length > 0 ? contextIssues : doc.issues.filter((i) => overlaps(i.span, range));
  const out: CodeAction[] = [];
  const recoveryFor = new Set<string>();
  for (const issue of issues) {
    switch (issue.code) {
      case "unknown-name":
      case "unknown-function":
      case "unknown-clause":
      case "invalid-expect":
        out.push(...fixSuggestion(doc, issue));
        break;
      case "missing-partial":
        out.push(...fixMissingPartial(doc, issue));
        break;
      case "bayes-mismatch":
        out.push(...fixBayesMismatch(doc, issue));
        break;
      case "posterior-recovery": {
        const loss = lossOf(doc, issue);
        if (loss && !recoveryFor.has(loss.name)) {
          recoveryFor.add(loss.name);
          out.push(...actionRecovery(doc, loss, issue));
        }
        break;
      }
      default:
        break;
    }
  }
  const loss = findLossAt(doc.model, range.start);
  if (loss) {
    out.push(...actionCanonicalLink(doc, loss));
    const report = doc.losses.find((r) => r.info === loss);
    // Offered on an improper loss only when the engine found the minimiser invertible (a monotone recovery).
    if (report?.analysis?.verdict === "improper" && report.analysis.recovery?.monotone && !recoveryFor.has(loss.name)) out.push(...actionRecovery(doc, loss));
  }
  return out;
}
