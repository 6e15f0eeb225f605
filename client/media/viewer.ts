/**
 * The curve viewer's page script (bundled to dist/viewer.js, loaded by the webview with a nonce).
 * It draws what the extension host posts (`HostToViewer`), and posts the user's choices back
 * (`ViewerToHost`): parameter slider values, the η of the conditional-risk chart, the losses shown.
 * It computes nothing about the losses; view state persists with getState/setState.
 */
import type { CurvesResult, HostToViewer, LossCurves, ViewerToHost } from "../../server/src/protocol.js";
import { buildChartSpecs, COLOUR_COUNT, DASH_COUNT, escapeXml, nearestEtaIndex, renderChartSvg, type ViewState } from "./draw.js";
import { formatFigure, formatPowerLaw, FIGURE_STYLE, verdictText } from "../../server/src/display.js";

interface VsCodeApi {
  postMessage(message: ViewerToHost): void;
  getState(): unknown;
  setState(state: unknown): void;
}
declare function acquireVsCodeApi(): VsCodeApi;

/** What survives a reload of the webview (small: the host re-sends the curves). */
interface PersistedState extends ViewState {
  version: 1;
  /** The focus loss of the host's first message was applied (once per panel). */
  focused?: boolean;
  /** The document shown: VS Code passes this state to the panel serializer after a reload. */
  uri?: string;
}

const api = acquireVsCodeApi();
const DEFAULT_ETA = 0.7;

function loadState(): PersistedState {
  const s = api.getState() as Partial<PersistedState> | undefined;
  return {
    version: 1,
    eta: typeof s?.eta === "number" && s.eta > 0 && s.eta < 1 ? s.eta : DEFAULT_ETA,
    hidden: Array.isArray(s?.hidden) ? s.hidden.filter((x): x is string => typeof x === "string") : [],
    focused: s?.focused === true,
    uri: typeof s?.uri === "string" ? s.uri : undefined,
  };
}

const state = loadState();
let data: CurvesResult | null = null;
let lastSeq = 0;
let nextSeq = 1;
/** Slider values not yet confirmed by the host, so a stale response does not make a slider jump back. */
const pending = new Map<string, { value: number; seq: number }>();
let renderQueued = false;
let renderCount = 0;

const app = document.getElementById("app") ?? document.body;
app.innerHTML = `
  <div class="toolbar">
    <strong id="title">Curves</strong>
    <label for="eta">η <span class="muted">(true probability)</span></label>
    <input id="eta" type="range" min="0" max="0" step="1" value="0" aria-label="η of the conditional-risk chart" aria-valuetext="">
    <span id="eta-value" class="value"></span>
  </div>
  <div id="error" class="error-box" hidden></div>
  <div id="legend" class="legend" role="group" aria-label="Losses shown"></div>
  <div id="figures"></div>
  <details id="param-panel" open><summary>Parameters</summary><div id="params" class="params"></div></details>
  <div id="charts" class="charts"></div>
  <details id="notes-panel"><summary>Notes</summary><ul id="notes" class="notes"></ul></details>`;

const byId = <T extends HTMLElement>(id: string) => document.getElementById(id) as T;
const etaInput = byId<HTMLInputElement>("eta");
const etaValue = byId<HTMLSpanElement>("eta-value");

function saveState(): void {
  api.setState({ version: 1, eta: state.eta, hidden: state.hidden, focused: state.focused, uri: state.uri } satisfies PersistedState);
}

function post(message: ViewerToHost): void {
  api.postMessage(message);
}

/** The η values the host sampled (the same for every loss of one response). */
function sampledEtas(): number[] {
  const first = data?.losses.find((l) => l.conditionalRisk.length > 0);
  return first ? first.conditionalRisk.map((c) => c.eta) : [];
}

etaInput.addEventListener("input", () => {
  const etas = sampledEtas();
  const eta = etas[Number(etaInput.value)];
  if (eta === undefined) return;
  state.eta = eta;
  saveState();
  post({ type: "setEta", eta });
  scheduleRender();
});

function paramKey(loss: string, name: string): string {
  return `${loss}\u0000${name}`;
}

function sliderRange(p: LossCurves["params"][number]): { lo: number; hi: number } {
  const spread = Math.max(1, Math.abs(p.value));
  const lo = p.lo ?? p.value - spread;
  const hi = p.hi ?? p.value + spread;
  return hi > lo ? { lo, hi } : { lo: lo - 1, hi: hi + 1 };
}

