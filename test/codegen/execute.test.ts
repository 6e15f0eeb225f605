/**
 * Executes the generated NumPy (through python3) and TypeScript (through esbuild + Node) modules for the
 * samples and compares them with the engine's compiled closures: values at ≥ 1000 points per loss and
 * label to 1e-10 relative, gradients against the engine's symbolic derivatives and against central
 * finite differences of the generated loss itself.
 */
import * as fs from "node:fs";
import * as path from "node:path";
import { describe, expect, it } from "vitest";
import { nearlyEqual } from "../../server/src/analysis/numeric/tolerance.js";
import { generate } from "../../server/src/codegen/index.js";
import { sanitiseName, tsFunctionName } from "../../server/src/codegen/names.js";
import { analyseDocument } from "../../server/src/pipeline/pipeline.js";
import type { DocumentAnalysis } from "../../server/src/pipeline/stages.js";
import {
  comparePlan, decode, fdPointsFor, loadTs, planArrays, probabilityPoints, pythonHas, referenceFor, runNumpy, sampleFiles,
  SAMPLES_DIR, scorePoints, type Executed, type Plan, type PyCall,
} from "./support.js";

const HAS_NUMPY = pythonHas("numpy");
/** Points per loss and label: over 1000, so each loss is exercised across (0, 1) including both decades next to the endpoints. */
const N_POINTS = 1200;
/** Known kinks and jumps of the samples, on each input scale (finite differences skip their neighbourhood). */
const KINKS: Record<string, { prob?: number[]; score?: number[] }> = {
  cost_weighted: { prob: [0.3] },
  squared_hinge: { prob: [0, 1], score: [-1, 1] },
};

interface Case {
  file: string;
  doc: DocumentAnalysis;
  input: "prob" | "score";
}

function cases(): Case[] {
  const out: Case[] = [];
  for (const file of sampleFiles()) {
    const doc = analyseDocument(fs.readFileSync(path.join(SAMPLES_DIR, file), "utf8"));
    for (const input of ["prob", "score"] as const) out.push({ file, doc, input });
  }
  return out;
}

/** Plans for the losses of a case that generate and have an engine reference. */
function plansFor(c: Case, generated: string, name: (n: string) => { fn: string; grad: string }): Plan[] {
  const plans: Plan[] = [];
  for (const report of c.doc.losses) {
    if (!report.compiled || !generated.includes(`loss \`${report.info.name}\` from`)) continue;
    const ref = referenceFor(report, c.input);
    if (!ref) continue;
    const { fn, grad } = name(report.info.name);
    plans.push({
      loss: report.info.name, fn, grad, ref,
      points: c.input === "prob" ? probabilityPoints(N_POINTS) : scorePoints(N_POINTS),
      fdPoints: fdPointsFor(c.input, KINKS[report.info.name]?.[c.input] ?? []),
    });
  }
  return plans;
}

const near = (a: number, b: number, rel: number, abs: number) => nearlyEqual(a, b, rel, abs);

describe("generated NumPy, executed with python3", () => {
  for (const c of cases()) {
    it(`${c.file} (${c.input} input) matches the engine`, (ctx) => {
      if (!HAS_NUMPY) ctx.skip("python3 cannot import numpy: the NumPy output is not executed");
      const r = generate(c.doc, { target: "numpy", input: c.input, allowImproper: true, sourceName: c.file });
      if (!r.ok) {
        // A sample file may have nothing to generate on this scale; that must be a stated reason.
        expect(r.message.length).toBeGreaterThan(0);
        return;
      }
      const plans = plansFor(c, r.code, (n) => ({ fn: sanitiseName(n, "python"), grad: `${sanitiseName(n, "python")}_grad` }));
      const calls: PyCall[] = [];
      for (const p of plans) {
        const a = planArrays(p);
        calls.push({ fn: p.fn, args: [a.pred, a.target], kwargs: { reduction: "none" } });
        calls.push({ fn: p.grad, args: [a.gradPred, a.gradTarget], kwargs: { reduction: "none" } });
        calls.push({ fn: p.fn, args: [a.fdPred, a.fdTarget], kwargs: { reduction: "none" } });
      }
      const res = runNumpy(r.code, calls);
      let total = 0;
      plans.forEach((p, i) => {
        const out: Executed = { values: decode(res[3 * i]!) as number[], grads: decode(res[3 * i + 1]!) as number[], fdValues: decode(res[3 * i + 2]!) as number[] };
        const { failures, compared } = comparePlan(p, out, near);
        expect(failures, p.loss).toEqual([]);
        expect(compared).toBeGreaterThanOrEqual(2 * N_POINTS);
        total += compared;
      });
      if (c.file === "flood-desk.loss" || c.file === "forms.loss") expect(plans.length).toBeGreaterThanOrEqual(c.input === "prob" ? 5 : 2);
      expect(total).toBeGreaterThan(0);
    });
  }
});

describe("generated TypeScript, transpiled with esbuild and run in Node", () => {
  for (const c of cases()) {
    it(`${c.file} (${c.input} input) matches the engine`, async () => {
      const r = generate(c.doc, { target: "ts", input: c.input, allowImproper: true, sourceName: c.file });
      if (!r.ok) {
        expect(r.message.length).toBeGreaterThan(0);
        return;
      }
      const mod = await loadTs(r.code);
      const plans = plansFor(c, r.code, (n) => ({ fn: tsFunctionName(n), grad: tsFunctionName(n, "Grad") }));
      plans.forEach((p) => {
        const a = planArrays(p);
        const f = mod[p.fn]!;
        const g = mod[p.grad]!;
        expect(typeof f, p.fn).toBe("function");
        const out: Executed = {
          values: Array.from(f(a.pred, a.target, { reduction: "none" }) as Float64Array),
          grads: Array.from(g(a.gradPred, a.gradTarget, { reduction: "none" }) as Float64Array),
          fdValues: Array.from(f(a.fdPred, Float64Array.from(a.fdTarget), { reduction: "none" }) as Float64Array),
        };
        const { failures, compared } = comparePlan(p, out, near);
        expect(failures, p.loss).toEqual([]);
        expect(compared).toBeGreaterThanOrEqual(2 * N_POINTS);
      });
      if (c.file === "flood-desk.loss" || c.file === "forms.loss") expect(plans.length).toBeGreaterThanOrEqual(c.input === "prob" ? 5 : 2);
    });
  }
});
