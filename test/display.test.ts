/**
 * The presentation vocabulary (server/src/display.ts): verdicts, figures, power laws and exponents as text.
 * The expected texts are this project's conventions (common practice for short figures: plain decimals in
 * a middle range, exponent notation outside it, a typeset minus in tables), not published values; the
 * exponent fractions are 1/p exactly.
 */
import { describe, expect, it } from "vitest";
import {
  CODE_STYLE,
  escapeMarkup,
  markdownPlainText,
  FIGURE_STYLE,
  fmt,
  formatExponent,
  formatFigure,
  formatNumber,
  formatPowerLaw,
  MESSAGE_STYLE,
  PROSE_STYLE,
  verdictText,
  type NumberStyle,
  type VerdictName,
} from "../server/src/display.js";

describe("verdicts", () => {
  const VERDICTS: [VerdictName, string][] = [
    ["strictly-proper", "strictly proper"],
    ["proper", "proper (not strictly)"],
    ["improper", "improper"],
    ["unknown", "properness unknown"],
  ];
  it.each(VERDICTS)("%s reads %s", (v, text) => {
    expect(verdictText(v)).toBe(text);
  });
});

describe("figures: one formatter, four styles", () => {
  /** [value, style, digits (undefined: the style's), text]. */
  const FIGURES: [number | null | undefined, NumberStyle, number | undefined, string][] = [
    // Engine messages: 6 digits, hyphen-minus, trailing zeros of an exponent mantissa dropped.
    [0, MESSAGE_STYLE, undefined, "0"],
    [-0, MESSAGE_STYLE, undefined, "0"],
    [0.5, MESSAGE_STYLE, undefined, "0.5"],
    [1 / 3, MESSAGE_STYLE, undefined, "0.333333"],
    [-2.5, MESSAGE_STYLE, undefined, "-2.5"],
    [123456.7, MESSAGE_STYLE, undefined, "123457"],
    [999999.7, MESSAGE_STYLE, undefined, "1e6"],
    [1234567, MESSAGE_STYLE, undefined, "1.23457e6"],
    [1e21, MESSAGE_STYLE, undefined, "1e21"],
    [1e-4, MESSAGE_STYLE, undefined, "0.0001"],
    [9.999e-5, MESSAGE_STYLE, undefined, "9.999e-5"],
    [1e-7, MESSAGE_STYLE, undefined, "1e-7"],
    [-2e-9, MESSAGE_STYLE, undefined, "-2e-9"],
    // The smallest subnormal double, 2^−1074 ≈ 4.94066e−324 (IEEE 754 binary64).
    [5e-324, MESSAGE_STYLE, undefined, "4.94066e-324"],
    [Number.MAX_VALUE, MESSAGE_STYLE, undefined, "1.79769e308"],
    [NaN, MESSAGE_STYLE, undefined, "undefined (NaN)"],
    [Infinity, MESSAGE_STYLE, undefined, "∞"],
    [-Infinity, MESSAGE_STYLE, undefined, "-∞"],
    [1 / 3, MESSAGE_STYLE, 3, "0.333"],
    [1234, MESSAGE_STYLE, 3, "1.23e3"],
    // Tables, charts: 4 digits, a true minus, "—" when missing, exponent mantissas of one width.
    [null, FIGURE_STYLE, undefined, "—"],
    [undefined, FIGURE_STYLE, undefined, "—"],
    [NaN, FIGURE_STYLE, undefined, "—"],
    [0.005, FIGURE_STYLE, undefined, "0.005"],
    [5e-5, FIGURE_STYLE, undefined, "5.00e−5"],
    [-5e-5, FIGURE_STYLE, undefined, "−5.00e−5"],
    [-0.25, FIGURE_STYLE, undefined, "−0.25"],
    [2 / 3, FIGURE_STYLE, undefined, "0.6667"],
    [1234.5, FIGURE_STYLE, undefined, "1235"],
    [12345, FIGURE_STYLE, undefined, "1.23e4"],
    [1e300, FIGURE_STYLE, undefined, "1.00e300"],
    [Infinity, FIGURE_STYLE, undefined, "∞"],
    [-Infinity, FIGURE_STYLE, undefined, "−∞"],
    // Log-axis ticks (2 digits): powers of ten.
    [1e-6, FIGURE_STYLE, 2, "1e−6"],
    [1e-4, FIGURE_STYLE, 2, "0.0001"],
    [10, FIGURE_STYLE, 2, "10"],
    [100, FIGURE_STYLE, 2, "1e2"],
    // Hovers and lenses.
    [null, PROSE_STYLE, undefined, "not available"],
    [NaN, PROSE_STYLE, undefined, "not available"],
    [-1.5, PROSE_STYLE, undefined, "−1.5"],
    // Generated-code comments: 10 digits, ASCII.
    [0.3, CODE_STYLE, undefined, "0.3"],
    [1 / 3, CODE_STYLE, undefined, "0.3333333333"],
    [-2.5e-12, CODE_STYLE, undefined, "-2.5e-12"],
    [null, CODE_STYLE, undefined, "not available"],
    [-Infinity, CODE_STYLE, undefined, "-inf"],
  ];
  const NAMES = new Map<NumberStyle, string>([[MESSAGE_STYLE, "message"], [FIGURE_STYLE, "figure"], [PROSE_STYLE, "prose"], [CODE_STYLE, "code"]]);
  for (const [x, style, digits, text] of FIGURES) {
    it(`${String(x)} as a ${NAMES.get(style)} figure${digits === undefined ? "" : ` (${digits} digits)`} reads ${text}`, () => {
      expect(formatNumber(x, digits === undefined ? style : { ...style, digits })).toBe(text);
    });
  }

  it("fmt and formatFigure are the message and figure styles", () => {
    for (const x of [0, 0.5, -2.5, 1 / 3, 1234567, 1e-7, NaN, Infinity]) {
      expect(fmt(x)).toBe(formatNumber(x, MESSAGE_STYLE));
      expect(fmt(x, 4)).toBe(formatNumber(x, { ...MESSAGE_STYLE, digits: 4 }));
      expect(formatFigure(x)).toBe(formatNumber(x, FIGURE_STYLE));
      expect(formatFigure(x, 3, "n/a")).toBe(formatNumber(x, { ...FIGURE_STYLE, digits: 3, missing: "n/a" }));
    }
  });

  it("never prints NaN, undefined or null", () => {
    for (const style of [MESSAGE_STYLE, FIGURE_STYLE, PROSE_STYLE, CODE_STYLE]) {
      for (const x of [NaN, null, undefined]) expect(formatNumber(x, style)).not.toMatch(/^(NaN|undefined|null)$/);
    }
  });
});

