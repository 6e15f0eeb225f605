// `npm run bench`: bundles every scripts/bench-*.ts with esbuild, runs its exported `bench…` functions
// and prints one table of the measured figures (medians and p95s in milliseconds), then the headline
// figures with their targets. `npm run bench -- --json` prints one JSON object on stdout instead: the
// headline figures by key (rows that carry a `key`), plus every row; progress goes to stderr.
// `--only <word>` runs the bench files whose name contains the word (e.g. `--only figures`).
import { build } from "esbuild";
import { mkdirSync, mkdtempSync, readdirSync, rmSync } from "node:fs";
import { join, resolve } from "node:path";
import { createRequire } from "node:module";

const require = createRequire(import.meta.url);
const argv = process.argv.slice(2);
const json = argv.includes("--json");
const onlyAt = argv.indexOf("--only");
const only = onlyAt >= 0 ? argv[onlyAt + 1] ?? "" : "";
const files = readdirSync("scripts").filter((f) => /^bench-.*\.ts$/.test(f) && f.includes(only)).sort();
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
const figures = {};
for (const r of rows) if (typeof r.key === "string" && typeof r.value === "number") figures[r.key] = Number(r.value.toFixed(r.unit === "ratio" ? 3 : 2));
if (json) {
  const machine = { cpus: (await import("node:os")).cpus().length, loadAverage1m: (await import("node:os")).loadavg()[0], node: process.version };
  console.log(JSON.stringify({ ...figures, machine, rows }, null, 2));
} else {
  const fmt = (x) => (typeof x === "number" ? x.toFixed(2) : "");
  console.log(["suite", "case", "median ms", "p95 ms", "target"].join("\t"));
  for (const r of rows) if (r.unit === undefined) console.log([r.suite, r.name, fmt(r.medianMs), fmt(r.p95Ms), r.target ?? ""].join("\t"));
  console.log("");
  console.log(["figure", "value", "target", "what"].join("\t"));
  for (const r of rows) {
    if (typeof r.key !== "string") continue;
    const unit = r.unit === "ratio" ? "" : ` ${r.unit ?? "ms"}`;
    console.log([r.key, `${figures[r.key]}${unit}`, r.target ?? "", r.name].join("\t"));
  }
}
