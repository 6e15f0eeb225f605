/**
 * The language service façade: one method per editor feature, taking document text and UTF-16 offsets
 * and returning plain data with offset spans. No LSP types here; `lsp/` converts at the edge.
 *
 * Every analysis comes from the one pipeline (`pipeline/pipeline.ts`), which holds the settings and the
 * caches; the CLI uses the same pipeline, so the editor and the command line give the same answers.
 * Products of an analysed document (curves, the report, generated code) are methods here too, so the
 * LSP layer never calls past the façade.
 */
import type { Issue, Span } from "../issue.js";
import { generate, type GenerateOptions, type GenerateResult } from "../codegen/index.js";
import type { CurvesParams, CurvesResult } from "../protocol.js";
import { createPipeline, type Pipeline } from "../pipeline/pipeline.js";
import type { DocumentAnalysis } from "../pipeline/stages.js";
import type { AnalysisSettings } from "../settings.js";
import { computeCodeActions, type CodeAction } from "./code-actions.js";
import { computeCodeLenses, computeLossSummary, type CodeLens, type LossSummary } from "./code-lens.js";
import { computeCompletions, type CompletionItem } from "./completion.js";
import { computeCurves } from "../products/curves.js";
import { computeFoldingRanges, type FoldingRange } from "./folding.js";
import { computeFormatting } from "./formatting.js";
import { computeHover, type HoverResult } from "./hover.js";
import { findDefinition, findReferences, prepareRename, renameSymbol, type RenameResult, type TextEdit } from "./navigation.js";
import { renderReport, type ReportOptions } from "../products/report.js";
import { computeSemanticTokens, type SemanticToken } from "./semantic-tokens.js";
import { computeSignatureHelp, type SignatureHelp } from "./signature-help.js";
import { computeDocumentSymbols, type DocumentSymbol } from "./symbols.js";

/** The editor's formatting options (LSP `FormattingOptions`, as plain data). */
export interface FormatRequest {
  tabSize?: number;
  insertSpaces?: boolean;
}

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
  /** Whole-document formatting; the editor's tab size (with spaces) wins over the `format.indent` setting. */
  format(text: string, options?: FormatRequest): TextEdit[];
  /** Sampled curves of the losses of a document (the viewer's sliders give parameter values). */
  curves(text: string, params: CurvesParams): CurvesResult;
  /** The self-contained HTML report of one document. */
  report(text: string, file: string, options: ReportOptions): string;
  /** Generated training code for the losses of a document. */
  generate(text: string, options: GenerateOptions): GenerateResult;
  /** Replaces some settings (clamped to their documented ranges, with a log line); cached analyses are dropped. */
  configure(settings: Partial<AnalysisSettings>): void;
  readonly settings: Readonly<AnalysisSettings>;
  /** The pipeline below the service (shared with nothing else in the editor; the CLI makes its own). */
  readonly pipeline: Pipeline;
}

/**
 * Creates the service. `onError` hears about exceptions a feature swallowed (the LSP layer logs them);
 * the feature itself then returns its empty answer. `log` hears about settings that were clamped.
 */
export function createLanguageService(
  initial: Partial<AnalysisSettings> = {},
  onError?: (feature: string, err: unknown) => void,
  log?: (message: string) => void,
): LanguageService {
  const guardedValue = <T>(fallback: T, run: () => T, feature = "request"): T => {
    try {
      return run();
    } catch (err) {
      onError?.(feature, err);
      return fallback;
    }
  };
  const pipeline = createPipeline();
  pipeline.configure(initial, log);
  const analyseFast = (text: string): DocumentAnalysis => pipeline.fast(text);
  const analyseFull = (text: string): DocumentAnalysis => pipeline.full(text);

  const service: LanguageService = {
    get settings() {
      return pipeline.settings;
    },
    pipeline,
    analyseFast,
    analyseFull,
    analyseIncrementally: (text, isStale, pause) => pipeline.incremental(text, isStale, pause),
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
    format: (text, options = {}) => guardedValue([], () => computeFormatting(text, formattingOptions(options, pipeline.settings.indent)), "format"),
    curves: (text, params) => guardedValue<CurvesResult>({ uri: params.uri, version: null, losses: [], skipped: [] }, () => computeCurves(analyseFull(text), params, pipeline), "curves"),
    report: (text, file, options) => renderReport([{ file, doc: analyseFull(text) }], options),
    generate: (text, options) => guardedValue<GenerateResult>({ ok: false, message: "internal error while generating code" }, () => generate(analyseFull(text), options), "generate"),
    configure(next) {
      pipeline.configure(next, log);
    },
  };
  return service;
}

/**
 * The formatter's options from the editor's (LSP `FormattingOptions`): its tab size and its choice of
 * spaces or tabs win over the `format.indent` setting, which applies when the editor sends neither.
 */
export function formattingOptions(options: FormatRequest, settingIndent: number): { indent: number; tabs: boolean } {
  const t = options.tabSize;
  const indent = typeof t === "number" && Number.isInteger(t) && t >= 1 && t <= 8 ? t : settingIndent;
  return { indent, tabs: options.insertSpaces === false };
}
