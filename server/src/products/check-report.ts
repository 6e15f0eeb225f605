/**
 * The headless report shapes of `propriety check`: text lines, the JSON object of the notation contract,
 * and SARIF 2.1.0 for code-scanning tools. Pure: takes analyses, returns strings/objects.
 */
import type { LossAnalysis } from "../analysis/analyse.js";
import { ISSUE_CODES } from "../issues.js";
import type { Issue, Severity } from "../issue.js";
import type { DocumentAnalysis } from "../pipeline/stages.js";
import { LineIndex } from "./text-position.js";

export interface JsonRange {
  start: { line: number; character: number };
  end: { line: number; character: number };
}

/** One loss in `check --json`: the contract's fields, typed from the engine's result so the two cannot drift. */
export type JsonLoss = { name: string } & Pick<
  LossAnalysis,
  "params" | "verdict" | "counterexample" | "flatInterval" | "lambda" | "modulus" | "exponents" | "threshold"
>;

export interface JsonFile {
  file: string;
  diagnostics: { code: string; severity: Severity; message: string; range: JsonRange }[];
  losses: JsonLoss[];
}

/** JSON numbers cannot be NaN or infinite: such figures become null rather than invalid JSON. */
function finiteOrNull(x: number | null | undefined): number | null {
  return x === null || x === undefined || !Number.isFinite(x) ? null : x;
}

export function toJsonFile(file: string, doc: DocumentAnalysis): JsonFile {
  const idx = new LineIndex(doc.text);
  const range = (i: Issue): JsonRange => ({ start: idx.positionAt(i.span.start), end: idx.positionAt(i.span.end) });
  return {
    file,
    diagnostics: doc.issues.map((i) => ({ code: i.code, severity: i.severity, message: i.message, range: range(i) })),
    losses: doc.losses.map((l): JsonLoss => {
      const a = l.analysis;
      const params = a?.params ?? Object.fromEntries((l.compiled?.family.params ?? []).map((p) => [p.name, p.default]));
      return {
        name: l.info.name,
        params,
        verdict: a?.verdict ?? "unknown",
        counterexample: a?.counterexample ?? null,
        flatInterval: a?.flatInterval ?? null,
        lambda: finiteOrNull(a?.lambda),
        modulus: a?.modulus && Number.isFinite(a.modulus.coefficient) && Number.isFinite(a.modulus.power) ? a.modulus : null,
        exponents: { viaModulus: finiteOrNull(a?.exponents.viaModulus), direct: finiteOrNull(a?.exponents.direct) },
        threshold: a?.threshold ?? thresholdOf(l),
      };
    }),
  };
}

function thresholdOf(l: DocumentAnalysis["losses"][number]): number {
  const fam = l.compiled?.family;
  if (!fam) return 0.5;
  try {
    return fam.instantiate({}).threshold;
  } catch {
    return 0.5;
  }
}

/** `path:line:col: severity code: message`, 1-based, one line per issue. */
export function toTextLines(file: string, doc: DocumentAnalysis): string[] {
  const idx = new LineIndex(doc.text);
  return doc.issues.map((i) => {
    const p = idx.positionAt(i.span.start);
    return `${file}:${p.line + 1}:${p.character + 1}: ${i.severity} ${i.code}: ${i.message}`;
  });
}

const SARIF_LEVEL: Record<Severity, string> = { error: "error", warning: "warning", information: "note", hint: "note" };

/** A SARIF 2.1.0 log (the OASIS standard read by code-scanning services). Columns are 1-based UTF-16 units. */
export function toSarif(files: { file: string; doc: DocumentAnalysis }[], version: string): unknown {
  const used = new Set<string>();
  const results: unknown[] = [];
  for (const { file, doc } of files) {
    const idx = new LineIndex(doc.text);
    for (const i of doc.issues) {
      used.add(i.code);
      const s = idx.positionAt(i.span.start);
      const e = idx.positionAt(i.span.end);
      results.push({
        ruleId: i.code,
        level: SARIF_LEVEL[i.severity],
        message: { text: i.message },
        locations: [{
          physicalLocation: {
            artifactLocation: { uri: file.split("\\").join("/") },
            region: { startLine: s.line + 1, startColumn: s.character + 1, endLine: e.line + 1, endColumn: e.character + 1 },
          },
        }],
      });
    }
  }
  const rules = [...used].sort().map((id) => ({
    id,
    shortDescription: { text: ISSUE_CODES[id as keyof typeof ISSUE_CODES].description },
    defaultConfiguration: { level: SARIF_LEVEL[ISSUE_CODES[id as keyof typeof ISSUE_CODES].severity] },
  }));
  return {
    $schema: "https://json.schemastore.org/sarif-2.1.0.json",
    version: "2.1.0",
    runs: [{ tool: { driver: { name: "propriety", version, informationUri: "https://example.invalid/propriety", rules } }, results, columnKind: "utf16CodeUnits" }],
  };
}
