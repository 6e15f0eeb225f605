// Bundles with esbuild: the three Node entry points (extension, language server, CLI; CommonJS for Node 20
// and VS Code's loader) and, when their sources exist, three browser-side outputs (the viewer and
// report-page scripts as IIFEs, and the viewer stylesheet): six files in dist/.
import { build } from "esbuild";
import { mkdirSync } from "node:fs";

mkdirSync("dist", { recursive: true });
const common = { bundle: true, platform: "node", format: "cjs", target: "node20", sourcemap: true, logLevel: "warning" };
const entries = [
  { entryPoints: ["client/src/extension.ts"], outfile: "dist/extension.js", external: ["vscode"] },
  { entryPoints: ["server/src/lsp/main.ts"], outfile: "dist/server.js" },
  // playwright-core stays external: `report --png` loads it only when asked (it is not bundled).
  // Run directly (`node dist/cli.js check FILE`), the bundle runs the command line like bin/propriety.js
  // (it used to define `main` and exit 0 silently); required as a module, it only exports.
  { entryPoints: ["server/src/cli/main.ts"], outfile: "dist/cli.js", external: ["playwright-core"],
    footer: { js: "if (require.main === module) module.exports.main(process.argv.slice(2)).then((code) => { process.exitCode = code; });" } },
];
const optional = [
  { entryPoints: ["client/media/viewer.ts"], outfile: "dist/viewer.js", platform: "browser", format: "iife", target: "es2022" },
  // The report inlines this bundle's text (no source map: the report must be self-contained).
  { entryPoints: ["client/media/report-page.ts"], outfile: "dist/report-page.js", platform: "browser", format: "iife", target: "es2022", sourcemap: false, minify: true },
  // The webview loads the stylesheet from dist/ (its only local resource root); the report inlines it.
  { entryPoints: ["client/media/viewer.css"], outfile: "dist/viewer.css", platform: "browser", sourcemap: false },
];
import { existsSync } from "node:fs";
await Promise.all([
  ...entries.filter((e) => existsSync(e.entryPoints[0])).map((e) => build({ ...common, ...e })),
  ...optional.filter((e) => existsSync(e.entryPoints[0])).map((e) => build({ ...common, ...e })),
]);
