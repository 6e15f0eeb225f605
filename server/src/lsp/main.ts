/**
 * Entry point of the language server bundle (`dist/server.js`). The transport comes from the command
 * line, as vscode-languageserver reads it: `--stdio` for any LSP client, `--node-ipc` from VS Code.
 * A crash in a request is caught by the handlers; this file only keeps a stray async error from
 * ending the process.
 */
import { existsSync, readFileSync } from "node:fs";
import * as path from "node:path";
import { createConnection, ProposedFeatures } from "vscode-languageserver/node";
import { startServer } from "./server.js";

const connection = createConnection(ProposedFeatures.all);

process.on("uncaughtException", (err) => connection.console.error(`uncaught: ${err.stack ?? String(err)}`));
process.on("unhandledRejection", (err) => connection.console.error(`unhandled rejection: ${String(err)}`));

/** The report assets are bundled next to this file (dist/), by scripts/build.mjs. */
function readReportAssets(): { script: string; css: string } | null {
  const script = path.join(__dirname, "report-page.js");
  const css = path.join(__dirname, "viewer.css");
  if (!existsSync(script) || !existsSync(css)) return null;
  return { script: readFileSync(script, "utf8"), css: readFileSync(css, "utf8") };
}

startServer(connection, { readReportAssets });
