/**
 * The fuzz campaign's pure part: seeded documents (oracle losses whose verdict is known, random losses,
 * mutations of the samples and of generated losses) and one run of a document through parse → pipeline
 * analysis → formatter → code generation, recording what escaped a never-throw API, internal errors the
 * stages caught, formatter round-trip failures and oracle disagreements. `scripts/fuzz.ts` runs it over
 * many documents in child processes (hangs); `test/fuzz.test.ts` runs a bounded slice.
 *
 * The oracle. A Bayes risk H that is concave on (0, 1) defines a proper loss through the Savage form
 * l1 = H + (1 − q) H', l0 = H − q H', strictly proper when H is strictly concave, and its weight is
 * w = −H'' (Savage 1971, "Elicitation of personal probabilities and expectations"; Schervish 1989,
 * "A general method for comparing probability assessors"; Buja, Stuetzle & Shen 2005, "Loss functions for
 * binary class probability estimation and classification" — weights as −H''; cited from memory). A positive
 * combination of concave functions is concave (common practice), strictly so when one term is. The terms
 * and their derivatives below are written out by hand (checked in test/fuzz.test.ts by central differences).
 * Improper variants add a known perturbation to a partial loss of a proper loss: a Gaussian bump or a
 * linear tilt g with g' ≠ 0 somewhere in (0, 1); at such an η, d/dq L(η, q) at q = η equals η g'(η) (or
 * (1 − η) g'(η)) ≠ 0, so q = η is not a minimiser of L(η, ·) and the loss is improper (the first-order
 * condition of properness, Reid & Williamson 2010, "Composite binary losses", Sec. 3, from memory).
 */
import { seededRandom } from "../server/src/analysis/numeric/sampling.js";
import { generate, TARGETS } from "../server/src/codegen/index.js";
import { analyseDocument } from "../server/src/pipeline/pipeline.js";
import { formatDocument } from "../server/src/syntax/format.js";
import { parse } from "../server/src/syntax/parse.js";

export type Rng = () => number;

/** What the oracle expects of the loss named `oracle`. */
export type Expected = "strictly-proper" | "proper" | "improper";

export interface FuzzDoc {
  index: number;
  kind: "oracle" | "random" | "mutated";
  text: string;
  /** For oracle documents: the verdict the loss `oracle` must get, and how it was built. */
  expected?: Expected;
  recipe?: string;
}

export interface Problem {
  kind: "crash" | "internal-error" | "formatter" | "disagreement" | "hang";
  stage: string;
  message: string;
}

export interface RunResult {
  index: number;
  docKind: FuzzDoc["kind"];
  ms: number;
  problems: Problem[];
  /** Oracle documents: expected and obtained verdicts. */
  expected?: Expected;
  verdict?: string;
}

// ---------------------------------------------------------------------------------------------------
// Random helpers

function pick<T>(rng: Rng, xs: readonly T[]): T {
  return xs[Math.floor(rng() * xs.length)]!;
}

function uniform(rng: Rng, a: number, b: number): number {
  return a + (b - a) * rng();
}

/** A number printed with 4 significant digits (what a person writes). */
function num(x: number): string {
  return Number(x.toPrecision(4)).toString();
}

/** Mixes the campaign seed and the document index into one 32-bit seed (common practice: an integer hash). */
export function docSeed(seed: number, index: number): number {
  let h = (seed ^ 0x9e3779b9) >>> 0;
  h = Math.imul(h ^ (index + 0x7f4a7c15), 0x85ebca6b) >>> 0;
  h ^= h >>> 13;
  h = Math.imul(h, 0xc2b2ae35) >>> 0;
  return (h ^ (h >>> 16)) >>> 0;
}

// ---------------------------------------------------------------------------------------------------
// Oracle: concave Bayes risks written as text, with H', −H'' and a JS twin for the self-check

export interface ConcaveTerm {
  /** H, H' and w = −H'' in the notation (variable q). */
  H: string;
  dH: string;
  /** Null when −H'' is not a function (point masses at kinks). */
  w: string | null;
  /** True when the term is strictly concave on (0, 1). */
  strict: boolean;
  /** JavaScript twins of H and H' (for the derivative self-check in the tests). */
  fH: (q: number) => number;
  fdH: (q: number) => number;
  name: string;
}

