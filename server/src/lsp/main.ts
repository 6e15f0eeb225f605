/**
 * Entry point of the language server bundle (`dist/server.js`). The transport comes from the command
 * line, as vscode-languageserver reads it: `--stdio` for any LSP client, `--node-ipc` from VS Code.
 * A crash in a request is caught by the handlers; this file only keeps a stray async error from
 * ending the process.
 */
import { createConnection, ProposedFeatures } from "vscode-languageserver/node";
import { startServer } from "./server.js";

const connection = createConnection(ProposedFeatures.all);

process.on("uncaughtException", (err) => connection.console.error(`uncaught: ${err.stack ?? String(err)}`));
process.on("unhandledRejection", (err) => connection.console.error(`unhandled rejection: ${String(err)}`));

startServer(connection);
