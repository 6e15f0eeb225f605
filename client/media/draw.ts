/**
 * The drawing code shared by the curve viewer webview and the HTML report: it turns the sampled curves
 * of `protocol.ts` into chart specifications (`buildChartSpecs`) and those into SVG markup
 * (`renderChartSvg`). It computes nothing about the losses — every number drawn was sampled by the
 * service — it only places points on axes, picks the sampled η nearest to the slider, and unions the
 * suggested axis ranges of the losses overlaid.
 *
 * The SVG uses classes (no inline styles), so it works under a strict Content-Security-Policy; colours
 * come from viewer.css, which follows the VS Code theme through CSS variables with fallbacks.
 */
import { scaleLinear, scaleLog, type ContinuousScale } from "d3-scale";
import type { LossCurves, SeriesData } from "../../server/src/protocol.js";
import { escapeMarkup as escapeXml, formatFigure } from "../../server/src/display.js";

/** Number of distinct series colours in viewer.css (classes c0…c7); losses beyond cycle with dashes. */
export const COLOUR_COUNT = 8;
/** Number of dash patterns in viewer.css (classes d0…d3). */
export const DASH_COUNT = 4;

export interface ChartLine {
  loss: string;
  id: string;
  label: string;
  colour: number;
  dash: number;
  x: number[];
  y: (number | null)[];
}

export interface ChartMarker {
  loss: string;
  x: number;
  y: number;
  colour: number;
  label: string;
}

/** A vertical (x) or horizontal (y) reference line. */
export interface ChartRule {
  axis: "x" | "y";
  value: number;
  colour: number | null;
  label: string;
}

export interface ChartSpec {
  id: string;
  title: string;
  xLabel: string;
  yLabel: string;
  xScale: "linear" | "log";
  yScale: "linear" | "log";
  xDomain?: [number, number];
  yDomain?: [number, number];
  lines: ChartLine[];
  markers: ChartMarker[];
  rules: ChartRule[];
  /** Draw the diagonal y = x (minimiser chart). */
  diagonal?: boolean;
  /** Legend of line styles: what each dash pattern means in this chart. */
  styles: { dash: number; label: string }[];
  /** Shown instead of curves when there is nothing to draw. */
  empty?: string;
}

/** What the user chose to look at (persisted by the viewer with setState). */
export interface ViewState {
  /** η of the conditional-risk chart; the nearest sampled η is drawn. */
  eta: number;
  /** Losses switched off in the legend. */
  hidden: string[];
}

export interface ChartSize {
  width: number;
  height: number;
}

export const DEFAULT_SIZE: ChartSize = { width: 460, height: 290 };

const MARGIN = { top: 40, right: 14, bottom: 44, left: 62 };
/** Rough width of a legend character at 10px (placement only; no text measuring in a pure function). */
const LEGEND_CHAR_PX = 5.6;
/** Pixel coordinates are clamped to this (an unbounded curve must not produce absurd path numbers). */
const PIXEL_LIMIT = 1e5;

/** Markup escaping, shared with the server-side report (one implementation in display.ts). */
export { escapeMarkup as escapeXml } from "../../server/src/display.js";

/** The index of the sampled η nearest to `eta` (ties to the lower one). */
export function nearestEtaIndex(etas: number[], eta: number): number {
  let best = 0;
  for (let i = 1; i < etas.length; i++) if (Math.abs(etas[i]! - eta) < Math.abs(etas[best]! - eta)) best = i;
  return best;
}

/** The chart ids in display order. */
export const CHART_IDS = ["partials", "conditional", "minimiser", "bayes", "weight", "modulus", "bounds", "link"] as const;
export type ChartId = (typeof CHART_IDS)[number];

/**
 * Builds the chart specifications for the visible losses: each loss keeps its colour (its index in
 * `losses`), so toggling one off does not recolour the others.
 */
