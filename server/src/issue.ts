/**
 * The one problem type of the core: every parser, semantic and analysis finding is an `Issue`.
 * Spans are UTF-16 offsets into the document text; only the LSP adapter and the CLI turn them into
 * line/column positions.
 */
import { ISSUE_CODES, type IssueCode, type Severity } from "./issues.js";

export type { Severity };

/** Half-open range [start, end) of UTF-16 offsets. */
export interface Span {
  start: number;
  end: number;
}

/** A related location that carries evidence for an issue (e.g. the clause where a property fails). */
export interface RelatedSpan {
  span: Span;
  message: string;
}

export interface Issue {
  code: IssueCode;
  severity: Severity;
  message: string;
  span: Span;
  /** Machine-readable evidence (sample point, values, suggestion) for hovers and quick fixes. */
  data?: Record<string, unknown>;
  related?: RelatedSpan[];
}

/** Builds an issue with the registry's default severity unless one is given. */
export function makeIssue(
  code: IssueCode,
  message: string,
  span: Span,
  extra: { severity?: Severity; data?: Record<string, unknown>; related?: RelatedSpan[] } = {},
): Issue {
  const issue: Issue = { code, severity: extra.severity ?? ISSUE_CODES[code].severity, message, span };
  if (extra.data) issue.data = extra.data;
  if (extra.related && extra.related.length > 0) issue.related = extra.related;
  return issue;
}

export function spanUnion(a: Span, b: Span): Span {
  return { start: Math.min(a.start, b.start), end: Math.max(a.end, b.end) };
}
