/**
 * The `propriety.*` settings, read from the VS Code configuration in the shape the server expects. The
 * defaults come from the one settings table the server uses (server/src/settings.ts); the server
 * normalises what it receives (clamps out-of-range values with a log line).
 */
import * as vscode from "vscode";
import { DEFAULT_SETTINGS, toClientShape, type AnalysisSettings } from "../../server/src/settings.js";

/** Reads the current settings (a value the user did not set takes the table's default). */
export function readSettings(): Record<string, unknown> {
  const c = vscode.workspace.getConfiguration("propriety");
  const s: AnalysisSettings = {
    gridResolution: c.get<number>("analysis.gridResolution", DEFAULT_SETTINGS.gridResolution),
    deadlineMs: c.get<number>("analysis.deadlineMs", DEFAULT_SETTINGS.deadlineMs),
    defaultThreshold: c.get<number>("defaultThreshold", DEFAULT_SETTINGS.defaultThreshold),
    maxAnalysedLosses: c.get<number>("maxAnalysedLosses", DEFAULT_SETTINGS.maxAnalysedLosses),
    debounceMs: c.get<number>("debounceMs", DEFAULT_SETTINGS.debounceMs),
    indent: c.get<number>("format.indent", DEFAULT_SETTINGS.indent),
  };
  return toClientShape(s);
}
