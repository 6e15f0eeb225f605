/**
 * Surrogate-regret bounds: the tight direct bound at a threshold c (Reid & Williamson), the ψ-transform
 * of margin losses (Bartlett, Jordan & McAuliffe) and the modulus route (Bao).
 *
 * Units, stated once and used everywhere (test/reference/proper-losses.md row C13):
 * - "cost-c regret" α = |η − c| when η and q lie on opposite sides of c (RW11 Lemma 26). At c = ½ this
 *   is Bao's R01, which is HALF the usual {0,1}-valued 0-1 regret |2η − 1|.
 * - BJM's θ is the {0,1}-valued 0-1 regret: θ = 2α at c = ½.
 * - Surrogate regret is in the loss's own units (the units of H).
 */
import type { RealFn } from "../loss-model.js";
import { goldenMin } from "./numeric/minimise.js";
import { fitPowerLawAtZero, type PowerLaw } from "./numeric/fits.js";
import { LowerEnvelope } from "./numeric/envelope.js";
import type { ModulusModel } from "./modulus.js";

/** Samples on [0, α_max] for the convex hull of the direct bound. */
const DIRECT_SAMPLES = 512;
/** Samples of θ ∈ [0,1] for the hull of the ψ-transform. */
const PSI_SAMPLES = 256;
/** Score range searched for H⁻ (common practice: scores beyond ±40 saturate every standard margin loss in double precision). */
const SCORE_BOUND = 40;
/** Cells of the score scan for H⁻ before golden refinement. */
const SCORE_CELLS = 400;

/** The tight bound of Reid & Williamson at threshold c, with its convex hull and inverse. */
export interface DirectBoundModel {
  threshold: number;
  /** Largest cost-c regret possible: max(c, 1−c). */
  alphaMax: number;
  /** One-sided derivatives f'(c−), f'(c+) of f = −H; they differ by the point mass of w at c. */
  slopeLeft: number;
  slopeRight: number;
  /** The two Bregman branches B_f(c+α ∥ c) and B_f(c−α ∥ c) (null outside [0,1]). */
  branches(alpha: number): { upper: number | null; lower: number | null };
  /** ψ_RW(c, α) = min of the branches (RW09 Thm 3 / RW11 Thm 25 with ∧, see test/reference/proper-losses.md row C11). */
  psi(alpha: number): number;
  /** ψ** on [0, α_max], for expected (full-risk) regrets by Jensen. */
  envelope: LowerEnvelope;
  /** sup{α : ψ**(α) ≤ r}: the cost-c regret guaranteed by surrogate regret r. */
  inverse(r: number): number;
  /** ψ(α) ≈ C·α^s near 0. */
  local: PowerLaw | null;
  /** Bound exponent 1/s (regret = O(R^{1/s})). */
  exponent: number | null;
}

/** One-sided derivative of f at x from the side `dir` (+1 right, −1 left): second-order stencil that never crosses x. */
function oneSidedSlope(f: RealFn, x: number, dir: 1 | -1, h: number): number {
  const s = dir * h;
  return (-3 * f(x) + 4 * f(x + s) - f(x + 2 * s)) / (2 * s);
}

/** The Savage slope is trusted when it agrees with the stencils to this (relative): the stencils err by O(√h) at worst for the standard losses (test/reference/proper-losses.md, table L). */
const SAVAGE_AGREE_REL = 1e-2;

/**
 * Builds the direct bound at threshold c for f = −H (f wrapped by `boundedUnitFn`).
 * The upper branch (η = c+α) is reached with q ↑ c, so it uses f'(c−); the lower branch (η = c−α)
 * allows q = c, so it uses f'(c+) (RW11 Lemma 26: B_c counts c ≤ q).
 *
 * `savageSlope` is the slope s_c = l0(c) − l1(c) of f implied by the partial losses at q = c itself
 * (Savage: H' = l1 − l0; Bao 2023 Thm 1). Where H is differentiable at c (`kinkAtC` false) it is exact,
 * while finite differences lose digits when H is not smooth at c (e.g. H = 2^{−α} − |η−½|^α with α < 2),
 * and the local exponent needs the slope to ≈1e-12. Where w has a point mass at c, s_c is a supergradient
 * in [f'(c−), f'(c+)]; the lower branch (q = c allowed) then uses min(f'(c+), s_c), which is what the
 * loss's own value at q = c gives (e.g. a margin loss with φ(0) at the boundary: hinge R ≥ 2α, test/reference/proper-losses.md row L14).
 */
