/**
 * The language service façade: one method per editor feature, taking document text and UTF-16 offsets
 * and returning plain data with offset spans. No LSP types here; `lsp/` converts at the edge.
 *
 * It owns the per-loss analysis cache (keyed by `lossCacheKey`) and remembers the latest analyses by
 * text, so consecutive requests on the same text do not re-parse. Two kinds of analysis exist:
 * "fast" (syntax, semantics, and engine findings already in the cache) and "full" (the engine runs on
 * every loss whose key is not cached yet).
 */
import { analyseFamily, type AnalyseOptions, type LossAnalysis } from "../analysis/analyse.js";
import type { Issue, Span } from "../issue.js";
import { makeIssue } from "../issue.js";
import { compileLoss } from "../semantics/family.js";
import { analyseDocument, findingToIssue, lossCacheKey, parseAndResolve, type DocumentAnalysis, type LossReport } from "./document.js";
import { computeCodeActions, type CodeAction } from "./code-actions.js";
import { computeCodeLenses, computeLossSummary, type CodeLens, type LossSummary } from "./code-lens.js";
import { computeCompletions, type CompletionItem } from "./completion.js";
import { computeFoldingRanges, type FoldingRange } from "./folding.js";
import { computeFormatting } from "./formatting.js";
import { computeHover, type HoverResult } from "./hover.js";
import { findDefinition, findReferences, prepareRename, renameSymbol, type RenameResult, type TextEdit } from "./navigation.js";
import { computeSemanticTokens, type SemanticToken } from "./semantic-tokens.js";
import { computeSignatureHelp, type SignatureHelp } from "./signature-help.js";
import { computeDocumentSymbols, type DocumentSymbol } from "./symbols.js";

/** Settings that shape analysis (from the editor's `propriety.*` configuration). */
export interface ServiceSettings {
  analysis: AnalyseOptions;
  /** Analyse at most this many losses per document. */
  maxAnalysedLosses?: number;
  /** Indentation of the formatter. */
  indent?: number;
}

/** Cache entries kept before the oldest are dropped (a few hundred losses of edit history). */
const MAX_CACHE_ENTRIES = 2000;
/** Analyses remembered by text (the open documents' latest versions; each holds a whole AST, so few). */
const MAX_MEMO = 4;

/** The editor features over document text; see createLanguageService. */
export interface LanguageService {
  /** Syntax, semantics and cached engine findings; never runs the engine. */
  analyseFast(text: string): DocumentAnalysis;
  /** The complete analysis (the engine runs on losses not yet cached). */
  analyseFull(text: string): DocumentAnalysis;
  /**
   * The complete analysis, one loss at a time, yielding between losses; resolves to null as soon as
   * `isStale()` says a newer text has arrived (work already done stays in the cache).
   */
  analyseIncrementally(text: string, isStale: () => boolean, pause: () => Promise<void>): Promise<DocumentAnalysis | null>;
  hover(text: string, offset: number): HoverResult | null;
  completions(text: string, offset: number): CompletionItem[];
  signatureHelp(text: string, offset: number): SignatureHelp | null;
  documentSymbols(text: string): DocumentSymbol[];
  definition(text: string, offset: number): Span[];
  references(text: string, offset: number, includeDeclaration: boolean): Span[];
  prepareRename(text: string, offset: number): { span: Span; placeholder: string } | null;
  rename(text: string, offset: number, newName: string): RenameResult;
  semanticTokens(text: string): SemanticToken[];
  foldingRanges(text: string): FoldingRange[];
  codeLenses(text: string): CodeLens[];
  lossSummary(text: string, offset: number): LossSummary | null;
  codeActions(text: string, range: Span, issues?: readonly Issue[]): CodeAction[];
  format(text: string): TextEdit[];
  /** Replaces the settings; cached analyses made under the old settings are dropped. */
  configure(settings: Partial<ServiceSettings>): void;
  readonly settings: ServiceSettings;
}

/**
 * Creates the service. `onError` hears about exceptions a feature swallowed (the LSP layer logs them);
 * the feature itself then returns its empty answer.
 */
