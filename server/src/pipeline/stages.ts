/**
 * The stages of the one analysis pipeline, each a pure function that never throws (a failing stage
 * becomes an `internal-error` issue on the item it was working on):
 * parse → resolve (`parseAndResolve`) → compile (`compileStage`) → analyse (`analyseStage`) → enrich
 * (`enrichFindings`: findings become issues with source spans, plus the closed forms the engine cannot
 * print). `pipeline.ts` sequences them and owns the caches; every consumer goes through it.
 */
import { analyseFamily, type AnalyseOptions, type LossAnalysis } from "../analysis/analyse.js";
import type { ClauseKey, Finding } from "../loss-model.js";
import { makeIssue, type Issue, type Span } from "../issue.js";
import { showBest } from "../semantics/derived/pretty.js";
import { recoveryMap } from "../semantics/derived/savage.js";
import { compileLoss, type CompiledLoss } from "../semantics/family.js";
import { analyseSemantics, type ClauseName, type LossInfo, type SemanticModel } from "../semantics/model.js";
import { parse, type ParseResult } from "../syntax/parse.js";
import type { AnalysisSettings } from "../settings.js";

export interface LossReport {
  info: LossInfo;
  /** Null until compiled, and when the loss has errors that prevent compilation. */
  compiled: CompiledLoss | null;
  /** Null when the loss has not been analysed (yet), or has errors that prevent analysis (the issues say which). */
  analysis: LossAnalysis | null;
}

export interface DocumentAnalysis {
  text: string;
  parse: ParseResult;
  model: SemanticModel;
  losses: LossReport[];
  /** All issues, in document order. */
  issues: Issue[];
  /** The settings the document was analysed under. */
  settings: Readonly<AnalysisSettings>;
}

/** Parsing and name resolution, the stages every analysis starts with; a failure becomes one internal-error issue. */
export function parseAndResolve(text: string): { parsed: ParseResult; model: SemanticModel; issues: Issue[] } {
  const parsed = parse(text);
  const issues: Issue[] = [...parsed.issues];
  let model: SemanticModel;
  try {
    model = analyseSemantics(parsed.ast);
  } catch (err) {
    model = { ast: parsed.ast, issues: [], globals: new Map(), defs: new Map(), losses: [], references: [] };
    issues.push(makeIssue("internal-error", `internal error in name resolution: ${String(err)}`, { start: 0, end: Math.min(1, text.length) }));
  }
  issues.push(...model.issues);
  return { parsed, model, issues };
}

/** A loss the engine can look at: no errors in it or in what it uses, and a primary form. */
export function isAnalysable(r: LossReport): boolean {
  return !r.info.hasErrors && r.info.form !== null;
}

/** The engine options of the settings (the threshold is read at compile time, the rest by the engine). */
export function engineOptions(settings: Readonly<AnalysisSettings>, extra: { seed?: number; clock?: () => number } = {}): AnalyseOptions {
  return { deadlineMs: settings.deadlineMs, gridResolution: settings.gridResolution, defaultThreshold: settings.defaultThreshold, ...extra };
}

/** Compiles one loss (once: the result is kept on the report). */
export function compileStage(model: SemanticModel, r: LossReport, settings: Readonly<AnalysisSettings>): { ok: true } | { ok: false; issue: Issue } {
  if (r.compiled) return { ok: true };
  try {
    r.compiled = compileLoss(model, r.info, { defaultThreshold: settings.defaultThreshold });
    return { ok: true };
  } catch (err) {
    return { ok: false, issue: makeIssue("internal-error", `internal error while compiling \`${r.info.name}\`: ${String(err)}`, r.info.decl.name.span) };
  }
}

/** Runs the engine on a compiled loss; an exception becomes an internal-error issue on the loss. */
export function analyseStage(r: LossReport, options: AnalyseOptions): { analysis: LossAnalysis | null } | { issue: Issue } {
  if (!r.compiled) return { analysis: null };
  try {
    return { analysis: analyseFamily(r.compiled.family, options) };
  } catch (err) {
    return { issue: makeIssue("internal-error", `internal error while analysing \`${r.info.name}\`: ${String(err)}`, r.info.decl.name.span) };
  }
}

