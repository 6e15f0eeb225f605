/**
 * `propriety report FILE|DIR… --out report.html [--png DIR] [--svg DIR] [--title TEXT]`: writes the
 * self-contained HTML report (products/report.ts) and, on request, exports every chart as PNG and SVG
 * through headless Chromium (playwright-core), since the charts are drawn by the page's own script.
 */
import * as fs from "node:fs";
import * as path from "node:path";
import { randomBytes } from "node:crypto";
import { parseArgs } from "node:util";
import { renderReport } from "../products/report.js";
import { checkOutputPath, collectFiles, loadDocuments, settingsFromArgs, SETTINGS_HELP, SETTINGS_OPTIONS, UsageError, type CliIo } from "./io.js";
import { VERSION } from "../version.js";

/** Where the built page assets are looked for, and which Chromium to drive. */
export interface ReportEnv {
  /** Directory holding report-page.js and viewer.css (default: next to the CLI bundle, else ./dist). */
  assetsDir?: string;
  /** Chromium executable for --png/--svg (default: $PROPRIETY_CHROMIUM or /usr/bin/chromium). */
  chromium?: string;
  /** Time stamp for the header (default: now). */
  now?: () => Date;
}

/** Chromium flags for a headless, offline run (no profile sync, no background traffic). */
export const CHROMIUM_ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update", "--disable-sync", "--no-first-run", "--disable-quic"];
/** How long the page may take to draw its charts before the export gives up (milliseconds). */
const PAGE_READY_TIMEOUT_MS = 60_000;

export const REPORT_HELP = `report:
  propriety report FILE|DIR… --out report.html [--png DIR] [--svg DIR] [--title TEXT] [--force]
  Writes one self-contained HTML page (no network) with every loss's verdict, λ, modulus, bound
  exponents, inverse table and curves. --png/--svg also export each chart (needs Chromium:
  /usr/bin/chromium or $PROPRIETY_CHROMIUM, and the playwright-core package).
  Every file is written atomically and never through a symbolic link; --out must not be an input.
  --force  allow an --out name ending in .loss
${SETTINGS_HELP}`;

function assetCandidates(env: ReportEnv): string[] {
  const out: string[] = [];
  if (env.assetsDir) return [env.assetsDir];
  // In the bundle (dist/cli.js) the assets sit next to it; from the sources, in ../../../dist.
  if (typeof __dirname === "string") out.push(__dirname, path.resolve(__dirname, "..", "..", "..", "dist"));
  out.push(path.resolve("dist"));
  return out;
}

function readAssets(env: ReportEnv, io: CliIo): { script: string; css: string } {
  for (const dir of assetCandidates(env)) {
    const js = path.join(dir, "report-page.js");
    const css = path.join(dir, "viewer.css");
    if (io.exists(js) && io.exists(css)) return { script: io.readFile(js), css: io.readFile(css) };
  }
  throw new Error("the report page script (dist/report-page.js) is missing; run `npm run build` first");
}

function safeName(s: string): string {
  return s.replace(/[^A-Za-z0-9_.-]+/g, "_").replace(/^_+|_+$/g, "") || "chart";
}

/** Runs the `report` sub-command; returns the exit code (0 written, 2 usage or I/O error). */
export async function runReport(args: string[], io: CliIo, env: ReportEnv = {}): Promise<number> {
  const { values, positionals } = parseArgs({
    args,
    options: {
      out: { type: "string", short: "o" },
      png: { type: "string" },
      svg: { type: "string" },
      title: { type: "string" },
      force: { type: "boolean" },
      help: { type: "boolean", short: "h" },
      ...SETTINGS_OPTIONS,
    },
    allowPositionals: true,
  });
  if (values.help) {
    io.stdout(REPORT_HELP);
    return 0;
  }
  if (positionals.length === 0) throw new UsageError("report needs at least one FILE or DIR");
  if (!values.out) throw new UsageError("report needs --out FILE.html");
  checkOutputPath(values.out, collectFiles(positionals, io), io, values.force === true);
  const docs = loadDocuments(positionals, io, settingsFromArgs(values));
  if (docs === null) return 2;
  const files = docs.map((d) => d.file);
  let assets: { script: string; css: string };
  try {
    assets = readAssets(env, io);
  } catch (err) {
    io.stderr(`propriety: ${err instanceof Error ? err.message : String(err)}\n`);
    return 2;
  }
  const html = renderReport(docs, {
    script: assets.script,
    css: assets.css,
    nonce: randomBytes(18).toString("base64url"),
    title: values.title ?? (files.length === 1 ? `Loss report: ${path.basename(files[0]!)}` : "Loss report"),
    generatedAt: (env.now ?? (() => new Date()))().toISOString().replace(/\.\d+Z$/, "Z"),
    generator: `propriety ${VERSION}`,
  });
  try {
    io.writeFile(values.out, html);
  } catch (err) {
    io.stderr(`propriety: cannot write ${values.out}: ${err instanceof Error ? err.message : String(err)}\n`);
    return 2;
  }
  const losses = docs.reduce((n, d) => n + d.doc.losses.length, 0);
  io.stderr(`wrote ${values.out}: ${losses} loss${losses === 1 ? "" : "es"} from ${files.length} file${files.length === 1 ? "" : "s"}\n`);
  if (values.png || values.svg) {
    try {
      const n = await exportCharts(html, { png: values.png, svg: values.svg }, env, io);
      io.stderr(`exported ${n} chart${n === 1 ? "" : "s"}${values.png ? ` as PNG to ${values.png}` : ""}${values.svg ? `${values.png ? " and" : ""} as SVG to ${values.svg}` : ""}\n`);
    } catch (err) {
      io.stderr(`propriety: chart export failed: ${err instanceof Error ? err.message : String(err)}\n`);
      return 2;
    }
  }
  return 0;
}

