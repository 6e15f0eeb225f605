/**
 * `LineIndex`: UTF-16 offsets ↔ 0-based line/character positions, as LSP counts them. LF, CRLF and a
 * lone CR each end a line (LSP 3.17 specification, "Text Documents": "\n", "\r\n" and "\r" are line
 * endings); positions past a line's end clamp to it.
 */
import { describe, expect, it } from "vitest";
import { LineIndex } from "../../server/src/products/text-position.js";

/** Reference conversion written independently: split on the three line endings and count. */
function referencePositions(text: string): { line: number; character: number }[] {
  const out: { line: number; character: number }[] = [];
  let line = 0;
  let character = 0;
  for (let i = 0; i <= text.length; i++) {
    out.push({ line, character });
    const ch = text[i];
    if (ch === "\r" && text[i + 1] === "\n") {
      // The offset between CR and LF still belongs to the line being ended.
      out.push({ line, character: character + 1 });
      i++;
      line++;
      character = 0;
    } else if (ch === "\n" || ch === "\r") {
      line++;
      character = 0;
    } else {
      character++;
    }
  }
  return out;
}

const TEXTS: [string, string][] = [
  ["LF", "param a = 1\nloss x {\n  margin(v) = v\n}\n"],
  ["CRLF", "param a = 1\r\nloss x {\r\n  margin(v) = v\r\n}\r\n"],
  ["lone CR", "param a = 1\rloss x {\r  margin(v) = v\r}\r"],
  ["mixed", "a\nbb\r\nccc\rdddd\n\r\n\r\rz"],
  ["no final newline", "abc\ndef"],
  ["empty", ""],
  ["non-BMP and non-ASCII", "param α = 1 # 𝛼 is two UTF-16 units\nloss é {\r\n}"],
];

describe("LineIndex", () => {
  for (const [name, text] of TEXTS) {
    it(`converts every offset of a ${name} text like the reference`, () => {
      const idx = new LineIndex(text);
      const ref = referencePositions(text);
      for (let o = 0; o <= text.length; o++) expect(idx.positionAt(o), `offset ${o}`).toEqual(ref[o]);
      expect(idx.lineCount).toBe(ref[text.length]!.line + 1);
    });

    it(`round-trips offsets through positions in a ${name} text`, () => {
      const idx = new LineIndex(text);
      for (let o = 0; o <= text.length; o++) {
        // The offset between the CR and the LF of one line break is no place in the line's text: LSP clamps
        // a position there to the line's end, so it alone maps back one unit earlier.
        const insideCrlf = text[o - 1] === "\r" && text[o] === "\n";
        expect(idx.offsetAt(idx.positionAt(o)), `offset ${o}`).toBe(insideCrlf ? o - 1 : o);
      }
    });
  }

  it("counts LF, CRLF and lone CR as one line ending each", () => {
    const idx = new LineIndex("a\nb\r\nc\rd");
    expect(idx.lineCount).toBe(4);
    expect(idx.positionAt(7)).toEqual({ line: 3, character: 0 });
    expect(idx.offsetAt({ line: 2, character: 0 })).toBe(5);
    expect(idx.offsetAt({ line: 3, character: 0 })).toBe(7);
  });

  it("counts characters in UTF-16 code units", () => {
    const text = "𝛼 = 1\nx";
    const idx = new LineIndex(text);
    // The mathematical alpha is a surrogate pair, so `=` is at character 3.
    expect(idx.positionAt(text.indexOf("="))).toEqual({ line: 0, character: 3 });
  });

  it("clamps out-of-range offsets and positions", () => {
    const text = "ab\ncd";
    const idx = new LineIndex(text);
    expect(idx.positionAt(-5)).toEqual({ line: 0, character: 0 });
    expect(idx.positionAt(99)).toEqual({ line: 1, character: 2 });
    expect(idx.offsetAt({ line: -1, character: 0 })).toBe(0);
    expect(idx.offsetAt({ line: 7, character: 0 })).toBe(text.length);
    expect(idx.offsetAt({ line: 0, character: -3 })).toBe(0);
    // A character past the end of line 0 clamps to that line's end, not into the next line (LSP 3.17,
    // "Position": "If the character value is greater than the line length it defaults back to the line length").
    expect(idx.offsetAt({ line: 0, character: 50 })).toBe(2);
    expect(new LineIndex("ab\r\ncd").offsetAt({ line: 0, character: 50 })).toBe(2);
    expect(new LineIndex("ab\rcd").offsetAt({ line: 0, character: 3 })).toBe(2);
    expect(idx.offsetAt({ line: 1, character: 50 })).toBe(text.length);
  });
});
