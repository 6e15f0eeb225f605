/**
 * `propriety gen --target torch|jax|numpy|ts [--input prob|score] PATH… [--loss NAME] [--out PATH |
 * --out-dir DIR] [--check] [--allow-improper] [--set name=value]… [--link canonical]`: generates training
 * code for the losses of `.loss` files (directories are searched for them). One input prints to stdout or
 * writes --out; several inputs (or a directory) write one module per file into --out-dir. Writes are
 * atomic (a temporary sibling, then a rename), never through a symbolic link, never onto a directory or
 * a source file. Losses that cannot be generated are listed on stderr with the reason. `--check` writes
 * nothing: it compares the would-be output with the existing files (for CI).
 * Exit 0 when everything was generated (and, with --check, is up to date); 1 when a loss cannot be
 * generated or (--check) an output is missing or differs; 2 on usage or I/O errors.
 */
import * as path from "node:path";
import { parseArgs } from "node:util";
import { generate, isTarget, TARGETS, type GenerateOptions } from "../codegen/index.js";
import { analyseDocument } from "../pipeline/pipeline.js";
import {
  checkOutputPath, collectFiles, infoOf, readSource, settingsFromArgs, SETTINGS_HELP, SETTINGS_OPTIONS, UsageError,
  writeAtomically, type CliIo,
} from "./io.js";

export { writeAtomically };

export const GEN_HELP = `gen:
  propriety gen --target torch|jax|numpy|ts [--input prob|score] PATH... [--loss NAME]
                [--out FILE | --out-dir DIR] [--check] [--allow-improper] [--set name=value]...
                [--link canonical] [--force]
  One function per loss, signature (pred, target, weight=None, reduction="mean") in Python,
  (pred, target, options) in TypeScript; NumPy and TypeScript also get <name>_grad / <name>Grad.
  PATH is a .loss file or a directory (searched for .loss files); one module per file.
  --input prob   pred holds probabilities (default); score: pred holds scores, mapped through the link
  --loss NAME    generate only this loss (one input file)
  --out FILE     write the module to FILE (atomically) instead of stdout (one input file)
  --out-dir DIR  write one module per input file into DIR, named <file>_<target>.<ext>
  --check        write nothing; compare with the existing --out/--out-dir files, exit 1 on a difference
  --allow-improper  also generate improper losses (WARNING header, posterior-recovery function);
                 a loss that says \`expect improper\` is generated without it
  --set a=2      bake in a parameter value other than its default (repeatable); the header's figures
                 are re-analysed at the values baked in, and an improper value needs consent
  --link canonical  use the canonical link (psi' = w) for score input
  --force        allow an output name ending in .loss (an input file is never overwritten)
  Losses that cannot be generated are listed on stderr with the reason (and in the module header).
${SETTINGS_HELP}  Exit status: 0 all generated (and up to date with --check); 1 a loss cannot be generated, or
  (--check) an output is missing or differs; 2 usage or I/O error.
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

/** One generated module waiting to be written or checked. */
interface Planned {
  file: string;
  out: string | null;
  code: string;
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
        "out-dir": { type: "string" },
        check: { type: "boolean" },
        "allow-improper": { type: "boolean" },
        force: { type: "boolean" },
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
    if (positionals.length === 0) throw new GenUsageError("gen needs a FILE or a DIRECTORY");
    const out = typeof values.out === "string" ? values.out : null;
    const outDir = typeof values["out-dir"] === "string" ? values["out-dir"] : null;
    const check = values.check === true;
    if (out !== null && outDir !== null) throw new GenUsageError("give --out or --out-dir, not both");
    const overrides = parseSets((values.set as string[] | undefined) ?? []);
    let settings;
    let files: string[];
    try {
      settings = settingsFromArgs(values);
      files = collectFiles(positionals, io);
    } catch (err) {
      if (err instanceof UsageError) throw new GenUsageError(err.message);
      throw err;
    }
    if (files.length === 0) throw new GenUsageError(`no .loss files in ${positionals.join(", ")}`);
    if (check && out === null && outDir === null) throw new GenUsageError("--check compares with existing files: give --out FILE or --out-dir DIR");
    const several = files.length > 1 || positionals.some((p) => infoOf(io, p).type === "directory");
    if (several && out !== null) throw new GenUsageError("--out takes one input file; for several files or a directory use --out-dir DIR");
    if (several && outDir === null) throw new GenUsageError("several input files (or a directory) need --out-dir DIR");
    if (several && typeof values.loss === "string") throw new GenUsageError("--loss takes one input file");
    if (outDir !== null) {
      const d = infoOf(io, outDir);
      if (d.type !== "directory" && d.type !== "missing") throw new GenUsageError(`--out-dir ${outDir} exists and is not a directory`);
    }

    let code = 0;
    const planned: Planned[] = [];
    const taken = new Map<string, string>();
    for (const file of files) {
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
        code = 1;
        continue;
      }
      for (const s of result.skipped) io.stderr(`propriety: ${file}: skipped \`${s.name}\`: ${s.reason}\n`);
      if (result.skipped.length > 0) code = 1;
      const dest = out ?? (outDir !== null ? path.join(outDir, result.fileName) : null);
      if (dest !== null) {
        const before = taken.get(path.resolve(dest));
        if (before !== undefined) throw new GenUsageError(`${before} and ${file} would both be written to ${dest}; rename one of them`);
        taken.set(path.resolve(dest), file);
        try {
          checkOutputPath(dest, files, io, values.force === true);
        } catch (err) {
          if (err instanceof UsageError) {
            io.stderr(`propriety: cannot write ${dest}: ${err.message.replace(/^--out \S+ /, "it ")}\n`);
            return 2;
          }
          throw err;
        }
      }
      planned.push({ file, out: dest, code: result.code });
    }

    for (const p of planned) {
      if (p.out === null) {
        io.stdout(p.code);
      } else if (check) {
        const existing = infoOf(io, p.out).type === "file" ? readExisting(p.out, io) : null;
        if (existing === null) {
          io.stderr(`propriety: ${p.out}: missing (generated from ${p.file})\n`);
          code = Math.max(code, 1);
        } else if (existing !== p.code) {
          io.stderr(`propriety: ${p.out}: out of date (differs from what ${p.file} generates; run gen without --check)\n`);
          code = Math.max(code, 1);
        } else {
          io.stderr(`up to date: ${p.out}\n`);
        }
      } else {
        try {
          io.writeFile(p.out, p.code);
        } catch (err) {
          io.stderr(`propriety: cannot write ${p.out}: ${err instanceof Error ? err.message : String(err)}\n`);
          return 2;
        }
        io.stderr(`wrote ${p.out}\n`);
      }
    }
    return code;
  } catch (err) {
    if (err instanceof GenUsageError) return usage(io, err.message);
    io.stderr(`propriety: ${err instanceof Error ? err.message : String(err)}\n`);
    return 2;
  }
}

function readExisting(p: string, io: CliIo): string | null {
  try {
    return io.readFile(p);
  } catch {
    return null;
  }
}

function usage(io: CliIo, message: string): number {
  io.stderr(`propriety: ${message}\nRun 'propriety gen --help' for usage.\n`);
  return 2;
}
