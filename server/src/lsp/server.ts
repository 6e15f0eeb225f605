/**
 * The language server: wires an LSP connection to the language service. Every handler is guarded
 * (an exception becomes a log line and an empty answer), requests for unopened documents or positions
 * outside the document get an empty answer, and diagnostics come from the scheduler's two passes.
 */
import { VERSION } from "../version.js";
import {
  CodeLensRefreshRequest, DidChangeConfigurationNotification, ResponseError, ErrorCodes, MessageType, SemanticTokensBuilder,
  TextDocumentSyncKind, TextDocuments, type ClientCapabilities, type Connection, type InitializeParams, type InitializeResult,
  type Position,
} from "vscode-languageserver/node";
import { TextDocument } from "vscode-languageserver-textdocument";
import type { Issue } from "../issue.js";
import { isTarget, type GenerateOptions } from "../codegen/index.js";
import {
  ANALYSED_NOTIFICATION, CURVES_REQUEST, GENERATE_REQUEST, LOSS_SUMMARY_REQUEST, REPORT_REQUEST, SHOW_LOSS_SUMMARY_COMMAND,
  type CurvesParams, type CurvesResult, type GenerateParams, type GenerateResult, type LossSummaryParams, type ReportParams, type ReportResult,
} from "../protocol.js";
import { createLanguageService, type LanguageService } from "../service/language-service.js";
import { TOKEN_MODIFIERS, TOKEN_TYPES } from "../service/semantic-tokens.js";
import { normaliseSettings, type AnalysisSettings } from "../settings.js";
import {
  fromDiagnostic, toCodeAction, toCompletionItem, toDiagnostic, toDocumentSymbol, toFoldingRange, toOffset, toRange, toSpan, toTextEdit,
} from "./convert.js";
import { DiagnosticsScheduler } from "./scheduler.js";

/**
 * The `propriety.*` settings a client sends (initializationOptions.settings or didChangeConfiguration),
 * normalised by the one settings table: wrong types take the default and values out of range are
 * clamped, each with a log line; the rest of the server sees only valid settings.
 */
export function toServiceSettings(raw: unknown, log: (message: string) => void = () => undefined): AnalysisSettings {
  return normaliseSettings(raw, log);
}

/** The VS Code extension's own command (opens the curve viewer); lenses use it only for a client that declares it. */
export const OPEN_VIEWER_COMMAND = "propriety.openCurveViewer";

/** What the server needs from its host process (file access stays in main.ts). */
export interface ServerHost {
  /** Text of the report page script and stylesheet (dist/report-page.js, dist/viewer.css), or null when not built. */
  readReportAssets?(): { script: string; css: string } | null;
}

