/**
 * The HTML report as text: figures of every loss, the inverse table, the caution, the inlined data and
 * script, and a Content-Security-Policy that admits nothing but the page's own nonce'd script and style.
 */
import { describe, expect, it } from "vitest";
import { analyseDocument } from "../../server/src/pipeline/pipeline.js";
import { REPORT_CAUTION, renderReport } from "../../server/src/products/report.js";
import type { CurvesResult } from "../../server/src/protocol.js";

const SOURCE = `
loss log_loss {
  l1(q) = -ln(q)
  l0(q) = -ln(1 - q)
}

loss brier {
  l1(q) = (1 - q)^2
  l0(q) = q^2
}

loss asymmetric {
  l1(q) = (1 - q)^2
  l0(q) = 1.5 * q^2
}
`;

const doc = analyseDocument(SOURCE);
/** A stand-in page script with the two sequences that could end the script element early. */
const SCRIPT = `window.__x = "</script><!-- end";`;
const CSS = `body { color: black; }`;
const html = renderReport([{ file: "losses.loss", doc }], { script: SCRIPT, css: CSS, nonce: "TESTNONCE", generatedAt: "2026-01-01T00:00:00Z", points: 51 });

function row(loss: string): string {
  const m = html.match(new RegExp(`<tr data-loss="${loss}">(.*?)</tr>`));
  if (!m) throw new Error(`no overview row for ${loss}`);
  return m[1]!.replace(/<[^>]+>/g, "|").replace(/\|+/g, "|");
}

describe("renderReport", () => {
  it("has a strict CSP whose nonce is on every script and style, and loads nothing from elsewhere", () => {
    const csp = html.match(/<meta http-equiv="Content-Security-Policy" content="([^"]+)">/)?.[1]?.replace(/&#39;/g, "'");
    expect(csp).toBeDefined();
    expect(csp).toContain("default-src 'none'");
    expect(csp).toContain("script-src 'nonce-TESTNONCE'");
    expect(csp).toContain("style-src 'nonce-TESTNONCE'");
    expect(csp).not.toContain("unsafe");
    const tags = html.match(/<(script|style)\b[^>]*>/g)!;
    expect(tags.length).toBe(3);
    for (const t of tags) expect(t).toContain('nonce="TESTNONCE"');
    expect(html).not.toMatch(/<link\b|\bsrc=|href="http|url\(http/);
  });

  it("escapes the inlined script so it cannot close its element", () => {
    expect(html).toContain(`window.__x = "<\\/script><\\!-- end";`);
    expect(html.match(/<\/script>/g)).toHaveLength(2);
  });

  it("inlines the curve data as JSON that parses back to the sampled losses", () => {
    const json = html.match(/<script type="application\/json" id="report-data" nonce="TESTNONCE">(.*?)<\/script>/s)![1]!;
    const data = JSON.parse(json) as { eta: number; files: { file: string; curves: CurvesResult }[] };
    expect(data.eta).toBe(0.7);
    expect(data.files.map((f) => f.file)).toEqual(["losses.loss"]);
    expect(data.files[0]!.curves.losses.map((l) => l.loss)).toEqual(["log_loss", "brier", "asymmetric"]);
    expect(data.files[0]!.curves.losses[0]!.partials[0]!.x).toHaveLength(51);
  });

  it("lists every loss with its verdict, λ, modulus coefficient and power, and both exponents", () => {
    // Log loss (test/reference/proper-losses.md row L1): λ = 4 (Agarwal 2014, "Surrogate Regret Bounds for Bipartite Ranking via Strongly Proper Losses", JMLR 15, Ex. 2),
    // δ(ε) ≈ ε²/2 near 0 and exponent ½ by both routes (Bao 2023, "Proper Losses, Moduli of Convexity, and Surrogate Regret Bounds", COLT, §4).
    expect(row("log_loss")).toMatch(/^\|log_loss\|strictly proper\|4\|0\.5\|2\|0\.5\|0\.5\|0\.5\|/);
    // Brier (y − q)²: λ = 2, δ = ε²/4 exactly (Bao 2023, §4; test/reference/proper-losses.md rows L3, N9).
    expect(row("brier")).toMatch(/^\|brier\|strictly proper\|2\|0\.25\|2\|0\.5\|0\.5\|0\.5\|/);
    expect(row("asymmetric")).toMatch(/^\|asymmetric\|improper\|—\|—\|—\|—\|—\|/);
  });

  it("gives the inverse table for decision regrets 0.1 … 0.001 of a strictly proper loss", () => {
    const section = html.slice(html.indexOf('<section class="loss" id="loss-0-1"'), html.indexOf('<section class="loss" id="loss-0-2"'));
    const table = section.match(/<table class="figures inverse">(.*?)<\/table>/s)![1]!;
    const firstCells = [...table.matchAll(/<tr><td class="num">([^<]+)<\/td><td class="num">([^<]+)<\/td>/g)].map((m) => [m[1], m[2]]);
    expect(firstCells.map((c) => c[0])).toEqual(["0.1", "0.05", "0.01", "0.001"]);
    // Modulus route for Brier: R = 2·δ**(ε) = 2·ε²/4 = ε²/2 (Bao 2023, Cor. 7; computed): 0.005 at ε = 0.1.
    expect(firstCells[0]![1]).toBe("0.005");
    expect(firstCells[2]![1]).toBe("5.00e−5");
  });

  it("carries the caution paragraph and one chart container per loss plus the overlay", () => {
    expect(html).toContain(REPORT_CAUTION.slice(0, 60));
    expect(html.match(/data-loss-charts="0:\d+"/g)).toHaveLength(3);
    expect(html.match(/data-overlay="0"/g)).toHaveLength(1);
  });

  it("is deterministic without a nonce (derived from the content)", () => {
    const a = renderReport([{ file: "f", doc }], { script: SCRIPT, css: CSS, points: 21 });
    const b = renderReport([{ file: "f", doc }], { script: SCRIPT, css: CSS, points: 21 });
    expect(a).toBe(b);
    expect(a).toMatch(/script-src &#39;nonce-r[0-9a-f]{8}&#39;/);
  });
});
