/** A status-bar item summarising the loss under the cursor: verdict · λ · exponents. */
import * as vscode from "vscode";
import type { LanguageClient } from "vscode-languageclient/node";
import { ANALYSED_NOTIFICATION, LOSS_SUMMARY_REQUEST, type LossSummaryParams, type LossSummaryResult } from "../../server/src/protocol.js";

/** Cursor moves within this time are folded into one request. */
const REFRESH_DELAY_MS = 200;

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
      const params: LossSummaryParams = { uri: editor.document.uri.toString(), position: { line: editor.selection.active.line, character: editor.selection.active.character } };
      const summary = await client.sendRequest<LossSummaryResult | null>(LOSS_SUMMARY_REQUEST, params);
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
