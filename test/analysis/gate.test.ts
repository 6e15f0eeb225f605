/**
 * Any improper verdict is an error, whatever the definition form, unless the loss says `expect improper`
 * (then a warning): a CI gate on errors must not pass an improper loss whose evidence happens to be only
 * warnings. The hinge loss φ(v) = max(0, 1 − v) is classification-calibrated but has no invertible link,
 * so no probability can be recovered from its scores (Bartlett, Jordan & McAuliffe 2006, JASA 101, Table 1;
 * Reid & Williamson 2010, JMLR 11, Cor. 14 and the text after it); the notation calls that improper.
 */
import { describe, expect, it } from "vitest";
import { analyseDocument } from "../../server/src/pipeline/pipeline.js";

const severities = (text: string, code: string) => analyseDocument(text).issues.filter((i) => i.code === code).map((i) => i.severity);

describe("the error gate on improper verdicts", () => {
  it("hinge (margin form, only warning evidence) gets an improper error naming its evidence", () => {
    const doc = analyseDocument("loss hinge {\n  margin(v) = max(0, 1 - v)\n}\n");
    expect(doc.losses[0]!.analysis!.verdict).toBe("improper");
    const improper = doc.issues.filter((i) => i.code === "improper");
    expect(improper.map((i) => i.severity)).toEqual(["error"]);
    expect(improper[0]!.message).toMatch(/`margin-no-link`/);
  });

  it("with `expect improper` the same verdict is a warning", () => {
    expect(severities("loss hinge {\n  margin(v) = max(0, 1 - v)\n  expect improper\n}\n", "improper")).toEqual(["warning"]);
  });

  it("a loss with its own improper error gets no second one (the absolute loss, partial-loss form)", () => {
    expect(severities("loss absolute {\n  l1(q) = 1 - q\n  l0(q) = q\n}\n", "improper")).toEqual(["error"]);
  });

  it("proper losses get none (the logistic margin loss is log loss: Agarwal 2014, Ex. 2)", () => {
    expect(severities("loss logistic {\n  margin(v) = ln(1 + exp(-v))\n}\n", "improper")).toEqual([]);
  });
});
