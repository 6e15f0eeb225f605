/**
 * End-to-end figures on the real notation: each loss of the samples compiled from text (closures from the
 * compiler, symbolic derivatives) and analysed by the engine — properness at the defaults, properness with
 * the declared ranges swept, and curvature with all bounds — plus whole documents through the service.
 */
import { readFileSync } from "node:fs";
import { analyseCurvature } from "../server/src/analysis/curvature.js";
import type { LossFamily } from "../server/src/loss-model.js";
import { analyseProperness } from "../server/src/analysis/properness.js";
import { analyseDocument } from "../server/src/pipeline/pipeline.js";

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)]!;
}

/** Warm-up runs before timing (the compiled closures and the engine are JIT-compiled on first use). */
const WARM_UP = 5;

function timeIt(runs: number, f: () => void): number {
  const times: number[] = [];
  for (let i = 0; i < runs + WARM_UP; i++) {
    const t0 = performance.now();
    f();
    if (i >= WARM_UP) times.push(performance.now() - t0);
  }
  return median(times);
}

/** The family with its ranges dropped: the properness analysis at the defaults only. */
function pinned(family: LossFamily): LossFamily {
  return { ...family, params: family.params.map((p) => ({ name: p.name, default: p.default })) };
}

export async function benchDocument(runs = 15): Promise<{ name: string; medianMs: number; target?: string }[]> {
  const rows: { name: string; medianMs: number; target?: string }[] = [];
  for (const file of ["samples/flood-desk.loss", "samples/forms.loss"]) {
    const text = readFileSync(file, "utf8");
    const doc = analyseDocument(text, { skipAnalysis: true });
    const short = file.replace("samples/", "");
    for (const l of doc.losses) {
      if (!l.compiled) continue;
      const family = l.compiled.family;
      rows.push({ name: `${short}: ${l.info.name} — properness at defaults`, medianMs: timeIt(runs, () => analyseProperness(pinned(family))), target: "≤ 10 ms" });
      const swept = family.params.filter((p) => p.lo !== undefined && p.hi !== undefined && !p.thresholdOnly).length;
      if (swept > 0) {
        rows.push({ name: `${short}: ${l.info.name} — properness, ${swept}-parameter range`, medianMs: timeIt(runs, () => analyseProperness(family)), target: "≤ 150 ms" });
      }
      const p = analyseProperness(pinned(family));
      const fns = p.fns;
      if (fns && (p.verdict === "proper" || p.verdict === "strictly-proper")) {
        rows.push({ name: `${short}: ${l.info.name} — curvature and all bounds`, medianMs: timeIt(runs, () => analyseCurvature(fns)), target: "≤ 20 ms" });
      }
    }
    rows.push({ name: `${short}: whole document through the service`, medianMs: timeIt(2, () => analyseDocument(text)) });
  }
  return rows;
}
