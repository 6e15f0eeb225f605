/**
 * Closed-form derivations of binary losses, shared by the service (hovers, quick fixes, issue messages)
 * and code generation: the Savage partials of a Bayes risk, the weight function of partial losses, the
 * Bayes risk L(q, q) and the posterior-recovery map.
 *
 * Pure symbolic work on expression ASTs; nothing here throws.
 */
import type { Expr } from "../../syntax/ast.js";
import { name, negate, num, op, simplify } from "../symbolic.js";

// ---------------------------------------------------------------------------------------------------
// Derivations.

/**
 * The Savage partials of a Bayes risk H(q) with derivative H'(q): l1 = H + (1−q)H', l0 = H − qH'.
 * Savage 1971, "Elicitation of personal probabilities and expectations", JASA 66; Reid & Williamson 2010,
 * "Composite Binary Losses", JMLR 11, Thm 7.
 */
export function savagePartials(h: Expr, dh: Expr, q: string): { l1: Expr; l0: Expr } {
  const l1 = simplify(op("+", h, op("*", op("-", num(1), name(q)), dh)));
  const l0 = simplify(op("-", h, op("*", name(q), dh)));
  return { l1, l0 };
}

/**
 * The weight function of partial losses, by each stationarity ratio: w = −l1'/(1−q) and w = l0'/q.
 * Shuford, Albert & Massengill 1966 (Psychometrika 31); Reid & Williamson 2010, "Composite Binary Losses",
 * JMLR 11, Thm 1 (and eq. 11).
 */
export function weightFromPartials(dl1: Expr | null, dl0: Expr | null, q: string): { fromL1: Expr | null; fromL0: Expr | null } {
  return {
    fromL1: dl1 ? simplify(negate(op("/", dl1, op("-", num(1), name(q))))) : null,
    fromL0: dl0 ? simplify(op("/", dl0, name(q))) : null,
  };
}

/** The Bayes risk of a proper loss, L(q, q) = q·l1(q) + (1−q)·l0(q) (common practice: the conditional risk on the diagonal). */
export function bayesFromPartials(l1: Expr, l0: Expr, q: string): Expr {
  return simplify(op("+", op("*", name(q), l1), op("*", op("-", num(1), name(q)), l0)));
}

/**
 * The posterior-recovery map of a loss with differentiable partials: at the minimiser q of L(η, ·),
 * η·l1'(q) + (1−η)·l0'(q) = 0, so η = l0'(q) / (l0'(q) − l1'(q)).
 * Reid & Williamson 2010, "Composite Binary Losses", JMLR 11, Cor. 12 (first-order condition).
 */
export function recoveryMap(dl1: Expr, dl0: Expr): Expr {
  return simplify(op("/", dl0, op("-", dl0, dl1)));
}
