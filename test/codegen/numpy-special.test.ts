/**
 * The NumPy target's special functions (erf, erfc, Φ, log Φ, Φ⁻¹) are array code (no np.vectorize, no
 * per-element Python call), keep float32 input in float32, and are accurate: checked against Python's
 * math.erf / math.erfc (correctly rounded to within an ulp or so in CPython's libm use) and
 * statistics.NormalDist().inv_cdf (Wichura 1988, AS 241, "The percentage points of the normal
 * distribution", Appl. Stat. 37, accurate to about 1e-16) at thousands of points, tails included.
 */
import { spawnSync } from "node:child_process";
import * as fs from "node:fs";
import * as path from "node:path";
import { describe, expect, it } from "vitest";
import { generate } from "../../server/src/codegen/index.js";
import { analyseDocument } from "../../server/src/pipeline/pipeline.js";
import { loadTs, PYTHON, pythonHas, tempDir } from "./support.js";

const HAS_NUMPY = pythonHas("numpy");

/** Losses whose generated NumPy needs erf, Φ and Φ⁻¹ (through the probit link, for score input). */
const TEXT = `loss erfy {
  l1(q) = (1 - erf(q))^2
  l0(q) = erf(q)^2
}
loss probity {
  l1(q) = (probit(q) - 1)^2
  l0(q) = (probit(q) + 1)^2
}
loss probit_log {
  l1(q) = -ln(q)
  l0(q) = -ln(1 - q)
  link(q) = probit(q)
}
`;

/** Relative accuracy required (the 1e-10; the measured errors are printed by the script and far below). */
const REL = 1e-10;

const SCRIPT = String.raw`
import importlib.util, json, math, statistics, sys
import numpy as np
def load(p):
    spec = importlib.util.spec_from_file_location("m" + str(abs(hash(p))), p)
    m = importlib.util.module_from_spec(spec); spec.loader.exec_module(m); return m
a, b = load(sys.argv[1]), load(sys.argv[2])
def rel(x, y):
    return 0.0 if x == y else abs(x - y) / abs(y)
xs = np.concatenate([np.linspace(-27, 27, 10801), np.geomspace(1e-300, 1.0, 400), -np.geomspace(1e-300, 1.0, 400)])
out = {}
out["erf"] = max(rel(v, math.erf(x)) for x, v in zip(xs, a._erf(xs)))
out["erfc"] = max(rel(v, math.erfc(x)) for x, v in zip(xs, b._erfc(xs)) if math.erfc(x) > 1e-300)
vs = np.linspace(-37, 8, 4501)
# The argument -v/sqrt(2) is formed as -v * 0.7071067811865476 in both, so the comparison is of erfc itself.
out["normcdf"] = max(rel(c, 0.5 * math.erfc(-v * 0.7071067811865476)) for v, c in zip(vs, b._normcdf(vs)))
def logphi(v):
    return math.log(0.5 * math.erfc(-v * 0.7071067811865476)) if v < 0 else math.log1p(-0.5 * math.erfc(v * 0.7071067811865476))
out["lognormcdf"] = max(rel(c, logphi(v)) for v, c in zip(vs, b._lognormcdf(vs)) if logphi(v) != 0)
# Far tail, beyond float64's Phi: log Phi(v) = -v^2/2 - log(-v) - log(sqrt(2 pi)) + log(1 - 1/v^2 + 3/v^4 - ...)
# (Abramowitz & Stegun 1964, 26.2.12, the asymptotic expansion of the normal tail).
far = np.array([-40.0, -100.0, -1000.0])
out["lognormcdf_far"] = max(rel(c, -v * v / 2 - math.log(-v) - 0.9189385332046728 + math.log1p(-1 / v**2 + 3 / v**4 - 15 / v**6)) for v, c in zip(far, b._lognormcdf(far)))
nd = statistics.NormalDist()
ps = np.concatenate([np.geomspace(1e-300, 0.4999, 3000), 1 - np.geomspace(1e-16, 0.4999, 3000)])
out["probit"] = max(rel(x, nd.inv_cdf(p)) for p, x in zip(ps, a._probit(ps)))
out["probit_edges"] = [str(x) for x in a._probit(np.array([0.0, 1.0, 0.5, -0.1, 1.1]))]
out["dtypes"] = [str(a._erf(np.float32([0.3])).dtype), str(b._normcdf(np.float32([0.3])).dtype), str(a._probit(np.float32([0.3])).dtype), str(b._lognormcdf(np.float32([-50.0])).dtype), str(b._normcdf([1, 2]).dtype)]
# The probit-link loss at scores where Phi underflows: -log Phi(v) and its gradient phi(v)/Phi(v) ~ -v - 1/v
# (Mills ratio, A&S 26.2.12) stay finite.
v = np.array([-1000.0, -40.0])
out["probit_loss"] = [float(x) for x in b.probit_log(v, np.ones(2), reduction="none")]
out["probit_grad"] = [float(x) for x in b.probit_log_grad(v, np.ones(2), reduction="none")]
print(json.dumps(out))
`;

