// The end-to-end scenarios: what a person sees in a real VS Code (the browser build in code-server
// 4.100.3) with the packaged extension installed. Driven like a user — keyboard, mouse, command palette —
// through Debian's Chromium with playwright-core. Every wait is on a condition with a deadline; a
// scenario that fails is retried once; a final failure prints the workbench's text and the extension
// host's logs. Run by scripts/e2e/run.mjs (`npm run test:e2e [-- --only hover,settings]`).
import fs from "node:fs";
import path from "node:path";
import { chromium } from "playwright-core";

const clean = (s) => (s || "").replace(/\s+/g, " ").trim();
const escapeRe = (s) => s.replace(/[.*+?^${}()|[\]\\]/g, "\\$&");

/** Polls `probe` until it returns a truthy value; throws after `timeoutMs` naming what was awaited. */
async function until(probe, timeoutMs, what, interval = 50) {
  const end = Date.now() + timeoutMs;
  let last = null;
  for (;;) {
    try {
      const v = await probe();
      if (v) return v;
    } catch (e) {
      last = e;
    }
    if (Date.now() > end) throw new Error(`timed out after ${timeoutMs} ms waiting for ${what}${last ? ` (last error: ${String(last.message).split("\n")[0]})` : ""}`);
    await new Promise((r) => setTimeout(r, interval));
  }
}

function assert(cond, message) {
  if (!cond) throw new Error(`assertion failed: ${message}`);
}

