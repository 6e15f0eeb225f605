// `npm run bench`: bundles every scripts/bench-*.ts with esbuild, runs its exported `bench…` functions
// and prints one table of the measured figures (medians and p95s in milliseconds).
import { build } from "esbuild";
import { mkdirSync, mkdtempSync, readdirSync, rmSync } from "node:fs";
import { join, resolve } from "node:path";
import { createRequire } from "node:module";

const require = createRequire(import.meta.url);
const files = readdirSync("scripts").filter((f) => /^bench-.*\.ts$/.test(f)).sort();
// Inside the project, so that packages a benchmark loads at run time (esbuild, playwright-core) resolve.
mkdirSync(join("node_modules", ".cache"), { recursive: true });
const dir = mkdtempSync(join("node_modules", ".cache", "propriety-bench-"));
const rows = [];
try {
  for (const f of files) {
    const out = join(dir, f.replace(/\.ts$/, ".cjs"));
    await build({ entryPoints: [join("scripts", f)], bundle: true, platform: "node", format: "cjs", target: "node20", outfile: out, logLevel: "warning" });
    const mod = require(resolve(out));
    for (const [name, fn] of Object.entries(mod)) {
      if (!name.startsWith("bench") || typeof fn !== "function") continue;
      process.stderr.write(`running ${f}:${name}…\n`);
      const results = await fn();
      for (const r of results) rows.push({ suite: f.replace(/^bench-|\.ts$/g, ""), ...r });
    }
  }
} finally {
  rmSync(dir, { recursive: true, force: true });
}
const fmt = (x) => (typeof x === "number" ? x.toFixed(2) : "");
console.log(["suite", "case", "median ms", "p95 ms", "target"].join("\t"));
for (const r of rows) console.log([r.suite, r.name, fmt(r.medianMs), fmt(r.p95Ms), r.target ?? ""].join("\t"));