/** Registers every handler on the connection and starts listening. */
export function startServer(connection: Connection, host: ServerHost = {}): void {
  const documents = new TextDocuments(TextDocument);
  const log = (m: string) => connection.console.log(m);
  const service: LanguageService = createLanguageService({}, (feature, err) => {
    connection.console.error(`${feature} failed: ${err instanceof Error ? err.stack ?? err.message : String(err)}`);
  }, log);
  let caps: ClientCapabilities = {};
  let relatedSupport = false;
  let snippetSupport = false;
  let debounceMs = service.settings.debounceMs;
  /**
   * The command code lenses run. A client that declares the viewer command
   * (initializationOptions.clientCommands, as the VS Code extension does) gets lenses that open the
   * curve viewer; a client that names itself (clientInfo: Neovim, Helix, Emacs…) without declaring it
   * gets the server's own command, which shows the loss summary; an anonymous client keeps the viewer
   * command lenses have always carried.
   */
  let lensCommand = OPEN_VIEWER_COMMAND;

  const publish = (uri: string, version: number, issues: Issue[]) => {
    const doc = documents.get(uri);
    // Only the latest version is published; a pass for an older text is simply dropped.
    if (!doc || doc.version !== version) return;
    const diagnostics = issues.map((i) => toDiagnostic(doc, i, relatedSupport));
    void connection.sendDiagnostics({ uri, version, diagnostics });
  };
  let scheduler = makeScheduler();

  function makeScheduler(): DiagnosticsScheduler {
    return new DiagnosticsScheduler(service, {
      publish,
      log,
      analysed(uri, version) {
        void connection.sendNotification(ANALYSED_NOTIFICATION, { uri, version });
        if (caps.workspace?.codeLens?.refreshSupport) void connection.sendRequest(CodeLensRefreshRequest.type).catch(() => undefined);
      },
    }, debounceMs);
  }

  /** Takes a settings object from the client (anything may arrive); rechecks open documents when asked. */
  function applySettings(raw: unknown, recheck: boolean): void {
    const next = toServiceSettings(raw, log);
    service.configure(next);
    if (service.settings.debounceMs !== debounceMs) {
      debounceMs = service.settings.debounceMs;
      scheduler = makeScheduler();
    }
    // Settings change the analysis: recheck every open document.
    if (recheck) for (const doc of documents.all()) scheduler.update(doc.uri, doc.version, doc.getText());
  }

  /** Wraps a handler: exceptions are logged and answered with the fallback, never left to kill the server. */
  function guard<P, R>(name: string, fallback: R, fn: (p: P) => R | Promise<R>): (p: P) => Promise<R> {
    return async (p: P) => {
      try {
        return await fn(p);
      } catch (err) {
        if (err instanceof ResponseError) throw err;
        connection.console.error(`${name} failed: ${err instanceof Error ? err.stack ?? err.message : String(err)}`);
        return fallback;
      }
    };
  }

  /** The open document and the offset of a position in it, or null (unopened document, position outside). */
  function at(uri: string, pos: Position): { doc: TextDocument; text: string; offset: number } | null {
    const doc = documents.get(uri);
    if (!doc) return null;
    const offset = toOffset(doc, pos);
    return offset === null ? null : { doc, text: doc.getText(), offset };
  }

  connection.onInitialize((params: InitializeParams): InitializeResult => {
    caps = params.capabilities;
    relatedSupport = caps.textDocument?.publishDiagnostics?.relatedInformation === true;
    snippetSupport = caps.textDocument?.completion?.completionItem?.snippetSupport === true;
    const init = params.initializationOptions as { settings?: unknown; clientCommands?: unknown } | null | undefined;
    if (init && typeof init === "object" && init.settings !== undefined) applySettings(init.settings, false);
    const declaresViewer = !!init && typeof init === "object" && Array.isArray(init.clientCommands) && init.clientCommands.includes(OPEN_VIEWER_COMMAND);
    lensCommand = declaresViewer || !params.clientInfo?.name ? OPEN_VIEWER_COMMAND : SHOW_LOSS_SUMMARY_COMMAND;
    const customs = [LOSS_SUMMARY_REQUEST, CURVES_REQUEST, GENERATE_REQUEST, REPORT_REQUEST];
    return {
      capabilities: {
        textDocumentSync: TextDocumentSyncKind.Incremental,
        hoverProvider: true,
        // No trigger characters: editors already ask while a word is typed, and a space trigger would pop up after every operator.
        completionProvider: {},
        signatureHelpProvider: { triggerCharacters: ["(", ","] },
        definitionProvider: true,
        referencesProvider: true,
        renameProvider: { prepareProvider: true },
        documentSymbolProvider: true,
        semanticTokensProvider: { legend: { tokenTypes: [...TOKEN_TYPES], tokenModifiers: [...TOKEN_MODIFIERS] }, full: true },
        foldingRangeProvider: true,
        codeLensProvider: { resolveProvider: false },
        codeActionProvider: { codeActionKinds: ["quickfix", "refactor.rewrite"] },
        documentFormattingProvider: true,
        executeCommandProvider: { commands: [SHOW_LOSS_SUMMARY_COMMAND] },
        experimental: { proprietyRequests: customs },
      },
      serverInfo: { name: "propriety", version: VERSION },
    };
  });

  connection.onInitialized(() => {
    if (caps.workspace?.didChangeConfiguration?.dynamicRegistration) {
      void connection.client.register(DidChangeConfigurationNotification.type, { section: "propriety" }).catch(() => undefined);
    }
  });

  connection.onDidChangeConfiguration(guard("didChangeConfiguration", undefined, async (p) => {
    const pushed = p.settings && typeof p.settings === "object" ? (p.settings as { propriety?: unknown }).propriety : undefined;
    if (pushed !== undefined) return applySettings(pushed, true);
    if (caps.workspace?.configuration) {
      const pulled: unknown = await connection.workspace.getConfiguration("propriety");
      applySettings(pulled ?? {}, true);
    }
  }));

  documents.onDidChangeContent((e) => {
    try {
      scheduler.update(e.document.uri, e.document.version, e.document.getText());
    } catch (err) {
      connection.console.error(`scheduling checks failed: ${String(err)}`);
    }
  });
  documents.onDidClose((e) => {
    scheduler.close(e.document.uri);
    void connection.sendDiagnostics({ uri: e.document.uri, diagnostics: [] });
  });

  connection.onHover(guard("hover", null, (p) => {
    const a = at(p.textDocument.uri, p.position);
    if (!a) return null;
    const h = service.hover(a.text, a.offset);
    return h ? { contents: { kind: "markdown" as const, value: h.markdown }, range: toRange(a.doc, h.span) } : null;
  }));

  connection.onCompletion(guard("completion", [], (p) => {
    const a = at(p.textDocument.uri, p.position);
    if (!a) return [];
    return service.completions(a.text, a.offset).map((c) => toCompletionItem(c, snippetSupport));
  }));

  connection.onSignatureHelp(guard("signatureHelp", null, (p) => {
    const a = at(p.textDocument.uri, p.position);
    if (!a) return null;
    const s = service.signatureHelp(a.text, a.offset);
    if (!s) return null;
    return {
      signatures: [{ label: s.label, documentation: { kind: "markdown" as const, value: s.documentation }, parameters: s.parameters.map((x) => ({ label: x.label })) }],
      activeSignature: 0,
      activeParameter: s.activeParameter,
    };
  }));

  connection.onDefinition(guard("definition", [], (p) => {
    const a = at(p.textDocument.uri, p.position);
    if (!a) return [];
    return service.definition(a.text, a.offset).map((s) => ({ uri: a.doc.uri, range: toRange(a.doc, s) }));
  }));

  connection.onReferences(guard("references", [], (p) => {
    const a = at(p.textDocument.uri, p.position);
    if (!a) return [];
    return service.references(a.text, a.offset, p.context.includeDeclaration).map((s) => ({ uri: a.doc.uri, range: toRange(a.doc, s) }));
  }));

  connection.onPrepareRename(guard("prepareRename", null, (p) => {
    const a = at(p.textDocument.uri, p.position);
    if (!a) return null;
    const r = service.prepareRename(a.text, a.offset);
    return r ? { range: toRange(a.doc, r.span), placeholder: r.placeholder } : null;
  }));

  connection.onRenameRequest(guard("rename", null, (p) => {
    const a = at(p.textDocument.uri, p.position);
    if (!a) return null;
    const r = service.rename(a.text, a.offset, p.newName);
    if (!r.ok) throw new ResponseError(ErrorCodes.InvalidParams, r.message);
    return { changes: { [a.doc.uri]: r.edits.map((e) => toTextEdit(a.doc, e)) } };
  }));

  connection.onDocumentSymbol(guard("documentSymbol", [], (p) => {
    const doc = documents.get(p.textDocument.uri);
    if (!doc) return [];
    return service.documentSymbols(doc.getText()).map((s) => toDocumentSymbol(doc, s));
  }));

  connection.languages.semanticTokens.on(guard("semanticTokens", { data: [] }, (p) => {
    const doc = documents.get(p.textDocument.uri);
    if (!doc) return { data: [] };
    const builder = new SemanticTokensBuilder();
    for (const t of service.semanticTokens(doc.getText())) {
      const start = doc.positionAt(t.span.start);
      const end = doc.positionAt(t.span.end);
      if (end.line !== start.line) continue;
      let mods = 0;
      for (const m of t.modifiers) mods |= 1 << TOKEN_MODIFIERS.indexOf(m);
      builder.push(start.line, start.character, end.character - start.character, TOKEN_TYPES.indexOf(t.type), mods);
    }
    return builder.build();
  }));

  connection.onFoldingRanges(guard("foldingRange", [], (p) => {
    const doc = documents.get(p.textDocument.uri);
    if (!doc) return [];
    return service.foldingRanges(doc.getText()).map((f) => toFoldingRange(doc, f)).filter((f) => f !== null);
  }));

  connection.onCodeLens(guard("codeLens", [], (p) => {
    const doc = documents.get(p.textDocument.uri);
    if (!doc) return [];
    return service.codeLenses(doc.getText()).map((l) => ({
      range: toRange(doc, l.span),
      command: { title: l.title, command: lensCommand, arguments: [doc.uri, l.loss] },
    }));
  }));

  connection.onExecuteCommand(guard("executeCommand", null, (p) => {
    if (p.command !== SHOW_LOSS_SUMMARY_COMMAND) throw new ResponseError(ErrorCodes.InvalidParams, `unknown command '${p.command}'; the server provides ${SHOW_LOSS_SUMMARY_COMMAND}`);
    const [uri, loss] = p.arguments ?? [];
    const doc = typeof uri === "string" ? documents.get(uri) : undefined;
    if (!doc) throw new ResponseError(ErrorCodes.InvalidParams, `${SHOW_LOSS_SUMMARY_COMMAND}: the document ${String(uri)} is not open`);
    const text = doc.getText();
    const lens = service.codeLenses(text).find((l) => l.loss === loss);
    if (!lens) throw new ResponseError(ErrorCodes.InvalidParams, `${SHOW_LOSS_SUMMARY_COMMAND}: no loss named '${String(loss)}' in ${doc.uri}`);
    const summary = service.lossSummary(text, lens.span.start);
    // The engine's one-line summary (what the lens title shows in VS Code), or why there is none.
    const message = summary?.summary ? `${summary.loss}: ${summary.summary}` : summary ? summary.text : `${lens.loss}: ${lens.title}`;
    void connection.sendNotification("window/showMessage", { type: MessageType.Info, message });
    return summary;
  }));

  connection.onCodeAction(guard("codeAction", [], (p) => {
    const doc = documents.get(p.textDocument.uri);
    if (!doc) return [];
    const issues = p.context.diagnostics.map((d) => fromDiagnostic(doc, d)).filter((i): i is Issue => i !== null);
    const actions = service.codeActions(doc.getText(), toSpan(doc, p.range), issues);
    const only = p.context.only;
    return actions
      .map((a) => toCodeAction(doc, a, p.context.diagnostics))
      .filter((a) => !only || only.some((k) => a.kind === k || a.kind?.startsWith(`${k}.`)));
  }));

  connection.onDocumentFormatting(guard("formatting", [], (p) => {
    const doc = documents.get(p.textDocument.uri);
    if (!doc) return [];
    return service.format(doc.getText(), { tabSize: p.options.tabSize, insertSpaces: p.options.insertSpaces }).map((e) => toTextEdit(doc, e));
  }));

  connection.onRequest(LOSS_SUMMARY_REQUEST, guard("lossSummary", null, (p: LossSummaryParams) => {
    const a = at(p.uri, p.position);
    return a ? service.lossSummary(a.text, a.offset) : null;
  }));

  connection.onRequest(CURVES_REQUEST, guard<CurvesParams, CurvesResult | null>("curves", null, (p) => {
    const doc = documents.get(p.uri);
    if (!doc) return { uri: p.uri, version: null, losses: [], skipped: [] };
    return { ...service.curves(doc.getText(), p), version: doc.version };
  }));

  connection.onRequest(GENERATE_REQUEST, guard<GenerateParams, GenerateResult>("generate", { ok: false, code: null, message: "internal error while generating code", fileName: null }, (p) => {
    const doc = documents.get(p.uri);
    if (!doc) return { ok: false, code: null, message: "the document is not open", fileName: null };
    if (!isTarget(p.target)) return { ok: false, code: null, message: `unknown target '${String(p.target)}'`, fileName: null };
    const options: GenerateOptions = { target: p.target, sourceName: decodeURIComponent(p.uri.split("/").pop() ?? p.uri) };
    if (p.input) options.input = p.input;
    if (p.loss) options.loss = p.loss;
    if (p.allowImproper) options.allowImproper = true;
    const r = service.generate(doc.getText(), options);
    // The improper losses asked for, so the editor can ask for consent (a loss that says `expect improper` has given it).
    const improper = service.analyseFull(doc.getText()).losses
      .filter((l) => l.analysis?.verdict === "improper" && (p.loss === undefined || l.info.name === p.loss))
      .map((l) => ({ loss: l.info.name, expected: l.info.expects.some((e) => e.claim?.kind === "improper") }));
    return r.ok ? { ok: true, code: r.code, message: null, fileName: r.fileName, improper } : { ok: false, code: null, message: r.message, fileName: null, improper };
  }));

  connection.onRequest(REPORT_REQUEST, guard<ReportParams, ReportResult | null>("report", null, (p) => {
    const doc = documents.get(p.uri);
    const assets = host.readReportAssets?.() ?? null;
    if (!doc || !assets) return null;
    const file = decodeURIComponent(p.uri.split("/").pop() ?? p.uri);
    const html = service.report(doc.getText(), file, {
      script: assets.script, css: assets.css, title: `Propriety report: ${file}`,
      generatedAt: new Date().toISOString(), generator: `propriety ${VERSION} (language server)`,
    });
    return { html };
  }));

  documents.listen(connection);
  connection.listen();
}
