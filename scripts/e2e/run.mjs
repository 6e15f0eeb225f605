// `npm run test:e2e`: the extension in a real VS Code (the browser build bundled in code-server 4.100.3),
// driven like a user through Debian's Chromium with playwright-core. Steps: install the host once into
// ~/.cache/propriety-e2e (scripts/e2e/host.mjs), package propriety.vsix, install it into fresh
// user-data and extensions folders, start the host on 127.0.0.1 (no auth, no workspace trust, no
// telemetry, no gallery), open a temporary copy of samples/ plus test/e2e/workspace/, run the scenarios
// of test/e2e/scenarios.mjs, stop the host's whole process group.
// Usage: npm run test:e2e [-- --only hover,settings] [--keep] [--headed-log]
// Artefacts: out/e2e/*.png (one screenshot per scenario, and *-FAILED.png), out/e2e/results.json.
import { spawn, spawnSync } from "node:child_process";
import fs from "node:fs";
import net from "node:net";
import os from "node:os";
import path from "node:path";
import { fileURLToPath } from "node:url";
import { ensureHost, codeServerBin, CODE_SERVER_VERSION } from "./host.mjs";

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), "..", "..");
const outDir = path.join(root, "out", "e2e");
const chromiumPath = process.env.PROPRIETY_CHROMIUM ?? "/usr/bin/chromium";
const args = process.argv.slice(2);
const opt = (name) => { const i = args.indexOf(name); return i >= 0 ? args[i + 1] : undefined; };
const only = (opt("--only") ?? process.env.E2E_ONLY ?? "").split(",").map((s) => s.trim()).filter(Boolean);
const keep = args.includes("--keep");
const t0 = Date.now();
const secs = (ms) => `${(ms / 1000).toFixed(1)} s`;
const log = (...a) => console.log(`[e2e ${secs(Date.now() - t0)}]`, ...a);

/** Fails the run: the reason is the first line printed. */
function fail(reason, details = "") {
  console.error(`e2e FAILED: ${reason}`);
  if (details) console.error(details);
  process.exit(1);
}

function freePort() {
  return new Promise((resolve, reject) => {
    const s = net.createServer();
    s.once("error", reject);
    s.listen(0, "127.0.0.1", () => { const { port } = s.address(); s.close(() => resolve(port)); });
  });
}

/** Polls `probe` until it returns a truthy value (condition wait with a deadline; `interval` is the polling period). */
async function until(probe, timeoutMs, what, interval = 100) {
  const end = Date.now() + timeoutMs;
  for (;;) {
    const v = await probe().catch(() => null);
    if (v) return v;
    if (Date.now() > end) throw new Error(`timed out after ${timeoutMs} ms waiting for ${what}`);
    await new Promise((r) => setTimeout(r, interval));
  }
}

function tail(file, n = 40) {
  try { return fs.readFileSync(file, "utf8").trim().split("\n").slice(-n).join("\n"); } catch { return `(no ${file})`; }
}

/** Every log file of the extension host (the host's own log and the output channels it wrote). */
function extensionHostLogs(udd) {
  const found = [];
  const walk = (d) => { for (const e of fs.readdirSync(d, { withFileTypes: true })) { const p = path.join(d, e.name); if (e.isDirectory()) walk(p); else if (p.endsWith(".log")) found.push(p); } };
  try { walk(path.join(udd, "logs")); } catch { /* no logs yet */ }
  return found.filter((f) => /exthost|Propriety|remoteagent/i.test(f));
}

