/**
 * The pipeline's contract: the three depths of a document (fast never runs the engine; full does;
 * incremental gives up when a newer text arrives), the per-loss cache, `maxAnalysedLosses`, and
 * `analyseAt` (the sliders' explicit path: values clamped to the declared ranges with a note, the
 * document's own analysis at the defaults, cached results at other values).
 */
import { describe, expect, it } from "vitest";
import { analyseDocument, createPipeline } from "../../server/src/pipeline/pipeline.js";

// The focal loss (Lin et al. 2017, "Focal Loss for Dense Object Detection", ICCV, Eq. 4, in the
// partial-loss form): at g = 0 it is log loss, strictly proper; for g > 0 it is not proper
// (Charoenphakdee et al. 2021, "On Focal Loss for Class-Posterior Probability Estimation", CVPR, Thm 1).
const FOCAL = `loss focal(g = 2 in [0, 5]) {
  l1(q) = -(1 - q)^g * ln(q)
  l0(q) = -q^g * ln(1 - q)
}
`;
const BRIER = `loss brier {
  l1(q) = (1 - q)^2
  l0(q) = q^2
}
`;

describe("depths of a document", () => {
  it("fast runs no engine; full analyses every loss; fast afterwards reuses the engine's results", () => {
    const p = createPipeline();
    const text = FOCAL + BRIER;
    const fast = p.fast(text);
    expect(fast.losses.map((l) => l.analysis)).toEqual([null, null]);
    expect(fast.issues.some((i) => i.code === "improper")).toBe(false);
    const full = p.full(text);
    expect(full.losses.map((l) => l.analysis?.verdict)).toEqual(["improper", "strictly-proper"]);
    // A new text with the same losses (a comment added): the fast pass already shows the engine's findings.
    const again = p.fast(`# a comment\n${text}`);
    expect(again.losses.map((l) => l.analysis?.verdict)).toEqual(["improper", "strictly-proper"]);
    expect(again.issues.filter((i) => i.code === "improper").map((i) => i.message)).toEqual(full.issues.filter((i) => i.code === "improper").map((i) => i.message));
  });

  it("incremental gives up (null) once the text is stale, and otherwise ends with the full analysis", async () => {
    const p = createPipeline();
    expect(await p.incremental(FOCAL + BRIER, () => true, () => Promise.resolve())).toBeNull();
    const done = await p.incremental(FOCAL + BRIER, () => false, () => Promise.resolve());
    expect(done?.issues).toEqual(createPipeline().full(FOCAL + BRIER).issues);
  });

  it("analyses at most maxAnalysedLosses losses and says so", () => {
    const doc = analyseDocument(BRIER + BRIER.replace("brier", "brier2"), { maxAnalysedLosses: 1 });
    expect(doc.losses.map((l) => l.analysis?.verdict ?? null)).toEqual(["strictly-proper", null]);
    expect(doc.issues.find((i) => i.code === "analysis-unknown")?.message).toMatch(/only the first 1 losses/);
  });

  it("records the settings a document was analysed under", () => {
    expect(analyseDocument(BRIER, { defaultThreshold: 0.2 }).settings.defaultThreshold).toBe(0.2);
    expect(analyseDocument(BRIER).losses[0]!.analysis!.threshold).toBe(0.5);
    expect(analyseDocument(BRIER, { defaultThreshold: 0.2 }).losses[0]!.analysis!.threshold).toBe(0.2);
  });
});

describe("analyseAt", () => {
  const p = createPipeline();
  const doc = p.full(FOCAL);

  it("at the defaults is the document's own analysis (no second engine run)", () => {
    const at = p.analyseAt(doc, "focal", {});
    expect(at.overridden).toBe(false);
    expect(at.analysis).toBe(doc.losses[0]!.analysis);
    expect(at.values).toEqual({ g: 2 });
  });

  it("at g = 0 analyses the pinned loss: log loss, strictly proper", () => {
    const at = p.analyseAt(doc, "focal", { g: 0 });
    expect(at.overridden).toBe(true);
    expect(at.analysis?.verdict).toBe("strictly-proper");
    expect(at.analysis?.params).toEqual({ g: 0 });
    expect(at.fns).not.toBeNull();
  });

  it("reuses its cache for the same values", () => {
    const a = p.analyseAt(doc, "focal", { g: 0.5 });
    const b = p.analyseAt(doc, "focal", { g: 0.5 });
    expect(b.analysis).toBe(a.analysis);
    expect(a.analysis?.verdict).toBe("improper");
  });

  it("clamps values to the declared range and ignores unknown or non-finite ones, with notes", () => {
    const at = p.analyseAt(doc, "focal", { g: 9, h: 1 });
    expect(at.values).toEqual({ g: 5 });
    expect(at.notes).toEqual([expect.stringMatching(/`g` = 9 is outside its declared range; clamped to 5/), expect.stringMatching(/unknown parameter `h`/)]);
    const nan = p.analyseAt(doc, "focal", { g: Number.NaN });
    expect(nan.values).toEqual({ g: 2 });
    expect(nan.notes[0]).toMatch(/not a finite number/);
  });

  it("names why a loss cannot be analysed", () => {
    expect(p.analyseAt(doc, "nothing", {}).reason).toMatch(/no loss of that name/);
    const broken = p.full("loss typo {\n  l1(q) = (1 - q)^2 + cc\n  l0(q) = q^2\n}\n");
    expect(p.analyseAt(broken, "typo", {}).reason).toMatch(/has errors/);
  });
});
