/**
 * `npm run fuzz -- --docs N --seed S [--jobs J] [--timeout-ms T] [--out report.json]`: the fuzz campaign.
 * Documents are made from (seed, index) by scripts/fuzz-lib.ts and run in child processes (the pipeline is
 * synchronous): a document that does not finish within the time limit is a hang (its worker is killed and
 * replaced), a worker that dies is a crash. Prints a short text summary and the JSON report (stdout, or
 * the file given by --out); exits 1 when anything was found. Bundled and started by scripts/fuzz.mjs.
 */
import { fork, type ChildProcess } from "node:child_process";
import { readFileSync, readdirSync, writeFileSync } from "node:fs";
import { cpus } from "node:os";
import { join } from "node:path";
import { failed, makeDoc, runDoc, summarise, summaryText, type RunResult } from "./fuzz-lib.js";

const WORKER_FLAG = "PROPRIETY_FUZZ_WORKER";

function loadSamples(): string[] {
  try {
    return readdirSync("samples").filter((f) => f.endsWith(".loss")).sort().map((f) => readFileSync(join("samples", f), "utf8"));
  } catch {
    return [];
  }
}

/** Worker: receives {seed, index}, answers {result}. */
function worker(): void {
  const samples = loadSamples();
  process.on("message", (m: { seed: number; index: number }) => {
    const result = runDoc(makeDoc(m.seed, m.index, samples));
    process.send!({ result });
  });
}

interface Options {
  docs: number;
  seed: number;
  jobs: number;
  timeoutMs: number;
  out: string | null;
  start: number;
}

function parseArgs(argv: string[]): Options {
  const get = (name: string): string | undefined => {
    const i = argv.indexOf(name);
    return i >= 0 ? argv[i + 1] : undefined;
  };
  const int = (name: string, def: number): number => {
    const v = get(name);
    const n = v === undefined ? def : Number(v);
    if (!Number.isInteger(n) || n < 0) throw new Error(`${name} wants a non-negative integer, got ${v}`);
    return n;
  };
  return {
    docs: int("--docs", 1000),
    seed: int("--seed", 1),
    jobs: Math.max(1, int("--jobs", Math.min(2, cpus().length))),
    timeoutMs: Math.max(1, int("--timeout-ms", 10_000)),
    out: get("--out") ?? null,
    start: int("--start", 0),
  };
}

export async function main(argv: string[]): Promise<number> {
  const o = parseArgs(argv);
  const self = typeof __filename === "string" ? __filename : "";
  const t0 = performance.now();
  const results: RunResult[] = [];
  let next = o.start;
  const end = o.start + o.docs;
  let lastReport = performance.now();

  const runSlot = (): Promise<void> =>
    new Promise((resolveSlot) => {
      let child: ChildProcess | null = null;
      let current = -1;
      let timer: NodeJS.Timeout | null = null;
      let started = 0;
      const spawnChild = () => {
        child = fork(self, [], { env: { ...process.env, [WORKER_FLAG]: "1" }, stdio: ["ignore", "ignore", "inherit", "ipc"] });
        child.on("message", (m: { result: RunResult }) => {
          if (timer) clearTimeout(timer);
          results.push(m.result);
          dispatch();
        });
        child.on("exit", (code, signal) => {
          if (current < 0) return;
          // The worker died with a document in hand (not killed by us for a hang): a crash.
          if (timer) clearTimeout(timer);
          const ms = performance.now() - started;
          results.push({ index: current, docKind: makeDoc(o.seed, current).kind, ms, problems: [{ kind: "crash", stage: "worker process", message: `exited with ${code ?? signal}` }] });
          current = -1;
          spawnChild();
          dispatch();
        });
      };
      const dispatch = () => {
        if (performance.now() - lastReport > 10_000) {
          lastReport = performance.now();
          process.stderr.write(`fuzz: ${results.length}/${o.docs} documents, ${((performance.now() - t0) / 1000).toFixed(0)} s\n`);
        }
        if (next >= end) {
          current = -1;
          child?.removeAllListeners("exit");
          child?.kill();
          resolveSlot();
          return;
        }
        current = next++;
        started = performance.now();
        const index = current;
        timer = setTimeout(() => {
          // A hang: record it, kill this worker (ours, by its handle) and carry on with a fresh one.
          results.push({ index, docKind: makeDoc(o.seed, index).kind, ms: performance.now() - started, problems: [{ kind: "hang", stage: "document", message: `no answer within ${o.timeoutMs} ms` }] });
          current = -1;
          const c = child!;
          c.removeAllListeners();
          c.kill("SIGKILL");
          spawnChild();
          dispatch();
        }, o.timeoutMs);
        child!.send({ seed: o.seed, index });
      };
      spawnChild();
      dispatch();
    });

  await Promise.all(Array.from({ length: Math.min(o.jobs, Math.max(1, o.docs)) }, runSlot));
  results.sort((a, b) => a.index - b.index);
  const summary = summarise(o.seed, results, performance.now() - t0, o.timeoutMs);
  const json = JSON.stringify(summary, null, 2);
  if (o.out) {
    writeFileSync(o.out, json + "\n");
    console.log(summaryText(summary));
  } else {
    process.stderr.write(summaryText(summary) + "\n");
    console.log(json);
  }
  return failed(summary) ? 1 : 0;
}

if (process.env[WORKER_FLAG] === "1" && typeof process.send === "function") worker();
