/**
 * Golden files: the generated module of every sample in samples/*.loss, per target, compared line by
 * line with test/codegen/golden/<target>/<sample>.<ext> (UPDATE_GOLDEN=1 rewrites them). The engine's
 * figures (verdict, λ, exponents, modulus) are masked before comparing, since the engine is refined
 * independently of the generator; everything else must match exactly. PyTorch and JAX modules are also
 * parsed by Python's `ast` (check_ast.py) and, when the library is importable, executed (JAX under jit)
 * with values and autograd gradients compared with the engine.
 */
import * as fs from "node:fs";
import * as path from "node:path";
import { describe, expect, it } from "vitest";
import { nearlyEqual } from "../../server/src/analysis/numeric/tolerance.js";
import { generate, TARGETS, type Target } from "../../server/src/codegen/index.js";
import { sanitiseName } from "../../server/src/codegen/names.js";
import { analyseDocument } from "../../server/src/pipeline/pipeline.js";
import { checkAst, decode, HERE, probabilityPoints, scorePoints, pythonHas, referenceFor, sampleFiles, SAMPLES_DIR, TOL, type PyCall } from "./support.js";

const UPDATE = process.env.UPDATE_GOLDEN === "1";
const EXT: Record<Target, string> = { torch: "py", jax: "py", numpy: "py", ts: "ts" };
const ENGINE_LINE = /^(#|\/\/) (verdict|lambda \(inf of the weight function\)|surrogate-regret exponents|modulus of convexity): .*$/gm;
const mask = (code: string) => code.replace(ENGINE_LINE, "$1 $2: <engine figure>");
const HAS_PYTHON = pythonHas("ast");

const docs = new Map<string, ReturnType<typeof analyseDocument>>();
function doc(file: string) {
  if (!docs.has(file)) docs.set(file, analyseDocument(fs.readFileSync(path.join(SAMPLES_DIR, file), "utf8")));
  return docs.get(file)!;
}

function generated(file: string, target: Target): { text: string; ok: boolean } {
  const r = generate(doc(file), { target, allowImproper: true, sourceName: file });
  return r.ok ? { text: r.code, ok: true } : { text: `error: ${r.message}\n`, ok: false };
}

describe("golden files", () => {
  it("there are samples to generate", () => {
    expect(sampleFiles().length).toBeGreaterThan(0);
  });
  for (const file of sampleFiles()) {
    for (const target of TARGETS) {
      const stem = file.replace(/\.loss$/, "");
      const golden = path.join(HERE, "golden", target, `${stem}.${EXT[target]}`);
      it(`${target}: ${file}`, () => {
        const { text, ok } = generated(file, target);
        expect(ok, text).toBe(true);
        if (UPDATE || !fs.existsSync(golden)) {
          fs.mkdirSync(path.dirname(golden), { recursive: true });
          fs.writeFileSync(golden, text);
        }
        expect(mask(text)).toBe(mask(fs.readFileSync(golden, "utf8")));
      });
    }
  }
});

describe("PyTorch and JAX output parsed by Python's ast", () => {
  for (const file of sampleFiles()) {
    for (const target of ["torch", "jax"] as const) {
      it(`${target}: ${file} parses, imports only ${target}, has the documented signatures`, (ctx) => {
        if (!HAS_PYTHON) ctx.skip("python3 is not available: not parsed");
        const { text } = generated(file, target);
        const res = checkAst(target, text);
        expect(res.problems).toEqual([]);
        expect(res.ok).toBe(true);
        const fns = Object.entries(res.functions).filter(([n]) => !n.startsWith("_"));
        expect(fns.length).toBeGreaterThan(0);
        for (const [n, f] of fns) {
          if (n.endsWith("_recover_posterior")) expect(f.args).toEqual(["q"]);
          else expect(f, n).toEqual({ args: ["pred", "target", "weight", "reduction"], defaults: [null, "mean"] });
        }
      });

      for (const input of ["prob", "score"] as const) {
        it(`${target}: ${file} (${input} input) executed against the engine (values and autograd gradients)`, (ctx) => {
          if (!HAS_PYTHON || !pythonHas(target)) ctx.skip(`${target} is not importable by python3: ${target} output parsed only, not executed`);
          const d = doc(file);
          const r = generate(d, { target, input, allowImproper: true, sourceName: file });
          if (!r.ok) ctx.skip(`nothing to generate on the ${input} scale: ${r.message}`);
          const text = r.ok ? r.code : "";
          const points = input === "prob" ? probabilityPoints(1200) : scorePoints(1200);
          const n = points.length;
          const losses = d.losses.filter((l) => l.compiled && text.includes(`loss \`${l.info.name}\` from`) && referenceFor(l, input));
          const pred = [...points, ...points];
          const labels = [...points.map(() => 1), ...points.map(() => 0)];
          const calls: PyCall[] = losses.flatMap((l) => {
            const fn = sanitiseName(l.info.name, "python");
            return [
              { fn, args: [pred, labels], kwargs: { reduction: "none" } },
              { fn, args: [pred, labels], kwargs: { reduction: "none" }, grad: true },
            ];
          });
          const res = checkAst(target, text, calls);
          if (res.run?.skipped) ctx.skip(res.run.skipped);
          expect(losses.length).toBeGreaterThan(0);
          losses.forEach((l, i) => {
            const ref = referenceFor(l, input)!;
            const vals = decode(res.run!.results![2 * i]!) as number[];
            const grads = decode(res.run!.results![2 * i + 1]!) as number[];
            const bad = points.filter((q, j) => !nearlyEqual(vals[j]!, ref.l1(q), TOL.valueRel, TOL.valueAbs) || !nearlyEqual(vals[n + j]!, ref.l0(q), TOL.valueRel, TOL.valueAbs));
            expect(bad, `${l.info.name} values`).toEqual([]);
            // Autograd (torch) / jax.grad through the generated code against the engine's symbolic derivatives.
            const gradTol = (g: number) => TOL.valueAbs * Math.max(1, Math.abs(g));
            const badG = points.filter((q, j) => {
              const w1 = ref.dl1?.(q);
              const w0 = ref.dl0?.(q);
              return (w1 !== undefined && !nearlyEqual(grads[j]!, w1, TOL.valueRel, gradTol(w1))) || (w0 !== undefined && !nearlyEqual(grads[n + j]!, w0, TOL.valueRel, gradTol(w0)));
            });
            expect(badG.slice(0, 3), `${l.info.name} gradients`).toEqual([]);
          });
        });
      }
    }
  }
});