/** One random concave term with coefficient c > 0. */
export function randomTerm(rng: Rng, c: number): ConcaveTerm {
  const C = num(c);
  const cn = Number(C);
  switch (Math.floor(rng() * 7)) {
    case 0:
      return {
        name: "q(1-q)", H: `${C} * q * (1 - q)`, dH: `${C} * (1 - 2*q)`, w: `2 * ${C}`, strict: true,
        fH: (q) => cn * q * (1 - q), fdH: (q) => cn * (1 - 2 * q),
      };
    case 1:
      return {
        name: "entropy", H: `${C} * (-q*ln(q) - (1 - q)*ln(1 - q))`, dH: `${C} * ln((1 - q) / q)`, w: `${C} / (q * (1 - q))`, strict: true,
        fH: (q) => cn * (-q * Math.log(q) - (1 - q) * Math.log(1 - q)), fdH: (q) => cn * Math.log((1 - q) / q),
      };
    case 2: {
      const a = Number(num(uniform(rng, -0.5, 1.5)));
      return {
        name: "-(q-a)^2", H: `-${C} * (q - (${a}))^2`, dH: `-2 * ${C} * (q - (${a}))`, w: `2 * ${C}`, strict: true,
        fH: (q) => -cn * (q - a) ** 2, fdH: (q) => -2 * cn * (q - a),
      };
    }
    case 3:
      return {
        name: "sqrt(q(1-q))", H: `${C} * sqrt(q * (1 - q))`, dH: `${C} * (1 - 2*q) / (2 * sqrt(q * (1 - q)))`, w: `${C} / (4 * (q * (1 - q))^1.5)`, strict: true,
        fH: (q) => cn * Math.sqrt(q * (1 - q)), fdH: (q) => (cn * (1 - 2 * q)) / (2 * Math.sqrt(q * (1 - q))),
      };
    case 4:
      return {
        name: "spherical", H: `${C} * (1 - sqrt(q^2 + (1 - q)^2))`, dH: `-${C} * (2*q - 1) / sqrt(q^2 + (1 - q)^2)`, w: `${C} / (q^2 + (1 - q)^2)^1.5`, strict: true,
        fH: (q) => cn * (1 - Math.sqrt(q * q + (1 - q) ** 2)), fdH: (q) => (-cn * (2 * q - 1)) / Math.sqrt(q * q + (1 - q) ** 2),
      };
    case 5: {
      const al = Number(num(uniform(rng, 0.2, 0.9)));
      // Tsallis: H = c (q^α + (1−q)^α − 1)/(1 − α), H' = c α/(1 − α) (q^(α−1) − (1−q)^(α−1)), −H'' = c α (q^(α−2) + (1−q)^(α−2)).
      return {
        name: `tsallis(${al})`,
        H: `${C} * (q^${al} + (1 - q)^${al} - 1) / (1 - ${al})`,
        dH: `${C} * ${al} / (1 - ${al}) * (q^(${al} - 1) - (1 - q)^(${al} - 1))`,
        w: `${C} * ${al} * (q^(${al} - 2) + (1 - q)^(${al} - 2))`,
        strict: true,
        fH: (q) => (cn * (q ** al + (1 - q) ** al - 1)) / (1 - al), fdH: (q) => ((cn * al) / (1 - al)) * (q ** (al - 1) - (1 - q) ** (al - 1)),
      };
    }
    default: {
      const a = Number(num(uniform(rng, 0.15, 0.85)));
      // A tent, the minimum of two lines through 0 at the ends: concave, piecewise linear (proper, not strictly).
      return {
        name: `tent(${a})`, H: `${C} * min(q / ${a}, (1 - q) / (1 - ${a}))`, dH: `if q < ${a} then ${C} / ${a} else -${C} / (1 - ${a})`, w: null, strict: false,
        fH: (q) => cn * Math.min(q / a, (1 - q) / (1 - a)), fdH: (q) => (q < a ? cn / a : -cn / (1 - a)),
      };
    }
  }
}

