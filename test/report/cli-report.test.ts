/**
 * `propriety report` in-process: the HTML file, the chart export through headless Chromium (--png,
 * --svg), and a clear error when Chromium is missing.
 */
import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync } from "node:fs";
import * as os from "node:os";
import * as path from "node:path";
import { build } from "esbuild";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { nodeIo, type CliIo } from "../../server/src/cli/main.js";
import { runReport } from "../../server/src/cli/report.js";

const CHROMIUM = "/usr/bin/chromium";
const HAS_CHROMIUM = existsSync(CHROMIUM);
if (!HAS_CHROMIUM) console.warn(`[test/report/cli-report] chart export SKIPPED: ${CHROMIUM} not found (apt-get install -y chromium).`);

const ROOT = path.resolve(__dirname, "..", "..");
const SOURCE = `
loss brier {
  l1(q) = (1 - q)^2
  l0(q) = q^2
}
loss asymmetric {
  l1(q) = (1 - q)^2
  l0(q) = 1.5 * q^2
}
`;

let dir = "";
let assetsDir = "";
const err: string[] = [];
const io: CliIo = { ...nodeIo, stdout: () => {}, stderr: (t) => void err.push(t) };

beforeAll(async () => {
  dir = mkdtempSync(path.join(os.tmpdir(), "propriety-report-"));
  assetsDir = path.join(dir, "assets");
  // The same two assets `npm run build` writes to dist/.
  await build({ entryPoints: [path.join(ROOT, "client/media/report-page.ts")], outfile: path.join(assetsDir, "report-page.js"), bundle: true, platform: "browser", format: "iife", target: "es2022", logLevel: "warning" });
  await build({ entryPoints: [path.join(ROOT, "client/media/viewer.css")], outfile: path.join(assetsDir, "viewer.css"), bundle: true, logLevel: "warning" });
  nodeIo.writeFile(path.join(dir, "two.loss"), SOURCE);
});

afterAll(() => {
  if (dir) rmSync(dir, { recursive: true, force: true });
});

describe("propriety report", () => {
  it("writes a self-contained page", async () => {
    err.length = 0;
    const out = path.join(dir, "report.html");
    const code = await runReport([path.join(dir, "two.loss"), "--out", out], io, { assetsDir, now: () => new Date("2026-01-02T03:04:05Z") });
    expect(code).toBe(0);
    const html = readFileSync(out, "utf8");
    expect(html).toContain("generated 2026-01-02T03:04:05Z");
    expect(html).toContain('<tr data-loss="brier">');
    expect(html).toContain('<tr data-loss="asymmetric">');
    expect(err.join("")).toContain("2 losses from 1 file");
  });

  it("fails with exit code 2 and says why when the page script was not built", async () => {
    err.length = 0;
    const code = await runReport([path.join(dir, "two.loss"), "--out", path.join(dir, "x.html")], io, { assetsDir: path.join(dir, "nowhere") });
    expect(code).toBe(2);
    expect(err.join("")).toMatch(/report-page\.js\) is missing; run `npm run build`/);
  });

  it("explains a missing Chromium for --png", async () => {
    err.length = 0;
    const code = await runReport([path.join(dir, "two.loss"), "--out", path.join(dir, "y.html"), "--png", path.join(dir, "png")], io, { assetsDir, chromium: "/nonexistent/chromium" });
    expect(code).toBe(2);
    expect(err.join("")).toMatch(/need Chromium, not found at \/nonexistent\/chromium/);
  });

  it.skipIf(!HAS_CHROMIUM)("exports every chart as PNG and SVG through headless Chromium", async () => {
    err.length = 0;
    const png = path.join(dir, "png");
    const svg = path.join(dir, "svg");
    const code = await runReport([path.join(dir, "two.loss"), "--out", path.join(dir, "z.html"), "--png", png, "--svg", svg], io, { assetsDir, chromium: CHROMIUM });
    expect(code, err.join("")).toBe(0);
    const pngs = readdirSync(png).sort();
    // Overlay: partials, conditional, minimiser, bayes, weight, modulus, bounds (no link); per loss: conditional, minimiser, weight.
    expect(pngs).toHaveLength(7 + 2 * 3);
    expect(pngs).toContain("two-all-bounds.png");
    expect(pngs).toContain("two-asymmetric-conditional.png");
    const bytes = readFileSync(path.join(png, "two-all-partials.png"));
    expect(bytes.subarray(1, 4).toString("latin1")).toBe("PNG");
    const s = readFileSync(path.join(svg, "two-all-partials.svg"), "utf8");
    expect(s).toMatch(/^<\?xml[^>]*>\n<svg[^>]*><style>/);
    expect(s.match(/<path class="series/g)).toHaveLength(4);
  });
});
