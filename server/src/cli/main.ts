/**
 * The command line: `propriety check [--json | --sarif] FILE|DIR…` (and later sub-commands).
 * The only layer besides the LSP adapter that touches files and the process; everything else is the
 * service. `main(argv, io)` runs in-process for tests and returns the exit code (0 ok, 1 errors found,
 * 2 usage or I/O error).
 */
import { parseArgs } from "node:util";
import { loadDocuments, nodeIo, settingsFromArgs, SETTINGS_HELP, SETTINGS_OPTIONS, UsageError, type CliIo } from "./io.js";
import { toJsonFile, toSarif, toTextLines } from "../products/check-report.js";
import { runReport } from "./report.js";
import { runGen } from "./gen.js";

export { collectFiles, loadDocuments, nodeIo, readSource, UsageError, type CliIo } from "./io.js";

import { VERSION } from "../version.js";

export { VERSION };

/** Sub-commands this build provides (the demo script reads this). */
export const COMMANDS = ["check", "report", "gen"];

const HELP = `propriety ${VERSION} — check classification losses written in the .loss notation

Usage:
  propriety check [--json | --sarif] [--threshold C] [--grid N] FILE|DIR…
                                                  check properness, curvature and claims
  propriety report FILE|DIR… --out report.html [--png DIR] [--svg DIR]
                                                  one self-contained HTML page with figures and curves
  propriety gen --target torch|jax|numpy|ts FILE  generate training code (see 'propriety gen --help')
  propriety --help | --version

check:
  Directories are searched recursively for *.loss files.
  Text output: path:line:col: severity code: message (1-based).
  --json   one JSON object: files, diagnostics (0-based LSP ranges), per-loss figures
  --sarif  a SARIF 2.1.0 log for code-scanning tools
${SETTINGS_HELP}  Exit status: 0 no errors, 1 errors found, 2 usage or I/O error.

report:
  Every loss's verdict, λ, modulus, bound exponents, inverse table and curves; no network needed.
  --png/--svg DIR also export each chart (needs Chromium: /usr/bin/chromium or $PROPRIETY_CHROMIUM).
  Exit status: 0 written, 2 usage, I/O or export error.
`;

export async function main(argv: string[], io: CliIo = nodeIo): Promise<number> {
  try {
    const [command, ...rest] = argv;
    if (command === undefined || command === "--help" || command === "-h" || command === "help") {
      io.stdout(HELP);
      return command === undefined ? 2 : 0;
    }
    if (command === "--version" || command === "-v") {
      io.stdout(VERSION + "\n");
      return 0;
    }
    switch (command) {
      case "check":
        return runCheck(rest, io);
      case "report":
        return await runReport(rest, io);
      case "gen":
        return runGen(rest, io);
      default:
        throw new UsageError(`unknown command '${command}'`);
    }
  } catch (err) {
    if (err instanceof UsageError || (err instanceof TypeError && "code" in err && String(err.code).startsWith("ERR_PARSE_ARGS"))) {
      io.stderr(`propriety: ${err.message}\nRun 'propriety --help' for usage.\n`);
      return 2;
    }
    io.stderr(`propriety: ${err instanceof Error ? err.message : String(err)}\n`);
    return 2;
  }
}

function runCheck(args: string[], io: CliIo): number {
  const { values, positionals } = parseArgs({
    args,
    options: { json: { type: "boolean" }, sarif: { type: "boolean" }, help: { type: "boolean", short: "h" }, ...SETTINGS_OPTIONS },
    allowPositionals: true,
  });
  if (values.help) {
    io.stdout(HELP);
    return 0;
  }
  if (values.json && values.sarif) throw new UsageError("--json and --sarif cannot be combined");
  if (positionals.length === 0) throw new UsageError("check needs at least one FILE or DIR");
  const docs = loadDocuments(positionals, io, settingsFromArgs(values));
  if (docs === null) return 2;
  const files = docs.map((d) => d.file);
  const hasErrors = docs.some(({ doc }) => doc.issues.some((i) => i.severity === "error"));
  if (values.json) {
    io.stdout(JSON.stringify({ files: docs.map(({ file, doc }) => toJsonFile(file, doc)) }, null, 2) + "\n");
  } else if (values.sarif) {
    io.stdout(JSON.stringify(toSarif(docs, VERSION), null, 2) + "\n");
  } else {
    for (const { file, doc } of docs) for (const line of toTextLines(file, doc)) io.stdout(line + "\n");
    const counts = { error: 0, warning: 0 };
    for (const { doc } of docs) for (const i of doc.issues) if (i.severity === "error" || i.severity === "warning") counts[i.severity]++;
    const losses = docs.reduce((n, d) => n + d.doc.losses.length, 0);
    io.stderr(`${files.length} file${files.length === 1 ? "" : "s"}, ${losses} loss${losses === 1 ? "" : "es"}: ${counts.error} error${counts.error === 1 ? "" : "s"}, ${counts.warning} warning${counts.warning === 1 ? "" : "s"}\n`);
  }
  return hasErrors ? 1 : 0;
}
