/**
 * The fuzz campaign (scripts/fuzz-lib.ts) in `npm test`: the oracle's hand-written derivatives are checked
 * against central differences and the notation against their JavaScript twins, the documents are a
 * function of (seed, index), and a bounded slice with a fixed seed runs through parse → analysis →
 * formatter → generation with no crash, no internal error, no formatter failure, no oracle disagreement and
 * no document over the time limit (measured in process; the CLI runner kills hung documents instead).
 * The oracle's truth: Savage 1971, Schervish 1989, Buja, Stuetzle & Shen 2005 and Reid & Williamson 2010,
 * as cited in scripts/fuzz-lib.ts (from memory).
 */
import { describe, expect, it } from "vitest";
import { seededRandom } from "../server/src/analysis/numeric/sampling.js";
import { compileExpr } from "../server/src/semantics/compile.js";
import { parse } from "../server/src/syntax/parse.js";
import { failed, makeDoc, mutate, oracleDoc, randomTerm, runDoc, summarise, summaryText, type RunResult } from "../scripts/fuzz-lib.js";

/** The slice: a fixed seed and a document count that runs in well under a minute on one loaded core. */
const SLICE_SEED = 20261202;
const SLICE_DOCS = 120;
/** The per-document limit of the campaign (the CLI's default --timeout-ms). */
const DOC_LIMIT_MS = 10_000;

/** Compiles an expression in q written in the notation (no parameters). */
function compileQ(source: string): (q: number) => number {
  const { ast, issues } = parse(`loss t {\n  l1(q) = ${source}\n}\n`);
  expect(issues).toEqual([]);
  const item = ast.items[0];
  const clause = item?.kind === "loss" ? item.clauses[0] : undefined;
  if (clause?.kind !== "clause" || !clause.value) throw new Error(`no clause in ${source}`);
  const f = compileExpr(clause.value, { variable: "q", paramSlots: new Map(), defs: new Map() });
  const p = new Float64Array(0);
  return (q) => f(q, p);
}

/** Step and tolerance of the central differences (common practice: h ≈ ε^(1/3) for first, ε^(1/4) for second derivatives, relative error well above the O(h²) truncation). */
const H1 = 1e-5;
const H2 = 1e-4;
const DIFF_TOL = 1e-4;

function near(a: number, b: number, tol: number): boolean {
  return Math.abs(a - b) <= tol * Math.max(1, Math.abs(a), Math.abs(b));
}

describe("fuzz oracle: the concave terms", () => {
  it("H, H' and w = −H'' in the notation agree with their JavaScript twins and with central differences", () => {
    const rng = seededRandom(7);
    const names = new Set<string>();
    for (let k = 0; k < 200; k++) {
      const t = randomTerm(rng, Math.exp(-3 + 6 * rng()));
      names.add(t.name.replace(/\([\d.]+\)$/, ""));
      const H = compileQ(t.H);
      const dH = compileQ(t.dH);
      const w = t.w === null ? null : compileQ(t.w);
      for (const q of [0.07, 0.23, 0.41, 0.58, 0.77, 0.93]) {
        expect(near(H(q), t.fH(q), 1e-12), `${t.name} H(${q})`).toBe(true);
        expect(near(dH(q), t.fdH(q), 1e-12), `${t.name} H'(${q})`).toBe(true);
        const kink = t.w === null && Math.abs(q - Number(/tent\((.*)\)/.exec(t.name)?.[1])) < 2 * H2;
        if (kink) continue;
        expect(near((t.fH(q + H1) - t.fH(q - H1)) / (2 * H1), t.fdH(q), DIFF_TOL), `${t.name} H' by differences at ${q}`).toBe(true);
        const d2 = (t.fH(q + H2) - 2 * t.fH(q) + t.fH(q - H2)) / (H2 * H2);
        if (w) expect(near(-d2, w(q), DIFF_TOL * 10), `${t.name} w by differences at ${q}`).toBe(true);
        // Concavity, the oracle's premise: −H'' ≥ 0 (within the differences' rounding).
        expect(d2).toBeLessThanOrEqual(1e-6 * Math.max(1, Math.abs(t.fH(q))));
      }
    }
    // Every kind of term was drawn.
    expect([...names].sort()).toEqual(["-(q-a)^2", "entropy", "q(1-q)", "spherical", "sqrt(q(1-q))", "tent", "tsallis"]);
  });

  it("oracle documents parse cleanly and name the verdict they expect", () => {
    const rng = seededRandom(11);
    const seen = new Set<string>();
    for (let i = 0; i < 100; i++) {
      const d = oracleDoc(rng, i);
      expect(parse(d.text).issues, d.text).toEqual([]);
      expect(["strictly-proper", "proper", "improper"]).toContain(d.expected);
      seen.add(d.expected!);
      if (d.recipe!.includes("bump") || d.recipe!.includes("tilt")) expect(d.expected).toBe("improper");
    }
    expect(seen.size).toBe(3);
  });
});

describe("fuzz documents", () => {
  it("are a function of (seed, index)", () => {
    for (let i = 0; i < 30; i++) expect(makeDoc(5, i).text).toBe(makeDoc(5, i).text);
    expect(new Set(Array.from({ length: 30 }, (_, i) => makeDoc(5, i).text)).size).toBe(30);
  });

  it("mutations change the text and keep it a string of code units", () => {
    const rng = seededRandom(3);
    let changed = 0;
    for (let i = 0; i < 50; i++) if (mutate(rng, "loss a {\n  l1(q) = q\n  l0(q) = 1 - q\n}\n") !== "loss a {\n  l1(q) = q\n  l0(q) = 1 - q\n}\n") changed++;
    expect(changed).toBeGreaterThan(40);
  });
});

describe("fuzz run of one document", () => {
  it("reports a verdict that differs from the expected one as a disagreement", () => {
    // The Brier score is strictly proper (Brier 1950, "Verification of forecasts expressed in terms of probability"; Gneiting & Raftery 2007, "Strictly proper scoring rules, prediction, and estimation"; from memory): expecting "improper" must be flagged.
    const text = "loss oracle {\n  l1(q) = (1 - q)^2\n  l0(q) = q^2\n}\n";
    const wrong = runDoc({ index: 0, kind: "oracle", text, expected: "improper", recipe: "test" });
    expect(wrong.verdict).toBe("strictly-proper");
    expect(wrong.problems.map((p) => p.kind)).toEqual(["disagreement"]);
    const right = runDoc({ index: 0, kind: "oracle", text, expected: "strictly-proper", recipe: "test" });
    expect(right.problems).toEqual([]);
  });
});

describe("fuzz slice", () => {
  it(`${SLICE_DOCS} documents (seed ${SLICE_SEED}): no crash, internal error, formatter failure, oracle disagreement or overrun`, () => {
    const t0 = performance.now();
    const results: RunResult[] = [];
    for (let i = 0; i < SLICE_DOCS; i++) results.push(runDoc(makeDoc(SLICE_SEED, i)));
    const summary = summarise(SLICE_SEED, results, performance.now() - t0, DOC_LIMIT_MS);
    expect(summary.oracleDocuments).toBeGreaterThan(SLICE_DOCS / 5);
    expect(failed(summary), summaryText(summary)).toBe(false);
  }, 300_000);
});
