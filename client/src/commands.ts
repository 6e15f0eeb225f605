/** The extension's commands: curve viewer, code generation and report export. */
import * as vscode from "vscode";
import type { LanguageClient } from "vscode-languageclient/node";
import { GENERATE_REQUEST, REPORT_REQUEST, type GenerateParams, type GenerateResult, type ReportParams, type ReportResult } from "../../server/src/protocol.js";

/** Custom request for an HTML report of a document (served when the server has a report service). */

/** An optional viewer implementation: set by extension.ts when the curve viewer module is bundled. */
export type OpenViewer = (context: vscode.ExtensionContext, client: LanguageClient, uri: string, loss?: string) => unknown;

function activeLossDocument(): vscode.TextDocument | null {
  const doc = vscode.window.activeTextEditor?.document;
  return doc && doc.languageId === "loss" ? doc : null;
}

/** True when the server answered "method not found" (the feature is not in this build). */
function isMissingMethod(err: unknown): boolean {
  return typeof err === "object" && err !== null && (err as { code?: number }).code === -32601;
}

const LANGUAGES: Record<GenerateParams["target"], string> = { torch: "python", jax: "python", numpy: "python", ts: "typescript" };

/** Registers the three `propriety.*` commands contributed in package.json. */
export function registerCommands(context: vscode.ExtensionContext, client: LanguageClient, openViewer: OpenViewer | null): void {
  context.subscriptions.push(
    vscode.commands.registerCommand("propriety.openCurveViewer", async (uri?: string, loss?: string) => {
      if (!openViewer) {
        void vscode.window.showInformationMessage("The curve viewer is not available in this build of Propriety.");
        return;
      }
      const target = uri ?? activeLossDocument()?.uri.toString();
      if (!target) {
        void vscode.window.showInformationMessage("Open a .loss file to view its curves.");
        return;
      }
      await openViewer(context, client, target, loss);
    }),

    vscode.commands.registerCommand("propriety.generateCode", async () => {
      const doc = activeLossDocument();
      if (!doc) {
        void vscode.window.showInformationMessage("Open a .loss file to generate code from it.");
        return;
      }
      const pick = await vscode.window.showQuickPick(
        [
          { label: "PyTorch", target: "torch" as const },
          { label: "JAX", target: "jax" as const },
          { label: "NumPy", target: "numpy" as const },
          { label: "TypeScript", target: "ts" as const },
        ],
        { placeHolder: "Generate code for…" },
      );
      if (!pick) return;
      const input = await vscode.window.showQuickPick(
        [{ label: "probabilities q", value: "prob" as const }, { label: "scores v (through the link)", value: "score" as const }],
        { placeHolder: "Input of the generated loss" },
      );
      if (!input) return;
      const params: GenerateParams = { uri: doc.uri.toString(), target: pick.target, input: input.value };
      try {
        const result = await client.sendRequest<GenerateResult>(GENERATE_REQUEST, params);
        if (!result.ok || result.code === null) {
          void vscode.window.showWarningMessage(result.message ?? "Code generation failed.");
          return;
        }
        const out = await vscode.workspace.openTextDocument({ content: result.code, language: LANGUAGES[pick.target] });
        await vscode.window.showTextDocument(out, { preview: false });
      } catch (err) {
        void vscode.window.showInformationMessage(isMissingMethod(err) ? "Code generation is not available in this build of Propriety." : `Code generation failed: ${String(err)}`);
      }
    }),

    vscode.commands.registerCommand("propriety.exportReport", async () => {
      const doc = activeLossDocument();
      if (!doc) {
        void vscode.window.showInformationMessage("Open a .loss file to export its report.");
        return;
      }
      try {
        const result = await client.sendRequest<ReportResult | null>(REPORT_REQUEST, { uri: doc.uri.toString() } satisfies ReportParams);
        if (!result) {
          void vscode.window.showInformationMessage("The report is not available for this document.");
          return;
        }
        const target = await vscode.window.showSaveDialog({
          defaultUri: doc.uri.with({ path: doc.uri.path.replace(/\.loss$/, "") + ".report.html" }),
          filters: { HTML: ["html"] },
        });
        if (!target) return;
        await vscode.workspace.fs.writeFile(target, new TextEncoder().encode(result.html));
        void vscode.window.showInformationMessage(`Report written to ${target.fsPath}`);
      } catch (err) {
        void vscode.window.showInformationMessage(isMissingMethod(err) ? "Report export is not available in this build of Propriety (use `npx propriety report`)." : `Report export failed: ${String(err)}`);
      }
    }),
  );
}