/** The editor-facing helpers over one page. */
function workbench(page, wsDir) {
  const quickInput = () => page.locator(".quick-input-widget .quick-input-box input");
  const quickRows = () => page.locator(".quick-input-widget .quick-input-list .monaco-list-row");
  const activeEditor = () => page.locator(".editor-group-container.active .monaco-editor").first();
  const w = {
    quickInput, quickRows, activeEditor,
    async closeOverlays() {
      for (let i = 0; i < 3; i++) await page.keyboard.press("Escape");
      await page.mouse.move(2, 2);
    },
    async openFile(name) {
      await page.keyboard.press("Control+P");
      await quickInput().waitFor({ state: "visible", timeout: 15_000 });
      await quickInput().fill(name);
      // The first search of a session waits for the file index (slow while extensions activate on a busy machine).
      await quickRows().filter({ hasText: name }).first().waitFor({ timeout: 60_000 });
      await page.keyboard.press("Enter");
      await w.waitActiveTab(name);
      await w.focusEditor();
    },
    async waitActiveTab(name) {
      const exact = new RegExp(`^${escapeRe(name)}$`);
      await page.locator(".editor-group-container.active .tabs-container .tab.active").filter({ has: page.locator(".label-name", { hasText: exact }) }).waitFor({ timeout: 15_000 });
    },
    /** Brings a text editor to the front (as clicking its tab would) and puts the keyboard focus in it. */
    async showTab(name) {
      const exact = new RegExp(`^${escapeRe(name)}$`);
      const tab = page.locator(".tabs-container .tab").filter({ has: page.locator(".label-name", { hasText: exact }) }).first();
      if ((await tab.count()) === 0) return w.openFile(name); // a scenario run on its own (--only)
      await tab.click();
      await w.waitActiveTab(name);
      await w.focusEditor();
    },
    async focusEditor() {
      await until(async () => {
        const inEditor = await page.evaluate(() => !!document.activeElement?.closest(".editor-group-container.active .monaco-editor"));
        if (inEditor) return true;
        // as a user would: click into the text (the start of the first visible line)
        await activeEditor().locator(".view-lines").click({ position: { x: 2, y: 2 } });
        return false;
      }, 15_000, "keyboard focus in the active editor", 200);
    },
    /** Opens a file the test just wrote by double-clicking it in the explorer (quick open's index may not know it yet). */
    async openFromExplorer(name) {
      const exact = new RegExp(`^${escapeRe(name)}$`);
      const row = page.locator(".explorer-folders-view .monaco-list-row").filter({ has: page.locator(".label-name", { hasText: exact }) }).first();
      await until(async () => {
        if (await row.isVisible()) return true;
        // the file watcher may not have reported the new file yet: refresh, as a user would
        await w.runCommand("File: Refresh Explorer");
        await row.waitFor({ timeout: 2000 }).catch(() => {});
        return false;
      }, 30_000, `${name} in the explorer`, 100);
      await row.dblclick();
      await w.waitActiveTab(name);
      await w.focusEditor();
    },
    async hidePanel() {
      await w.runCommand("View: Hide Panel");
      await page.locator(".markers-panel").waitFor({ state: "hidden", timeout: 10_000 });
    },
    async runCommand(title) {
      await page.keyboard.press("F1");
      await quickInput().waitFor({ state: "visible", timeout: 15_000 });
      await quickInput().fill(`>${title}`);
      await quickRows().filter({ hasText: title }).first().waitFor({ timeout: 15_000 });
      await page.keyboard.press("Enter");
    },
    async pickRow(text) {
      await quickInput().waitFor({ state: "visible", timeout: 15_000 });
      await quickInput().fill(text);
      await quickRows().filter({ hasText: text }).first().waitFor({ timeout: 15_000 });
      await page.keyboard.press("Enter");
    },
    async languageMode() {
      return clean(await page.locator('[id="status.editor.mode"]').innerText());
    },
    async visibleLines(editor = activeEditor()) {
      return editor.locator(".view-lines .view-line").evaluateAll((els) =>
        els.map((e) => ({ top: parseFloat(e.style.top) || 0, text: e.textContent.replace(/\u00a0/g, " ") })).sort((a, b) => a.top - b.top).map((x) => x.text));
    },
    /** The innermost token span of the active editor whose text is exactly `word`. */
    token(word) {
      return activeEditor().locator(".view-line > span > span").filter({ hasText: new RegExp(`^${escapeRe(word)}$`) }).first();
    },
    /** Hovers a token like a user and returns the hover's text once it contains every string of `want`. */
    async hover(word, want, timeoutMs = 20_000) {
      const tok = w.token(word);
      await tok.scrollIntoViewIfNeeded();
      return until(async () => {
        const box = await tok.boundingBox();
        if (!box) return null;
        const visible = page.locator(".monaco-hover:visible");
        if ((await visible.count()) === 0) {
          // (re)enter the token: the editor shows a hover after the mouse rests on it
          await page.mouse.move(2, 2);
          await page.mouse.move(box.x + box.width / 2, box.y + box.height / 2, { steps: 2 });
          await visible.first().waitFor({ state: "visible", timeout: 3000 }).catch(() => {});
        }
        const text = clean((await visible.allInnerTexts()).join(" || "));
        if (text && want.every((s) => text.includes(s))) return text;
        if (text && !/Loading/.test(text)) await page.mouse.move(2, 2); // an older answer: leave and re-enter
        return null;
      }, timeoutMs, `a hover on ${word} containing ${want.map((s) => JSON.stringify(s)).join(", ")}`, 100);
    },
    async findFrame(selector, timeoutMs = 30_000) {
      return until(async () => {
        for (const f of page.frames()) if (await f.locator(selector).count().catch(() => 0)) return f;
        return null;
      }, timeoutMs, `a webview frame with ${selector}`, 100);
    },
    async squiggles(kind = "error") {
      return activeEditor().locator(`.squiggly-${kind}`).count();
    },
    /** Writes a fresh copy of a workspace file (for scenarios that edit: a retry starts from clean text). */
    freshCopy(from, name) {
      fs.copyFileSync(path.join(wsDir, from), path.join(wsDir, name));
      return name;
    },
  };
  return w;
}

