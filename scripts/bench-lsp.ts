/**
 * Editing latency through the real language server: a 50-loss document is opened over stdio with the
 * test client, then edited the way people type (one keystroke every 60 ms, each in a different loss).
 * Measured per keystroke: didChange sent → the first publishDiagnostics for that version ("fresh
 * diagnostics", the fast pass), and → the server's "analysed" notification for it (the engine's pass,
 * which includes the debounce). Run with `npm run bench`.
 */
import { LspTestClient, positionOf } from "../test/support/lsp-client.js";

/** Pause between keystrokes: a brisk typist (common practice: 100–200 characters per minute is 300–600 ms; 60 ms stresses the server). */
const KEYSTROKE_MS = 60;
const EDITS = 60;
/** Keystrokes before measuring starts: the server's code is still being compiled by V8's JIT (common practice). */
const WARMUP = 10;
const LOSSES = 50;

function percentile(xs: number[], p: number): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.min(s.length - 1, Math.ceil((p / 100) * s.length) - 1)]!;
}

/** Fifty losses cycling through the definition forms, each with a parameter default the edits change. */
export function makeBenchDocument(n = LOSSES): string {
  const forms = [
    (i: number) => `loss p${i}(a = 1 in [0.5, 2]) {\n  l1(q) = a * (1 - q)^2\n  l0(q) = a * q^2\n}\n`,
    (i: number) => `loss b${i}(a = 1 in [0.5, 2]) {\n  bayes(q) = -a * q * ln(q) - a * (1 - q) * ln(1 - q)\n}\n`,
    (i: number) => `loss w${i}(a = 1 in [0.5, 2]) {\n  weight(q) = a / (q * (1 - q))\n}\n`,
    (i: number) => `loss m${i}(a = 1 in [0.5, 2]) {\n  margin(v) = a * ln(1 + exp(-v))\n}\n`,
    (i: number) => `loss f${i}(a = 1 in [0, 3]) {\n  l1(q) = -(1 - q)^a * ln(q)\n  l0(q) = -q^a * ln(1 - q)\n  expect proper\n}\n`,
  ];
  const parts: string[] = ["# Benchmark document: fifty losses in five forms.\n"];
  for (let i = 0; i < n; i++) parts.push(forms[i % forms.length]!(i), "\n");
  return parts.join("");
}

export async function benchLsp(): Promise<{ name: string; p95Ms: number; medianMs: number; target?: string }[]> {
  const client = await LspTestClient.start();
  const uri = "file:///bench.loss";
  let text = makeBenchDocument();
  try {
    await client.open(uri, text);
    await client.waitFor(() => client.analysed.get(uri) === 1, 120_000, "the first full analysis");
    const fresh: number[] = [];
    const full: number[] = [];
    const pending: Promise<void>[] = [];
    for (let i = 0; i < WARMUP + EDITS; i++) {
      // Append a digit to the default of loss i mod 50: `a = 1` → `a = 11`… keeps the file valid.
      const marker = `(a = 1`;
      let at = -1;
      for (let k = 0; k <= i % LOSSES; k++) at = text.indexOf(marker, at + 1);
      const offset = at + marker.length;
      const pos = positionOf(text, offset);
      const t0 = performance.now();
      const version = await client.change(uri, [{ range: { start: pos, end: pos }, text: "0" }]);
      text = text.slice(0, offset) + "0" + text.slice(offset);
      await client.diagnosticsFor(uri, version, 30_000);
      if (i >= WARMUP) fresh.push(performance.now() - t0);
      // The engine's pass for this version may be superseded by the next keystroke; only the last counts.
      pending.push(client.waitFor(() => (client.analysed.get(uri) ?? 0) >= version, 60_000, "analysis").then(() => {
        if (client.analysed.get(uri) === version && i >= WARMUP) full.push(performance.now() - t0);
      }).catch(() => undefined));
      await new Promise((r) => setTimeout(r, KEYSTROKE_MS));
    }
    await Promise.all(pending);
    // One settled edit at the end measures the engine's pass when typing stops.
    const settled: number[] = [];
    for (let i = 0; i < 10; i++) {
      const marker = `(a = 1`;
      const offset = text.indexOf(marker) + marker.length;
      const pos = positionOf(text, offset);
      const t0 = performance.now();
      const version = await client.change(uri, [{ range: { start: pos, end: pos }, text: "0" }]);
      text = text.slice(0, offset) + "0" + text.slice(offset);
      await client.waitFor(() => client.analysed.get(uri) === version, 60_000, "analysis");
      settled.push(performance.now() - t0);
    }
    if (process.env["BENCH_VERBOSE"]) console.error(JSON.stringify(fresh.map((x) => Math.round(x))));
    const rows = [
      { name: `edit → fresh diagnostics, ${LOSSES} losses (keystrokes ${KEYSTROKE_MS} ms apart)`, p95Ms: percentile(fresh, 95), medianMs: percentile(fresh, 50), target: "≤ 50 ms" },
      { name: "edit → engine diagnostics after the pause (incl. 150 ms debounce)", p95Ms: percentile(settled, 95), medianMs: percentile(settled, 50) },
    ];
    if (full.length > 0) rows.push({ name: "edit → engine diagnostics while typing (last keystroke of a burst)", p95Ms: percentile(full, 95), medianMs: percentile(full, 50) });
    return rows;
  } finally {
    await client.stop();
  }
}
