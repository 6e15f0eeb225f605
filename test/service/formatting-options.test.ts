/**
 * Formatting honours the editor's LSP `FormattingOptions` (tabSize, insertSpaces) over the
 * `propriety.format.indent` setting, which applies when the editor sends neither.
 */
import { describe, expect, it } from "vitest";
import { createLanguageService } from "../../server/src/service/language-service.js";

const TEXT = "loss brier {\nl1(q) = (1 - q)^2\nl0(q) = q^2\n}\n";
const body = (edits: { newText: string }[]) => edits[0]!.newText.split("\n")[1];

describe("format options", () => {
  const rows: [string, { tabSize?: number; insertSpaces?: boolean }, number, string][] = [
    ["the setting when the editor sends nothing", {}, 3, "   l1(q) = (1 - q)^2"],
    ["the editor's tab size with spaces", { tabSize: 4, insertSpaces: true }, 2, "    l1(q) = (1 - q)^2"],
    ["a tab per level when the editor asks for tabs", { tabSize: 4, insertSpaces: false }, 2, "\tl1(q) = (1 - q)^2"],
    ["the setting when the tab size is out of range", { tabSize: 40, insertSpaces: true }, 2, "  l1(q) = (1 - q)^2"],
  ];
  it.each(rows)("%s", (_, options, indent, line) => {
    const service = createLanguageService({ indent });
    expect(body(service.format(TEXT, options))).toBe(line);
  });
});