/** Builds the legend and the parameter sliders when the set of losses or parameters changes. */
let controlsSignature = "";
function renderControls(losses: LossCurves[]): void {
  const signature = JSON.stringify(losses.map((l) => [l.loss, l.params.map((p) => [p.name, p.lo, p.hi])]));
  if (signature !== controlsSignature) {
    controlsSignature = signature;
    const legend = byId<HTMLDivElement>("legend");
    legend.innerHTML = losses
      .map((l, i) => {
        const cls = `c${i % COLOUR_COUNT}`;
        const dash = Math.floor(i / COLOUR_COUNT) % DASH_COUNT;
        return `<label class="${cls}"><input type="checkbox" data-loss="${escapeXml(l.loss)}"${state.hidden.includes(l.loss) ? "" : " checked"}><span class="swatch d${dash}"></span><span class="legend-name">${escapeXml(l.loss)}</span></label>`;
      })
      .join("");
    const params = byId<HTMLDivElement>("params");
    const rows: string[] = [];
    for (const l of losses) {
      if (l.params.length === 0) continue;
      rows.push(`<div class="param-group" data-loss="${escapeXml(l.loss)}"><div class="loss-name">${escapeXml(l.loss)}</div>`);
      for (const p of l.params) {
        const { lo, hi } = sliderRange(p);
        const id = `p-${escapeXml(l.loss)}-${escapeXml(p.name)}`;
        rows.push(
          `<label for="${id}"><code>${escapeXml(p.name)}</code></label><input id="${id}" type="range" data-loss="${escapeXml(l.loss)}" data-param="${escapeXml(p.name)}" min="${lo}" max="${hi}" step="${(hi - lo) / 200}" value="${p.value}" aria-label="${escapeXml(`${l.loss}: ${p.name}`)}"><span class="value" data-value-of="${id}"></span>`,
        );
      }
      rows.push(`</div>`);
    }
    params.innerHTML = rows.length > 0 ? rows.join("") : `<span class="muted">No parameters.</span>`;
    const panel = byId<HTMLDetailsElement>("param-panel");
    panel.hidden = rows.length === 0;
    // Many losses make a long list of sliders: start folded then (the user's later choice stands).
    if (!panel.dataset.initialised) {
      panel.open = losses.length <= 8;
      panel.dataset.initialised = "1";
    }
  }
  // Values: the host's, unless the user moved the slider more recently than the host answered.
  for (const input of Array.from(document.querySelectorAll<HTMLInputElement>("#params input[type=range]"))) {
    const loss = input.dataset.loss!;
    const name = input.dataset.param!;
    const p = losses.find((l) => l.loss === loss)?.params.find((x) => x.name === name);
    if (!p) continue;
    const local = pending.get(paramKey(loss, name));
    const value = local ? local.value : p.value;
    if (!local && document.activeElement !== input) input.value = String(value);
    const label = document.querySelector<HTMLSpanElement>(`[data-value-of="${CSS.escape(input.id)}"]`);
    if (label) label.textContent = formatFigure(local ? local.value : p.value);
    input.setAttribute("aria-valuetext", formatFigure(value));
  }
}

document.addEventListener("change", (ev) => {
  const t = ev.target as HTMLInputElement;
  if (t.type !== "checkbox" || !t.dataset.loss) return;
  const loss = t.dataset.loss;
  state.hidden = t.checked ? state.hidden.filter((x) => x !== loss) : [...new Set([...state.hidden, loss])];
  saveState();
  post({ type: "selectLosses", losses: (data?.losses ?? []).map((l) => l.loss).filter((n) => !state.hidden.includes(n)) });
  scheduleRender();
});

document.addEventListener("input", (ev) => {
  const t = ev.target as HTMLInputElement;
  if (t.type !== "range" || !t.dataset.param || !t.dataset.loss) return;
  const value = Number(t.value);
  if (!Number.isFinite(value)) return;
  const seq = nextSeq++;
  pending.set(paramKey(t.dataset.loss, t.dataset.param), { value, seq });
  const label = document.querySelector<HTMLSpanElement>(`[data-value-of="${CSS.escape(t.id)}"]`);
  if (label) label.textContent = formatFigure(value);
  post({ type: "setParam", loss: t.dataset.loss, name: t.dataset.param, value, seq });
});

function verdictCell(l: LossCurves): string {
  return `<td class="verdict-${l.verdict}">${escapeXml(verdictText(l.verdict))}</td>`;
}