describe("NumPy special functions", () => {
  const doc = analyseDocument(TEXT);

  it("are array code: no np.vectorize, np.frompyfunc, math or statistics in the module", () => {
    for (const input of ["prob", "score"] as const) {
      const r = generate(doc, { target: "numpy", input, allowImproper: true });
      if (!r.ok) throw new Error(r.message);
      expect(r.code).not.toMatch(/np\.vectorize|np\.frompyfunc|import math|import statistics/);
    }
  });

  it.skipIf(!HAS_NUMPY)("match math.erf, math.erfc and NormalDist.inv_cdf to 1e-10 relative at thousands of points, and keep float32", () => {
    const dir = tempDir("propriety-special-");
    const files = (["prob", "score"] as const).map((input) => {
      // Probability input: erf and Φ⁻¹ (erfy, probity); score input through the probit link: Φ and log Φ.
      const r = generate(doc, { target: "numpy", input, ...(input === "score" ? { loss: "probit_log" } : {}), allowImproper: true });
      if (!r.ok) throw new Error(r.message);
      const f = path.join(dir, `${input}.py`);
      fs.writeFileSync(f, r.code);
      return f;
    });
    const py = spawnSync(PYTHON, ["-c", SCRIPT, ...files], { encoding: "utf8" });
    fs.rmSync(dir, { recursive: true, force: true });
    expect(py.status, py.stderr).toBe(0);
    const out = JSON.parse(py.stdout) as Record<string, number | string[]>;
    for (const k of ["erf", "erfc", "normcdf", "lognormcdf", "lognormcdf_far", "probit"]) expect(out[k], k).toBeLessThan(REL);
    expect(out.probit_edges).toEqual(["-inf", "inf", "0.0", "nan", "nan"]);
    expect(out.dtypes).toEqual(["float32", "float32", "float32", "float32", "float64"]);
    const loss = out.probit_loss as unknown as number[];
    const grad = out.probit_grad as unknown as number[];
    [-1000, -40].forEach((v, i) => {
      // −log Φ(v) = v²/2 + ln(−v) + ln√(2π) − ln(1 − 1/v² + 3/v⁴) (A&S 26.2.12); d/dv = −(−v − 1/v + 2/v³ …).
      expect(loss[i]!).toBeCloseTo(v * v / 2 + Math.log(-v) + 0.9189385332046728 - Math.log1p(-1 / v ** 2 + 3 / v ** 4), 6);
      expect(Math.abs(grad[i]! - (v + 1 / v - 2 / v ** 3)) / Math.abs(v)).toBeLessThan(1e-6);
    });
  });
});

describe("TypeScript log-CDF of the probit link", () => {
  const doc = analyseDocument(TEXT);

  it("−log Φ(v) and its gradient stay finite and follow the normal tail where Φ underflows", async () => {
    const r = generate(doc, { target: "ts", input: "score", loss: "probit_log" });
    if (!r.ok) throw new Error(r.message);
    expect(r.code).toMatch(/lognormcdf\(v\)/);
    const mod = await loadTs(r.code);
    const vs = [-1000, -40, -8];
    const loss = mod.probitLog!(vs, [1, 1, 1], { reduction: "none" }) as Float64Array;
    const grad = mod.probitLogGrad!(vs, [1, 1, 1], { reduction: "none" }) as Float64Array;
    vs.forEach((v, i) => {
      // −log Φ(v) = v²/2 + ln(−v) + ln√(2π) − ln(1 − 1/v² + 3/v⁴ − 15/v⁶ …) (Abramowitz & Stegun 1964, 26.2.12);
      // at v = −8 the series' next term (105/v⁸ ≈ 6e-6) bounds the comparison.
      const want = v * v / 2 + Math.log(-v) + 0.9189385332046728 - Math.log1p(-1 / v ** 2 + 3 / v ** 4 - 15 / v ** 6);
      expect(Math.abs(loss[i]! - want) / want, `v = ${v}`).toBeLessThan(v < -10 ? 1e-12 : 1e-6);
      // d/dv(−log Φ) = −φ(v)/Φ(v) ≈ v + 1/v − 2/v³ (the Mills ratio, same expansion).
      expect(Math.abs(grad[i]! - (v + 1 / v - 2 / v ** 3)) / Math.abs(v), `v = ${v}`).toBeLessThan(v < -10 ? 1e-8 : 1e-4);
    });
  });
});
