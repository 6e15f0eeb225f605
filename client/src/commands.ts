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

const GENERATE_ANYWAY = "Generate anyway";
const LEAVE_OUT = "Leave improper losses out";
/** workspaceState key: the folder the last generated file was saved in (remembered per workspace). */
const GENERATE_DIR_KEY = "propriety.generateCode.folder";

/**
 * Asks where to write generated code: a save dialog proposing the folder used last time in this
 * workspace, or the folder of the .loss file; remembers the chosen folder.
 */
async function askOutputFile(context: vscode.ExtensionContext, doc: vscode.TextDocument, fileName: string, language: string): Promise<vscode.Uri | undefined> {
  const beside = vscode.Uri.joinPath(doc.uri, "..");
  const remembered = context.workspaceState.get<string>(GENERATE_DIR_KEY);
  const folder = remembered ? vscode.Uri.parse(remembered) : beside;
  const target = await vscode.window.showSaveDialog({
    defaultUri: vscode.Uri.joinPath(folder, fileName),
    filters: language === "typescript" ? { TypeScript: ["ts"] } : { Python: ["py"] },
    title: "Write the generated code to…",
  });
  if (target) await context.workspaceState.update(GENERATE_DIR_KEY, vscode.Uri.joinPath(target, "..").toString());
  return target;
}

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
        let result = await client.sendRequest<GenerateResult>(GENERATE_REQUEST, params);
        // Improper losses are generated only with consent: `expect improper` in the file gives it (as `check` accepts it), otherwise ask.
        const improper = result.improper ?? [];
        const unasked = improper.filter((l) => !l.expected).map((l) => l.loss);
        if (improper.length > 0) {
          let allow = unasked.length === 0;
          if (!allow) {
            const names = unasked.map((n) => `\`${n}\``).join(", ");
            const answer = await vscode.window.showWarningMessage(
              `${names} ${unasked.length === 1 ? "is" : "are"} improper: ${unasked.length === 1 ? "its" : "their"} outputs are not calibrated probabilities. Generate ${unasked.length === 1 ? "it" : "them"} anyway (with a WARNING line and, where possible, a posterior-recovery function)? Writing \`expect improper\` in the loss gives this consent in advance.`,
              { modal: true },
              GENERATE_ANYWAY,
              LEAVE_OUT,
            );
            if (answer === undefined) return;
            allow = answer === GENERATE_ANYWAY;
          }
          if (allow) result = await client.sendRequest<GenerateResult>(GENERATE_REQUEST, { ...params, allowImproper: true } satisfies GenerateParams);
        }
        if (!result.ok || result.code === null) {
          void vscode.window.showWarningMessage(result.message ?? "Code generation failed.");
          return;
        }
        const target = await askOutputFile(context, doc, result.fileName ?? `${doc.uri.path.split("/").pop()?.replace(/\.loss$/, "") ?? "losses"}_${pick.target}.${pick.target === "ts" ? "ts" : "py"}`, LANGUAGES[pick.target]);
        if (!target) return;
        await vscode.workspace.fs.writeFile(target, new TextEncoder().encode(result.code));
        const out = await vscode.workspace.openTextDocument(target);
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
