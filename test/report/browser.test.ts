/**
 * The curve viewer page and the HTML report in headless Chromium (playwright-core driving
 * /usr/bin/chromium; one browser for every page). The viewer page is served exactly as the panel host
 * builds it (viewerHtml: strict CSP, nonce'd script), with `acquireVsCodeApi` stubbed and the host's
 * messages posted by the test. Screenshots go to test-artifacts/.
 */
import { existsSync, mkdirSync, readFileSync } from "node:fs";
import { createServer, type Server } from "node:http";
import type { AddressInfo } from "node:net";
import * as path from "node:path";
import { build } from "esbuild";
import { chromium, type Browser, type Page } from "playwright-core";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { viewerHtml } from "../../client/src/viewer-html.js";
import type { CurvesResult, HostToViewer, LossCurves } from "../../server/src/protocol.js";
import { analyseDocument } from "../../server/src/pipeline/pipeline.js";
import { renderReport } from "../../server/src/products/report.js";

const CHROMIUM = "/usr/bin/chromium";
const HAS_CHROMIUM = existsSync(CHROMIUM);
if (!HAS_CHROMIUM) console.warn(`[test/report/browser] SKIPPED: ${CHROMIUM} not found (apt-get install -y chromium) — the viewer and report pages are not tested in a browser.`);

const ROOT = path.resolve(__dirname, "..", "..");
const ARTIFACTS = path.join(ROOT, "test-artifacts");
/** Flags from the toolchain notes: headless, offline, no profile services. */
const ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update", "--disable-sync", "--no-first-run", "--disable-quic"];
const NONCE = "TestNonce0123456789";

/** Computed by computeCurves on samples/flood-desk.loss (points = 101, 19 η), numbers rounded to 6 digits. */
const FIXTURE = JSON.parse(readFileSync(path.join(__dirname, "fixtures", "flood-desk-curves.json"), "utf8")) as CurvesResult;

let browser: Browser;
let server: Server;
let origin = "";
const assets: Record<string, { type: string; body: string }> = {};

async function bundle(entry: string): Promise<string> {
  const r = await build({ entryPoints: [path.join(ROOT, entry)], bundle: true, platform: "browser", format: "iife", target: "es2022", write: false, logLevel: "warning" });
  return r.outputFiles[0]!.text;
}

beforeAll(async () => {
  if (!HAS_CHROMIUM) return;
  mkdirSync(ARTIFACTS, { recursive: true });
  const [viewerJs, reportJs] = await Promise.all([bundle("client/media/viewer.ts"), bundle("client/media/report-page.ts")]);
  const css = readFileSync(path.join(ROOT, "client/media/viewer.css"), "utf8");
  server = createServer((req, res) => {
    const url = (req.url ?? "/").split("?")[0]!;
    // Chromium asks for a favicon on its own; answering "no content" keeps the console clean.
    if (url === "/favicon.ico") {
      res.writeHead(204).end();
      return;
    }
    const a = assets[url];
    if (!a) {
      res.writeHead(404).end();
      return;
    }
    res.writeHead(200, { "content-type": a.type }).end(a.body);
  });
  await new Promise<void>((resolve) => server.listen(0, "127.0.0.1", resolve));
  origin = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
  assets["/viewer.js"] = { type: "text/javascript", body: viewerJs };
  assets["/viewer.css"] = { type: "text/css", body: css };
  assets["/viewer.html"] = { type: "text/html", body: viewerHtml({ cspSource: origin, nonce: NONCE, scriptUri: `${origin}/viewer.js`, styleUri: `${origin}/viewer.css` }) };
  const doc = analyseDocument(`
loss log_loss {
  l1(q) = -ln(q)
  l0(q) = -ln(1 - q)
}
loss focal(g = 2 in [0, 5]) {
  l1(q) = -(1 - q)^g * ln(q)
  l0(q) = -q^g * ln(1 - q)
}
loss asymmetric {
  l1(q) = (1 - q)^2
  l0(q) = 1.5 * q^2
}
`);
  assets["/report.html"] = { type: "text/html", body: renderReport([{ file: "three.loss", doc }], { script: reportJs, css, nonce: NONCE, points: 61 }) };
  browser = await chromium.launch({ executablePath: CHROMIUM, headless: true, args: ARGS });
});