export function buildChartSpecs(losses: LossCurves[], view: ViewState, only?: readonly ChartId[]): ChartSpec[] {
  const hidden = new Set(view.hidden);
  const visible = losses.map((l, i) => ({ l, colour: i })).filter(({ l }) => !hidden.has(l.loss));
  const want = new Set<ChartId>(only ?? CHART_IDS);
  const specs: ChartSpec[] = [];
  const line = (loss: string, colour: number, dash: number, s: SeriesData, label = s.label): ChartLine => ({
    loss,
    id: s.id,
    label: `${loss}: ${label}`,
    colour: colour % COLOUR_COUNT,
    dash: (dash + Math.floor(colour / COLOUR_COUNT)) % DASH_COUNT,
    x: s.x,
    y: s.y,
  });
  const unionRange = (key: string): [number, number] | undefined => {
    let lo = Infinity;
    let hi = -Infinity;
    for (const { l } of visible) {
      const r = l.ranges?.[key];
      if (!r) continue;
      lo = Math.min(lo, r[0]);
      hi = Math.max(hi, r[1]);
    }
    return lo < hi ? [lo, hi] : lo === hi && Number.isFinite(lo) ? [lo - 0.5 * (Math.abs(lo) || 1), hi + 0.5 * (Math.abs(hi) || 1)] : undefined;
  };
  const probabilityAxis = "q (predicted probability)";
  const none = visible.length === 0 ? "no loss selected" : undefined;

  if (want.has("partials")) {
    specs.push({
      id: "partials",
      title: "Partial losses",
      xLabel: probabilityAxis,
      yLabel: "loss (units of the loss)",
      xScale: "linear",
      yScale: "linear",
      xDomain: [0, 1],
      yDomain: unionRange("partials"),
      lines: visible.flatMap(({ l, colour }) => l.partials.map((s, k) => line(l.loss, colour, k, s))),
      markers: [],
      rules: [],
      styles: [
        { dash: 0, label: "ℓ₁(q), y = 1" },
        { dash: 1, label: "ℓ₀(q), y = 0" },
      ],
      empty: none,
    });
  }
  if (want.has("conditional") || want.has("minimiser")) {
    const lines: ChartLine[] = [];
    const markers: ChartMarker[] = [];
    let etaShown: number | null = null;
    for (const { l, colour } of visible) {
      if (l.conditionalRisk.length === 0) continue;
      const k = nearestEtaIndex(
        l.conditionalRisk.map((c) => c.eta),
        view.eta,
      );
      const c = l.conditionalRisk[k]!;
      etaShown = c.eta;
      lines.push(line(l.loss, colour, 0, c.series));
      if (Number.isFinite(c.minimiser) && typeof c.minimumRisk === "number") {
        markers.push({ loss: l.loss, x: c.minimiser, y: c.minimumRisk, colour: colour % COLOUR_COUNT, label: `${l.loss}: minimiser q* = ${formatFigure(c.minimiser)}` });
      }
    }
    if (want.has("conditional")) {
      specs.push({
        id: "conditional",
        title: etaShown === null ? "Conditional risk" : `Conditional risk at η = ${formatFigure(etaShown, 3)}`,
        xLabel: probabilityAxis,
        yLabel: "L(η, q) (units of the loss)",
        xScale: "linear",
        yScale: "linear",
        xDomain: [0, 1],
        yDomain: unionRange("conditional"),
        lines,
        markers,
        rules: etaShown === null ? [] : [{ axis: "x", value: etaShown, colour: null, label: `η = ${formatFigure(etaShown, 3)}` }],
        styles: [{ dash: 0, label: "L(η, q) — dot: its minimiser q*, dashed rule: q = η" }],
        empty: none,
      });
    }
    if (want.has("minimiser")) {
      const mLines = visible.flatMap(({ l, colour }) => (l.minimiser ? [line(l.loss, colour, 0, l.minimiser)] : []));
      const mMarkers = markers.map((m) => ({ ...m, x: etaShown ?? m.x, y: m.x, label: `${m.loss}: q*(${formatFigure(etaShown, 3)}) = ${formatFigure(m.x)}` }));
      specs.push({
        id: "minimiser",
        title: "Minimiser of the conditional risk",
        xLabel: "η (true probability)",
        yLabel: "q*(η) (predicted probability)",
        xScale: "linear",
        yScale: "linear",
        xDomain: [0, 1],
        yDomain: [0, 1],
        lines: mLines,
        markers: mMarkers,
        rules: [],
        diagonal: true,
        styles: [{ dash: 0, label: "q*(η) — dotted diagonal: q* = η (proper)" }],
        empty: none,
      });
    }
  }
  if (want.has("bayes")) {
    specs.push({
      id: "bayes",
      title: "Bayes risk",
      xLabel: "η (true probability)",
      yLabel: "H(η) (units of the loss)",
      xScale: "linear",
      yScale: "linear",
      xDomain: [0, 1],
      yDomain: unionRange("bayes"),
      lines: visible.flatMap(({ l, colour }) => (l.bayes ? [line(l.loss, colour, 0, l.bayes)] : [])),
      markers: [],
      rules: [],
      styles: [{ dash: 0, label: "H(η) = min over q of L(η, q)" }],
      empty: none,
    });
  }
  if (want.has("weight")) {
    const lines = visible.flatMap(({ l, colour }) => (l.weight ? [line(l.loss, colour, 0, l.weight)] : []));
    const thresholds = [...new Set(visible.map(({ l }) => l.threshold))];
    specs.push({
      id: "weight",
      title: "Weight function",
      xLabel: probabilityAxis,
      yLabel: "w(q) = −H″(q) (loss units)",
      xScale: "linear",
      yScale: "linear",
      xDomain: [0, 1],
      yDomain: unionRange("weight"),
      lines,
      markers: [],
      rules: thresholds.map((c) => ({ axis: "x" as const, value: c, colour: null, label: `c = ${formatFigure(c, 3)}` })),
      styles: [{ dash: 0, label: "w(q) — dashed rule: decision threshold c" }],
      empty: none ?? (lines.length === 0 ? "no weight curve (improper or not available)" : undefined),
    });
  }
  if (want.has("modulus")) {
    const lines = visible.flatMap(({ l, colour }) => l.modulus.map((s, k) => line(l.loss, colour, k, s)));
    specs.push({
      id: "modulus",
      title: "Modulus of convexity of −H",
      xLabel: "ε = |η − q| (log scale)",
      yLabel: "δ(ε) (loss units, log scale)",
      xScale: "log",
      yScale: "log",
      lines,
      markers: [],
      rules: [],
      styles: [
        { dash: 0, label: "δ(ε)" },
        { dash: 1, label: "δ**(ε)" },
      ],
      empty: none ?? (lines.length === 0 ? "no modulus curve (improper or not available)" : undefined),
    });
  }
  if (want.has("bounds")) {
    const lines = visible.flatMap(({ l, colour }) => l.bounds.map((s, k) => line(l.loss, colour, k, s)));
    specs.push({
      id: "bounds",
      title: "Surrogate-regret bounds",
      xLabel: "surrogate regret (units of the loss, log scale)",
      yLabel: "decision-regret bound (cost-c units, log)",
      xScale: "log",
      yScale: "log",
      lines,
      markers: [],
      rules: [],
      styles: [
        { dash: 0, label: "modulus route" },
        { dash: 1, label: "direct route at c" },
        { dash: 2, label: "ψ-transform (c = ½)" },
      ],
      empty: none ?? (lines.length === 0 ? "no bound (improper or not available)" : undefined),
    });
  }
  if (want.has("link") && visible.some(({ l }) => l.link)) {
    specs.push({
      id: "link",
      title: "Link",
      xLabel: probabilityAxis,
      yLabel: "score v = ψ(q)",
      xScale: "linear",
      yScale: "linear",
      xDomain: [0, 1],
      yDomain: unionRange("link"),
      lines: visible.flatMap(({ l, colour }) => (l.link ? [line(l.loss, colour, 0, l.link)] : [])),
      markers: [],
      rules: [],
      styles: [{ dash: 0, label: "ψ(q)" }],
    });
  }
  return specs;
}

