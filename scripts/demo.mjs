// `npm run demo`: runs the main job on samples/ — check every loss, then (when available) the HTML
// report and generated code — and prints where the outputs went.
import { existsSync, mkdirSync } from "node:fs";
import { createRequire } from "node:module";

const require = createRequire(import.meta.url);
const cli = require("../dist/cli.js");

async function step(title, argv) {
  console.log(`\n$ propriety ${argv.join(" ")}    # ${title}`);
  const code = await cli.main(argv);
  console.log(`(exit ${code})`);
  return code;
}

mkdirSync("out", { recursive: true });
// mistakes.loss holds deliberate errors, so this step exits 1 by design.
await step("diagnostics for every sample (mistakes.loss has deliberate errors)", ["check", "samples"]);
await step("the flood desk's candidate losses as JSON", ["check", "--json", "samples/flood-desk.loss"]);
if (cli.COMMANDS?.includes("report")) {
  await step("a self-contained HTML report", ["report", "samples/flood-desk.loss", "--out", "out/flood-desk-report.html"]);
  if (existsSync("out/flood-desk-report.html")) console.log("report: out/flood-desk-report.html");
}
if (cli.COMMANDS?.includes("gen")) {
  await step("PyTorch code for the log loss", ["gen", "--target", "torch", "samples/flood-desk.loss", "--loss", "log_loss", "--out", "out/log_loss.py"]);
  await step("NumPy code with gradients for the alert-focused loss", ["gen", "--target", "numpy", "samples/flood-desk.loss", "--loss", "alert_focus", "--out", "out/alert_focus.py"]);
}
process.exitCode = 0;