interface Playwright {
  chromium: {
    launch(options: { executablePath: string; headless: boolean; args: string[] }): Promise<{
      newPage(options: { viewport: { width: number; height: number }; deviceScaleFactor?: number }): Promise<PageLike>;
      close(): Promise<void>;
    }>;
  };
}
interface PageLike {
  on(event: "pageerror", cb: (e: Error) => void): void;
  setContent(html: string, options?: { waitUntil?: "load" }): Promise<void>;
  waitForSelector(selector: string, options?: { timeout?: number }): Promise<unknown>;
  evaluate<T>(fn: () => T): Promise<T>;
  locator(selector: string): { nth(i: number): { screenshot(): Promise<Uint8Array> } };
  screenshot(options: { path: string; fullPage?: boolean }): Promise<unknown>;
}

/**
 * Loads the report in headless Chromium and writes each chart as DIR/<file>-<loss|all>-<chart>.png
 * (and .svg with the chart styles embedded). Returns the number of charts.
 */
export async function exportCharts(html: string, dirs: { png?: string; svg?: string }, env: ReportEnv, io: CliIo): Promise<number> {
  const executablePath = env.chromium ?? process.env.PROPRIETY_CHROMIUM ?? "/usr/bin/chromium";
  if (!fs.existsSync(executablePath)) {
    throw new Error(`--png/--svg need Chromium, not found at ${executablePath} (install it, e.g. \`apt-get install chromium\`, or set PROPRIETY_CHROMIUM)`);
  }
  let pw: Playwright;
  try {
    pw = (await import("playwright-core")) as unknown as Playwright;
  } catch {
    throw new Error("--png/--svg need the playwright-core package (npm install playwright-core)");
  }
  const browser = await pw.chromium.launch({ executablePath, headless: true, args: CHROMIUM_ARGS });
  try {
    const page = await browser.newPage({ viewport: { width: 1280, height: 900 }, deviceScaleFactor: 2 });
    const errors: string[] = [];
    page.on("pageerror", (e) => errors.push(String(e)));
    await page.setContent(html, { waitUntil: "load" });
    await page.waitForSelector("body[data-ready='1']", { timeout: PAGE_READY_TIMEOUT_MS });
    if (errors.length > 0) throw new Error(`the report page failed: ${errors.join("; ")}`);
    const charts = await page.evaluate(() => {
      const css = Array.from(document.querySelectorAll("style"))
        .map((s) => s.textContent ?? "")
        .join("\n");
      return Array.from(document.querySelectorAll("svg.chart")).map((svg) => {
        const file = svg.closest("[data-file]")?.getAttribute("data-file") ?? "report";
        const loss = svg.closest("section.loss")?.getAttribute("data-loss") ?? "all";
        return { file, loss, chart: svg.getAttribute("data-chart") ?? "chart", markup: svg.outerHTML, css };
      });
    });
    const used = new Set<string>();
    for (let i = 0; i < charts.length; i++) {
      const c = charts[i]!;
      let base = safeName(`${path.basename(c.file, ".loss")}-${c.loss}-${c.chart}`);
      for (let k = 2; used.has(base); k++) base = safeName(`${path.basename(c.file, ".loss")}-${c.loss}-${c.chart}-${k}`);
      used.add(base);
      if (dirs.png) {
        // Taken into memory and written like every other output: atomically, never through a link.
        io.writeFile(path.join(dirs.png, `${base}.png`), await page.locator("svg.chart").nth(i).screenshot());
      }
      if (dirs.svg) {
        // The exported file carries the page's styles so it renders the same on its own.
        const svg = c.markup.replace(/^<svg([^>]*)>/, (_m, attrs: string) => `<svg${attrs}><style>${c.css.replace(/]]>/g, "]] >")}</style>`);
        io.writeFile(path.join(dirs.svg, `${base}.svg`), `<?xml version="1.0" encoding="UTF-8"?>\n${svg}\n`);
      }
    }
    return charts.length;
  } finally {
    await browser.close();
  }
}
