/**
 * `renderReport(docs, options)`: one self-contained HTML page for a set of analysed documents — every
 * loss's verdict, λ, modulus coefficient and power, both bound exponents, the inverse table, notes, and
 * the curves. The curves are drawn in the page by the viewer's own drawing code (the report-page
 * bundle, passed in as text) from data inlined as JSON; the page loads nothing from the network and
 * carries a strict Content-Security-Policy whose nonce admits only its own script and style.
 *
 * Pure: the caller reads the bundle and the stylesheet and writes the file.
 */
import type { CurvesResult, LossCurves } from "../protocol.js";
import { computeCurves } from "./curves.js";
import type { DocumentAnalysis, LossReport } from "../pipeline/stages.js";
import { escapeMarkup as escapeHtml, formatFigure, verdictText } from "../display.js";

export interface ReportOptions {
  /** Text of dist/report-page.js (the page script, drawing with client/media/draw.ts). */
  script: string;
  /** Text of dist/viewer.css (shared with the webview). */
  css: string;
  /** CSP nonce; a deterministic one derived from the content when absent. */
  nonce?: string;
  title?: string;
  /** Shown in the header, e.g. an ISO time stamp (the caller supplies it: this module reads no clock). */
  generatedAt?: string;
  /** Tool name and version for the footer. */
  generator?: string;
  /** η of the conditional-risk charts (default 0.7: far enough from ½ that a biased minimiser shows). */
  eta?: number;
  /** Samples per curve. */
  points?: number;
}

/** The caution paragraph of every report (the scenario's safety note, in general terms). */
export const REPORT_CAUTION =
  "Read these figures as design aids, not guarantees. A verdict and a regret bound are statements about expected risk under the " +
  "modelling assumptions — the loss exactly as written, the parameter values shown, and a model able to reach the minimiser of the " +
  "conditional risk. They say nothing about a particular trained model or a particular day. Where decisions affect people's safety, " +
  "as flood alerts do, validate calibration and alert quality on held-out events and follow the rules of the responsible " +
  "emergency-management authority.";

const DEFAULT_REPORT_ETA = 0.7;

/** A 32-bit FNV-1a hash as 8 hex digits (for the deterministic default nonce). */
function fnv1a(parts: string[]): string {
  let h = 0x811c9dc5;
  for (const p of parts) {
    for (let i = 0; i < p.length; i++) {
      h ^= p.charCodeAt(i);
      h = Math.imul(h, 0x01000193) >>> 0;
    }
  }
  return h.toString(16).padStart(8, "0");
}

/** Text safe inside a <script> element: no closing tag, no HTML comment openers. */
function scriptSafe(text: string): string {
  return text.replace(/<\/(script)/gi, "<\\/$1").replace(/<!--/g, "<\\!--");
}

/** JSON safe inside <script type="application/json">: `<` escaped, so no tag can close it. */
function jsonSafe(value: unknown): string {
  return JSON.stringify(value).replace(/</g, "\\u003c").replace(/\u2028/g, "\\u2028").replace(/\u2029/g, "\\u2029");
}

/** The figures of one loss: the document's analysis where it decided, else the curves' (same defaults). */
function figuresOf(report: LossReport | undefined, c: LossCurves) {
  const a = report?.analysis && report.analysis.verdict !== "unknown" ? report.analysis : null;
  return {
    lambda: a ? a.lambda : (c.figures?.lambda ?? null),
    modulus: a ? a.modulus : (c.figures?.modulus ?? null),
    exponents: a ? a.exponents : (c.figures?.exponents ?? { viaModulus: null, direct: null }),
    table: a?.boundTable ?? c.figures?.inverseTable ?? [],
    exponentNote: a?.exponentNote ?? c.figures?.exponentNote ?? null,
    counterexample: a?.counterexample ?? null,
    paramReport: a?.paramReport ?? null,
    units: c.figures?.units ?? null,
  };
}