/** An oracle document: one loss `oracle` from a random concave risk, in one of the definition forms, maybe perturbed. */
export function oracleDoc(rng: Rng, index: number): FuzzDoc {
  const n = 1 + Math.floor(rng() * 3);
  const terms = Array.from({ length: n }, () => randomTerm(rng, Math.exp(uniform(rng, Math.log(0.05), Math.log(20)))));
  const H = terms.map((t) => `(${t.H})`).join(" + ");
  const dH = terms.map((t) => `(${t.dH})`).join(" + ");
  const strict = terms.some((t) => t.strict);
  const hasWeight = terms.every((t) => t.w !== null);
  const scale = terms.reduce((s, t) => s + Math.abs(t.fH(0.5)) + Math.abs(t.fdH(0.25)), 0);
  const forms = hasWeight ? ["bayes", "partials", "weight", "improper-bump", "improper-tilt"] : ["bayes", "partials", "improper-bump", "improper-tilt"];
  const form = pick(rng, forms);
  const l1 = `${H} + (1 - q) * (${dH})`;
  const l0 = `${H} - q * (${dH})`;
  let body: string;
  let expected: Expected = strict ? "strictly-proper" : "proper";
  let recipe = `${form}: ${terms.map((t) => t.name).join(" + ")}`;
  if (form === "bayes") body = `  bayes(q) = ${H}\n`;
  else if (form === "weight") body = `  weight(q) = ${terms.map((t) => `(${t.w})`).join(" + ")}\n`;
  else if (form === "partials") body = `  l1(q) = ${l1}\n  l0(q) = ${l0}\n`;
  else {
    // A perturbation of size 5–50 % of the loss's own scale: g' ≠ 0 on an interval of (0, 1), so improper.
    const eps = num(uniform(rng, 0.05, 0.5) * Math.max(scale, 1e-3));
    const onL1 = rng() < 0.5;
    let g: string;
    if (form === "improper-bump") {
      const m = num(uniform(rng, 0.2, 0.8));
      const s = num(uniform(rng, 0.05, 0.2));
      g = `${eps} * exp(-((q - ${m}) / ${s})^2)`;
      recipe += ` + bump(${m}, ${s}) × ${eps} on ${onL1 ? "l1" : "l0"}`;
    } else {
      g = `${eps} * q`;
      recipe += ` + tilt ${eps}·q on ${onL1 ? "l1" : "l0"}`;
    }
    body = onL1 ? `  l1(q) = ${l1} + ${g}\n  l0(q) = ${l0}\n` : `  l1(q) = ${l1}\n  l0(q) = ${l0} + ${g}\n`;
    expected = "improper";
  }
  const text = `# oracle: ${recipe}\nloss oracle {\n${body}}\n`;
  return { index, kind: "oracle", text, expected, recipe };
}

// ---------------------------------------------------------------------------------------------------
// Random documents (no oracle: crash, hang and formatter checks only)

const FUNCS1 = ["ln", "log", "log2", "exp", "sqrt", "abs", "sigmoid", "logit", "softplus", "erf", "normcdf", "probit", "tanh", "log1p", "expm1", "sin", "atan"];
const FUNCS2 = ["min", "max", "pow"];

