/**
 * Engine notes are typed data: every note carries a kind from the closed union `NoteKind`, and the
 * consumers choose notes by kind (the curves of an improper loss leave out the notes about the weight,
 * modulus and bound curves). Which kind a statement has is this project's own classification (common
 * practice); the losses below are rows of test/reference/proper-losses.md with their published sources.
 */
import { describe, expect, it } from "vitest";
import { analyseCurvature } from "../../server/src/analysis/curvature.js";
import { CURVATURE_CURVE_NOTE_KINDS, isCurvatureCurveNote, sampleCurves } from "../../server/src/analysis/curves.js";
import { deriveLossFunctions } from "../../server/src/analysis/derive.js";
import { analyseFamily } from "../../server/src/analysis/analyse.js";
import type { Note, NoteKind } from "../../server/src/loss-model.js";
import { fromBayes, hingeBayes, logNats, logisticMargin } from "./curvature-table.js";
import { bayes, familyOf, focal, LOG_NATS, weight } from "./standard-losses.js";

/** Every kind of the union, spelled out so that a new kind must be added here (and classified) on purpose. */
const ALL_KINDS: readonly NoteKind[] = [
  "derivation",
  "numeric-derivative",
  "link",
  "bayes-on-diagonal",
  "verdict-evidence",
  "numeric-weight",
  "lambda-cross-check",
  "strong-properness",
  "lambda-zero",
  "psi-threshold",
  "route-comparison",
  "loss-samples",
  "weight-samples",
  "modulus-samples",
  "bound-samples",
  "point-mass",
  "modulus-unavailable",
  "modulus-vacuous",
  "bound-axes",
  "curves-failed",
];

function kinds(notes: Note[]): NoteKind[] {
  return notes.map((n) => n.kind);
}

function expectWellFormed(notes: Note[]): void {
  for (const n of notes) {
    expect(ALL_KINDS).toContain(n.kind);
    expect(typeof n.text).toBe("string");
    expect(n.text.length).toBeGreaterThan(0);
  }
}

describe("notes of the derived model carry the kind of the derivation", () => {
  it("weight form: the integral representation is a derivation note (Reid & Williamson 2010, Thm 6, row L10c)", () => {
    const d = deriveLossFunctions(weight("beta-2-2", (q) => q * (1 - q)));
    expectWellFormed(d.fns!.notes);
    expect(d.fns!.notes.some((n) => n.kind === "derivation" && n.text.includes("integral representation"))).toBe(true);
  });

  it("Bayes form without H': a numeric-derivative note and a derivation note (Savage form, Bao 2023, Thm 1)", () => {
    const d = deriveLossFunctions(bayes("entropy", (q) => -q * Math.log(q) - (1 - q) * Math.log(1 - q)));
    expectWellFormed(d.fns!.notes);
    expect(kinds(d.fns!.notes)).toContain("numeric-derivative");
    expect(kinds(d.fns!.notes)).toContain("derivation");
  });

  it("a loss found proper gets the bayes-on-diagonal note; an improper one does not (log loss row L1, focal loss row L17)", () => {
    const proper = analyseFamily(familyOf(LOG_NATS));
    expect(proper.verdict).toBe("strictly-proper");
    expect(kinds(proper.fns!.notes)).toContain("bayes-on-diagonal");
    const improper = analyseFamily(familyOf(focal(2)));
    expect(improper.verdict).toBe("improper");
    expect(kinds(improper.fns?.notes ?? [])).not.toContain("bayes-on-diagonal");
  });
});

describe("curvature notes", () => {
  it("log loss: strong properness with λ = 4 (Agarwal 2014, Ex. 2 / Table 1) and the route comparison", () => {
    const res = analyseCurvature(fromBayes(logNats));
    expectWellFormed(res.notes);
    expect(kinds(res.notes)).toEqual(["strong-properness", "route-comparison"]);
  });

  it("log loss without a weight closure: the numeric-weight note comes first", () => {
    const res = analyseCurvature(fromBayes({ ...logNats, weight: null }));
    expect(kinds(res.notes)[0]).toBe("numeric-weight");
  });

  it("hinge Bayes risk (w = 4δ(q − ½), Reid & Williamson 2010, Table 1): λ = 0, no strong-properness note", () => {
    const res = analyseCurvature(fromBayes(hingeBayes));
    expect(kinds(res.notes)).toContain("lambda-zero");
    expect(kinds(res.notes)).not.toContain("strong-properness");
  });

  it("the analysis of a family passes the curvature notes on unchanged", () => {
    const a = analyseFamily(familyOf(LOG_NATS));
    expect(a.notes).toEqual(a.curvature!.notes);
  });
});

describe("curve notes and the filter for improper losses", () => {
  it("hinge Bayes risk: the point mass and the vacuous modulus route are curvature-curve notes; the axes note too", () => {
    const fns = fromBayes(hingeBayes);
    const curves = sampleCurves(fns, analyseCurvature(fns));
    expectWellFormed(curves.notes);
    const pointMass = curves.notes.find((n) => n.kind === "point-mass");
    expect(pointMass).toBeDefined();
    expect(isCurvatureCurveNote(pointMass!)).toBe(true);
    expect(curves.notes.some((n) => n.kind === "modulus-vacuous" && isCurvatureCurveNote(n))).toBe(true);
    expect(curves.notes.some((n) => n.kind === "bound-axes" && isCurvatureCurveNote(n))).toBe(true);
  });

  it("logistic margin: non-finite samples of l1 at q = 0 are a loss-samples note, which is kept for improper losses", () => {
    const fns = fromBayes(logisticMargin);
    const curves = sampleCurves(fns, analyseCurvature(fns));
    const l1 = curves.notes.find((n) => n.kind === "loss-samples" && n.text.startsWith("l1(q)"));
    expect(l1).toBeDefined();
    expect(isCurvatureCurveNote(l1!)).toBe(false);
  });

  it("the filter is exactly the notes about weight, modulus and bound curves", () => {
    const table: [NoteKind, boolean][] = ALL_KINDS.map((k) => [k, ["weight-samples", "point-mass", "modulus-samples", "modulus-unavailable", "modulus-vacuous", "bound-samples", "bound-axes"].includes(k)]);
    for (const [kind, hidden] of table) {
      expect(isCurvatureCurveNote({ kind, text: "x" })).toBe(hidden);
      expect(CURVATURE_CURVE_NOTE_KINDS.has(kind)).toBe(hidden);
    }
  });
});
