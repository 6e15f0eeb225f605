/**
 * The VS Code extension: starts the language server (dist/server.js) over IPC for `.loss` documents,
 * forwards the `propriety.*` settings, and registers the commands, the curve viewer and the status-bar summary.
 */
import * as path from "node:path";
import * as vscode from "vscode";
import { LanguageClient, TransportKind, type LanguageClientOptions, type ServerOptions } from "vscode-languageclient/node";
import { registerCommands } from "./commands.js";
import { openCurveViewer, registerCurveViewer } from "./curve-viewer.js";
import { readSettings } from "./settings.js";
import { registerStatusBar } from "./status-bar.js";

let client: LanguageClient | undefined;

/** Starts the language client and registers the commands, the curve viewer and the status bar. */
export async function activate(context: vscode.ExtensionContext): Promise<void> {
  const serverModule = context.asAbsolutePath(path.join("dist", "server.js"));
  const serverOptions: ServerOptions = {
    run: { module: serverModule, transport: TransportKind.ipc },
    debug: { module: serverModule, transport: TransportKind.ipc, options: { execArgv: ["--nolazy", "--inspect=6009"] } },
  };
  const clientOptions: LanguageClientOptions = {
    documentSelector: [{ language: "loss" }],
    // clientCommands: code lenses may run the extension's curve-viewer command (other editors get the server's own command).
    initializationOptions: { settings: readSettings(), clientCommands: ["propriety.openCurveViewer"] },
    // Pushes `workspace/didChangeConfiguration` with the `propriety` section whenever it changes.
    synchronize: { configurationSection: "propriety" },
  };
  client = new LanguageClient("propriety", "Propriety", serverOptions, clientOptions);
  await client.start();
  registerCommands(context, client, openCurveViewer);
  registerCurveViewer(context, client);
  registerStatusBar(context, client);
}

/** Stops the language server. */
export function deactivate(): Promise<void> | undefined {
  return client?.stop();
}