function randomExpr(rng: Rng, vars: string[], depth: number): string {
  if (depth <= 0 || rng() < 0.25) {
    const r = rng();
    if (r < 0.45) return pick(rng, vars);
    if (r < 0.9) return num(pick(rng, [0, 0.5, 1, 2, 3, uniform(rng, -5, 5), 1e-9, 1e9]));
    return pick(rng, ["pi", "e", "1e308", "0", "-0"]);
  }
  const d = depth - 1;
  switch (Math.floor(rng() * 7)) {
    case 0: return `${randomExpr(rng, vars, d)} ${pick(rng, ["+", "-", "*", "/"])} ${randomExpr(rng, vars, d)}`;
    case 1: return `(${randomExpr(rng, vars, d)})^${pick(rng, ["2", "0.5", "3", "-1", `(${randomExpr(rng, vars, d)})`])}`;
    case 2: return `${pick(rng, FUNCS1)}(${randomExpr(rng, vars, d)})`;
    case 3: return `${pick(rng, FUNCS2)}(${randomExpr(rng, vars, d)}, ${randomExpr(rng, vars, d)})`;
    case 4: return `if ${randomExpr(rng, vars, d)} ${pick(rng, ["<", "<=", ">", ">=", "==", "!="])} ${randomExpr(rng, vars, d)} then ${randomExpr(rng, vars, d)} else ${randomExpr(rng, vars, d)}`;
    case 5: return `-(${randomExpr(rng, vars, d)})`;
    default: return `(${randomExpr(rng, vars, d)})`;
  }
}

export function randomDoc(rng: Rng, index: number): FuzzDoc {
  const parts: string[] = [`# random document ${index}`];
  const globals: string[] = [];
  if (rng() < 0.4) {
    globals.push("s");
    parts.push(`param s = ${num(uniform(rng, 0.5, 2))} in [0.25, 4]`);
  }
  const defs: string[] = [];
  if (rng() < 0.4) {
    defs.push("h");
    parts.push(`def h(x) = ${randomExpr(rng, ["x", ...globals], 2)}`);
  }
  const nLosses = 1 + Math.floor(rng() * 3);
  for (let i = 0; i < nLosses; i++) {
    const own = rng() < 0.4 ? ["a"] : [];
    const head = own.length > 0 ? `loss r${i}(a = ${num(uniform(rng, 0, 2))} in [0, ${num(uniform(rng, 2, 5))}])` : `loss r${i}`;
    const callH = (v: string) => (defs.length > 0 && rng() < 0.3 ? [`h(${v})`] : []);
    const qv = ["q", ...globals, ...own, ...callH("q")];
    const vv = ["v", ...globals, ...own, ...callH("v")];
    const clauses: string[] = [];
    const form = Math.floor(rng() * 6);
    if (form === 0) clauses.push(`l1(q) = ${randomExpr(rng, qv, 3)}`, `l0(q) = ${randomExpr(rng, qv, 3)}`);
    else if (form === 1) clauses.push(`bayes(q) = ${randomExpr(rng, qv, 3)}`);
    else if (form === 2) clauses.push(`weight(q) = ${randomExpr(rng, qv, 3)}`);
    else if (form === 3) clauses.push(`margin(v) = ${randomExpr(rng, vv, 3)}`);
    else if (form === 4) clauses.push(`l1(v) = ${randomExpr(rng, vv, 3)}`, `l0(v) = ${randomExpr(rng, vv, 3)}`, `link(q) = logit(q)`, `inverse(v) = sigmoid(v)`);
    else clauses.push(`l1(q) = ${randomExpr(rng, qv, 2)}`, `l0(q) = ${randomExpr(rng, qv, 2)}`, `bayes(q) = ${randomExpr(rng, qv, 2)}`);
    if (rng() < 0.2) clauses.push(`threshold = ${num(uniform(rng, 0.05, 0.95))}`);
    if (rng() < 0.2) clauses.push(`link = canonical`);
    if (rng() < 0.3) clauses.push(`expect ${pick(rng, ["proper", "strictly proper", "improper", "convex", "lambda >= 0.5", "lambda = 2"])}`);
    parts.push(`${head} {\n${clauses.map((c) => `  ${c}`).join("\n")}\n}`);
  }
  return { index, kind: "random", text: parts.join("\n\n") + "\n" };
}

// ---------------------------------------------------------------------------------------------------
// Mutations