function overviewTable(curves: CurvesResult, doc: DocumentAnalysis): string {
  const rows = curves.losses.map((c) => {
    const f = figuresOf(
      doc.losses.find((l) => l.info.name === c.loss),
      c,
    );
    return (
      `<tr data-loss="${escapeHtml(c.loss)}"><td><code>${escapeHtml(c.loss)}</code></td><td class="verdict-${c.verdict}">${escapeHtml(verdictText(c.verdict))}</td>` +
      `<td class="num">${formatFigure(f.lambda)}</td><td class="num">${formatFigure(f.modulus?.coefficient)}</td><td class="num">${formatFigure(f.modulus?.power)}</td>` +
      `<td class="num">${formatFigure(f.exponents.viaModulus, 3)}</td><td class="num">${formatFigure(f.exponents.direct, 3)}</td><td class="num">${formatFigure(c.threshold, 3)}</td>` +
      `<td>${escapeHtml(c.params.map((p) => `${p.name} = ${formatFigure(p.value)}`).join(", ") || "—")}</td></tr>`
    );
  });
  const skipped = curves.skipped.map((s) => `<tr data-loss="${escapeHtml(s.loss)}"><td><code>${escapeHtml(s.loss)}</code></td><td class="verdict-unknown" colspan="8">not analysed: ${escapeHtml(s.reason)}</td></tr>`);
  return (
    `<table class="figures overview"><thead><tr><th>loss</th><th>verdict</th><th>λ</th><th>modulus coefficient</th><th>modulus power</th>` +
    `<th>exponent (modulus route)</th><th>exponent (direct route)</th><th>threshold c</th><th>parameters</th></tr></thead><tbody>${rows.join("")}${skipped.join("")}</tbody></table>`
  );
}

function inverseTable(rows: ReturnType<typeof figuresOf>["table"]): string {
  if (rows.length === 0) return `<p class="muted">No inverse table: no route gives a regret guarantee for this loss.</p>`;
  const hasPsi = rows.some((r) => r.psiTransform !== null);
  const body = rows
    .map(
      (r) =>
        `<tr><td class="num">${formatFigure(r.decisionRegret)}</td><td class="num">${formatFigure(r.viaModulus)}</td><td class="num">${formatFigure(r.direct)}</td>${hasPsi ? `<td class="num">${formatFigure(r.psiTransform)}</td>` : ""}</tr>`,
    )
    .join("");
  return (
    `<table class="figures inverse"><thead><tr><th>decision regret ≤</th><th>surrogate regret needed (modulus route)</th><th>(direct route)</th>${hasPsi ? "<th>(ψ-transform)</th>" : ""}</tr></thead>` +
    `<tbody>${body}</tbody></table>`
  );
}

function lossSection(fi: number, li: number, c: LossCurves, doc: DocumentAnalysis): string {
  const report = doc.losses.find((l) => l.info.name === c.loss);
  const f = figuresOf(report, c);
  const parts: string[] = [];
  parts.push(`<section class="loss" id="loss-${fi}-${li}" data-loss="${escapeHtml(c.loss)}"><h3><code>${escapeHtml(c.loss)}</code> — <span class="verdict-${c.verdict}">${escapeHtml(verdictText(c.verdict))}</span></h3>`);
  parts.push(`<p>${escapeHtml(c.summary)}</p>`);
  if (f.counterexample) {
    const ce = f.counterexample;
    parts.push(`<p>Counterexample: at η = ${formatFigure(ce.eta)}, predicting q = ${formatFigure(ce.q)} has conditional risk ${formatFigure(ce.riskAtQ, 6)} &lt; ${formatFigure(ce.riskAtEta, 6)} at q = η.</p>`);
  }
  if (f.paramReport) parts.push(`<p>Across the declared parameter ranges: ${escapeHtml(f.paramReport)}.</p>`);
  if (c.verdict !== "improper") {
    parts.push(`<h4>Surrogate regret needed for a decision regret</h4>`);
    parts.push(inverseTable(f.table));
    if (f.units) parts.push(`<p class="muted">Decision regret: ${escapeHtml(f.units.decisionRegret)}. Surrogate regret: ${escapeHtml(f.units.surrogateRegret)}.</p>`);
    if (f.exponentNote) parts.push(`<p class="muted">${escapeHtml(f.exponentNote)}</p>`);
  }
  parts.push(`<div class="charts" data-loss-charts="${fi}:${li}" data-only="conditional,minimiser,weight"></div>`);
  if (c.notes.length > 0) parts.push(`<details><summary>Notes (${c.notes.length})</summary><ul class="notes">${c.notes.map((n) => `<li>${escapeHtml(n)}</li>`).join("")}</ul></details>`);
  parts.push(`</section>`);
  return parts.join("");
}

