/**
 * The HTML report's page script (bundled to dist/report-page.js and inlined into the report with a
 * nonce). It reads the curve data inlined as JSON and draws it with the same code as the viewer
 * (draw.ts): one overlay of all losses per file, with a legend to switch losses off, and the
 * conditional-risk charts of each loss in its own section. No network, no computation.
 */
import type { CurvesResult } from "../../server/src/protocol.js";
import { buildChartSpecs, CHART_IDS, COLOUR_COUNT, DASH_COUNT, escapeXml, renderChartSvg, type ChartId } from "./draw.js";

/** The JSON the report inlines (see server/src/products/report.ts). */
export interface ReportData {
  eta: number;
  files: { file: string; curves: CurvesResult }[];
}

function readData(): ReportData | null {
  const el = document.getElementById("report-data");
  if (!el?.textContent) return null;
  try {
    return JSON.parse(el.textContent) as ReportData;
  } catch {
    return null;
  }
}

function drawOverlay(container: HTMLElement, curves: CurvesResult, eta: number, hidden: Set<string>, uid: string): void {
  const specs = buildChartSpecs(curves.losses, { eta, hidden: [...hidden] });
  container.innerHTML = specs.map((s) => `<div class="chart-cell" data-chart-cell="${escapeXml(s.id)}">${renderChartSvg(s, undefined, uid)}</div>`).join("");
}

function main(): void {
  const data = readData();
  if (!data) {
    document.body.dataset.ready = "error";
    return;
  }
  data.files.forEach((f, fi) => {
    const hidden = new Set<string>();
    const overlay = document.querySelector<HTMLElement>(`[data-overlay="${fi}"]`);
    const legend = document.querySelector<HTMLElement>(`[data-legend="${fi}"]`);
    if (legend) {
      legend.innerHTML = f.curves.losses
        .map((l, i) => `<label class="c${i % COLOUR_COUNT}"><input type="checkbox" data-loss="${escapeXml(l.loss)}" checked><span class="swatch d${Math.floor(i / COLOUR_COUNT) % DASH_COUNT}"></span><span class="legend-name">${escapeXml(l.loss)}</span></label>`)
        .join("");
      legend.addEventListener("change", (ev) => {
        const t = ev.target as HTMLInputElement;
        if (!t.dataset.loss) return;
        if (t.checked) hidden.delete(t.dataset.loss);
        else hidden.add(t.dataset.loss);
        if (overlay) drawOverlay(overlay, f.curves, data.eta, hidden, `f${fi}-`);
      });
    }
    if (overlay) drawOverlay(overlay, f.curves, data.eta, hidden, `f${fi}-`);
    f.curves.losses.forEach((l, li) => {
      const el = document.querySelector<HTMLElement>(`[data-loss-charts="${fi}:${li}"]`);
      if (!el) return;
      const only = (el.dataset.only ?? "conditional,minimiser").split(",").filter((c): c is ChartId => (CHART_IDS as readonly string[]).includes(c));
      // Draw this loss alone but keep its colour from the overlay: the other losses are hidden, not removed.
      const others = f.curves.losses.filter((x) => x.loss !== l.loss).map((x) => x.loss);
      const specs = buildChartSpecs(f.curves.losses, { eta: data.eta, hidden: others }, only);
      el.innerHTML = specs.map((s) => `<div class="chart-cell" data-chart-cell="${escapeXml(s.id)}">${renderChartSvg(s, undefined, `f${fi}-l${li}-`)}</div>`).join("");
    });
  });
  document.body.dataset.ready = "1";
}

main();