const TOKENS = [
  "(", ")", "{", "}", "[", "]", ",", "=", "^", "-", "+", "*", "/", "<", ">=", "==", "!=", "#", "\n",
  "loss", "def", "param", "in", "if", "then", "else", "not", "and", "or", "expect", "proper", "strictly", "improper",
  "l1", "l0", "bayes", "weight", "margin", "link", "inverse", "threshold", "canonical", "q", "v", "x",
  "__proto__", "constructor", "toString", "1e308", "1e-320", "0", "-1", "NaN", "Infinity", "0.", ".5", "1e", "9".repeat(40),
  "((((((((((", "))))))))))", "ln(", "min(", "q^q^q^q", "1/0",
];
const UNICODE = ["é", "𝛼", "\u2028", "\u2029", "\ufeff", "\u0301", "😀", "\ud800", "\udc00", "\u0000", "\t", "\r", "\r\n", "\u00a0", "η", "≤", "−", "ℓ", "\u200b", "\u202e"];

export function mutate(rng: Rng, text: string): string {
  let t = text;
  const n = 1 + Math.floor(rng() * 4);
  for (let k = 0; k < n; k++) {
    const at = Math.floor(rng() * (t.length + 1));
    switch (Math.floor(rng() * 5)) {
      case 0: { // delete a span
        const len = 1 + Math.floor(rng() * 20);
        t = t.slice(0, at) + t.slice(at + len);
        break;
      }
      case 1: // insert a token
        t = t.slice(0, at) + pick(rng, TOKENS) + t.slice(at);
        break;
      case 2: { // duplicate a line
        const lines = t.split("\n");
        const i = Math.floor(rng() * lines.length);
        lines.splice(i, 0, lines[i]!);
        t = lines.join("\n");
        break;
      }
      case 3: // insert unicode
        t = t.slice(0, at) + pick(rng, UNICODE) + t.slice(at);
        break;
      default: { // swap two lines
        const lines = t.split("\n");
        const i = Math.floor(rng() * lines.length);
        const j = Math.floor(rng() * lines.length);
        [lines[i], lines[j]] = [lines[j]!, lines[i]!];
        t = lines.join("\n");
      }
    }
  }
  return t;
}

/**
 * The document number `index` of the campaign with this seed: 40 % oracle documents, 20 % random
 * documents, 40 % mutations (of the samples half the time when given, else of a fresh oracle or random document).
 */
export function makeDoc(seed: number, index: number, samples: readonly string[] = []): FuzzDoc {
  const rng = seededRandom(docSeed(seed, index));
  const r = rng();
  if (r < 0.4) return oracleDoc(rng, index);
  if (r < 0.6) return randomDoc(rng, index);
  const base = samples.length > 0 && rng() < 0.5 ? pick(rng, samples) : rng() < 0.5 ? oracleDoc(rng, index).text : randomDoc(rng, index).text;
  return { index, kind: "mutated", text: mutate(rng, base) };
}

// ---------------------------------------------------------------------------------------------------
// One run

/** Engine seed of the campaign's analyses (fixed: the verdict is a function of the text). */
const ENGINE_SEED = 1;
/** A frozen clock for oracle documents: the engine's last-resort time box never fires, so their verdicts do not depend on the machine's load (hangs are caught by the runner's wall-clock limit). */
const FROZEN_CLOCK = () => 0;

function errText(e: unknown): string {
  return e instanceof Error ? `${e.name}: ${e.message}`.slice(0, 500) : String(e).slice(0, 500);
}

