/**
 * PyTorch emitter: functional style (`torch.log1p`, `torch.nn.functional.softplus`, `torch.clamp`,
 * `torch.where`), so autograd gives the gradient; no closed-form gradient is emitted for this target.
 */
import type { Expr } from "../syntax/ast.js";
import { emitPythonModule, pythonDialect, pyNumber, type EmitInput, type PyTarget } from "./emit-python-common.js";
import { sanitiseName } from "./names.js";

const isNumber = (e: Expr): e is Extract<Expr, { kind: "number" }> => e.kind === "number";

/** The printer's dialect for torch. */
export const TORCH_DIALECT = pythonDialect({
  lib: "torch",
  calls: {
    sigmoid: "torch.sigmoid",
    softplus: "torch.nn.functional.softplus",
    asin: "torch.asin",
    acos: "torch.acos",
    atan: "torch.atan",
    erf: "torch.erf",
    // Φ(x) = erfc(−x/√2)/2: torch.special.ndtr loses ~1e-10 relative accuracy in the lower tail (measured at x = −6).
    normcdf: { print: ([a]) => `(0.5 * torch.special.erfc(-(${a}) * 0.7071067811865476))` },
    probit: "torch.special.ndtri",
    // A constant bound becomes torch.clamp (torch.minimum/maximum want tensors on both sides).
    min: { print: ([a, b], [ra, rb]) => (isNumber(rb!) ? `torch.clamp(${a}, max=${pyNumber(rb.value)})` : isNumber(ra!) ? `torch.clamp(${b}, max=${pyNumber(ra.value)})` : `torch.minimum(${a}, ${b})`) },
    max: { print: ([a, b], [ra, rb]) => (isNumber(rb!) ? `torch.clamp(${a}, min=${pyNumber(rb.value)})` : isNumber(ra!) ? `torch.clamp(${b}, min=${pyNumber(ra.value)})` : `torch.maximum(${a}, ${b})`) },
  },
  // Constant branches are broadcast to the input's shape and dtype (torch.where wants tensors).
  where: (c, a, b, ra, rb, v) => `torch.where(${c}, ${isNumber(ra) ? `torch.full_like(${v}, ${a})` : a}, ${isNumber(rb) ? `torch.full_like(${v}, ${b})` : b})`,
});

/**
 * `_reduce` for TorchScript: annotated (an unannotated parameter is a Tensor there), and the message built by
 * concatenation (TorchScript compiles no f-string conversion such as `!r`).
 */
const TORCH_REDUCE = [
  "def _reduce(loss: torch.Tensor, weight: typing.Optional[torch.Tensor], reduction: str) -> torch.Tensor:",
  '    """Multiplies in the sample weights, then reduces: "mean", "sum" or "none"."""',
  "    if weight is not None:",
  "        loss = loss * weight",
  '    if reduction == "mean":',
  "        return loss.mean()",
  '    if reduction == "sum":',
  "        return loss.sum()",
  '    if reduction == "none":',
  "        return loss",
  '    raise ValueError("reduction must be \\"mean\\", \\"sum\\" or \\"none\\", not \\"" + reduction + "\\"")',
];

const target: PyTarget = {
  target: "torch",
  dialect: TORCH_DIALECT,
  // `typing` for the Optional annotation TorchScript needs (standard library first, PEP 8).
  imports: ["import typing", "", "import torch"],
  notes: [
    "PyTorch: differentiate with autograd (loss.backward()); pred and target are tensors of the same shape.",
    "TorchScript: torch.jit.script accepts every function here (weight and reduction are annotated; clamping bounds are literals).",
  ],
  signature: 'pred, target, weight: typing.Optional[torch.Tensor] = None, reduction: str = "mean"',
  reduce: TORCH_REDUCE,
  literalEps: true,
  asArray: (p) => `torch.as_tensor(${p})`,
  labels: (t, like) => `torch.as_tensor(${t}, dtype=${like}.dtype, device=${like}.device)`,
  clamp: (x, lo, hi) => `torch.clamp(${x}${lo ? `, min=${lo}` : ""}${hi ? `, max=${hi}` : ""})`,
  helperSources: {},
  gradients: false,
};

/** The PyTorch module text for the lowered losses of one file. */
export function emitTorch(input: EmitInput): string {
  return emitPythonModule(input, target, (n) => sanitiseName(n, "python"));
}