/** The scenarios, in the order they run (later ones may rely on the editors earlier ones opened). */
export const SCENARIOS = [
  {
    name: "activation",
    about: "opening a .loss file activates the extension: the status bar names the language",
    async run({ page, w, shot }) {
      await w.openFile("e2e.loss");
      await w.activeEditor().locator(".view-line", { hasText: "tilted_log" }).first().waitFor({ timeout: 30_000 });
      const mode = await until(async () => { const m = await w.languageMode(); return m === "Loss spec" ? m : null; }, 30_000, "the language mode Loss spec");
      // The extension's own status-bar item appears once the server answers for the loss under the cursor.
      await w.token("my_brier").click();
      const item = await until(async () => {
        const texts = (await page.locator(".statusbar-item").allInnerTexts()).map(clean);
        return texts.find((t) => /proper/.test(t) && /λ/.test(t)) ?? null;
      }, 60_000, "the Propriety status-bar summary (verdict and λ)");
      await shot();
      return `language mode "${mode}", status item "${item}"`;
    },
  },
  {
    name: "squiggle-problems",
    about: "an improper loss is underlined and the problems panel shows the counterexample",
    async run({ page, w, shot }) {
      await w.showTab("e2e.loss");
      await until(async () => (await w.squiggles("error")) > 0, 60_000, "an error squiggle in e2e.loss");
      await w.runCommand("View: Focus Problems");
      const rows = page.locator(".markers-panel .monaco-list-row");
      const text = await until(async () => {
        const all = (await rows.allInnerTexts()).map(clean).join(" | ");
        return /Not proper: at η = [0-9.]+, predicting q = [0-9.]+ has conditional risk/.test(all) ? all : null;
      }, 30_000, "the problems panel row 'Not proper: at η = …'");
      await shot();
      await w.hidePanel();
      return text.slice(0, 160);
    },
  },
  {
    name: "hover",
    about: "the hover of a proper loss shows its verdict, λ and both exponents",
    async run({ w, shot }) {
      await w.showTab("e2e.loss");
      const text = await w.hover("my_brier", ["Verdict:", "strictly proper", "λ", "exponents", "via modulus", "direct"]);
      assert(/λ\*{0,2} \(inf of the weight w; strongly proper iff λ > 0\): 2\b/.test(text) || /λ.*: 2\b/.test(text), `λ = 2 for the Brier score in ${text.slice(0, 300)}`);
      await shot();
      await w.closeOverlays();
      return text.slice(0, 200);
    },
  },
  {
    name: "code-lens-viewer",
    about: "a code lens over each loss; clicking one opens the curve viewer, whose charts are drawn in the webview",
    async run({ w, shot, root }) {
      await w.showTab("e2e.loss");
      const lenses = w.activeEditor().locator(".codelens-decoration a");
      await until(async () => (await lenses.count()) >= 2, 60_000, "two code lenses in e2e.loss");
      const texts = (await lenses.allInnerTexts()).map(clean);
      assert(texts.some((t) => /improper/.test(t)), `a lens says improper: ${JSON.stringify(texts)}`);
      const brierLens = lenses.filter({ hasText: /λ = 2/ }).first();
      assert((await brierLens.count()) === 1, `a lens with λ = 2 (my_brier): ${JSON.stringify(texts)}`);
      await brierLens.click();
      const viewer = await w.findFrame("#charts svg", 60_000);
      const charts = await until(async () => {
        const sizes = await viewer.locator("#charts svg").evaluateAll((els) => els.map((e) => { const r = e.getBoundingClientRect(); return r.width * r.height; }));
        const paths = await viewer.locator("#charts svg path, #charts svg polyline").count();
        return sizes.length >= 2 && sizes.every((a) => a > 1000) && paths > 0 ? { n: sizes.length, paths } : null;
      }, 30_000, "at least two drawn charts in the curve viewer");
      const file = await shot();
      // The README's editor picture: squiggles, lenses, the status bar and the curve viewer of this run.
      if (process.env.PROPRIETY_E2E_UPDATE_PICTURE === "1") fs.copyFileSync(file, path.join(root, "docs", "editor.png"));
      return `lenses ${JSON.stringify(texts)}; ${charts.n} charts, ${charts.paths} paths`;
    },
  },
  {
    name: "eta-slider",
    about: "moving the η slider of the curve viewer redraws the conditional-risk chart",
    async run({ page, w, shot }) {
      const viewer = await w.findFrame("#charts svg", 30_000);
      const chart = viewer.locator("#charts [data-chart-cell]").filter({ has: viewer.locator('svg[aria-label*="onditional"]') }).first();
      await chart.waitFor({ timeout: 15_000 });
      const before = { eta: clean(await viewer.locator("#eta-value").innerText()), svg: await chart.innerHTML() };
      await viewer.locator("#eta").focus();
      for (let i = 0; i < 12; i++) await page.keyboard.press("ArrowLeft");
      const after = await until(async () => {
        const eta = clean(await viewer.locator("#eta-value").innerText());
        const svg = await chart.innerHTML();
        return eta !== before.eta && svg !== before.svg ? { eta } : null;
      }, 15_000, "the η value and the conditional-risk chart to change");
      await shot();
      return `η ${before.eta} → ${after.eta}`;
    },
  },
  {
    name: "generate-code",
    about: "Generate Code… asks consent for an improper loss, writes where the save dialog says (proposing the .loss file's folder), and remembers that folder for the workspace",
    async run({ page, w, shot, wsDir }) {
      const folder = path.join(wsDir, "generated");
      fs.rmSync(folder, { recursive: true, force: true });
      fs.mkdirSync(folder);
      const saveDialogValue = () => w.quickInput().inputValue();
      /** Accepts the save dialog with its OK button once the path is in the box (Enter can be taken by the dialog's own completion). */
      const acceptSaveDialog = async (file) => {
        await until(async () => (await saveDialogValue()) === file, 10_000, `the save dialog to hold ${file}`);
        await page.locator(".quick-input-widget .monaco-button", { hasText: /^OK$/ }).click();
      };
      await w.showTab("e2e.loss");
      await w.runCommand("Propriety: Generate Code");
      await w.pickRow("NumPy");
      await w.pickRow("probabilities q");
      // tilted_log is improper and does not say `expect improper`: the extension asks first.
      const dialog = page.locator(".monaco-dialog-box");
      await dialog.waitFor({ state: "visible", timeout: 30_000 });
      const question = clean(await dialog.innerText());
      assert(/tilted_log/.test(question) && /improper/.test(question), `the consent dialog names the improper loss: ${question}`);
      await shot("consent");
      await dialog.locator(".monaco-button", { hasText: "Generate anyway" }).click();
      // The save dialog proposes the file beside the .loss; the user puts it in generated/ instead.
      const proposed = await until(async () => { const v = await saveDialogValue(); return /e2e_numpy\.py$/.test(v) ? v : null; }, 15_000, "the save dialog proposing e2e_numpy.py");
      assert(path.dirname(proposed) === wsDir, `proposed beside e2e.loss: ${proposed}`);
      const out = path.join(folder, "e2e_numpy.py");
      await w.quickInput().fill(out);
      await acceptSaveDialog(out);
      const code = await until(async () => (fs.existsSync(out) ? fs.readFileSync(out, "utf8") : null), 30_000, `${out} to be written`);
      assert(/^def my_brier\(pred, target, weight=None, reduction="mean"\):/m.test(code), "def my_brier(...) in the generated file");
      assert(/^def tilted_log\(/m.test(code) && /WARNING/.test(code), "the consented improper loss is generated with a WARNING");
      await w.waitActiveTab("e2e_numpy.py");
      await until(async () => (await w.visibleLines()).some((l) => l.startsWith("def ")), 15_000, "the generated file shown in an editor");
      await shot();
      // A second file of the same workspace (all its losses proper: no question): the dialog proposes the folder chosen last time.
      await w.openFile("forms.loss");
      await w.runCommand("Propriety: Generate Code");
      await w.pickRow("TypeScript");
      await w.pickRow("probabilities q");
      const proposed2 = await until(async () => { const v = await saveDialogValue(); return /forms_ts\.ts$/.test(v) ? v : null; }, 30_000, "the save dialog proposing forms_ts.ts");
      assert(proposed2 === path.join(folder, "forms_ts.ts"), `the remembered folder is proposed: ${proposed2}`);
      await acceptSaveDialog(proposed2);
      const ts = await until(async () => { const f = path.join(folder, "forms_ts.ts"); return fs.existsSync(f) ? fs.readFileSync(f, "utf8") : null; }, 30_000, "generated/forms_ts.ts to be written");
      assert(/^export function halfBrier\(/m.test(ts), "export function halfBrier(...) in forms_ts.ts");
      await w.waitActiveTab("forms_ts.ts");
      return `generated/e2e_numpy.py ${code.split("\n").length} lines; generated/forms_ts.ts proposed from memory`;
    },
  },
  {
    name: "quick-fix",
    about: "a quick fix on an improper loss inserts its posterior-recovery map",
    async run({ page, w, shot, attempt }) {
      const name = w.freshCopy("e2e.loss", `quickfix-${attempt}.loss`);
      await w.openFromExplorer(name);
      await until(async () => (await w.squiggles("error")) > 0, 60_000, `an error squiggle in ${name}`);
      await w.token("tilted_log").click();
      await page.keyboard.press("Control+.");
      const rows = page.locator(".action-widget .monaco-list-row");
      const fix = rows.filter({ hasText: "posterior-recovery map" }).first();
      await fix.waitFor({ state: "visible", timeout: 15_000 });
      const menu = (await rows.allInnerTexts()).map(clean).filter(Boolean);
      await shot("menu");
      // choose it with the keyboard, as the menu is meant to be used: move the focus onto it, then Enter
      await until(async () => {
        if (/\bfocused\b/.test((await fix.getAttribute("class")) ?? "")) return true;
        await page.keyboard.press("ArrowDown");
        return false;
      }, 10_000, "the quick fix to be focused in the menu", 100);
      await page.keyboard.press("Enter");
      const line = await until(async () => (await w.visibleLines()).find((l) => /^def \w*tilted_log\w*\(/.test(l.trim())) ?? null, 15_000, "the inserted `def …` helper");
      await shot();
      return `menu ${JSON.stringify(menu)}; inserted "${line.trim()}"`;
    },
  },
  {
    name: "edit-to-proper",
    about: "editing the improper loss into a proper one clears its squiggle",
    async run({ page, w, shot, attempt }) {
      const name = w.freshCopy("e2e.loss", `edit-${attempt}.loss`);
      await w.openFromExplorer(name);
      await until(async () => (await w.squiggles("error")) > 0, 60_000, `an error squiggle in ${name}`);
      await page.keyboard.press("Control+Home");
      await page.keyboard.press("Control+F");
      await page.locator(".find-widget textarea, .find-widget input").first().waitFor({ timeout: 10_000 });
      await page.keyboard.type("-2*ln");
      await until(async () => /1 of 1/.test(await page.locator(".find-widget .matchesCount").innerText()), 10_000, "one match of -2*ln");
      await page.keyboard.press("Escape"); // the match stays selected
      const t = Date.now();
      await page.keyboard.type("-ln");
      await until(async () => (await w.visibleLines()).some((l) => l.includes("l0(q) = -ln(1 - q)")), 10_000, "the edited line");
      await until(async () => (await w.squiggles("error")) === 0, 30_000, "the error squiggles to disappear");
      const ms = Date.now() - t;
      await page.keyboard.press("Escape");
      await shot();
      return `squiggles cleared ${ms} ms after typing`;
    },
  },
  {
    name: "settings",
    about: "changing propriety.defaultThreshold in the workspace settings changes the hover",
    async run({ w, shot, wsDir }) {
      await w.showTab("e2e.loss");
      // The exponents line names the threshold only when it is not 0.5.
      const exponentsLine = /via the modulus (\S+) · direct (\S+?)( \(threshold c = ([0-9.]+)\))?( |$)/;
      const before = await w.hover("my_brier", ["Verdict:", "exponents"]);
      const b = exponentsLine.exec(before);
      assert(b && b[4] === undefined, `no threshold on the exponents line at the default 0.5: ${b?.[0]}`);
      await w.closeOverlays();
      fs.mkdirSync(path.join(wsDir, ".vscode"), { recursive: true });
      fs.writeFileSync(path.join(wsDir, ".vscode", "settings.json"), JSON.stringify({ "propriety.defaultThreshold": 0.3 }, null, 2) + "\n");
      const after = await w.hover("my_brier", ["(threshold c = 0.3)"], 45_000);
      await shot();
      fs.rmSync(path.join(wsDir, ".vscode", "settings.json"));
      return `${b[0].trim()} → ${exponentsLine.exec(after)?.[0].trim()}`;
    },
  },
];

/** Runs the scenarios in one browser against a started host; returns per-scenario results. */
export async function runScenarios({ base, wsDir, outDir, chromiumPath, only, log, root, hostLogs }) {
  const browser = await chromium.launch({
    executablePath: chromiumPath,
    headless: true,
    args: ["--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update", "--disable-sync",
      "--no-first-run", "--host-resolver-rules=MAP * ~NOTFOUND , EXCLUDE 127.0.0.1"],
  });
  const blocked = [];
  const consoleErrors = [];
  const results = [];
  try {
    const context = await browser.newContext({ viewport: { width: 1400, height: 900 } });
    // No request leaves 127.0.0.1: anything else is aborted and recorded (the run fails on any).
    await context.route("**/*", (route) => {
      const u = new URL(route.request().url());
      if (/^(https?|wss?):$/.test(u.protocol) && u.hostname !== "127.0.0.1") {
        blocked.push(route.request().url());
        return route.abort();
      }
      return route.continue();
    });
    const page = await context.newPage();
    page.on("console", (m) => { if (m.type() === "error") consoleErrors.push(m.text().slice(0, 300)); });
    page.on("pageerror", (e) => consoleErrors.push(`pageerror: ${e.message}`));
    const w = workbench(page, wsDir);
    const t = Date.now();
    await page.goto(`${base}/?folder=${encodeURIComponent(wsDir)}`);
    await page.locator(".monaco-workbench").waitFor({ timeout: 90_000 });
    await page.locator(".explorer-folders-view .monaco-list-row").first().waitFor({ timeout: 90_000 });
    log(`workbench ready after ${((Date.now() - t) / 1000).toFixed(1)} s`);

    const screen = async () => {
      const parts = [`--- workbench text:\n${(await page.locator("body").innerText().catch(() => "")).slice(0, 4000)}`];
      for (const f of page.frames()) {
        if (f === page.mainFrame()) continue;
        const txt = clean(await f.locator("body").innerText({ timeout: 1000 }).catch(() => ""));
        if (txt) parts.push(`--- frame ${f.url().slice(0, 80)}: ${txt.slice(0, 1000)}`);
      }
      return parts.join("\n");
    };
    const selected = SCENARIOS.filter((s) => only.length === 0 || only.includes(s.name));
    if (only.length && selected.length !== only.length) throw new Error(`unknown scenario in --only ${only.join(",")}; the scenarios are ${SCENARIOS.map((s) => s.name).join(", ")}`);
    for (const [i, s] of selected.entries()) {
      const r = { name: s.name, about: s.about, ok: false, attempts: 0, ms: 0, note: "", error: "" };
      for (let attempt = 1; attempt <= 2 && !r.ok; attempt++) {
        r.attempts = attempt;
        const t1 = Date.now();
        const prefix = `${String(i + 1).padStart(2, "0")}-${s.name}`;
        const shot = async (suffix) => {
          const file = path.join(outDir, `${prefix}${suffix ? `-${suffix}` : ""}.png`);
          await page.screenshot({ path: file });
          return file;
        };
        try {
          log(`scenario ${s.name}${attempt > 1 ? " (retry)" : ""}: ${s.about}`);
          r.note = (await s.run({ page, w, shot, wsDir, root, attempt })) ?? "";
          r.ok = true;
          r.error = "";
          log(`  ok: ${r.note}`);
        } catch (e) {
          r.error = String(e.message).split("\n")[0];
          log(`  failed (attempt ${attempt}): ${r.error}`);
          await page.screenshot({ path: path.join(outDir, `${prefix}-FAILED${attempt}.png`) }).catch(() => {});
          if (attempt === 2) {
            console.log(await screen());
            console.log(`--- extension host logs:\n${hostLogs()}`);
          }
          await w.closeOverlays().catch(() => {});
        }
        r.ms = Date.now() - t1;
      }
      results.push(r);
    }
  } finally {
    await browser.close();
  }
  return { scenarios: results, blocked, consoleErrors };
}
