/**
 * Annotated documents for diagnostics tests (in the manner of rust-analyzer's `extract_annotations`).
 *
 * A line such as `#     ^^^ unknown-name` or `#     ^^^ unknown-name: did you mean` placed under a text line
 * marks an expected issue on that text line: the carets' columns give the range, the word after them the
 * issue code, and the optional text after `: ` a substring the issue's message must contain. Several
 * annotation lines may follow one text line; they all refer to the nearest text line above. Annotation
 * lines are comments, so the annotated document is the very text that is analysed.
 */
import { expect } from "vitest";
import type { Issue } from "../../server/src/issue.js";
import { analyseDocument } from "../../server/src/pipeline/pipeline.js";
import type { DocumentAnalysis } from "../../server/src/pipeline/stages.js";
import { LineIndex } from "../../server/src/products/text-position.js";

/** One expected issue: its 0-based line, its character range on that line, its code and a message substring. */
export interface Annotation {
  line: number;
  startCharacter: number;
  endCharacter: number;
  code: string;
  message: string | null;
}

/** Optional indentation, `#`, then spaces, then one run of carets, then the code and an optional `: message`. */
const ANNOTATION_LINE = /^(\s*#\s*)(\^+)\s+([a-z][a-z0-9-]*)(?::\s*(.*?))?\s*$/;

/** Extracts the annotations of a document; throws when an annotation has no text line above it. */
export function parseAnnotations(text: string): Annotation[] {
  const lines = text.split(/\r\n|\r|\n/);
  const out: Annotation[] = [];
  let target = -1;
  lines.forEach((line, index) => {
    const m = ANNOTATION_LINE.exec(line);
    if (!m) {
      target = index;
      return;
    }
    if (target < 0) throw new Error(`annotation on line ${index + 1} has no text line above it`);
    const start = m[1]!.length;
    out.push({ line: target, startCharacter: start, endCharacter: start + m[2]!.length, code: m[3]!, message: m[4] ?? null });
  });
  return out;
}

/** `line:start-end code`, 1-based line and 0-based characters, the form both sides are compared in. */
function keyOf(line: number, start: number, end: number, code: string): string {
  return `${line + 1}:${start}-${end} ${code}`;
}

/** Issues whose codes come from the numeric engine, which diagnostics tests do not look at. */
function isAnalysisIssue(issue: Issue): boolean {
  return issue.code.startsWith("analysis-");
}

/**
 * Analyses an annotated document with syntax and semantics only, and asserts that its issues are exactly
 * the annotated ones (code and range; and message substring where the annotation gives one).
 * An issue that spans several lines cannot be annotated and always shows up as a mismatch (end `-1`).
 * Returns the analysis for further checks.
 */
export function checkIssues(doc: string): DocumentAnalysis {
  const analysis = analyseDocument(doc, { skipAnalysis: true });
  const idx = new LineIndex(doc);
  const actual = analysis.issues
    .filter((i) => !isAnalysisIssue(i))
    .map((i) => {
      const s = idx.positionAt(i.span.start);
      const e = idx.positionAt(i.span.end);
      const end = e.line === s.line ? e.character : -1;
      return { key: keyOf(s.line, s.character, end, i.code), message: i.message };
    });
  const expected = parseAnnotations(doc).map((a) => ({ key: keyOf(a.line, a.startCharacter, a.endCharacter, a.code), message: a.message }));

  // An expected message substring that the matching issue contains is replaced by that issue's full
  // message, so the comparison below succeeds; otherwise the substring stays and the diff shows both.
  const pending = actual.map((a) => ({ ...a, used: false }));
  const want = expected.map((x) => {
    const hit = pending.find((a) => !a.used && a.key === x.key && (x.message === null || a.message.includes(x.message)));
    if (hit) hit.used = true;
    if (x.message === null) return x.key;
    return hit ? `${x.key}: ${hit.message}` : `${x.key}: …${x.message}…`;
  });
  const got = actual.map((a) => {
    const asked = expected.find((x) => x.key === a.key && x.message !== null && a.message.includes(x.message));
    return asked ? `${a.key}: ${a.message}` : a.key;
  });
  const order = (a: string, b: string) => (a < b ? -1 : a > b ? 1 : 0);
  expect(got.sort(order), `issues of\n${doc}\nactual messages:\n${actual.map((a) => `  ${a.key}: ${a.message}`).join("\n")}`).toEqual(want.sort(order));
  return analysis;
}
