import { build } from "esbuild";
import { createRequire } from "node:module";
const require = createRequire(import.meta.url);
await build({ entryPoints: ["scripts/bench-lsp.ts"], bundle: true, platform: "node", format: "cjs", target: "node20", outfile: "/tmp/scratch/bench-lsp.cjs", logLevel: "warning" });
const r = await require("/tmp/scratch/bench-lsp.cjs").benchLsp();
console.log(JSON.stringify(r, null, 1));
