/** The `propriety.*` settings, read from the VS Code configuration in the shape the server expects. */
import * as vscode from "vscode";

export interface ProprietySettings {
  analysis: { deadlineMs: number; gridResolution: number };
  defaultThreshold: number;
  maxAnalysedLosses: number;
  debounceMs: number;
  format: { indent: number };
}

/** Reads the current settings (defaults as contributed in package.json). */
export function readSettings(): ProprietySettings {
  const c = vscode.workspace.getConfiguration("propriety");
  return {
    analysis: {
      deadlineMs: c.get<number>("analysis.deadlineMs", 2000),
      gridResolution: c.get<number>("analysis.gridResolution", 201),
    },
    defaultThreshold: c.get<number>("defaultThreshold", 0.5),
    maxAnalysedLosses: c.get<number>("maxAnalysedLosses", 200),
    debounceMs: c.get<number>("debounceMs", 150),
    format: { indent: c.get<number>("format.indent", 2) },
  };
}