describe("power laws c·ε^p", () => {
  const LAWS: [number, number, NumberStyle, string][] = [
    [0.25, 2, PROSE_STYLE, "0.25·ε²"],
    [0.5, 3, { ...MESSAGE_STYLE, digits: 4 }, "0.5·ε³"],
    [0.1, 2.5, FIGURE_STYLE, "0.1·ε^2.5"],
    [0.125, 1 / 3, FIGURE_STYLE, "0.125·ε^0.3333"],
    [0.25, 10, FIGURE_STYLE, "0.25·ε^10"],
    [1.2e-5, 2, FIGURE_STYLE, "1.20e−5·ε²"],
    [-0.5, 2, FIGURE_STYLE, "−0.5·ε²"],
    [0.25, 2, CODE_STYLE, "0.25 * eps^2"],
    [0.0625, 2.5, CODE_STYLE, "0.0625 * eps^2.5"],
  ];
  for (const [c, p, style, text] of LAWS) {
    it(`${c}·ε^${p} reads ${text}`, () => {
      expect(formatPowerLaw(c, p, style)).toBe(text);
    });
  }
});

describe("bound exponents 1/p", () => {
  const EXPONENTS: [number | null, string][] = [
    [2, "½"],
    [3, "⅓"],
    [1, "1"],
    [1.5, "⅔"],
    [4, "¼"],
    [4 / 3, "¾"],
    [2.5, "2/5"],
    [1.25, "4/5"],
    [0.5, "2"],
    [2 + 1e-12, "½"],
    [Math.PI, "0.318"],
    [null, "—"],
    [0, "—"],
    [-1, "—"],
    [Infinity, "—"],
    [NaN, "—"],
  ];
  it.each(EXPONENTS)("power %s gives exponent %s", (p, text) => {
    expect(formatExponent(p)).toBe(text);
  });
});

describe("markup", () => {
  it("escapes the five XML specials", () => {
    expect(escapeMarkup(`<a href="x">'&'</a>`)).toBe("&lt;a href=&quot;x&quot;&gt;&#39;&amp;&#39;&lt;/a&gt;");
  });
});

describe("markdownPlainText (doc comments shown on hover as plain text)", () => {
  it.each([
    ["plain words stay as they are", "Cost of a false alarm (in euros).", "Cost of a false alarm (in euros)."],
    ["a link cannot form", "[click](command:propriety.x)", "\\[click\\](command:propriety.x)"],
    ["an image cannot form", "![x](http://example.invalid/a.png)", "!\\[x\\](http://example.invalid/a.png)"],
    ["HTML is text", "<img src=x onerror=alert(1)>", "\\<img src=x onerror=alert(1)\\>"],
    ["emphasis and code marks are text", "*a* _b_ `c`", "\\*a\\* \\_b\\_ \\`c\\`"],
    ["a heading cannot start a line", "# Title", "\\# Title"],
    ["a list cannot start a line", "- item", "\\- item"],
    ["an ordered list cannot start a line", "1. first", "1\\. first"],
    ["a quote cannot start a line", "> quoted", "\\> quoted"],
    ["each line stays a line (hard breaks), every line terminator", "a\nb\r\nc\u2028d", "a  \nb  \nc  \nd"],
  ])("%s", (_n, input, expected) => {
    expect(markdownPlainText(input)).toBe(expected);
  });
});