/**
 * Renders the report page. `docs` are analysed documents with the file names to show; the curves are
 * sampled here with `computeCurves` at the losses' defaults.
 */
export function renderReport(docs: { file: string; doc: DocumentAnalysis }[], options: ReportOptions): string {
  const eta = options.eta ?? DEFAULT_REPORT_ETA;
  const files = docs.map(({ file, doc }) => ({ file, doc, curves: computeCurves(doc, { uri: file, points: options.points, etas: undefined }) }));
  const data = { eta, files: files.map(({ file, curves }) => ({ file, curves })) };
  const json = jsonSafe(data);
  const script = scriptSafe(options.script);
  const css = options.css.replace(/<\/(style)/gi, "<\\/$1");
  const nonce = options.nonce ?? `r${fnv1a([json, script, css])}`;
  const title = options.title ?? "Loss report";
  const csp = `default-src 'none'; script-src 'nonce-${nonce}'; style-src 'nonce-${nonce}'; img-src data:; font-src 'none'; connect-src 'none'; base-uri 'none'; form-action 'none'`;

  const body: string[] = [];
  body.push(`<header><h1>${escapeHtml(title)}</h1>`);
  const count = files.reduce((n, f) => n + f.curves.losses.length + f.curves.skipped.length, 0);
  body.push(
    `<p class="muted">${count} loss${count === 1 ? "" : "es"} in ${files.length} file${files.length === 1 ? "" : "s"}${options.generatedAt ? ` · generated ${escapeHtml(options.generatedAt)}` : ""}${options.generator ? ` by ${escapeHtml(options.generator)}` : ""}. Conditional-risk charts at η = ${formatFigure(eta, 3)}.</p>`,
  );
  body.push(`<p class="caution"><strong>Caution.</strong> ${escapeHtml(REPORT_CAUTION)}</p></header>`);
  files.forEach(({ file, doc, curves }, fi) => {
    const errors = doc.issues.filter((i) => i.severity === "error").length;
    const warnings = doc.issues.filter((i) => i.severity === "warning").length;
    body.push(`<section class="file" data-file="${escapeHtml(file)}"><h2>${escapeHtml(file)}</h2>`);
    body.push(`<p class="muted">${errors} error${errors === 1 ? "" : "s"}, ${warnings} warning${warnings === 1 ? "" : "s"} in the diagnostics of this file.</p>`);
    body.push(overviewTable(curves, doc));
    body.push(`<h3>All losses overlaid</h3><div class="legend" data-legend="${fi}" role="group" aria-label="Losses shown"></div>`);
    body.push(`<div class="charts" data-overlay="${fi}"></div>`);
    curves.losses.forEach((c, li) => body.push(lossSection(fi, li, c, doc)));
    body.push(`</section>`);
  });
  body.push(`<noscript><p>The charts need JavaScript; the tables above are complete without it.</p></noscript>`);

  return [
    `<!DOCTYPE html>`,
    `<html lang="en"><head><meta charset="utf-8">`,
    `<meta http-equiv="Content-Security-Policy" content="${escapeHtml(csp)}">`,
    `<meta name="viewport" content="width=device-width, initial-scale=1">`,
    `<title>${escapeHtml(title)}</title>`,
    `<style nonce="${nonce}">${css}\ntable.figures.overview td:first-child { white-space: nowrap; }\nh4 { margin: 0.8em 0 0.2em; font-size: 1em; }</style>`,
    `</head><body class="standalone">`,
    body.join("\n"),
    `<script type="application/json" id="report-data" nonce="${nonce}">${json}</script>`,
    `<script nonce="${nonce}">${script}</script>`,
    `</body></html>`,
    ``,
  ].join("\n");
}
