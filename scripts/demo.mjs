// `npm run demo`: runs the main job on samples/ — check every loss, summarise the flood desk's candidates,
// write the HTML report and generated training code — and says where the outputs went.
import { mkdirSync } from "node:fs";
import { createRequire } from "node:module";

const require = createRequire(import.meta.url);
const cli = require("../dist/cli.js");

async function step(title, argv) {
  console.log(`\n$ npx propriety ${argv.join(" ")}\n# ${title}`);
  const code = await cli.main(argv);
  console.log(`(exit ${code})`);
  return code;
}

/** Runs a command and returns what it printed on stdout (for the summary table). */
async function capture(argv) {
  let out = "";
  const io = { ...cli.nodeIo, stdout: (t) => { out += t; } };
  const code = await cli.main(argv, io);
  return { code, out };
}

const show = (x, digits = 4) => (x === null || x === undefined ? "—" : Number(x.toPrecision(digits)).toString());

mkdirSync("out", { recursive: true });
// mistakes.loss holds deliberate errors and flood-desk.loss one failed claim, so this step exits 1 by design.
await step("diagnostics for every sample (mistakes.loss has deliberate errors)", ["check", "samples"]);

console.log("\n$ npx propriety check --json samples/flood-desk.loss   # summarised:");
const { out } = await capture(["check", "--json", "samples/flood-desk.loss"]);
const rows = JSON.parse(out).files.flatMap((f) => f.losses);
const table = [["loss", "verdict", "λ", "δ ≈ c·ε^p", "exponents (modulus / direct)", "threshold"]];
for (const l of rows) {
  table.push([
    l.name,
    l.verdict,
    show(l.lambda),
    l.modulus ? `${show(l.modulus.coefficient)}·ε^${show(l.modulus.power, 3)}` : "—",
    `${show(l.exponents.viaModulus, 3)} / ${show(l.exponents.direct, 3)}`,
    show(l.threshold),
  ]);
}
const widths = table[0].map((_, i) => Math.max(...table.map((r) => String(r[i]).length)));
for (const r of table) console.log(r.map((c, i) => String(c).padEnd(widths[i])).join("  "));

await step("a self-contained HTML report (verdicts, figures, curves)", ["report", "samples/flood-desk.loss", "--out", "out/flood-desk-report.html"]);
await step("PyTorch code for the log loss", ["gen", "--target", "torch", "samples/flood-desk.loss", "--loss", "log_loss", "--out", "out/log_loss.py"]);
await step("NumPy code with gradients for the alert-focused loss", ["gen", "--target", "numpy", "samples/flood-desk.loss", "--loss", "alert_focus", "--out", "out/alert_focus.py"]);
await step("the focal loss with its posterior-recovery map (improper: needs --allow-improper)", ["gen", "--target", "jax", "samples/flood-desk.loss", "--loss", "focal", "--allow-improper", "--out", "out/focal.py"]);
console.log("\nOutputs: out/flood-desk-report.html, out/log_loss.py, out/alert_focus.py, out/focal.py");
process.exitCode = 0;