export function createLanguageService(initial: Partial<ServiceSettings> = {}, onError?: (feature: string, err: unknown) => void): LanguageService {
  const guardedValue = <T>(fallback: T, run: () => T, feature = "request"): T => {
    try {
      return run();
    } catch (err) {
      onError?.(feature, err);
      return fallback;
    }
  };
  let settings: ServiceSettings = { analysis: {}, ...initial };
  const cache = new Map<string, LossAnalysis>();
  const memo: { text: string; doc: DocumentAnalysis; full: boolean }[] = [];

  const remember = (text: string, doc: DocumentAnalysis, full: boolean): DocumentAnalysis => {
    const i = memo.findIndex((m) => m.text === text);
    if (i >= 0) memo.splice(i, 1);
    memo.unshift({ text, doc, full });
    if (memo.length > MAX_MEMO) memo.length = MAX_MEMO;
    // A Map iterates in insertion order, so the first keys are the oldest.
    while (cache.size > MAX_CACHE_ENTRIES) cache.delete(cache.keys().next().value!);
    return doc;
  };
  const recall = (text: string, needFull: boolean): DocumentAnalysis | null => {
    const m = memo.find((x) => x.text === text);
    return m && (m.full || !needFull) ? m.doc : null;
  };

  const limit = () => settings.maxAnalysedLosses ?? Infinity;

  /** Syntax and semantics (no compilation: huge files stay cheap), plus engine findings already cached. */
  const analyseFast = (text: string): DocumentAnalysis => {
    const known = recall(text, false);
    if (known) return known;
    const doc = buildFast(text, cache);
    const analysable = doc.losses.filter(isAnalysable);
    const complete = analysable.length <= limit() && analysable.every((r) => r.analysis !== null);
    return remember(text, doc, complete);
  };

  /** Fills in what the fast pass left out: compilation and the engine, for the first `limit` analysable losses. */
  const completeDoc = (doc: DocumentAnalysis, text: string): DocumentAnalysis => {
    const max = limit();
    let n = 0;
    let added = false;
    for (const r of doc.losses) {
      if (!isAnalysable(r)) continue;
      if (++n > max) {
        if (n === max + 1) {
          doc.issues.push(makeIssue("analysis-unknown", `only the first ${max} losses of this file are analysed`, r.info.decl.name.span, { severity: "information" }));
          added = true;
        }
        continue;
      }
      if (r.analysis) continue;
      const key = lossCacheKey(text, doc.model, r.info);
      const hit = cache.get(key);
      const outcome = hit ? { analysis: hit } : analyseOne(doc, r);
      if ("issue" in outcome) {
        doc.issues.push(outcome.issue);
        added = true;
        continue;
      }
      if (!outcome.analysis) continue;
      if (!hit) cache.set(key, outcome.analysis);
      r.analysis = outcome.analysis;
      for (const f of outcome.analysis.findings) doc.issues.push(findingToIssue(f, r.info, doc.model));
      added = true;
    }
    if (added) doc.issues.sort(byPosition);
    return doc;
  };

  /** Compiles (once) and runs the engine on one loss; a failure becomes an internal-error issue on the loss. */
  const analyseOne = (doc: DocumentAnalysis, r: LossReport): { analysis: LossAnalysis | null } | { issue: Issue } => {
    try {
      r.compiled ??= compileLoss(doc.model, r.info);
    } catch (err) {
      return { issue: makeIssue("internal-error", `internal error while compiling \`${r.info.name}\`: ${String(err)}`, r.info.decl.name.span) };
    }
    if (!r.compiled) return { analysis: null };
    try {
      return { analysis: analyseFamily(r.compiled.family, settings.analysis) };
    } catch (err) {
      return { issue: makeIssue("internal-error", `internal error while analysing \`${r.info.name}\`: ${String(err)}`, r.info.decl.name.span) };
    }
  };

  const analyseFull = (text: string): DocumentAnalysis => {
    const known = recall(text, true);
    if (known) return known;
    const doc = recall(text, false) ?? buildFast(text, cache);
    return remember(text, guarded(text, () => completeDoc(doc, text)), true);
  };

  const service: LanguageService = {
    get settings() {
      return settings;
    },
    analyseFast,
    analyseFull,
    async analyseIncrementally(text, isStale, pause) {
      const known = recall(text, true);
      if (known) return known;
      const fast = analyseFast(text);
      let n = 0;
      for (const r of fast.losses) {
        if (!isAnalysable(r)) continue;
        if (++n > limit()) break;
        const key = lossCacheKey(text, fast.model, r.info);
        if (r.analysis || cache.has(key)) continue;
        const outcome = analyseOne(fast, r);
        // Failures are reported by completeDoc, which retries the loss and records the issue.
        if ("analysis" in outcome && outcome.analysis) cache.set(key, outcome.analysis);
        await pause();
        if (isStale()) return null;
      }
      return analyseFull(text);
    },
    hover: (text, offset) => guardedValue(null, () => computeHover(analyseFull(text), offset), "hover"),
    completions: (text, offset) => guardedValue([], () => computeCompletions(analyseFast(text), offset), "completions"),
    signatureHelp: (text, offset) => guardedValue(null, () => computeSignatureHelp(analyseFast(text), offset), "signatureHelp"),
    documentSymbols: (text) => guardedValue([], () => computeDocumentSymbols(analyseFast(text)), "documentSymbols"),
    definition: (text, offset) => guardedValue([], () => findDefinition(analyseFast(text).model, offset), "definition"),
    references: (text, offset, includeDeclaration) => guardedValue([], () => findReferences(analyseFast(text).model, offset, includeDeclaration), "references"),
    prepareRename: (text, offset) => guardedValue(null, () => prepareRename(analyseFast(text).model, text, offset), "prepareRename"),
    rename: (text, offset, newName) => guardedValue<RenameResult>({ ok: false, message: "internal error while renaming" }, () => renameSymbol(analyseFast(text).model, offset, newName), "rename"),
    semanticTokens: (text) => guardedValue([], () => computeSemanticTokens(analyseFast(text)), "semanticTokens"),
    foldingRanges: (text) => guardedValue([], () => computeFoldingRanges(analyseFast(text)), "foldingRanges"),
    codeLenses: (text) => guardedValue([], () => computeCodeLenses(analyseFast(text)), "codeLenses"),
    lossSummary: (text, offset) => guardedValue(null, () => computeLossSummary(analyseFast(text), offset), "lossSummary"),
    // Editors ask for code actions on every cursor move: the fast analysis (with cached engine results)
    // keeps that from running the engine ahead of the debounce.
    codeActions: (text, range, issues) => guardedValue([], () => computeCodeActions(analyseFast(text), range, issues), "codeActions"),
    format: (text) => guardedValue([], () => computeFormatting(text, settings.indent !== undefined ? { indent: settings.indent } : {}), "format"),
    configure(next) {
      settings = { ...settings, ...next, analysis: { ...settings.analysis, ...(next.analysis ?? {}) } };
      cache.clear();
      memo.length = 0;
    },
  };
  return service;
}

