/**
 * The curve viewer's panel host: one webview panel per document, a strict CSP with a fresh nonce,
 * resources only from dist/, and the message loop between the page (`ViewerToHost`) and the language
 * server (`CURVES_REQUEST`). Slider values become parameter overrides of the next request; requests are
 * coalesced (one in flight, the latest values next), so a fast drag never queues up stale work.
 */
import * as vscode from "vscode";
import type { LanguageClient } from "vscode-languageclient/node";
import { CURVES_REQUEST, type CurvesParams, type CurvesResult, type HostToViewer, type ViewerToHost } from "../../server/src/protocol.js";
import { makeNonce, viewerHtml } from "./viewer-html.js";

/** The webview panel type (also the serializer's key: `onWebviewPanel:propriety.curveViewer`). */
export const CURVE_VIEWER_TYPE = "propriety.curveViewer";
/** Edits to the document redraw the curves after this pause (milliseconds), as typing goes on. */
const REFRESH_DEBOUNCE_MS = 400;
/** η of the conditional-risk chart until the page says otherwise. */
const DEFAULT_ETA = 0.7;
/** Samples per curve while a slider moves (sampling time is about linear in it), and the pause after which full detail returns. */
const DRAG_POINTS = 61;
const SETTLE_MS = 600;

function webviewOptions(context: vscode.ExtensionContext): vscode.WebviewOptions {
  return { enableScripts: true, localResourceRoots: [vscode.Uri.joinPath(context.extensionUri, "dist")] };
}

function isViewerMessage(m: unknown): m is ViewerToHost {
  return typeof m === "object" && m !== null && typeof (m as { type?: unknown }).type === "string";
}

class CurveViewerPanel {
  static readonly panels = new Map<string, CurveViewerPanel>();

  private readonly disposables: vscode.Disposable[] = [];
  private overrides: Record<string, Record<string, number>> = {};
  private eta = DEFAULT_ETA;
  private latestSeq = 0;
  private inFlight = false;
  private queued = false;
  private disposed = false;
  private refreshTimer: ReturnType<typeof setTimeout> | undefined;
  private settleTimer: ReturnType<typeof setTimeout> | undefined;
  /** True while slider values arrive: requests use fewer samples until the slider rests. */
  private dragging = false;

  constructor(
    readonly panel: vscode.WebviewPanel,
    context: vscode.ExtensionContext,
    private readonly client: LanguageClient,
    readonly uri: string,
    private focus: string | undefined,
  ) {
    CurveViewerPanel.panels.set(uri, this);
    const webview = panel.webview;
    webview.options = webviewOptions(context);
    const dist = vscode.Uri.joinPath(context.extensionUri, "dist");
    webview.html = viewerHtml({
      cspSource: webview.cspSource,
      nonce: makeNonce(),
      scriptUri: webview.asWebviewUri(vscode.Uri.joinPath(dist, "viewer.js")).toString(),
      styleUri: webview.asWebviewUri(vscode.Uri.joinPath(dist, "viewer.css")).toString(),
      title: panel.title,
    });
    panel.onDidDispose(() => this.dispose(), null, this.disposables);
    webview.onDidReceiveMessage((m: unknown) => this.onMessage(m), null, this.disposables);
    vscode.workspace.onDidChangeTextDocument(
      (e) => {
        if (e.document.uri.toString() === this.uri) this.scheduleRefresh();
      },
      null,
      this.disposables,
    );
  }

  reveal(focus: string | undefined): void {
    if (focus) this.focus = focus;
    this.panel.reveal(undefined, true);
    void this.refresh();
  }