export function buildDirectBound(fIn: RealFn, c: number, savageSlope?: number, kinkAtC = false): DirectBoundModel {
  // A throwing closure must not escape: exceptions become NaN, which the hull and the fits skip.
  const f = (x: number) => {
    try {
      return fIn(x);
    } catch {
      return NaN;
    }
  };
  // Step 1e-5 balances the stencil's O(h²·f''') error against rounding O(ulp·|f|/h), both ≈ 1e-10 here.
  const h = Math.min(1e-5, c / 4, (1 - c) / 4);
  const fc = f(c);
  let slopeLeft = oneSidedSlope(f, c, -1, h);
  let slopeRight = oneSidedSlope(f, c, 1, h);
  if (savageSlope !== undefined && Number.isFinite(savageSlope)) {
    if (!kinkAtC && Math.abs(savageSlope - 0.5 * (slopeLeft + slopeRight)) <= SAVAGE_AGREE_REL * (1 + Math.abs(savageSlope))) {
      slopeLeft = savageSlope;
      slopeRight = savageSlope;
    } else if (kinkAtC) {
      const slack = SAVAGE_AGREE_REL * (1 + Math.abs(slopeRight - slopeLeft));
      if (savageSlope >= slopeLeft - slack && savageSlope <= slopeRight + slack) slopeRight = Math.min(slopeRight, Math.max(slopeLeft, savageSlope));
    }
  }
  const alphaMax = Math.max(c, 1 - c);
  function branches(alpha: number): { upper: number | null; lower: number | null } {
    const upper = c + alpha <= 1 ? Math.max(0, f(c + alpha) - fc - slopeLeft * alpha) : null;
    const lower = c - alpha >= 0 ? Math.max(0, f(c - alpha) - fc + slopeRight * alpha) : null;
    return { upper, lower };
  }
  function psi(alpha: number): number {
    if (!(alpha > 0)) return 0;
    const { upper, lower } = branches(alpha);
    if (upper === null && lower === null) return Infinity;
    if (upper === null) return lower!;
    if (lower === null) return upper;
    return Math.min(upper, lower);
  }
  const xs: number[] = [];
  const ys: number[] = [];
  for (let i = 0; i <= DIRECT_SAMPLES; i++) {
    const a = (alphaMax * i) / DIRECT_SAMPLES;
    xs.push(a);
    ys.push(psi(a));
  }
  const envelope = new LowerEnvelope(xs, ys, psi);
  const local = fitPowerLawAtZero(psi, Math.min(0.05, Math.min(c, 1 - c) / 2), 8);
  return {
    threshold: c,
    alphaMax,
    slopeLeft,
    slopeRight,
    branches,
    psi,
    envelope,
    inverse: (r: number) => (Number.isNaN(r) ? NaN : r <= 0 ? 0 : envelope.inverse(r)),
    local,
    exponent: local && local.power > 0 ? 1 / local.power : null,
  };
}

/** The ψ-transform of a margin loss (Bartlett, Jordan & McAuliffe 2006, JASA 101, as restated in RW11 App. D). */
export interface PsiTransformModel {
  /** H⁻(η): inf of ηφ(v) + (1−η)φ(−v) over wrong-sign scores v(2η−1) ≤ 0. */
  wrongSignRisk(eta: number): number;
  /** ψ̃(θ) = H⁻((1+θ)/2) − H((1+θ)/2), θ ∈ [0,1] (0-1 regret units). */
  psiTilde(theta: number): number;
  /** ψ = ψ̃** (the biconjugate on [0,1]). */
  psi(theta: number): number;
  envelope: LowerEnvelope;
  /** sup{θ : ψ(θ) ≤ r}: the {0,1}-valued 0-1 regret guaranteed by surrogate regret r. */
  inverse(r: number): number;
  /** ψ̃(θ) > 0 on every sampled θ > 0 (classification-calibrated, BJM06). */
  calibrated: boolean;
}