/** The extent of the drawable values of the lines on one axis (positive values only on a log axis). */
function extentOf(values: Iterable<number | null>, log: boolean): [number, number] | null {
  let lo = Infinity;
  let hi = -Infinity;
  for (const v of values) {
    if (typeof v !== "number" || !Number.isFinite(v) || (log && v <= 0)) continue;
    if (v < lo) lo = v;
    if (v > hi) hi = v;
  }
  return lo <= hi ? [lo, hi] : null;
}

function* allX(lines: ChartLine[]): Iterable<number> {
  for (const l of lines) yield* l.x;
}
function* allY(lines: ChartLine[]): Iterable<number | null> {
  for (const l of lines) yield* l.y;
}

function makeScale(kind: "linear" | "log", domain: [number, number], range: [number, number]): ContinuousScale {
  let [a, b] = domain;
  if (kind === "log") {
    if (!(a > 0)) a = b > 0 ? b / 1000 : 1e-3;
    if (!(b > a)) b = a * 10;
    return scaleLog().domain([a, b]).range(range).nice();
  }
  if (!(b > a)) {
    const pad = Math.abs(a) > 0 ? Math.abs(a) * 0.5 : 0.5;
    a -= pad;
    b += pad;
  }
  return scaleLinear().domain([a, b]).range(range).nice(6);
}

