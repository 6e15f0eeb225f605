import { it } from "vitest";
import { analyseProperness } from "../../server/src/analysis/properness.js";
import { STANDARD_LOSSES, familyOf, MARGIN_EXP, MARGIN_LOGISTIC, MARGIN_SQUARED, MARGIN_HINGE, focalFamily } from "../../test/analysis/standard-losses.js";
it("explore", () => {
  const rows = [...STANDARD_LOSSES.map(r => [r.id, r.spec, r.verdict] as const), ["exp", MARGIN_EXP, "sp"], ["logistic", MARGIN_LOGISTIC, "sp"], ["sq", MARGIN_SQUARED, "sp"], ["hinge", MARGIN_HINGE, "imp"]] as const;
  for (const [id, spec, exp] of rows) {
    const t0 = performance.now();
    const r = analyseProperness(familyOf(spec as any));
    const ms = performance.now() - t0;
    console.log(id, "=>", r.verdict, "expected", exp, ms.toFixed(1)+"ms", JSON.stringify(r.counterexample), JSON.stringify(r.flatInterval), r.findings.map(f => f.code + ":" + f.message.slice(0, 160)).join(" | "));
  }
  const t0 = performance.now();
  const r = analyseProperness(focalFamily());
  console.log("focal family", r.verdict, r.paramReport, performance.now() - t0, r.findings.map(f=>f.code).join(","));
});