async function main() {
  fs.mkdirSync(outDir, { recursive: true });
  for (const f of fs.readdirSync(outDir)) if (/\.(png|json|log)$/.test(f)) fs.rmSync(path.join(outDir, f));
  if (!fs.existsSync(chromiumPath)) fail(`Chromium not found at ${chromiumPath} (apt-get install -y chromium, or set PROPRIETY_CHROMIUM)`);

  // 1. the host (installed once, reused while its stamp matches)
  let host;
  try {
    host = ensureHost(log);
  } catch (e) {
    fail(e.message.split("\n")[0], e.message.split("\n").slice(1).join("\n"));
  }
  const timings = { hostInstallMs: host.installedMs };
  log(`host: code-server ${CODE_SERVER_VERSION} in ${host.dir}${host.installedMs === null ? " (cached)" : ` (installed in ${secs(host.installedMs)})`}`);

  // 2. the extension package
  let t = Date.now();
  const vsix = path.join(root, "propriety.vsix");
  const pkg = spawnSync("npm", ["run", "package"], { cwd: root, encoding: "utf8" });
  fs.writeFileSync(path.join(outDir, "package.log"), `${pkg.stdout}\n${pkg.stderr}`);
  if (pkg.status !== 0 || !fs.existsSync(vsix)) fail(`npm run package failed (exit ${pkg.status})`, tail(path.join(outDir, "package.log")));
  timings.packageMs = Date.now() - t;

  // 3. fresh, isolated folders: nothing is read from or written to the user's own VS Code or code-server state
  const work = fs.mkdtempSync(path.join(os.tmpdir(), "propriety-e2e-"));
  const dirs = Object.fromEntries(["udd", "exts", "xdg-config", "xdg-data", "xdg-cache", "tmp", "ws"].map((d) => [d, path.join(work, d)]));
  for (const d of Object.values(dirs)) fs.mkdirSync(d, { recursive: true });
  fs.mkdirSync(path.join(dirs.udd, "User"), { recursive: true });
  fs.copyFileSync(path.join(root, "test", "e2e", "user-settings.json"), path.join(dirs.udd, "User", "settings.json"));
  fs.cpSync(path.join(root, "samples"), path.join(dirs.ws, "samples"), { recursive: true });
  fs.cpSync(path.join(root, "test", "e2e", "workspace"), dirs.ws, { recursive: true });
  const config = path.join(work, "config.yaml");
  fs.writeFileSync(config, "bind-addr: 127.0.0.1:0\nauth: none\ncert: false\n");
  const env = {
    ...process.env,
    XDG_CONFIG_HOME: dirs["xdg-config"], XDG_DATA_HOME: dirs["xdg-data"], XDG_CACHE_HOME: dirs["xdg-cache"], TMPDIR: dirs.tmp,
    // No extension gallery: nothing is looked up off this machine.
    EXTENSIONS_GALLERY: "{}",
  };
  const cs = [codeServerBin(host.dir), "--config", config, "--user-data-dir", dirs.udd, "--extensions-dir", dirs.exts];
  t = Date.now();
  const inst = spawnSync(process.execPath, [...cs, "--install-extension", vsix], { env, encoding: "utf8" });
  if (inst.status !== 0 || !fs.readdirSync(dirs.exts).some((d) => d.startsWith("propriety."))) {
    fail(`the host could not install propriety.vsix (exit ${inst.status}): ${(inst.stderr || inst.stdout).trim().split("\n")[0]}`, `${inst.stdout}\n${inst.stderr}`);
  }
  timings.installExtensionMs = Date.now() - t;

  // 4. start the host in its own process group (stopped with one kill of the group)
  const port = await freePort();
  const serverLog = path.join(outDir, "host.log");
  const logFd = fs.openSync(serverLog, "w");
  t = Date.now();
  const server = spawn(process.execPath, [...cs, "--auth", "none", "--bind-addr", `127.0.0.1:${port}`, "--disable-telemetry",
    "--disable-update-check", "--disable-workspace-trust", "--disable-getting-started-override", dirs.ws], { env, detached: true, stdio: ["ignore", logFd, logFd] });
  let exited = null;
  server.on("exit", (code, signal) => { exited = { code, signal }; });
  const stop = async () => {
    if (exited) return;
    try { process.kill(-server.pid, "SIGTERM"); } catch { return; }
    await until(async () => exited, 10_000, "the host to stop").catch(() => { try { process.kill(-server.pid, "SIGKILL"); } catch { /* gone */ } });
  };
  process.on("SIGINT", () => { void stop().then(() => process.exit(130)); });
  try {
    await until(async () => {
      if (exited) throw Object.assign(new Error("exited"), { fatal: true });
      const r = await fetch(`http://127.0.0.1:${port}/healthz`);
      return r.ok;
    }, 60_000, "the host to answer /healthz").catch((e) => {
      const first = tail(serverLog, 200).split("\n").find((l) => /error/i.test(l)) ?? tail(serverLog, 1);
      throw new Error(exited ? `the host exited during start-up (${JSON.stringify(exited)}): ${first}` : `${e.message}: ${first}`);
    });
  } catch (e) {
    await stop();
    fail(`host failed to start: ${e.message}`, tail(serverLog));
  }
  timings.hostStartMs = Date.now() - t;
  log(`host on http://127.0.0.1:${port} after ${secs(timings.hostStartMs)} (workspace ${dirs.ws})`);

  // 5. the scenarios
  const { runScenarios } = await import("../../test/e2e/scenarios.mjs");
  t = Date.now();
  let result;
  try {
    result = await runScenarios({ base: `http://127.0.0.1:${port}`, wsDir: dirs.ws, outDir, chromiumPath, only, log, root,
      hostLogs: () => extensionHostLogs(dirs.udd).map((f) => `--- ${path.relative(dirs.udd, f)}\n${tail(f, 60)}`).join("\n") });
  } finally {
    await stop();
  }
  timings.scenariosMs = Date.now() - t;
  timings.totalMs = Date.now() - t0;
  fs.writeFileSync(path.join(outDir, "results.json"), JSON.stringify({ ...result, timings }, null, 2) + "\n");
  if (!keep) fs.rmSync(work, { recursive: true, force: true });
  else log(`kept ${work}`);
  const failed = result.scenarios.filter((s) => !s.ok);
  for (const s of result.scenarios) log(`${s.ok ? "ok  " : "FAIL"} ${s.name}${s.attempts > 1 ? ` (attempt ${s.attempts})` : ""} ${secs(s.ms)}${s.ok ? "" : `: ${s.error}`}`);
  log(`timings: ${Object.entries(timings).map(([k, v]) => `${k}=${v === null ? "cached" : secs(v)}`).join(" ")}`);
  if (result.blocked.length) fail(`${result.blocked.length} request(s) tried to leave 127.0.0.1: ${result.blocked.slice(0, 3).join(", ")}`);
  if (failed.length) fail(`${failed.length} of ${result.scenarios.length} scenario(s) failed: ${failed.map((s) => s.name).join(", ")} (screenshots in out/e2e/)`);
  log(`${result.scenarios.length} scenarios passed`);
}

main().catch((e) => fail(e instanceof Error ? e.message.split("\n")[0] : String(e), e instanceof Error ? e.stack : ""));