/** Runs the pipeline; should it throw despite its own guards, the document gets one internal-error issue instead. */
function guarded(text: string, run: () => DocumentAnalysis): DocumentAnalysis {
  try {
    return run();
  } catch (err) {
    const empty = analyseDocument("", { skipAnalysis: true });
    return { ...empty, text, issues: [makeIssue("internal-error", `internal error while checking the document: ${String(err)}`, { start: 0, end: Math.min(1, text.length) })] };
  }
}

/** A loss the engine can look at: no errors in it or in what it uses, and a primary form. */
function isAnalysable(r: LossReport): boolean {
  return !r.info.hasErrors && r.info.form !== null;
}

function byPosition(a: Issue, b: Issue): number {
  return a.span.start - b.span.start || a.span.end - b.span.end;
}

/** Parse and name resolution, with the cached engine findings of unchanged losses (so they do not flicker while typing). */
function buildFast(text: string, cache: ReadonlyMap<string, LossAnalysis>): DocumentAnalysis {
  return guarded(text, () => {
    const { parsed, model, issues } = parseAndResolve(text);
    const losses: LossReport[] = model.losses.map((info) => ({ info, compiled: null, analysis: null }));
    for (const r of losses) {
      if (!isAnalysable(r)) continue;
      const hit = cache.get(lossCacheKey(text, model, r.info));
      if (!hit) continue;
      r.analysis = hit;
      for (const f of hit.findings) issues.push(findingToIssue(f, r.info, model));
    }
    issues.sort(byPosition);
    return { text, parse: parsed, model, losses, issues };
  });
}
