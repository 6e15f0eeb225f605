/**
 * `propriety gen --target torch|jax|numpy|ts [--input prob|score] FILE [--loss NAME] [--out PATH]
 * [--allow-improper] [--set name=value]… [--link canonical]`: generates training code for the losses of
 * a file. Prints to stdout, or writes PATH atomically (a temporary file in the same directory, then a
 * rename), so an error never leaves a half-written file. Exit 0 on success, 1 when the losses cannot be
 * generated (errors in the file, improper without --allow-improper, no closed form), 2 on usage or I/O
 * errors.
 */
import * as fs from "node:fs";
import * as path from "node:path";
import { parseArgs } from "node:util";
import { generate, isTarget, TARGETS, type GenerateOptions } from "../codegen/index.js";
import { analyseDocument } from "../pipeline/pipeline.js";
import { readSource, settingsFromArgs, SETTINGS_HELP, SETTINGS_OPTIONS, UsageError, type CliIo } from "./io.js";

export const GEN_HELP = `gen:
  propriety gen --target torch|jax|numpy|ts [--input prob|score] FILE [--loss NAME] [--out PATH]
                [--allow-improper] [--set name=value]... [--link canonical]
  One function per loss, signature (pred, target, weight=None, reduction="mean") in Python,
  (pred, target, options) in TypeScript; NumPy and TypeScript also get <name>_grad / <name>Grad.
  --input prob   pred holds probabilities (default); score: pred holds scores, mapped through the link
  --loss NAME    generate only this loss
  --out PATH     write to PATH (atomically) instead of stdout
  --allow-improper  also generate improper losses (WARNING header, posterior-recovery function)
  --set a=2      bake in a parameter value other than its default (repeatable)
  --link canonical  use the canonical link (psi' = w) for score input
${SETTINGS_HELP}  Exit status: 0 generated, 1 the loss cannot be generated, 2 usage or I/O error.
`;

class GenUsageError extends Error {}

/** Parses `name=value` pairs of --set. */
function parseSets(sets: string[]): Record<string, number> {
  const out: Record<string, number> = {};
  for (const s of sets) {
    const m = /^\s*([A-Za-z_][A-Za-z0-9_]*)\s*=\s*(.+?)\s*$/.exec(s);
    const value = m ? Number(m[2]) : NaN;
    if (!m || !Number.isFinite(value)) throw new GenUsageError(`--set expects name=number, got '${s}'`);
    out[m[1]!] = value;
  }
  return out;
}

/** Writes text to `target` through a temporary sibling and a rename; removes the temporary on failure. */
export function writeAtomically(target: string, text: string): void {
  const dir = path.dirname(path.resolve(target));
  fs.mkdirSync(dir, { recursive: true });
  const tmp = path.join(dir, `.${path.basename(target)}.${process.pid}.${Date.now()}.tmp`);
  try {
    fs.writeFileSync(tmp, text);
    fs.renameSync(tmp, target);
  } catch (err) {
    try {
      fs.rmSync(tmp, { force: true });
    } catch {
      // The temporary may not exist; nothing else to clean up.
    }
    throw err;
  }
}

/** Runs `propriety gen`; returns the exit code. */
export function runGen(args: string[], io: CliIo): number {
  let values: Record<string, string | boolean | string[] | undefined>;
  let positionals: string[];
  try {
    ({ values, positionals } = parseArgs({
      args,
      options: {
        target: { type: "string", short: "t" },
        input: { type: "string" },
        loss: { type: "string" },
        out: { type: "string", short: "o" },
        "allow-improper": { type: "boolean" },
        set: { type: "string", multiple: true },
        link: { type: "string" },
        help: { type: "boolean", short: "h" },
        ...SETTINGS_OPTIONS,
      },
      allowPositionals: true,
    }));
  } catch (err) {
    return usage(io, err instanceof Error ? err.message : String(err));
  }
  if (values.help) {
    io.stdout(GEN_HELP);
    return 0;
  }
  try {
    const target = values.target;
    if (typeof target !== "string") throw new GenUsageError(`gen needs --target (${TARGETS.join(", ")})`);
    if (!isTarget(target)) throw new GenUsageError(`unknown target '${target}'; the targets are ${TARGETS.join(", ")}`);
    const input = values.input ?? "prob";
    if (input !== "prob" && input !== "score") throw new GenUsageError(`--input must be prob or score, not '${String(input)}'`);
    const link = values.link;
    if (link !== undefined && link !== "canonical") throw new GenUsageError(`--link accepts only 'canonical', not '${String(link)}'`);
    if (positionals.length !== 1) throw new GenUsageError(positionals.length === 0 ? "gen needs one FILE" : "gen takes exactly one FILE");
    const file = positionals[0]!;
    const overrides = parseSets((values.set as string[] | undefined) ?? []);
    let settings;
    try {
      settings = settingsFromArgs(values);
    } catch (err) {
      if (err instanceof UsageError) throw new GenUsageError(err.message);
      throw err;
    }
    const text = readSource(file, io);
    if (text === null) return 2;
    const options: GenerateOptions = {
      target,
      input,
      allowImproper: values["allow-improper"] === true,
      overrides,
      sourceName: path.basename(file),
    };
    if (typeof values.loss === "string") options.loss = values.loss;
    if (link === "canonical") options.link = "canonical";
    const result = generate(analyseDocument(text, settings), options);
    if (!result.ok) {
      io.stderr(`propriety: ${file}: ${result.message.split("\n").join(`\npropriety: ${file}: `)}\n`);
      return 1;
    }
    const out = values.out;
    if (typeof out === "string") {
      try {
        writeAtomically(out, result.code);
      } catch (err) {
        io.stderr(`propriety: cannot write ${out}: ${err instanceof Error ? err.message : String(err)}\n`);
        return 2;
      }
      io.stderr(`wrote ${out}\n`);
    } else {
      io.stdout(result.code);
    }
    return 0;
  } catch (err) {
    if (err instanceof GenUsageError) return usage(io, err.message);
    io.stderr(`propriety: ${err instanceof Error ? err.message : String(err)}\n`);
    return 2;
  }
}

function usage(io: CliIo, message: string): number {
  io.stderr(`propriety: ${message}\nRun 'propriety gen --help' for usage.\n`);
  return 2;
}
