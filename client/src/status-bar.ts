/** A status-bar item summarising the loss under the cursor: verdict · λ · exponents. */
import * as vscode from "vscode";
import type { LanguageClient } from "vscode-languageclient/node";

/** Must match LOSS_SUMMARY_REQUEST in server/src/lsp/server.ts (the client imports no server code). */
const LOSS_SUMMARY_REQUEST = "propriety/lossSummary";
/** Must match ANALYSED_NOTIFICATION in server/src/lsp/server.ts. */
const ANALYSED_NOTIFICATION = "propriety/analysed";
/** Cursor moves within this time are folded into one request. */
const REFRESH_DELAY_MS = 200;

interface LossSummary {
  loss: string;
  verdict: "strictly-proper" | "proper" | "improper" | "unknown" | null;
  text: string;
  summary: string;
}

const ICONS: Record<string, string> = { "strictly-proper": "$(pass-filled)", proper: "$(pass)", improper: "$(error)", unknown: "$(question)" };

/** Creates the status-bar item and keeps it in step with the cursor and the server's analyses. */
export function registerStatusBar(context: vscode.ExtensionContext, client: LanguageClient): void {
  const item = vscode.window.createStatusBarItem(vscode.StatusBarAlignment.Left, 50);
  item.name = "Propriety loss summary";
  context.subscriptions.push(item);
  let timer: ReturnType<typeof setTimeout> | undefined;

  const refresh = async () => {
    const editor = vscode.window.activeTextEditor;
    if (!editor || editor.document.languageId !== "loss") {
      item.hide();
      return;
    }
    try {
      const summary = await client.sendRequest<LossSummary | null>(LOSS_SUMMARY_REQUEST, {
        uri: editor.document.uri.toString(),
        position: editor.selection.active,
      });
      if (!summary) {
        item.hide();
        return;
      }
      item.text = `${summary.verdict ? ICONS[summary.verdict] ?? "" : "$(circle-slash)"} ${summary.text}`;
      item.tooltip = summary.summary || summary.text;
      item.command = { title: "Open curve viewer", command: "propriety.openCurveViewer", arguments: [editor.document.uri.toString(), summary.loss] };
      item.show();
    } catch {
      item.hide();
    }
  };
  const schedule = () => {
    if (timer) clearTimeout(timer);
    timer = setTimeout(() => void refresh(), REFRESH_DELAY_MS);
  };
  context.subscriptions.push(
    vscode.window.onDidChangeActiveTextEditor(schedule),
    vscode.window.onDidChangeTextEditorSelection(schedule),
    client.onNotification(ANALYSED_NOTIFICATION, schedule),
    { dispose: () => timer && clearTimeout(timer) },
  );
  schedule();
}
