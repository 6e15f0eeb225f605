// Writes docs/report.png, the README's picture: the top of the real report of samples/ (header, caution,
// the first file's figures table and its overlaid curves), rendered by headless Chromium.
// Usage: npm run build && node scripts/readme-picture.mjs   (needs /usr/bin/chromium or $PROPRIETY_CHROMIUM)
import { execFileSync } from "node:child_process";
import { existsSync, mkdirSync, statSync } from "node:fs";
import * as path from "node:path";
import { chromium } from "playwright-core";

const root = path.resolve(path.dirname(new URL(import.meta.url).pathname), "..");
const executablePath = process.env.PROPRIETY_CHROMIUM ?? "/usr/bin/chromium";
if (!existsSync(executablePath)) {
  console.error(`readme-picture: Chromium not found at ${executablePath} (apt-get install -y chromium, or set PROPRIETY_CHROMIUM)`);
  process.exit(2);
}
if (!existsSync(path.join(root, "dist", "cli.js")) || !existsSync(path.join(root, "dist", "report-page.js"))) {
  console.error("readme-picture: dist/ is not built; run `npm run build` first");
  process.exit(2);
}

const html = path.join(root, "test-artifacts", "readme-report.html");
const out = path.join(root, "docs", "report.png");
mkdirSync(path.dirname(html), { recursive: true });
mkdirSync(path.dirname(out), { recursive: true });
// The report of the shipped samples, exactly as a user would make it (relative paths, so the page shows "samples/…").
execFileSync(process.execPath, [path.join(root, "bin", "propriety.js"), "report", "samples", "--out", html, "--title", "Propriety report: samples/"], { cwd: root, stdio: "inherit" });

const browser = await chromium.launch({
  executablePath,
  headless: true,
  args: ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update", "--disable-sync", "--no-first-run", "--disable-quic"],
});
try {
  const page = await browser.newPage({ viewport: { width: 1280, height: 900 }, deviceScaleFactor: 1 });
  const errors = [];
  page.on("pageerror", (e) => errors.push(String(e)));
  await page.goto("file://" + html);
  await page.waitForSelector("body[data-ready='1']", { timeout: 60_000 });
  if (errors.length > 0) throw new Error(`the report page failed: ${errors.join("; ")}`);
  // Down to the end of the first file's overlaid charts.
  const bottom = await page.evaluate(() => {
    const overlay = document.querySelector('[data-overlay="0"]');
    return overlay ? overlay.getBoundingClientRect().bottom + window.scrollY + 12 : 1400;
  });
  await page.screenshot({ path: out, fullPage: true, clip: { x: 0, y: 0, width: 1280, height: Math.ceil(bottom) } });
  console.log(`wrote ${path.relative(root, out)} (${statSync(out).size} bytes, 1280×${Math.ceil(bottom)})`);
} finally {
  await browser.close();
}