/**
 * Builds the ψ-transform from the margin function φ and the Bayes risk H (H as the infimum over all
 * scores, which is `fns.bayes` for a margin loss). H is wrapped by the caller with `boundedUnitFn`.
 */
export function buildPsiTransform(margin: RealFn, bayes: RealFn): PsiTransformModel {
  const phi = (v: number) => {
    let y: number;
    try {
      y = margin(v);
    } catch {
      y = NaN;
    }
    return Number.isNaN(y) ? Infinity : y;
  };
  const H = (eta: number) => {
    try {
      return bayes(eta);
    } catch {
      return NaN;
    }
  };
  // Scores v ≤ 0 (wrong sign for η ≥ ½); tabulated once and reused for every η.
  const vs = new Float64Array(SCORE_CELLS + 1);
  const pos = new Float64Array(SCORE_CELLS + 1);
  const neg = new Float64Array(SCORE_CELLS + 1);
  for (let i = 0; i <= SCORE_CELLS; i++) {
    const v = (-SCORE_BOUND * i) / SCORE_CELLS;
    vs[i] = v;
    pos[i] = phi(v);
    neg[i] = phi(-v);
  }
  function wrongSignRisk(eta: number): number {
    // By the symmetry φ(v) ↔ φ(−v), H⁻(η) = H⁻(1−η); work with η ≥ ½ and scores v ≤ 0.
    const e = eta >= 0.5 ? eta : 1 - eta;
    const risk = (v: number) => e * phi(v) + (1 - e) * phi(-v);
    let bi = 0;
    let best = Infinity;
    for (let i = 0; i <= SCORE_CELLS; i++) {
      const r = e * pos[i]! + (1 - e) * neg[i]!;
      if (r < best) {
        best = r;
        bi = i;
      }
    }
    const lo = vs[Math.min(SCORE_CELLS, bi + 1)]!;
    const hi = vs[Math.max(0, bi - 1)]!;
    const m = goldenMin(risk, lo, hi, 1e-12);
    return Math.min(best, m.fx);
  }
  function psiTilde(theta: number): number {
    if (!(theta > 0)) return 0;
    const t = Math.min(1, theta);
    const eta = (1 + t) / 2;
    const gap = wrongSignRisk(eta) - H(eta);
    return Number.isNaN(gap) ? NaN : Math.max(0, gap);
  }
  const xs: number[] = [];
  const ys: number[] = [];
  let calibrated = true;
  for (let i = 0; i <= PSI_SAMPLES; i++) {
    const t = i / PSI_SAMPLES;
    const y = psiTilde(t);
    xs.push(t);
    ys.push(y);
    if (i > 0 && !(y > 0)) calibrated = false;
  }
  const envelope = new LowerEnvelope(xs, ys, psiTilde);
  return {
    wrongSignRisk,
    psiTilde,
    psi: (theta: number) => (theta <= 0 ? 0 : envelope.value(Math.min(1, theta))),
    envelope,
    inverse: (r: number) => (Number.isNaN(r) ? NaN : r <= 0 ? 0 : envelope.inverse(r)),
    calibrated,
  };
}

/**
 * The modulus route (Bao 2023, Cor. 7): |η − q| ≤ (δ**)⁻¹(R/2), hence the cost-c regret is at most the
 * same (B_c(η,q) ≤ |η − q|, Bao23 §2.4 citing Menon et al. 2013, Lemma 4). Returns the bound at R.
 */
export function modulusRouteBound(model: ModulusModel, surrogateRegret: number): number {
  if (Number.isNaN(surrogateRegret)) return NaN;
  if (surrogateRegret <= 0) return model.vacuousBelow ?? 0;
  return model.inverse(surrogateRegret / 2);
}
