// The closed-form posterior-recovery map appended to the engine's "posterior-recovery" issue: the formula
// in the issue's data is parsed back as a `.loss` expression, compiled, and must send the minimiser q* of
// the conditional risk back to η.
import { readFileSync } from "node:fs";
import * as path from "node:path";
import { describe, expect, it } from "vitest";
import type { Issue } from "../../server/src/issue.js";
import { compileLoss } from "../../server/src/semantics/family.js";
import { analyseSemantics } from "../../server/src/semantics/model.js";
import { analyseDocument } from "../../server/src/pipeline/pipeline.js";
import type { DocumentAnalysis } from "../../server/src/pipeline/stages.js";
import { parse } from "../../server/src/syntax/parse.js";

const FLOOD_DESK = readFileSync(path.join(__dirname, "../../samples/flood-desk.loss"), "utf8");

/** Agreement required of η recovered through the printed closed form (test/reference/proper-losses.md row C16: 1e-9 for closed forms, common practice). */
const RECOVERY_TOL = 1e-9;
/** The reference q* is printed to 10 decimals, so it is exact to 5e-11; the engine's minimiser must agree to well within 1e-9. */
const REFERENCE_Q_TOL = 1e-9;

/** The posterior-recovery issue of one loss in a document. */
function recoveryIssue(doc: DocumentAnalysis, loss: string): Issue {
  const issue = doc.issues.find((i) => i.code === "posterior-recovery" && i.data?.["loss"] === loss);
  expect(issue, `a posterior-recovery issue for \`${loss}\``).toBeDefined();
  return issue!;
}

/** Compiles a printed formula in q (with the given parameters in scope at their values) through parse → resolve → compile. */
function compileFormula(formula: string, params: string): (q: number) => number {
  const src = `loss t${params} {\n  l1(q) = ${formula}\n  l0(q) = q\n}\n`;
  const parsed = parse(src);
  expect(parsed.issues, `\`${formula}\` parses`).toEqual([]);
  const model = analyseSemantics(parsed.ast);
  expect(model.issues.filter((i) => i.severity === "error"), `\`${formula}\` resolves`).toEqual([]);
  const compiled = compileLoss(model, model.losses[0]!);
  expect(compiled, `\`${formula}\` compiles`).not.toBeNull();
  return compiled!.family.instantiate({}).l1!;
}

describe("closed-form posterior recovery in the posterior-recovery issue", () => {
  it("focal loss, g = 2: data.formula maps the engine's q*(0.7) back to η = 0.7", () => {
    // Focal loss l1 = −(1−q)^γ ln q, l0 = −q^γ ln(1−q) (Charoenphakdee et al. 2021, "On Focal Loss for
    // Class-Posterior Probability Estimation", CVPR); recovery η = l0'(q*)/(l0'(q*) − l1'(q*))
    // (Reid & Williamson 2010, "Composite Binary Losses", JMLR 11, Cor. 12). Check value: at γ = 2 and
    // η = 0.7 the minimiser is q* = 0.5784799858 (test/reference/proper-losses.md row F1, computed with mpmath).
    const doc = analyseDocument(FLOOD_DESK);
    const issue = recoveryIssue(doc, "focal");
    const formula = issue.data?.["formula"];
    expect(typeof formula).toBe("string");
    expect(issue.message.endsWith(` Closed form: η = ${formula as string}`)).toBe(true);

    const analysis = doc.losses.find((l) => l.info.name === "focal")!.analysis!;
    expect(analysis.params["g"]).toBe(2);
    const k = analysis.minimiser!.etas.findIndex((e) => Math.abs(e - 0.7) < 1e-12);
    expect(k, "the engine samples η = 0.7").toBeGreaterThanOrEqual(0);
    const qStar = analysis.minimiser!.qs[k]!;
    expect(Math.abs(qStar - 0.5784799858)).toBeLessThan(REFERENCE_Q_TOL);

    const eta = compileFormula(formula as string, "(g = 2)");
    expect(Math.abs(eta(qStar) - 0.7)).toBeLessThan(RECOVERY_TOL);
    // The reference minimiser itself (10 decimals) maps back as well.
    expect(Math.abs(eta(0.5784799858) - 0.7)).toBeLessThan(RECOVERY_TOL);
    // At η = ½ the minimiser is ½ by symmetry (test/reference/proper-losses.md, table F; computed: l1(q) = l0(1 − q)), so the map must fix ½.
    expect(Math.abs(eta(0.5) - 0.5)).toBeLessThan(RECOVERY_TOL);
  });

  it("scaled Brier partials: the formula is η = 3q/(2 + q)", () => {
    // Computed by hand from Reid & Williamson 2010, JMLR 11, Cor. 12: l1 = (1−q)², l0 = 1.5q² give
    // l1' = −2(1−q), l0' = 3q, so η = 3q/(3q + 2(1−q)) = 3q/(2 + q).
    const issue = recoveryIssue(analyseDocument(FLOOD_DESK), "asymmetric");
    const eta = compileFormula(issue.data?.["formula"] as string, "");
    for (const q of [0.1, 0.4, 0.75]) expect(Math.abs(eta(q) - (3 * q) / (2 + q))).toBeLessThan(RECOVERY_TOL);
  });

  it("leaves other issues without a formula", () => {
    const doc = analyseDocument(FLOOD_DESK);
    const others = doc.issues.filter((i) => i.code !== "posterior-recovery");
    expect(others.length).toBeGreaterThan(0);
    expect(others.every((i) => i.data?.["formula"] === undefined)).toBe(true);
  });
});