/** Runs one document through every stage; never throws (whatever escaped is recorded as a crash). */
export function runDoc(doc: FuzzDoc): RunResult {
  const t0 = performance.now();
  const problems: Problem[] = [];
  const result: RunResult = { index: doc.index, docKind: doc.kind, ms: 0, problems };
  const stage = <T>(name: string, f: () => T): T | undefined => {
    try {
      return f();
    } catch (e) {
      problems.push({ kind: "crash", stage: name, message: errText(e) });
      return undefined;
    }
  };
  stage("parse", () => parse(doc.text));
  const analysed = stage("analyseDocument", () => analyseDocument(doc.text, { seed: ENGINE_SEED, ...(doc.kind === "oracle" ? { clock: FROZEN_CLOCK } : {}) }));
  if (analysed) {
    for (const i of analysed.issues) if (i.code === "internal-error") problems.push({ kind: "internal-error", stage: "analyseDocument", message: i.message.slice(0, 500) });
    for (const target of TARGETS) {
      stage(`generate ${target}`, () => generate(analysed, { target, sourceName: "fuzz.loss" }));
    }
    stage("generate ts (improper allowed, scores)", () => generate(analysed, { target: "ts", allowImproper: true, input: "score", sourceName: "fuzz.loss" }));
    if (doc.expected) {
      const oracle = analysed.losses.find((l) => l.info.name === "oracle");
      const verdict = oracle?.analysis?.verdict ?? "not analysed";
      result.expected = doc.expected;
      result.verdict = verdict;
      if (verdict !== doc.expected) problems.push({ kind: "disagreement", stage: "oracle", message: `expected ${doc.expected}, got ${verdict} (${doc.recipe})` });
    }
  }
  const formatted = stage("formatDocument", () => formatDocument(doc.text));
  if (formatted) {
    const again = stage("formatDocument (formatted text)", () => formatDocument(formatted.text));
    if (again === null) problems.push({ kind: "formatter", stage: "formatDocument", message: "the formatted text does not parse cleanly" });
    else if (again && again.changed) problems.push({ kind: "formatter", stage: "formatDocument", message: "formatting is not idempotent" });
  }
  result.ms = performance.now() - t0;
  return result;
}

// ---------------------------------------------------------------------------------------------------
// Summary

export interface CampaignSummary {
  seed: number;
  documents: number;
  byKind: Record<string, number>;
  oracleDocuments: number;
  crashes: number;
  internalErrors: number;
  formatterFailures: number;
  disagreements: number;
  hangs: number;
  /** Documents over the per-document limit that still finished (measured in process). */
  overruns: number;
  timeLimitMs: number;
  maxDocMs: number;
  wallMs: number;
  /** Every problem with its document index (capped), for reproduction with `makeDoc(seed, index)`. */
  problems: (Problem & { index: number })[];
}

export function summarise(seed: number, results: RunResult[], wallMs: number, timeLimitMs: number): CampaignSummary {
  const count = (k: Problem["kind"]) => results.reduce((n, r) => n + r.problems.filter((p) => p.kind === k).length, 0);
  const byKind: Record<string, number> = {};
  for (const r of results) byKind[r.docKind] = (byKind[r.docKind] ?? 0) + 1;
  return {
    seed,
    documents: results.length,
    byKind,
    oracleDocuments: results.filter((r) => r.expected !== undefined).length,
    crashes: count("crash"),
    internalErrors: count("internal-error"),
    formatterFailures: count("formatter"),
    disagreements: count("disagreement"),
    hangs: count("hang"),
    overruns: results.filter((r) => r.ms > timeLimitMs && !r.problems.some((p) => p.kind === "hang")).length,
    timeLimitMs,
    maxDocMs: Math.max(0, ...results.map((r) => r.ms)),
    wallMs,
    problems: results.flatMap((r) => r.problems.map((p) => ({ index: r.index, ...p }))).slice(0, 200),
  };
}

/** True when the campaign found something (the runner exits non-zero). */
export function failed(s: CampaignSummary): boolean {
  return s.crashes + s.internalErrors + s.formatterFailures + s.disagreements + s.hangs + s.overruns > 0;
}

export function summaryText(s: CampaignSummary): string {
  return [
    `fuzz: ${s.documents} documents (seed ${s.seed}; ${Object.entries(s.byKind).map(([k, n]) => `${n} ${k}`).join(", ")}) in ${(s.wallMs / 1000).toFixed(1)} s`,
    `crashes ${s.crashes}, internal errors ${s.internalErrors}, hangs ${s.hangs} (limit ${s.timeLimitMs} ms; slowest document ${s.maxDocMs.toFixed(0)} ms; overruns ${s.overruns}), formatter failures ${s.formatterFailures}, oracle disagreements ${s.disagreements} of ${s.oracleDocuments}`,
    ...s.problems.slice(0, 20).map((p) => `  #${p.index} ${p.kind} in ${p.stage}: ${p.message}`),
  ].join("\n");
}
