/**
 * The one presentation vocabulary: every surface (engine messages and summaries, hovers, code lenses, the
 * curve viewer, the report, generated-code headers) turns a verdict, a figure, a power law c·ε^p or a
 * bound exponent into text here, plus markup escaping for the report and the drawing code.
 * Imports nothing, like protocol.ts, so the client and the webview bundles may use it.
 */

/** Escapes text for XML/HTML element content and attribute values. */
export function escapeMarkup(s: string): string {
  return s.replace(/[&<>"']/g, (c) => ({ "&": "&amp;", "<": "&lt;", ">": "&gt;", '"': "&quot;", "'": "&#39;" })[c]!);
}

/**
 * User text (a doc comment) shown as plain text inside Markdown: the characters that start links,
 * images, HTML, emphasis, code, tables or math are backslash-escaped anywhere, and a line that would
 * start a heading, quote, list or rule gets its first character escaped (CommonMark 0.31, §2.4: any
 * ASCII punctuation may be escaped). Each source line stays a line (a hard break). Other punctuation is
 * left alone, so editors that show the raw Markdown stay readable.
 */
export function markdownPlainText(s: string): string {
  return s
    .split(/\r\n|\r|\n|\u2028|\u2029/)
    .map((line) => line.replace(/[\\`*_[\]<>&|~$]/g, (c) => `\\${c}`).replace(/^(\s*)([#+\-=])/, "$1\\$2").replace(/^(\s*\d+)([.)])/, "$1\\$2"))
    .join("  \n");
}

// ---------------------------------------------------------------------------------------------------
// Verdicts

/** The engine's properness verdicts (the same union as the analysis and the protocol spell out). */
export type VerdictName = "strictly-proper" | "proper" | "improper" | "unknown";

const VERDICT_TEXT: Record<VerdictName, string> = {
  "strictly-proper": "strictly proper",
  proper: "proper (not strictly)",
  improper: "improper",
  unknown: "properness unknown",
};

/** A verdict in words: "strictly proper", "proper (not strictly)", "improper", "properness unknown". */
export function verdictText(v: VerdictName): string {
  return VERDICT_TEXT[v];
}

// ---------------------------------------------------------------------------------------------------
// Numbers

/** What a figure is written for; `formatNumber` is the one number formatter and these are its settings. */
export interface NumberStyle {
  /** Significant digits. */
  digits: number;
  /** Text for a missing value (null, undefined or NaN). */
  missing: string;
  /** "-" where the text may be read back as a number (messages, code comments); "−" (U+2212) in typeset figures. */
  minus: "-" | "−";
  /**
   * Mantissa in exponent notation: "trim" keeps `digits` significant digits and drops trailing zeros (1e-7);
   * "fixed" keeps `digits` − 1 significant digits, zeros included, so a column of figures keeps one width (5.00e−5).
   */
  mantissa: "trim" | "fixed";
  /** ASCII only (code comments): "inf" for ∞. */
  ascii: boolean;
}

/** Text where a figure is not available (hovers, lenses, generated-code headers). */
export const NOT_AVAILABLE = "not available";

/** Engine messages and notes: 6 digits, never "NaN" without saying so. */
export const MESSAGE_STYLE: NumberStyle = { digits: 6, missing: "undefined (NaN)", minus: "-", mantissa: "trim", ascii: false };
/** Tables, charts, hovers and lenses: 4 digits, "—" for a missing figure, a true minus sign. */
export const FIGURE_STYLE: NumberStyle = { digits: 4, missing: "—", minus: "−", mantissa: "fixed", ascii: false };
/** Figures inside sentences (hovers, code lenses, the status bar): FIGURE_STYLE, with "not available" where there is none. */
export const PROSE_STYLE: NumberStyle = { ...FIGURE_STYLE, missing: NOT_AVAILABLE };
/** Comments of generated code: 10 digits, ASCII. */
export const CODE_STYLE: NumberStyle = { digits: 10, missing: NOT_AVAILABLE, minus: "-", mantissa: "trim", ascii: true };

/**
 * Below this magnitude a figure is written in exponent notation (common practice: plain 0.0001 is still
 * readable, more leading zeros are not). Above, exponent notation starts at 10^digits, where plain notation
 * would pad the figure with zeros that are not significant.
 */
const PLAIN_MIN = 1e-4;

/** The one number formatter: plain decimals for 1e-4 ≤ |x| < 10^digits, exponent notation (1.5e-7) outside. */
export function formatNumber(x: number | null | undefined, style: NumberStyle = FIGURE_STYLE): string {
  if (x === null || x === undefined || Number.isNaN(x)) return style.missing;
  const sign = (s: string) => (style.minus === "-" ? s : s.replace(/-/g, style.minus));
  if (x === Infinity || x === -Infinity) return sign(`${x < 0 ? "-" : ""}${style.ascii ? "inf" : "∞"}`);
  if (x === 0) return "0";
  const digits = Math.max(1, Math.round(style.digits));
  const rounded = Number(x.toPrecision(digits));
  const a = Math.abs(rounded);
  if (a >= PLAIN_MIN && a < 10 ** digits) return sign(String(rounded));
  const [mantissa, exponent] = x.toExponential(style.mantissa === "fixed" ? Math.max(0, digits - 2) : digits - 1).split("e") as [string, string];
  const m = style.mantissa === "trim" && mantissa.includes(".") ? mantissa.replace(/\.?0+$/, "") : mantissa;
  return sign(`${m}e${exponent.replace("+", "")}`);
}

/** A number in an engine message or note (MESSAGE_STYLE with `digits` significant digits). */
export function fmt(x: number, digits = MESSAGE_STYLE.digits): string {
  return formatNumber(x, digits === MESSAGE_STYLE.digits ? MESSAGE_STYLE : { ...MESSAGE_STYLE, digits });
}

/** A figure in a table, chart label, hover or lens (FIGURE_STYLE with `digits` significant digits and the given text for a missing figure). */
export function formatFigure(x: number | null | undefined, digits = FIGURE_STYLE.digits, missing = FIGURE_STYLE.missing): string {
  return formatNumber(x, { ...FIGURE_STYLE, digits, missing });
}

// ---------------------------------------------------------------------------------------------------
// Power laws and exponents

const SUPERSCRIPTS = "⁰¹²³⁴⁵⁶⁷⁸⁹";

/** A power law c·ε^p: "0.25·ε²" (superscripts for the powers 0–9), "0.25·ε^2.5"; in ASCII styles "0.25 * eps^2". */
export function formatPowerLaw(coefficient: number, power: number, style: NumberStyle = FIGURE_STYLE): string {
  const c = formatNumber(coefficient, style);
  if (style.ascii) return `${c} * eps^${formatNumber(power, style)}`;
  const p = Number.isInteger(power) && power >= 0 && power < 10 ? SUPERSCRIPTS[power]! : `^${formatNumber(power, style)}`;
  return `${c}·ε${p}`;
}

const FRACTIONS: Record<string, string> = { "1/2": "½", "1/3": "⅓", "2/3": "⅔", "1/4": "¼", "3/4": "¾", "1/5": "⅕", "1/6": "⅙", "1/8": "⅛" };

/** How far a power may be from a rational with denominator ≤ 4 and still be printed as that fraction (a few ulps of a fitted power). */
const FRACTION_TOL = 1e-9;

/**
 * A bound exponent 1/p from the power p of δ(ε) ≈ c·ε^p: a short fraction when p is rational with a small
 * denominator ("½", "⅓", "2/5", "1"), else 3 digits; "—" when there is no positive power.
 */
export function formatExponent(power: number | null): string {
  if (power === null || !Number.isFinite(power) || power <= 0) return "—";
  for (let d = 1; d <= 4; d++) {
    const num = Math.round(power * d);
    if (num > 0 && Math.abs(num / d - power) <= FRACTION_TOL) {
      // The exponent 1/p = d/num, reduced.
      const g = gcd(d, num);
      const key = `${d / g}/${num / g}`;
      return num / g === 1 ? String(d / g) : FRACTIONS[key] ?? key;
    }
  }
  return fmt(1 / power, 3);
}

function gcd(a: number, b: number): number {
  return b === 0 ? a : gcd(b, a % b);
}