/** At most about `max` tick values (a log scale over many decades would otherwise label every digit). */
function tickValues(scale: ContinuousScale, kind: "linear" | "log", max: number): number[] {
  if (kind === "linear") return scale.ticks(max);
  const all = scale.ticks();
  const powers = all.filter((t) => Math.abs(Math.log10(t) - Math.round(Math.log10(t))) < 1e-9);
  if (all.length <= max) return all;
  if (powers.length <= max) return powers;
  const step = Math.ceil(powers.length / max);
  return powers.filter((_, i) => i % step === 0);
}

function clampPixel(p: number): number {
  return Math.max(-PIXEL_LIMIT, Math.min(PIXEL_LIMIT, p));
}

/** SVG path data for one line; a null sample (or a non-positive one on a log axis) breaks the line. */
export function linePath(line: ChartLine, sx: ContinuousScale, sy: ContinuousScale, xLog: boolean, yLog: boolean): { d: string; segments: number } {
  let d = "";
  let pen = false;
  let segments = 0;
  const n = Math.min(line.x.length, line.y.length);
  for (let i = 0; i < n; i++) {
    const x = line.x[i]!;
    const y = line.y[i];
    const ok = typeof y === "number" && Number.isFinite(y) && Number.isFinite(x) && !(xLog && x <= 0) && !(yLog && y <= 0);
    if (!ok) {
      pen = false;
      continue;
    }
    const px = clampPixel(sx(x)).toFixed(1);
    const py = clampPixel(sy(y)).toFixed(1);
    if (!pen) segments++;
    d += `${pen ? "L" : "M"}${px},${py}`;
    pen = true;
  }
  return { d, segments };
}

