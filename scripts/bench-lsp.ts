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

export async function benchLsp(): Promise<{ name: string; p95Ms: number; medianMs: number; target?: string; key?: string; value?: number }[]> {
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
    const rows: { name: string; p95Ms: number; medianMs: number; target?: string; key?: string; value?: number }[] = [
      { name: `edit → fresh diagnostics, ${LOSSES} losses (keystrokes ${KEYSTROKE_MS} ms apart)`, p95Ms: percentile(fresh, 95), medianMs: percentile(fresh, 50), target: "p95 ≤ 50 ms", key: "editToDiagnosticsP95Ms", value: percentile(fresh, 95) },
      { name: "edit → engine diagnostics after the pause (incl. 150 ms debounce)", p95Ms: percentile(settled, 95), medianMs: percentile(settled, 50) },
    ];
    if (full.length > 0) rows.push({ name: "edit → engine diagnostics while typing (last keystroke of a burst)", p95Ms: percentile(full, 95), medianMs: percentile(full, 50) });
    return rows;
  } finally {
    await client.stop();
  }
}

/** Edits in the burst: sent back to back, without waiting for any answer. */
const BURST_EDITS = 1000;

/**
 * A burst of 1,000 keystrokes sent to the real server as fast as the pipe takes them, on the 50-loss
 * document: the time from the last edit sent to the diagnostics of the last version after the engine's
 * pass (the server's `propriety/analysed` notification for that version, with its diagnostics published).
 */
export async function benchLspBurst(): Promise<{ name: string; medianMs: number; key: string; value: number }[]> {
  const client = await LspTestClient.start();
  const uri = "file:///burst.loss";
  let text = makeBenchDocument();
  try {
    await client.open(uri, text);
    await client.waitFor(() => client.analysed.get(uri) === 1, 120_000, "the first full analysis");
    const marker = `(a = 1`;
    const offsets: number[] = [];
    for (let at = text.indexOf(marker); at >= 0; at = text.indexOf(marker, at + 1)) offsets.push(at + marker.length);
    let last = 0;
    let t0 = 0;
    for (let i = 0; i < BURST_EDITS; i++) {
      // Each keystroke appends a digit to a default of a different loss; earlier offsets shift by the digits inserted before them.
      const k = i % offsets.length;
      const offset = offsets[k]!;
      const pos = positionOf(text, offset);
      t0 = performance.now();
      last = await client.change(uri, [{ range: { start: pos, end: pos }, text: "0" }]);
      text = text.slice(0, offset) + "0" + text.slice(offset);
      for (let j = k + 1; j < offsets.length; j++) offsets[j]! += 1;
      offsets[k] = offset + 1;
    }
    await client.waitFor(() => client.analysed.get(uri) === last && client.diagnostics.get(uri)?.version === last, 300_000, "the final diagnostics of the burst");
    const ms = performance.now() - t0;
    return [{ name: `${BURST_EDITS}-edit burst, ${LOSSES} losses: last edit → final diagnostics of the last version`, medianMs: ms, key: "burst1000FinalDiagnosticsMs", value: ms }];
  } finally {
    await client.stop();
  }
}