function renderFigures(losses: LossCurves[]): void {
  const rows = losses.map((l, i) => {
    const f = l.figures;
    const mod = f?.modulus ? formatPowerLaw(f.modulus.coefficient, f.modulus.power, { ...FIGURE_STYLE, digits: 3 }) : FIGURE_STYLE.missing;
    return `<tr data-loss="${escapeXml(l.loss)}"><td><span class="swatch c${i % COLOUR_COUNT} d${Math.floor(i / COLOUR_COUNT) % DASH_COUNT}"></span> ${escapeXml(l.loss)}</td>${verdictCell(l)}<td class="num">${formatFigure(f?.lambda)}</td><td class="num">${escapeXml(mod)}</td><td class="num">${formatFigure(f?.exponents.viaModulus, 3)} / ${formatFigure(f?.exponents.direct, 3)}</td><td class="num">${formatFigure(l.threshold, 3)}</td><td>${escapeXml(l.params.map((p) => `${p.name} = ${formatFigure(p.value)}`).join(", "))}</td></tr>`;
  });
  byId<HTMLDivElement>("figures").innerHTML =
    losses.length === 0
      ? ""
      : `<table class="figures"><thead><tr><th>loss</th><th>verdict</th><th>λ</th><th>δ** near 0</th><th>exponents (modulus / direct)</th><th>c</th><th>parameters</th></tr></thead><tbody>${rows.join("")}</tbody></table>`;
}

function render(): void {
  renderQueued = false;
  const error = byId<HTMLDivElement>("error");
  if (!data) return;
  const losses = data.losses;
  byId<HTMLElement>("title").textContent = `Curves — ${losses.length} loss${losses.length === 1 ? "" : "es"}`;
  const etas = sampledEtas();
  etaInput.max = String(Math.max(0, etas.length - 1));
  etaInput.disabled = etas.length === 0;
  if (etas.length > 0) {
    const k = nearestEtaIndex(etas, state.eta);
    if (document.activeElement !== etaInput || Number(etaInput.value) !== k) etaInput.value = String(k);
    etaValue.textContent = formatFigure(etas[k]!, 3);
    etaInput.setAttribute("aria-valuetext", `η = ${formatFigure(etas[k]!, 3)}`);
  }
  renderControls(losses);
  renderFigures(losses);
  const specs = buildChartSpecs(losses, state);
  byId<HTMLDivElement>("charts").innerHTML = specs.map((s) => `<div class="chart-cell" data-chart-cell="${escapeXml(s.id)}">${renderChartSvg(s)}</div>`).join("");
  const notes = [
    ...data.skipped.map((s) => `${s.loss}: not drawn — ${s.reason}`),
    ...losses.filter((l) => !state.hidden.includes(l.loss)).flatMap((l) => l.notes.map((n) => `${l.loss}: ${n}`)),
  ];
  byId<HTMLUListElement>("notes").innerHTML = notes.map((n) => `<li>${escapeXml(n)}</li>`).join("");
  if (data.skipped.length > 0 && losses.length === 0) {
    error.hidden = false;
    error.textContent = `Nothing to draw: ${data.skipped.map((s) => `${s.loss} (${s.reason})`).join("; ")}`;
  } else if (!error.dataset.sticky) {
    error.hidden = true;
  }
  renderCount++;
  document.body.dataset.renderCount = String(renderCount);
  document.body.dataset.ready = "1";
}

/** Renders at most once per frame, however fast the host posts. */
function scheduleRender(): void {
  if (renderQueued) return;
  renderQueued = true;
  requestAnimationFrame(render);
}

window.addEventListener("message", (ev: MessageEvent<HostToViewer>) => {
  const msg = ev.data;
  if (!msg || typeof msg !== "object") return;
  if (msg.type === "curves") {
    const seq = msg.seq ?? 0;
    // A response to an older slider position than one already drawn is dropped.
    if (seq < lastSeq) return;
    lastSeq = seq;
    for (const [k, p] of pending) if (p.seq <= seq) pending.delete(k);
    data = msg.data;
    if (state.uri !== data.uri) {
      state.uri = data.uri;
      saveState();
    }
    // A viewer opened for one loss starts with that loss alone (the legend brings the others back).
    if (msg.focus && !state.focused && data.losses.some((l) => l.loss === msg.focus)) {
      state.hidden = data.losses.map((l) => l.loss).filter((n) => n !== msg.focus);
      state.focused = true;
      saveState();
    }
    if (typeof msg.eta === "number" && !(state.eta > 0)) state.eta = msg.eta;
    const error = byId<HTMLDivElement>("error");
    delete error.dataset.sticky;
    scheduleRender();
  } else if (msg.type === "error") {
    const error = byId<HTMLDivElement>("error");
    error.hidden = false;
    error.dataset.sticky = "1";
    error.textContent = msg.message;
    document.body.dataset.ready = "1";
  }
});

post({ type: "ready" });