/**
 * The enrich stage: each finding of a loss's analysis becomes an `Issue` with a source span; a
 * posterior-recovery finding gets its closed-form map when the partials allow it.
 */
export function enrichFindings(r: LossReport, model: SemanticModel): Issue[] {
  if (!r.analysis) return [];
  return r.analysis.findings.map((f) => {
    const issue = findingToIssue(f, r.info, model);
    if (f.code === "posterior-recovery" && r.compiled) addRecoveryFormula(issue, r.compiled);
    return issue;
  });
}

/**
 * Appends the closed-form posterior-recovery map η = l0'(q)/(l0'(q) − l1'(q)) (Reid & Williamson 2010,
 * "Composite Binary Losses", JMLR 11, Cor. 12) to a posterior-recovery issue of a loss with partial
 * losses in q, printed as the hover prints it, and puts it in the issue's data as `formula`.
 */
function addRecoveryFormula(issue: Issue, compiled: CompiledLoss): void {
  try {
    const l1 = compiled.forms.l1;
    const l0 = compiled.forms.l0;
    if (!l1?.d1 || !l0?.d1 || l1.variable !== "q" || l0.variable !== "q") return;
    const formula = showBest(recoveryMap(l1.d1, l0.d1), "q");
    issue.message = `${issue.message} Closed form: η = ${formula}`;
    issue.data = { ...issue.data, formula };
  } catch {
    // The formula is an extra: on any failure the issue keeps the engine's message as it is.
  }
}

/**
 * A cache key for one loss: its own text plus the text of every global and helper it uses, so editing
 * another loss (or moving this one) does not invalidate it.
 */
export function lossCacheKey(text: string, model: SemanticModel, info: LossInfo): string {
  const parts = [text.slice(info.decl.span.start, info.decl.span.end)];
  for (const g of info.usedGlobals) {
    const d = model.globals.get(g)?.decl;
    if (d) parts.push(text.slice(d.span.start, d.span.end));
  }
  for (const n of [...info.usedDefs].sort()) {
    const d = model.defs.get(n)?.decl;
    if (d) parts.push(text.slice(d.span.start, d.span.end));
  }
  return parts.join("\u0000");
}

/** The source span a finding's clause refers to. */
export function clauseSpan(key: ClauseKey, info: LossInfo, model: SemanticModel): Span {
  if (key === "loss") return info.decl.name.span;
  if (key.startsWith("expect:")) {
    const i = Number(key.slice(7));
    return info.expects[i]?.clause.span ?? info.decl.name.span;
  }
  if (key.startsWith("param:")) {
    const n = key.slice(6);
    return info.localParams.get(n)?.decl.span ?? model.globals.get(n)?.decl.span ?? info.decl.name.span;
  }
  const clause = info.clauses.get(key as ClauseName);
  if (clause) return clause.span;
  // A derived clause (e.g. the link of a margin loss) falls back to the primary form's clause.
  for (const c of ["l1", "bayes", "weight", "margin"] as ClauseName[]) {
    const cl = info.clauses.get(c);
    if (cl) return cl.span;
  }
  return info.decl.name.span;
}

export function findingToIssue(f: Finding, info: LossInfo, model: SemanticModel): Issue {
  const extra: Parameters<typeof makeIssue>[3] = {};
  if (f.severity) extra.severity = f.severity;
  if (f.data) extra.data = { ...f.data, loss: info.name };
  else extra.data = { loss: info.name };
  if (f.related) extra.related = f.related.map((r) => ({ span: clauseSpan(r.clause, info, model), message: r.message }));
  return makeIssue(f.code, f.message, clauseSpan(f.clause, info, model), extra);
}

export function byPosition(a: Issue, b: Issue): number {
  return a.span.start - b.span.start || a.span.end - b.span.end;
}