  private onMessage(m: unknown): void {
    if (!isViewerMessage(m)) return;
    switch (m.type) {
      case "ready":
        void this.refresh();
        break;
      case "setParam":
        if (typeof m.value !== "number" || !Number.isFinite(m.value)) return;
        this.overrides = { ...this.overrides, [m.loss]: { ...(this.overrides[m.loss] ?? {}), [m.name]: m.value } };
        this.latestSeq = Math.max(this.latestSeq, m.seq ?? 0);
        this.dragging = true;
        if (this.settleTimer) clearTimeout(this.settleTimer);
        this.settleTimer = setTimeout(() => {
          this.dragging = false;
          void this.refresh();
        }, SETTLE_MS);
        void this.refresh();
        break;
      case "setEta":
        if (m.eta > 0 && m.eta < 1) this.eta = m.eta;
        break;
      case "selectLosses":
        // The page hides losses itself; the host keeps sampling all of them so toggling back is instant.
        break;
    }
  }

  private scheduleRefresh(): void {
    if (this.refreshTimer) clearTimeout(this.refreshTimer);
    this.refreshTimer = setTimeout(() => void this.refresh(), REFRESH_DEBOUNCE_MS);
  }

  private post(message: HostToViewer): void {
    if (!this.disposed) void this.panel.webview.postMessage(message);
  }

  /** Requests the curves with the latest overrides; while one request runs, at most one more is queued. */
  private async refresh(): Promise<void> {
    if (this.inFlight) {
      this.queued = true;
      return;
    }
    this.inFlight = true;
    try {
      do {
        this.queued = false;
        const seq = this.latestSeq;
        const params: CurvesParams = { uri: this.uri, overrides: this.overrides };
        if (this.dragging) params.points = DRAG_POINTS;
        try {
          const data = await this.client.sendRequest<CurvesResult>(CURVES_REQUEST, params);
          this.post({ type: "curves", data, eta: this.eta, seq, focus: this.focus });
        } catch (err) {
          this.post({ type: "error", message: `The curves could not be computed: ${err instanceof Error ? err.message : String(err)}` });
        }
      } while (this.queued && !this.disposed);
    } finally {
      this.inFlight = false;
    }
  }

  dispose(): void {
    if (this.disposed) return;
    this.disposed = true;
    if (this.refreshTimer) clearTimeout(this.refreshTimer);
    if (this.settleTimer) clearTimeout(this.settleTimer);
    CurveViewerPanel.panels.delete(this.uri);
    this.panel.dispose();
    while (this.disposables.length > 0) this.disposables.pop()?.dispose();
  }
}

function titleFor(uri: string, loss?: string): string {
  const name = uri.split("/").pop() ?? uri;
  return loss ? `Curves: ${loss} (${decodeURIComponent(name)})` : `Curves: ${decodeURIComponent(name)}`;
}

/** Opens (or reveals) the curve viewer for a document; `loss` starts the view with that loss alone. */
export function openCurveViewer(context: vscode.ExtensionContext, client: LanguageClient, uri: string, loss?: string): void {
  const existing = CurveViewerPanel.panels.get(uri);
  if (existing) {
    existing.reveal(loss);
    return;
  }
  const panel = vscode.window.createWebviewPanel(CURVE_VIEWER_TYPE, titleFor(uri, loss), { viewColumn: vscode.ViewColumn.Beside, preserveFocus: true }, webviewOptions(context));
  new CurveViewerPanel(panel, context, client, uri, loss);
}

/**
 * Registers the serializer that restores curve viewers after a window reload (the page's state holds
 * the document URI). Needs the activation event `onWebviewPanel:propriety.curveViewer`.
 */
export function registerCurveViewer(context: vscode.ExtensionContext, client: LanguageClient): void {
  context.subscriptions.push(
    vscode.window.registerWebviewPanelSerializer(CURVE_VIEWER_TYPE, {
      async deserializeWebviewPanel(panel: vscode.WebviewPanel, state: unknown): Promise<void> {
        const uri = typeof state === "object" && state !== null ? (state as { uri?: unknown }).uri : undefined;
        if (typeof uri !== "string") {
          panel.dispose();
          return;
        }
        new CurveViewerPanel(panel, context, client, uri, undefined);
      },
    }),
    { dispose: () => [...CurveViewerPanel.panels.values()].forEach((p) => p.dispose()) },
  );
}
