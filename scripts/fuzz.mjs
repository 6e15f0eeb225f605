// `npm run fuzz -- --docs N --seed S [--jobs J] [--timeout-ms T] [--out report.json]`: bundles
// scripts/fuzz.ts with esbuild (like scripts/bench.mjs) and runs the campaign; exits 1 when it found a
// crash, a hang, an internal error, a formatter failure or an oracle disagreement.
import { build } from "esbuild";
import { mkdirSync, mkdtempSync, rmSync } from "node:fs";
import { join, resolve } from "node:path";
import { createRequire } from "node:module";

const require = createRequire(import.meta.url);
mkdirSync(join("node_modules", ".cache"), { recursive: true });
const dir = mkdtempSync(join("node_modules", ".cache", "propriety-fuzz-"));
let code = 2;
try {
  const out = join(dir, "fuzz.cjs");
  await build({ entryPoints: [join("scripts", "fuzz.ts")], bundle: true, platform: "node", format: "cjs", target: "node20", outfile: out, logLevel: "warning" });
  code = await require(resolve(out)).main(process.argv.slice(2));
} finally {
  rmSync(dir, { recursive: true, force: true });
}
process.exitCode = code;