/** Renders one chart as an SVG element (markup). Deterministic: the same spec gives the same text. */
export function renderChartSvg(spec: ChartSpec, size: ChartSize = DEFAULT_SIZE, uid = ""): string {
  const { width, height } = size;
  const x0 = MARGIN.left;
  const x1 = width - MARGIN.right;
  const y0 = height - MARGIN.bottom;
  const y1 = MARGIN.top;
  const xLog = spec.xScale === "log";
  const yLog = spec.yScale === "log";
  const xd = spec.xDomain ?? extentOf(allX(spec.lines), xLog) ?? (xLog ? [1e-3, 1] : [0, 1]);
  let yd = spec.yDomain ?? extentOf(allY(spec.lines), yLog) ?? (yLog ? [1e-3, 1] : [0, 1]);
  if (yLog && !(yd[0] > 0)) yd = extentOf(allY(spec.lines), true) ?? [1e-3, 1];
  const sx = makeScale(spec.xScale, xd, [x0, x1]);
  const sy = makeScale(spec.yScale, yd, [y0, y1]);
  // Element ids must be unique in a page that shows the same chart for several losses (the report).
  const clipId = `clip-${uid}${spec.id}`;
  const out: string[] = [];
  out.push(
    `<svg xmlns="http://www.w3.org/2000/svg" class="chart" data-chart="${escapeXml(spec.id)}" viewBox="0 0 ${width} ${height}" width="${width}" height="${height}" role="img" aria-label="${escapeXml(`${spec.title}: ${spec.yLabel} against ${spec.xLabel}`)}">`,
  );
  out.push(`<title>${escapeXml(spec.title)}</title>`);
  out.push(`<defs><clipPath id="${clipId}"><rect x="${x0}" y="${y1}" width="${x1 - x0}" height="${y0 - y1}"/></clipPath></defs>`);
  out.push(`<rect class="plot-bg" x="${x0}" y="${y1}" width="${x1 - x0}" height="${y0 - y1}"/>`);
  out.push(`<text class="chart-title" x="${x0}" y="15">${escapeXml(spec.title)}</text>`);

  // Grid and ticks.
  const xt = tickValues(sx, spec.xScale, 6);
  const yt = tickValues(sy, spec.yScale, 6);
  const xf = xLog ? (t: number) => formatFigure(t, 2) : sx.tickFormat(6);
  const yf = yLog ? (t: number) => formatFigure(t, 2) : sy.tickFormat(6);
  out.push(`<g class="axis x-axis">`);
  for (const t of xt) {
    const px = sx(t).toFixed(1);
    out.push(`<line class="grid" x1="${px}" x2="${px}" y1="${y1}" y2="${y0}"/><text class="tick" x="${px}" y="${y0 + 15}" text-anchor="middle">${escapeXml(xf(t).replace("-", "−"))}</text>`);
  }
  out.push(`<line class="axis-line" x1="${x0}" x2="${x1}" y1="${y0}" y2="${y0}"/>`);
  out.push(`<text class="axis-label x-label" x="${(x0 + x1) / 2}" y="${height - 8}" text-anchor="middle">${escapeXml(spec.xLabel)}</text></g>`);
  out.push(`<g class="axis y-axis">`);
  for (const t of yt) {
    const py = sy(t).toFixed(1);
    out.push(`<line class="grid" x1="${x0}" x2="${x1}" y1="${py}" y2="${py}"/><text class="tick" x="${x0 - 5}" y="${py}" dy="0.32em" text-anchor="end">${escapeXml(yf(t).replace("-", "−"))}</text>`);
  }
  out.push(`<line class="axis-line" x1="${x0}" x2="${x0}" y1="${y1}" y2="${y0}"/>`);
  const ym = (y0 + y1) / 2;
  out.push(`<text class="axis-label y-label" x="14" y="${ym}" text-anchor="middle" transform="rotate(-90 14 ${ym})">${escapeXml(spec.yLabel)}</text></g>`);

  out.push(`<g class="plot" clip-path="url(#${clipId})">`);
  if (spec.diagonal) {
    const [a, b] = sx.domain() as [number, number];
    out.push(`<line class="diagonal" x1="${sx(a).toFixed(1)}" y1="${clampPixel(sy(a)).toFixed(1)}" x2="${sx(b).toFixed(1)}" y2="${clampPixel(sy(b)).toFixed(1)}"/>`);
  }
  for (const r of spec.rules) {
    const cls = `rule${r.colour === null ? "" : ` c${r.colour}`}`;
    if (r.axis === "x") {
      const px = clampPixel(sx(r.value)).toFixed(1);
      out.push(`<line class="${cls}" data-rule="${escapeXml(r.label)}" x1="${px}" x2="${px}" y1="${y1}" y2="${y0}"/><text class="rule-label" x="${px}" y="${y0 - 5}" dx="3">${escapeXml(r.label)}</text>`);
    } else {
      const py = clampPixel(sy(r.value)).toFixed(1);
      out.push(`<line class="${cls}" data-rule="${escapeXml(r.label)}" x1="${x0}" x2="${x1}" y1="${py}" y2="${py}"/>`);
    }
  }
  for (const l of spec.lines) {
    const { d, segments } = linePath(l, sx, sy, xLog, yLog);
    out.push(
      `<path class="series c${l.colour} d${l.dash}" data-loss="${escapeXml(l.loss)}" data-series="${escapeXml(l.id)}" data-segments="${segments}" d="${d}"><title>${escapeXml(l.label)}</title></path>`,
    );
  }
  for (const m of spec.markers) {
    if (!Number.isFinite(m.x) || !Number.isFinite(m.y) || (xLog && m.x <= 0) || (yLog && m.y <= 0)) continue;
    out.push(
      `<circle class="marker c${m.colour}" data-loss="${escapeXml(m.loss)}" data-x="${m.x}" cx="${clampPixel(sx(m.x)).toFixed(1)}" cy="${clampPixel(sy(m.y)).toFixed(1)}" r="4.5"><title>${escapeXml(m.label)}</title></circle>`,
    );
  }
  out.push(`</g>`);
  if (spec.lines.length === 0 && spec.empty) {
    out.push(`<text class="empty" x="${(x0 + x1) / 2}" y="${(y0 + y1) / 2}" text-anchor="middle">${escapeXml(spec.empty)}</text>`);
  }
  // Line-style legend under the title (colours are the losses, shown in the page legend).
  if (spec.lines.length > 0 && spec.styles.length > 0) {
    out.push(`<g class="style-legend">`);
    let x = x0;
    const y = 31;
    for (const st of spec.styles) {
      out.push(`<line class="legend-sample d${st.dash}" x1="${x}" x2="${x + 20}" y1="${y - 3.5}" y2="${y - 3.5}"/><text class="legend-text" x="${x + 24}" y="${y}">${escapeXml(st.label)}</text>`);
      x += 24 + st.label.length * LEGEND_CHAR_PX + 14;
    }
    out.push(`</g>`);
  }
  out.push(`</svg>`);
  return out.join("");
}

/** Wraps a chart's markup with the page's chart styles so the file renders on its own (SVG export). */
export function standaloneSvg(svgMarkup: string, css: string): string {
  return svgMarkup.replace(/^<svg([^>]*)>/, (_m, attrs: string) => `<svg${attrs}><style>${css.replace(/]]>/g, "]] >")}</style>`);
}