afterAll(async () => {
  await browser?.close();
  await new Promise<void>((resolve) => (server ? server.close(() => resolve()) : resolve()));
});

interface Problems {
  errors: string[];
}

/** Opens a page, recording page errors, console errors and CSP violations. */
async function openPage(url: string, initialState: unknown = undefined): Promise<{ page: Page; problems: Problems }> {
  const page = await browser.newPage({ viewport: { width: 1400, height: 1100 } });
  const problems: Problems = { errors: [] };
  page.on("pageerror", (e) => problems.errors.push(`pageerror: ${String(e)}`));
  page.on("console", (m) => {
    if (m.type() === "error") problems.errors.push(`console: ${m.text()}`);
  });
  await page.addInitScript((state) => {
    const w = window as unknown as Record<string, unknown>;
    w.__posted = [];
    w.__csp = [];
    w.__state = state;
    document.addEventListener("securitypolicyviolation", (e) => (w.__csp as string[]).push(`${e.violatedDirective} ${e.blockedURI}`));
    w.acquireVsCodeApi = () => ({
      postMessage: (m: unknown) => {
        (w.__posted as unknown[]).push(m);
        const hook = w.__onPost as ((m: unknown) => void) | undefined;
        if (hook) hook(m);
      },
      getState: () => w.__state,
      setState: (s: unknown) => {
        w.__state = s;
      },
    });
  }, initialState);
  await page.goto(`${origin}${url}`);
  return { page, problems };
}

async function cspViolations(page: Page): Promise<string[]> {
  return page.evaluate(() => (window as unknown as { __csp: string[] }).__csp);
}

/** Posts a host message and waits until the page has drawn it. */
async function postCurves(page: Page, msg: HostToViewer): Promise<void> {
  const before = Number((await page.getAttribute("body", "data-render-count")) ?? "0");
  await page.evaluate((m) => window.postMessage(m, "*"), msg);
  await page.waitForFunction((n) => Number(document.body.dataset.renderCount ?? "0") > n, before);
}

async function seriesCount(page: Page, chart: string): Promise<number> {
  return page.locator(`svg[data-chart="${chart}"] path.series`).count();
}

function expectedCounts(losses: LossCurves[]): Record<string, number> {
  return {
    partials: losses.reduce((n, l) => n + l.partials.length, 0),
    conditional: losses.filter((l) => l.conditionalRisk.length > 0).length,
    minimiser: losses.filter((l) => l.minimiser).length,
    bayes: losses.filter((l) => l.bayes).length,
    weight: losses.filter((l) => l.weight).length,
    modulus: losses.reduce((n, l) => n + l.modulus.length, 0),
    bounds: losses.reduce((n, l) => n + l.bounds.length, 0),
    link: losses.filter((l) => l.link).length,
  };
}

function renamed(l: LossCurves, name: string): LossCurves {
  return { ...structuredClone(l), loss: name };
}

