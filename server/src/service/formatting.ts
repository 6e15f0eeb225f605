/** Document formatting: a thin call of the formatter, returned as one whole-document edit (none when the text has syntax errors). */
import { formatDocument, type FormatOptions } from "../syntax/format.js";
import type { TextEdit } from "./navigation.js";

/** The edits that format the whole document; none when it is already formatted or has syntax errors. */
export function computeFormatting(text: string, options: FormatOptions = {}): TextEdit[] {
  const result = formatDocument(text, options);
  if (!result || !result.changed) return [];
  return [{ span: { start: 0, end: text.length }, newText: result.text }];
}
