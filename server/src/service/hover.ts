/**
 * Hover texts (Markdown) for every name the notation knows: losses (the engine's figures), clause names
 * (their derived formulas), parameters, helpers, built-ins, constants and clause variables.
 */
import { formatNumber, formatPowerLaw, markdownPlainText, NOT_AVAILABLE, PROSE_STYLE, verdictText } from "../display.js";
import type { Span } from "../issue.js";
import { BUILTINS, CONSTANTS } from "../semantics/builtins.js";
import { CLAUSE_DOCS, describeForm, type ClauseName, type LossInfo, type ParamInfo, type SemanticModel } from "../semantics/model.js";
import { showBest } from "../semantics/derived/pretty.js";
import { bayesFromPartials, recoveryMap, savagePartials, weightFromPartials } from "../semantics/derived/savage.js";
import { partialsFromWeight } from "../semantics/derived/weight-integral.js";
import { negate, printExpr } from "../semantics/symbolic.js";
import type { DocumentAnalysis, LossReport } from "../pipeline/stages.js";
import { clauseExpr, derivative } from "./code-actions.js";
import { findClauseAt, findLossAt, findReferenceAt, touches } from "./navigation.js";

/** A hover: Markdown text and the span of the word it is about. */
export interface HoverResult {
  markdown: string;
  span: Span;
}

/** A figure in a hover sentence: "not available" (never "NaN") where the engine gave none. */
const figure = (x: number | null | undefined): string => formatNumber(x, PROSE_STYLE);