describe("curve viewer page (headless Chromium)", () => {
  it.skipIf(!HAS_CHROMIUM)("draws the flood-desk curves with the right series per chart, axis labels, and no errors or CSP violations", async () => {
    const { page, problems } = await openPage("/viewer.html");
    await page.waitForFunction(() => (window as unknown as { __posted: { type: string }[] }).__posted.some((m) => m.type === "ready"));
    await postCurves(page, { type: "curves", data: FIXTURE, eta: 0.7, seq: 0 });
    const expected = expectedCounts(FIXTURE.losses);
    // The fixture has 7 losses, 2 of them improper (no weight, modulus or bounds) and 3 with a link.
    expect(expected).toEqual({ partials: 14, conditional: 7, minimiser: 7, bayes: 7, weight: 5, modulus: 10, bounds: 10, link: 3 });
    for (const [chart, n] of Object.entries(expected)) expect(await seriesCount(page, chart), chart).toBe(n);
    expect(await page.textContent('svg[data-chart="partials"] .x-label')).toBe("q (predicted probability)");
    expect(await page.textContent('svg[data-chart="partials"] .y-label')).toBe("loss (units of the loss)");
    expect(await page.textContent('svg[data-chart="bounds"] .x-label')).toContain("log scale");
    expect(await page.textContent('svg[data-chart="bounds"] .y-label')).toContain("log");
    // Log axes label powers of ten only.
    const boundTicks = await page.locator('svg[data-chart="bounds"] .y-axis .tick').allTextContents();
    expect(boundTicks.length).toBeGreaterThan(1);
    for (const t of boundTicks) expect(t).toMatch(/^(1e−?\d+|0\.0*1|1|10+)$/);
    expect(await page.locator("#legend label").count()).toBe(7);
    expect(await page.locator("#figures tbody tr").count()).toBe(7);
    // No NaN can reach the SVG.
    const ds = await page.locator("path.series").evaluateAll((els) => els.map((e) => e.getAttribute("d") ?? ""));
    expect(ds.some((d) => d.includes("NaN"))).toBe(false);
    await page.screenshot({ path: path.join(ARTIFACTS, "viewer-flood-desk.png"), fullPage: true });
    expect(problems.errors).toEqual([]);
    expect(await cspViolations(page)).toEqual([]);
    await page.close();
  });

  it.skipIf(!HAS_CHROMIUM)("moves the minimiser marker with the keyboard-driven η slider; the improper loss's marker misses η", async () => {
    const { page, problems } = await openPage("/viewer.html");
    await postCurves(page, { type: "curves", data: FIXTURE, eta: 0.7, seq: 0 });
    const marker = (loss: string) => page.locator(`svg[data-chart="conditional"] circle.marker[data-loss="${loss}"]`);
    const ruleX = async () => Number(await page.locator('svg[data-chart="conditional"] line.rule').getAttribute("x1"));
    expect(await page.textContent('svg[data-chart="conditional"] .chart-title')).toBe("Conditional risk at η = 0.7");
    const cx0 = Number(await marker("log_loss").getAttribute("cx"));
    // A proper loss is minimised at q = η: its marker sits on the η rule; the focal loss's (q* = 0.578 at η = 0.7) does not.
    expect(Math.abs(cx0 - (await ruleX()))).toBeLessThan(1.5);
    const focalGap = Math.abs(Number(await marker("focal").getAttribute("cx")) - (await ruleX()));
    expect(focalGap).toBeGreaterThan(20);
    expect(Math.abs(Number(await marker("focal").getAttribute("data-x")) - 0.57848)).toBeLessThan(1e-4);
    await page.focus("#eta");
    const before = Number((await page.getAttribute("body", "data-render-count")) ?? "0");
    await page.keyboard.press("ArrowRight");
    await page.waitForFunction((n) => Number(document.body.dataset.renderCount) > n, before);
    expect(await page.textContent('svg[data-chart="conditional"] .chart-title')).toBe("Conditional risk at η = 0.75");
    const cx1 = Number(await marker("log_loss").getAttribute("cx"));
    expect(cx1).toBeGreaterThan(cx0 + 5);
    expect(Math.abs(Number(await marker("log_loss").getAttribute("data-x")) - 0.75)).toBeLessThan(1e-6);
    const state = await page.evaluate(() => (window as unknown as { __state: { eta: number } }).__state);
    expect(state.eta).toBe(0.75);
    const posted = await page.evaluate(() => (window as unknown as { __posted: unknown[] }).__posted);
    expect(posted).toContainEqual({ type: "setEta", eta: 0.75 });
    await page.locator('[data-chart-cell="conditional"]').screenshot({ path: path.join(ARTIFACTS, "viewer-conditional-eta-0.75.png") });
    expect(problems.errors).toEqual([]);
    expect(await cspViolations(page)).toEqual([]);
    await page.close();
  });

  it.skipIf(!HAS_CHROMIUM)("overlays 30 losses with a legend whose toggles remove a loss from every chart", async () => {
    const { page, problems } = await openPage("/viewer.html");
    const losses = Array.from({ length: 30 }, (_, i) => renamed(FIXTURE.losses[i % FIXTURE.losses.length]!, `loss_${String(i).padStart(2, "0")}`));
    const data: CurvesResult = { ...FIXTURE, losses };
    const t0 = Date.now();
    await postCurves(page, { type: "curves", data, eta: 0.7, seq: 0 });
    const drawMs = Date.now() - t0;
    const expected = expectedCounts(losses);
    for (const [chart, n] of Object.entries(expected)) expect(await seriesCount(page, chart), chart).toBe(n);
    expect(await page.locator("#legend label").count()).toBe(30);
    // Losses beyond the 8 colours get a different dash pattern, so the 30 stay distinguishable.
    const styles = await page.locator('svg[data-chart="bayes"] path.series').evaluateAll((els) => new Set(els.map((e) => e.getAttribute("class"))).size);
    expect(styles).toBe(30);
    await page.locator('#legend input[data-loss="loss_03"]').uncheck();
    await page.waitForFunction((n) => document.querySelectorAll('svg[data-chart="partials"] path.series').length === n, expected.partials! - 2);
    expect(await page.locator('svg[data-chart="partials"] path.series[data-loss="loss_03"]').count()).toBe(0);
    await page.screenshot({ path: path.join(ARTIFACTS, "viewer-30-losses.png"), fullPage: true });
    expect(drawMs).toBeLessThan(10_000);
    expect(problems.errors).toEqual([]);
    expect(await cspViolations(page)).toEqual([]);
    await page.close();
  });

  it.skipIf(!HAS_CHROMIUM)("draws null and NaN samples as gaps", async () => {
    const { page, problems } = await openPage("/viewer.html");
    const brier = renamed(FIXTURE.losses.find((l) => l.loss === "brier")!, "holey");
    const l1 = brier.partials[0]!;
    for (let i = 30; i < 40; i++) l1.y[i] = null;
    // JSON from the server carries nulls; a NaN can still arrive through postMessage (structured clone keeps it).
    l1.y[70] = Number.NaN;
    await postCurves(page, { type: "curves", data: { ...FIXTURE, losses: [brier] }, eta: 0.7, seq: 0 });
    const seg = await page.locator('svg[data-chart="partials"] path.series[data-series="l1"]').getAttribute("data-segments");
    expect(Number(seg)).toBe(3);
    const d = await page.locator('svg[data-chart="partials"] path.series[data-series="l1"]').getAttribute("d");
    expect(d).not.toContain("NaN");
    expect(d!.match(/M/g)).toHaveLength(3);
    await page.locator('[data-chart-cell="partials"]').screenshot({ path: path.join(ARTIFACTS, "viewer-gaps.png") });
    expect(problems.errors).toEqual([]);
    await page.close();
  });

  it.skipIf(!HAS_CHROMIUM)("survives a fast drag of a parameter slider and ends consistent with the host's last answer", async () => {
    const { page, problems } = await openPage("/viewer.html");
    await postCurves(page, { type: "curves", data: FIXTURE, eta: 0.7, seq: 0 });
    // The stub host answers each setParam after a delay, echoing its seq with the value in the loss's params.
    await page.evaluate((data) => {
      const w = window as unknown as Record<string, unknown>;
      w.__onPost = (m: { type: string; loss: string; name: string; value: number; seq: number }) => {
        if (m.type !== "setParam") return;
        setTimeout(() => {
          const copy = structuredClone(data);
          for (const l of copy.losses) if (l.loss === m.loss) for (const p of l.params) if (p.name === m.name) p.value = m.value;
          window.postMessage({ type: "curves", data: copy, eta: 0.7, seq: m.seq }, "*");
        }, 25);
      };
    }, FIXTURE);
    const slider = page.locator('#params input[data-loss="focal"][data-param="g"]');
    const box = (await slider.boundingBox())!;
    const y = box.y + box.height / 2;
    await page.mouse.move(box.x + 2, y);
    await page.mouse.down();
    await page.mouse.move(box.x + box.width - 1, y, { steps: 60 });
    await page.mouse.up();
    const t0 = Date.now();
    expect(await page.evaluate(() => 1 + 1)).toBe(2);
    expect(Date.now() - t0).toBeLessThan(2000);
    const finalValue = Number(await slider.inputValue());
    expect(finalValue).toBeCloseTo(5, 6);
    // Wait for the host's answer to the last seq, then everything shows the same value.
    await page.waitForFunction(
      () => {
        const posted = (window as unknown as { __posted: { type: string; seq?: number }[] }).__posted.filter((m) => m.type === "setParam");
        const row = document.querySelector('#figures tr[data-loss="focal"]')?.textContent ?? "";
        return posted.length > 0 && row.includes("g = 5");
      },
      undefined,
      { timeout: 10_000 },
    );
    const posted = await page.evaluate(() => (window as unknown as { __posted: { type: string; seq: number; value: number }[] }).__posted.filter((m) => m.type === "setParam"));
    expect(posted.length).toBeGreaterThan(10);
    for (let i = 1; i < posted.length; i++) expect(posted[i]!.seq).toBeGreaterThan(posted[i - 1]!.seq);
    expect(posted.at(-1)!.value).toBeCloseTo(5, 6);
    await page.waitForTimeout(200);
    expect(Number(await slider.inputValue())).toBeCloseTo(5, 6);
    expect(await page.textContent(`[data-value-of="${await slider.getAttribute("id")}"]`)).toBe("5");
    expect(problems.errors).toEqual([]);
    expect(await cspViolations(page)).toEqual([]);
    await page.close();
  });

  it.skipIf(!HAS_CHROMIUM)("restores η and hidden losses from getState, and shows host errors", async () => {
    const { page, problems } = await openPage("/viewer.html", { version: 1, eta: 0.3, hidden: ["brier"] });
    await postCurves(page, { type: "curves", data: FIXTURE, eta: 0.7, seq: 0 });
    expect(await page.textContent("#eta-value")).toBe("0.3");
    expect(await page.locator('#legend input[data-loss="brier"]').isChecked()).toBe(false);
    expect(await seriesCount(page, "partials")).toBe(12);
    await page.evaluate(() => window.postMessage({ type: "error", message: "The curves could not be computed: boom" }, "*"));
    await page.waitForSelector("#error:not([hidden])");
    expect(await page.textContent("#error")).toContain("boom");
    expect(problems.errors).toEqual([]);
    // The CSP listener does catch violations: an inline style attribute is refused by `style-src`.
    expect(await cspViolations(page)).toEqual([]);
    await page.evaluate(() => document.body.insertAdjacentHTML("beforeend", '<div style="color: red">inline</div>'));
    await page.waitForFunction(() => (window as unknown as { __csp: string[] }).__csp.length > 0);
    expect((await cspViolations(page))[0]).toMatch(/^style-src/);
    await page.close();
  });
});

