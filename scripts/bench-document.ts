/**
 * End-to-end figures on the real notation: each loss of the samples compiled from text (closures from the
 * compiler, symbolic derivatives) and analysed by the whole engine — properness, curvature, bounds, claims.
 */
import { readFileSync } from "node:fs";
import { analyseFamily } from "../server/src/analysis/analyse.js";
import { analyseDocument } from "../server/src/service/document.js";

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)]!;
}

export async function benchDocument(runs = 9): Promise<{ name: string; medianMs: number; target?: string }[]> {
  const rows: { name: string; medianMs: number; target?: string }[] = [];
  for (const file of ["samples/flood-desk.loss", "samples/forms.loss"]) {
    const doc = analyseDocument(readFileSync(file, "utf8"), { skipAnalysis: true });
    for (const l of doc.losses) {
      if (!l.compiled) continue;
      const times: number[] = [];
      for (let i = 0; i < runs + 2; i++) {
        const t0 = performance.now();
        analyseFamily(l.compiled.family);
        if (i >= 2) times.push(performance.now() - t0);
      }
      const ranged = l.compiled.family.params.some((p) => p.lo !== undefined && p.hi !== undefined);
      rows.push({ name: `${file.replace("samples/", "")}: ${l.info.name}`, medianMs: median(times), target: ranged ? "≤ 150 ms (ranges) + ≤ 20 ms curvature" : "≤ 10 ms properness + ≤ 20 ms curvature" });
    }
    const t: number[] = [];
    const text = readFileSync(file, "utf8");
    for (let i = 0; i < 3; i++) {
      const t0 = performance.now();
      analyseDocument(text);
      t.push(performance.now() - t0);
    }
    rows.push({ name: `${file.replace("samples/", "")}: whole document`, medianMs: median(t) });
  }
  return rows;
}