function code(s: string): string {
  return "`" + s.replace(/`/g, "'") + "`";
}

function paramSummary(params: Record<string, number>): string {
  const entries = Object.entries(params);
  return entries.length === 0 ? "" : ` at ${entries.map(([k, v]) => `${k} = ${figure(v)}`).join(", ")}`;
}

/** The Markdown for a loss: verdict, evidence, λ, modulus, exponents, bounds, minimiser and recovery. */
export function describeLoss(model: SemanticModel, report: LossReport): string {
  const info = report.info;
  const lines: string[] = [];
  lines.push(`**loss ${code(info.name)}**${info.form ? ` — ${describeForm(info.form)}` : ""}`);
  if (info.decl.doc) lines.push("", markdownPlainText(info.decl.doc));
  const a = report.analysis;
  if (!a) {
    lines.push("", info.hasErrors || !report.compiled
      ? "_Not analysed: the loss has errors (see the diagnostics)._"
      : "_Not analysed yet: the engine runs when typing pauses, on the first `propriety.maxAnalysedLosses` losses of a file._");
    return lines.join("\n");
  }
  lines.push("", `**Verdict:** ${verdictText(a.verdict)}${paramSummary(a.params)}`);
  if (a.counterexample) {
    const c = a.counterexample;
    lines.push(`- counterexample: at η = ${figure(c.eta)} the prediction q = ${figure(c.q)} has conditional risk ${figure(c.riskAtQ)} < L(η, η) = ${figure(c.riskAtEta)}`);
  }
  if (a.flatInterval) lines.push(`- Bayes risk affine on [${figure(a.flatInterval[0])}, ${figure(a.flatInterval[1])}]`);
  if (a.paramReport) lines.push(`- ${a.paramReport}`);
  const at = a.lambdaAt ? ` (${a.lambdaAt.approached ? "approached" : "attained"} at q = ${figure(a.lambdaAt.q)})` : "";
  lines.push(`- **λ** (inf of the weight w; strongly proper iff λ > 0): ${figure(a.lambda)}${a.lambda === null ? "" : at}`);
  lines.push(a.modulus
    ? `- **δ(ε) near 0** ≈ ${formatPowerLaw(a.modulus.coefficient, a.modulus.power, PROSE_STYLE)}`
    : `- **δ(ε) near 0**: ${NOT_AVAILABLE}`);
  lines.push("  (midpoint modulus of f = −H: δ(ε) = inf { (f(η) + f(η′))/2 − f((η + η′)/2) : |η − η′| ≥ ε })");
  lines.push(`- **exponents** of the surrogate-regret bounds: via the modulus ${figure(a.exponents.viaModulus)} · direct ${figure(a.exponents.direct)}${a.threshold !== 0.5 ? ` (threshold c = ${figure(a.threshold)})` : ""}`);
  if (a.exponentNote) lines.push(`  ${a.exponentNote}`);
  if (a.boundTable && a.boundTable.length > 0) {
    lines.push("", `Surrogate regret needed for a decision regret of at most…${a.boundUnits ? ` (${a.boundUnits})` : ""}`, "");
    lines.push("| decision regret | via modulus | direct | ψ-transform |", "|---|---|---|---|");
    for (const r of a.boundTable.slice(0, 6)) {
      lines.push(`| ${figure(r.decisionRegret)} | ${figure(r.viaModulus)} | ${figure(r.direct)} | ${figure(r.psiTransform)} |`);
    }
  } else {
    lines.push(`- bound table: ${NOT_AVAILABLE}`);
  }
  if (a.verdict === "improper") {
    if (a.minimiser && a.minimiser.etas.length > 0) {
      const n = Math.min(a.minimiser.etas.length, a.minimiser.qs.length);
      const step = Math.max(1, Math.floor(n / 5));
      const pairs: string[] = [];
      for (let i = 0; i < n; i += step) pairs.push(`${figure(a.minimiser.etas[i])} → ${figure(a.minimiser.qs[i])}`);
      lines.push(`- **minimiser** q*(η): ${pairs.join(", ")}`);
    } else {
      lines.push(`- minimiser q*(η): ${NOT_AVAILABLE}`);
    }
    const rec = recoveryFormula(model, info);
    if (rec) lines.push(`- **posterior recovery**: η = ${code(rec)} at q = q*(η)`);
    if (a.recovery) lines.push(`  recovery checked: max error ${figure(a.recovery.maxError)}, ${a.recovery.monotone ? "monotone (η is recoverable)" : "not monotone (η is not recoverable everywhere)"}`);
  }
  lines.push("", `_${a.summary}_`);
  return lines.join("\n");
}

function recoveryFormula(model: SemanticModel, info: LossInfo): string | null {
  const a = clauseExpr(model, info, "l1");
  const b = clauseExpr(model, info, "l0");
  if (!a?.d1 || !b?.d1 || a.variable !== "q" || b.variable !== "q") return null;
  return showBest(recoveryMap(a.d1, b.d1), "q");
}

/** The Markdown for a clause name: its documentation and the formulas derived from it. */
export function describeClause(model: SemanticModel, loss: LossInfo, clause: ClauseName): string {
  const lines = [`**${clause}** — ${CLAUSE_DOCS[clause]}`];
  const c = clauseExpr(model, loss, clause);
  const x = c?.variable ?? "q";
  const f = (e: Parameters<typeof showBest>[0]) => code(showBest(e, x));
  if (c) {
    // The clause as written (helpers inlined), then what is derived from it.
    lines.push("", `${clause}(${x}) = ${code(printExpr(c.expr))}`);
    if (c.d1) lines.push(`${clause}′(${x}) = ${f(c.d1)}`);
  }
  switch (clause) {
    case "bayes":
      if (c?.d1 && x === "q") {
        const s = savagePartials(c.expr, c.d1, "q");
        lines.push("", "Savage partials l1 = H + (1−q)H′, l0 = H − qH′:", `- l1(q) = ${f(s.l1)}`, `- l0(q) = ${f(s.l0)}`);
        const d2 = derivative(c.d1, "q");
        if (d2) lines.push(`- weight w(q) = −H″(q) = ${code(showBest(negate(d2), "q"))}`);
      }
      break;
    case "l1":
    case "l0": {
      if (x !== "q") break;
      const a = clauseExpr(model, loss, "l1");
      const b = clauseExpr(model, loss, "l0");
      const w = weightFromPartials(a?.d1 ?? null, b?.d1 ?? null, "q");
      const mine = clause === "l1" ? w.fromL1 : w.fromL0;
      if (mine) lines.push("", `weight by stationarity: w(q) = ${clause === "l1" ? "−l1′(q)/(1−q)" : "l0′(q)/q"} = ${f(mine)}`);
      if (a && b && a.variable === "q" && b.variable === "q") {
        lines.push(`Bayes risk if proper: H(q) = q·l1(q) + (1−q)·l0(q) = ${f(bayesFromPartials(a.expr, b.expr, "q"))}`);
      }
      break;
    }
    case "weight":
      if (c && x === "q") {
        const p = partialsFromWeight(c.expr, "q");
        lines.push("", `- l1(q) = ∫_q^1 (1−c)w(c)dc = ${p.l1 ? code(p.l1) : "(no closed form found; computed numerically)"}`);
        lines.push(`- l0(q) = ∫_0^q c·w(c)dc = ${p.l0 ? code(p.l0) : "(no closed form found; computed numerically)"}`);
      }
      break;
    case "margin":
      lines.push("", `implied partial losses: l1(v) = φ(v), l0(v) = φ(−v)`);
      break;
    default:
      break;
  }
  return lines.join("\n");
}

function describeParam(info: ParamInfo, where: string, model: SemanticModel): string {
  const d = info.decl;
  const range = info.lo !== null || info.hi !== null ? ` in [${figure(info.lo)}, ${figure(info.hi)}]` : "";
  const lines = [`**${where} parameter ${code(d.name.name)}**`, "", `default ${figure(info.value)}${range || " (no declared range)"}`];
  if (d.doc) lines.push("", markdownPlainText(d.doc));
  if (d.global) {
    const users = model.losses.filter((l) => l.usedGlobals.includes(d.name.name)).map((l) => code(l.name));
    if (users.length > 0) lines.push("", `used by ${users.join(", ")}`);
  }
  return lines.join("\n");
}

/** The hover at an offset, or null when there is nothing to say. */
export function computeHover(doc: DocumentAnalysis, offset: number): HoverResult | null {
  const model = doc.model;
  const ref = findReferenceAt(model, offset);
  if (ref) {
    const t = ref.target;
    switch (t.kind) {
      case "loss": {
        const report = doc.losses.find((r) => r.info.name === t.name && touches(r.info.decl.span, ref.span.start));
        return report ? { markdown: describeLoss(model, report), span: ref.span } : null;
      }
      case "global-param": {
        const info = model.globals.get(t.name);
        return info ? { markdown: describeParam(info, "global", model), span: ref.span } : null;
      }
      case "local-param": {
        const info = model.losses.find((l) => l.name === t.loss)?.localParams.get(t.name);
        return info ? { markdown: describeParam(info, `\`${t.loss}\``, model), span: ref.span } : null;
      }
      case "def": {
        const d = model.defs.get(t.name)?.decl;
        if (!d) return null;
        const sig = `def ${d.name.name}(${d.params.map((p) => p.name).join(", ")}) = ${d.body ? printExpr(d.body) : "…"}`;
        return { markdown: [`**helper ${code(d.name.name)}**`, "", code(sig), ...(d.doc ? ["", markdownPlainText(d.doc)] : [])].join("\n"), span: ref.span };
      }
      case "def-param":
        return { markdown: `parameter ${code(t.name)} of the helper ${code(t.def)}`, span: ref.span };
      case "builtin": {
        const b = BUILTINS.get(t.name);
        return b ? { markdown: `**built-in** ${code(`${b.name}(${b.params.join(", ")})`)}\n\n${b.doc}`, span: ref.span } : null;
      }
      case "constant": {
        const c = CONSTANTS.get(t.name);
        return c ? { markdown: `**constant** ${code(t.name)} — ${c.doc}`, span: ref.span } : null;
      }
      case "variable":
        return {
          markdown: t.name === "q"
            ? "clause variable `q`: a predicted probability in [0, 1]"
            : "clause variable `v`: a score in ℝ (q = link⁻¹(v))",
          span: ref.span,
        };
    }
  }
  const loss = findLossAt(model, offset);
  if (!loss) return null;
  const clause = findClauseAt(loss, offset);
  if (clause && touches(clause.name.span, offset) && loss.clauses.get(clause.name.name as ClauseName) === clause) {
    return { markdown: describeClause(model, loss, clause.name.name as ClauseName), span: clause.name.span };
  }
  for (const e of loss.expects) {
    const w = e.clause.words.find((x) => touches(x.span, offset));
    if (w) {
      return { markdown: "`expect …` states a claim the engine checks: `proper`, `strictly proper`, `improper`, `convex` (in the score), `lambda >= x`, `exponent >= x`; a refuted claim is an error.", span: w.span };
    }
  }
  return null;
}
