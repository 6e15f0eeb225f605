/**
 * Display helpers shared by the report page (server side) and the drawing code (webview and report page):
 * markup escaping and short number formatting. Pure and dependency-free, like protocol.ts.
 */

/** Escapes text for XML/HTML element content and attribute values. */
export function escapeMarkup(s: string): string {
  return s.replace(/[&<>"']/g, (c) => ({ "&": "&amp;", "<": "&lt;", ">": "&gt;", '"': "&quot;", "'": "&#39;" })[c]!);
}

/** Short number formatting for labels and tables: `digits` significant digits, "—" for missing, a true minus sign. */
export function formatFigure(x: number | null | undefined, digits = 4): string {
  if (x === null || x === undefined || Number.isNaN(x)) return "—";
  if (x === Infinity) return "∞";
  if (x === -Infinity) return "−∞";
  if (x === 0) return "0";
  const a = Math.abs(x);
  const s = a >= 1e-3 && a < 1e5 ? String(Number(x.toPrecision(digits))) : x.toExponential(Math.max(0, digits - 2)).replace("e+", "e");
  return s.replace("-", "−");
}

/** Formats a number for messages: short, never "NaN" without saying so. */
export function fmt(x: number, digits = 6): string {
  if (Number.isNaN(x)) return "undefined (NaN)";
  if (x === Infinity) return "∞";
  if (x === -Infinity) return "−∞";
  if (x === 0) return "0";
  const a = Math.abs(x);
  if (a >= 1e-4 && a < 1e6) return String(Number(x.toPrecision(digits)));
  return x.toExponential(Math.max(0, digits - 1)).replace("e+", "e");
}
