// The editor host of the end-to-end test: the npm package code-server@4.100.3, which bundles the
// browser build of VS Code 1.100.3 and is the newest release built for Node 20. It is installed once
// into a cache folder outside the repository and reused while its stamp matches; a stamp from another
// version (or a half-finished install) is detected and the folder rebuilt.
// Only the npm registry and the local machine are used: the ripgrep binary code-server's postinstall
// would fetch from the network is seeded from Debian's /usr/bin/rg, and native modules whose
// prebuilt download fails fall back to compiling from source (needs build-essential, python3,
// libkrb5-dev and the Node headers; see .ci/run).
import { spawnSync } from "node:child_process";
import fs from "node:fs";
import os from "node:os";
import path from "node:path";

export const CODE_SERVER_VERSION = "4.100.3";
/** @vscode/ripgrep version and its binary tag, as pinned by code-server 4.100.3's lib/vscode/package.json. */
const RIPGREP_PKG = "1.15.11";
const RIPGREP_TAG = "v13.0.0-10";
const STAMP_FILE = "propriety-e2e-stamp.json";

export function cacheRoot() {
  return process.env.PROPRIETY_E2E_CACHE ?? path.join(process.env.XDG_CACHE_HOME ?? path.join(os.homedir(), ".cache"), "propriety-e2e");
}

export function hostDir() {
  return path.join(cacheRoot(), `code-server-${CODE_SERVER_VERSION}`);
}

function wantedStamp() {
  return { codeServer: CODE_SERVER_VERSION, nodeMajor: process.versions.node.split(".")[0], platform: `${process.platform}-${process.arch}` };
}

export function codeServerBin(dir = hostDir()) {
  return path.join(dir, "node_modules", "code-server", "out", "node", "entry.js");
}

/** Why the cached host cannot be used, or null when it can. */
export function staleReason(dir = hostDir()) {
  const stampPath = path.join(dir, STAMP_FILE);
  if (!fs.existsSync(stampPath)) return fs.existsSync(dir) ? "no install stamp (an interrupted install?)" : "not installed";
  let stamp;
  try {
    stamp = JSON.parse(fs.readFileSync(stampPath, "utf8"));
  } catch {
    return "unreadable install stamp";
  }
  const want = wantedStamp();
  for (const k of Object.keys(want)) if (stamp[k] !== want[k]) return `stamp ${k}=${stamp[k]}, wanted ${want[k]}`;
  if (!fs.existsSync(codeServerBin(dir))) return "code-server entry point missing";
  return null;
}

function preflight() {
  const missing = [];
  if (!fs.existsSync("/usr/bin/rg")) missing.push("/usr/bin/rg (apt-get install ripgrep)");
  for (const tool of ["make", "g++", "python3"]) {
    if (spawnSync("sh", ["-c", `command -v ${tool}`]).status !== 0) missing.push(`${tool} (apt-get install build-essential python3)`);
  }
  if (!fs.existsSync("/usr/include/krb5.h") && !fs.existsSync("/usr/include/krb5/krb5.h")) missing.push("krb5 headers (apt-get install libkrb5-dev)");
  return missing;
}

/** Installs the host when needed; returns {dir, installedMs|null}. Throws an Error whose first line is the reason. */
export function ensureHost(log = console.log) {
  const dir = hostDir();
  const why = staleReason(dir);
  if (why === null) return { dir, installedMs: null };
  const missing = preflight();
  if (missing.length) throw new Error(`host install impossible: missing ${missing.join(", ")}`);
  log(`e2e: installing code-server ${CODE_SERVER_VERSION} into ${dir} (${why})`);
  const t = Date.now();
  fs.rmSync(dir, { recursive: true, force: true });
  const tmp = path.join(dir, "tmp");
  fs.mkdirSync(path.join(tmp, `vscode-ripgrep-cache-${RIPGREP_PKG}`), { recursive: true });
  const tar = spawnSync("tar", ["czf", path.join(tmp, `vscode-ripgrep-cache-${RIPGREP_PKG}`, `ripgrep-${RIPGREP_TAG}-x86_64-unknown-linux-musl.tar.gz`), "-C", "/usr/bin", "rg"]);
  if (tar.status !== 0) throw new Error(`host install failed: could not seed the ripgrep cache: ${tar.stderr}`);
  fs.writeFileSync(path.join(dir, "package.json"), JSON.stringify({ name: "propriety-e2e-host", private: true }) + "\n");
  const logFile = path.join(dir, "npm-install.log");
  const nodeDir = path.dirname(path.dirname(process.execPath));
  const env = {
    ...process.env,
    TMPDIR: tmp,
    // code-server's postinstall refuses to run as root unless this is set (npm 11 dropped the flag but the script reads the variable).
    npm_config_unsafe_perm: "true",
    // node-pty's postinstall runs npx node-gyp; without this an npmrc with `yes=false` cancels it.
    npm_config_yes: "true",
    // node-gyp must find local headers instead of downloading them.
    npm_config_nodedir: process.env.npm_config_nodedir ?? (fs.existsSync(path.join(nodeDir, "include", "node", "node.h")) ? nodeDir : "/usr"),
  };
  const fd = fs.openSync(logFile, "w");
  const r = spawnSync("npm", ["install", "--no-audit", "--no-fund", "--no-save", `code-server@${CODE_SERVER_VERSION}`], { cwd: dir, env, stdio: ["ignore", fd, fd] });
  fs.closeSync(fd);
  if (r.status !== 0 || !fs.existsSync(codeServerBin(dir))) {
    const tail = fs.readFileSync(logFile, "utf8").trim().split("\n").slice(-30).join("\n");
    const errLine = tail.split("\n").find((l) => /npm error|Error:/.test(l)) ?? `exit ${r.status}`;
    throw new Error(`host install failed: npm install code-server@${CODE_SERVER_VERSION}: ${errLine.trim()}\n(log ${logFile}, last lines:)\n${tail}`);
  }
  fs.rmSync(tmp, { recursive: true, force: true });
  fs.writeFileSync(path.join(dir, STAMP_FILE), JSON.stringify({ ...wantedStamp(), installedAt: new Date().toISOString() }, null, 2) + "\n");
  const ms = Date.now() - t;
  log(`e2e: host installed in ${(ms / 1000).toFixed(1)} s`);
  return { dir, installedMs: ms };
}

if (import.meta.url === `file://${process.argv[1]}`) {
  try {
    const r = ensureHost();
    console.log(r.installedMs === null ? `e2e: host ready (cached) in ${r.dir}` : `e2e: host ready in ${r.dir}`);
  } catch (e) {
    console.error(`e2e: ${e.message}`);
    process.exit(1);
  }
}