describe("HTML report (headless Chromium)", () => {
  it.skipIf(!HAS_CHROMIUM)("draws the overlay and per-loss charts with the viewer's code, offline and without CSP violations", async () => {
    const { page, problems } = await openPage("/report.html");
    await page.waitForSelector("body[data-ready='1']");
    const overlay = page.locator('[data-overlay="0"]');
    expect(await overlay.locator('svg[data-chart="partials"] path.series').count()).toBe(6);
    expect(await overlay.locator('svg[data-chart="conditional"] path.series').count()).toBe(3);
    // Only the log loss is proper: one weight curve, two modulus curves.
    expect(await overlay.locator('svg[data-chart="weight"] path.series').count()).toBe(1);
    expect(await overlay.locator('svg[data-chart="modulus"] path.series').count()).toBe(2);
    expect(await page.locator('[data-loss-charts] svg.chart').count()).toBe(9);
    expect(await page.locator('[data-loss-charts="0:1"] svg[data-chart="conditional"] .chart-title').textContent()).toBe("Conditional risk at η = 0.7");
    const focal = page.locator('[data-loss-charts="0:1"] svg[data-chart="conditional"]');
    const gap = Math.abs(Number(await focal.locator("circle.marker").getAttribute("cx")) - Number(await focal.locator("line.rule").getAttribute("x1")));
    expect(gap).toBeGreaterThan(20);
    expect(await page.locator("table.overview tbody tr").count()).toBe(3);
    await page.locator('[data-legend="0"] input[data-loss="focal"]').uncheck();
    expect(await overlay.locator('svg[data-chart="partials"] path.series').count()).toBe(4);
    await page.screenshot({ path: path.join(ARTIFACTS, "report-three-losses.png"), fullPage: true });
    expect(problems.errors).toEqual([]);
    expect(await cspViolations(page)).toEqual([]);
    await page.close();
  });
});
