#!/usr/bin/env python3
"""Recomputes the "computed" values of test/reference/proper-losses.md with mpmath at 40 digits.

Run: python3 test/reference/recompute.py   (needs mpmath; prints each row, the table's value, and
whether they agree to the printed digits; exits 1 on a disagreement).

Methods (the ones named in the tables' "computed:" entries):
- moduli delta(eps) = min over m in [eps/2, 1 - eps/2] of the midpoint gap (f(m - eps/2) + f(m + eps/2))/2 - f(m),
  f = -H (Bao 2023, Def. 4, in its |eta - eta'| = eps form): a 400-point grid, then golden-section refinement;
- inverses by bisection; minimisers of the focal risk from the root of dL/dq (mpmath.findroot);
- the psi-transform from its closed form psi(theta) = phi(0) - H((1 + theta)/2), with H cross-checked by a direct
  minimisation of eta*phi(v) + (1 - eta)*phi(-v) over v.
"""
import sys

import mpmath as mp

mp.mp.dps = 40
failures = []


def check(row, computed, table, digits):
    """The table's value printed to `digits` significant digits must agree with the recomputed one."""
    ok = abs(computed - table) <= mp.mpf(10) ** (-digits) * max(1, abs(table))
    print(f"{row:6} {mp.nstr(computed, digits + 3):>24}  table {table!s:>18}  {'ok' if ok else 'DIFFERS'}")
    if not ok:
        failures.append(row)


def golden_min(g, lo, hi, steps=200):
    """Minimum of g on [lo, hi]: a 400-point grid, then golden-section refinement around the best point."""
    n = 400
    xs = [lo + (hi - lo) * i / n for i in range(n + 1)]
    vals = [g(x) for x in xs]
    k = min(range(n + 1), key=lambda i: vals[i])
    a, b = xs[max(k - 1, 0)], xs[min(k + 1, n)]
    r = (mp.sqrt(5) - 1) / 2
    c, d = b - r * (b - a), a + r * (b - a)
    for _ in range(steps):
        if g(c) < g(d):
            b, d = d, c
            c = b - r * (b - a)
        else:
            a, c = c, d
            d = a + r * (b - a)
    return min(vals[k], g((a + b) / 2))


def modulus(H, eps):
    f = lambda x: -H(min(max(x, mp.mpf(0)), mp.mpf(1)))
    gap = lambda m: (f(m - eps / 2) + f(m + eps / 2)) / 2 - f(m)
    return golden_min(gap, eps / 2, 1 - eps / 2)


def bisect(fn, target, lo, hi, steps=200):
    """x in [lo, hi] with fn(x) = target, fn increasing."""
    for _ in range(steps):
        mid = (lo + hi) / 2
        if fn(mid) < target:
            lo = mid
        else:
            hi = mid
    return (lo + hi) / 2


def xlnx(x):
    return mp.mpf(0) if x == 0 else x * mp.log(x)


# Bayes risks (concave H) of the standard losses, table L.
H_log = lambda q: -xlnx(q) - xlnx(1 - q)
H_bits = lambda q: H_log(q) / mp.log(2)
H_brier = lambda q: q * (1 - q)
H_brier2 = lambda q: 2 * q * (1 - q)
H_exp = lambda q: 2 * mp.sqrt(q * (1 - q))
H_sph = lambda q: 1 - mp.sqrt(q**2 + (1 - q) ** 2)
H_beta_half = lambda q: q * mp.acos(mp.sqrt(q)) + (1 - q) * mp.asin(mp.sqrt(q)) - mp.sqrt(q * (1 - q))
H_beta22 = lambda q: (q - 2 * q**3 + q**4) / 12
H_poly3 = lambda q: mp.mpf(2) ** -3 - abs(q - mp.mpf(1) / 2) ** 3
H_pseudo3 = lambda q: 1 - (q**3 + (1 - q) ** 3) ** (mp.mpf(1) / 3)
H_tsallis_half = lambda q: 2 * (mp.sqrt(q) + mp.sqrt(1 - q) - 1)
H_zero_one = lambda q: min(q, 1 - q)
H_hinge_bayes = lambda q: 2 * min(q, 1 - q)

print("Table N: moduli (Bao 2023, Def. 4)")
check("N9", modulus(H_brier, mp.mpf("0.2")), 0.01, 11)
check("N10", modulus(H_brier2, mp.mpf("0.2")), 0.02, 11)
check("N11a", modulus(H_log, mp.mpf("0.1")), 0.00500836684636, 11)
check("N11b", modulus(H_log, mp.mpf("0.2")), 0.0201355135507, 11)
check("N11c", modulus(H_log, mp.mpf("0.5")), 0.130812035941, 11)
check("N12", modulus(H_bits, mp.mpf("0.2")), 0.0290494055453, 11)
check("N13a", modulus(H_exp, mp.mpf("0.2")), 0.0202041028867, 11)
check("N13b", modulus(H_exp, mp.mpf("0.5")), 0.133974596216, 11)
check("N14a", modulus(H_sph, mp.mpf("0.1")), 0.00145437738485, 11)
check("N14b", modulus(H_sph, mp.mpf("0.2")), 0.00677204874802, 11)
check("N14c", modulus(H_sph, mp.mpf("0.5")), 0.0629839755512, 11)
check("N15", modulus(H_beta_half, mp.mpf("0.2")), 0.0100337406357, 11)
check("N16", modulus(H_poly3, mp.mpf("0.2")), 0.001, 11)
check("N17a", modulus(H_beta22, mp.mpf("0.1")), 5.88541666667e-5, 11)
check("N17b", modulus(H_beta22, mp.mpf("0.2")), 4.41666666667e-4, 11)
check("N18a", modulus(H_pseudo3, mp.mpf("0.2")), 0.00166124124954, 11)
check("N18b", modulus(H_pseudo3, mp.mpf("1e-4")) / mp.mpf("1e-4") ** 3, 0.125, 3)
check("N19", modulus(H_tsallis_half, mp.mpf("0.2")), 0.0143227221959, 11)
check("N42a", modulus(H_zero_one, mp.mpf("0.4")), 0, 11)
check("N42b", modulus(H_zero_one, mp.mpf("0.8")), 0.3, 11)
check("N42c", modulus(H_hinge_bayes, mp.mpf("0.8")), 0.6, 11)

print("Table L: delta near 0, c = delta(eps)/eps^p at eps = 1e-4")
e = mp.mpf("1e-4")
check("L1", modulus(H_log, e) / e**2, 0.5, 4)
check("L2", modulus(H_bits, e) / e**2, 1 / (2 * mp.log(2)), 4)
check("L3", modulus(H_brier, e) / e**2, 0.25, 10)
check("L7", modulus(H_sph, e) / e**2, 0.125, 3)
check("L10c", modulus(H_beta22, e) / e**3, 1 / mp.mpf(16), 3)
check("L11c", modulus(H_tsallis_half, e) / e**2, mp.sqrt(2) / 4, 4)
a = mp.mpf("2.5")
H_pseudo25 = lambda q: 1 - (q**a + (1 - q) ** a) ** (1 / a)
check("L15", modulus(H_pseudo25, e) / e**a, (mp.mpf(1) / 2 - 2**-a) / a, 2)

print("Table N: weights and lambda = inf w")
check("N2", 4 / mp.log(2), 5.770780163555854, 15)
w_sph = lambda q: (q**2 + (1 - q) ** 2) ** mp.mpf(-1.5)
check("N6a", mp.limit(w_sph, 0), 1, 12)
check("N6b", w_sph(mp.mpf(1) / 2), 2.828427125, 9)


def tsallis_lambda(alpha):
    w = lambda q: alpha * (q ** (alpha - 2) + (1 - q) ** (alpha - 2))
    grid = min(w(mp.mpf(i) / 1000) for i in range(1, 1000))
    # The infimum may be approached at an endpoint (alpha in (2, 3]): w near 0, where it is finite.
    return min(grid, w(mp.mpf("1e-30")))


for alpha, lam in [("0.5", 2.828427124746190), ("1.5", 4.242640687119285), ("2", 4), ("2.5", 2.5), ("3", 3), ("4", 2)]:
    check(f"N37 {alpha}", tsallis_lambda(mp.mpf(alpha)), lam, 9)

print("Table N: Simonenko order and Thm 10 constants (closed forms of Bao 2023 section 4)")
d_log = lambda t: ((1 + t) / 2) * mp.log((1 + t) / 2) + ((1 - t) / 2) * mp.log((1 - t) / 2) + mp.log(2)
d_exp = lambda t: 1 - mp.sqrt(1 - t**2)
S = lambda d, t: t * mp.diff(d, t) / d(t)
check("N22a", S(d_log, mp.mpf("0.5")), 2.099600929, 9)
check("N22b", S(d_exp, mp.mpf("0.5")), 2.154700538, 9)
p = S(d_log, mp.mpf("0.5"))
check("N23", d_log(mp.mpf("0.5")) / mp.mpf("0.5") ** p, 0.5606483696, 9)

print("Table N: bound inverses")
psi_rw_log = lambda al: H_log(mp.mpf(1) / 2) - H_log(mp.mpf(1) / 2 + al)
for row, R, bao, pinsker, rw in [("N24", mp.mpf("0.01"), 0.09991657615, 0.07071067812, 0.07059257027), ("N25", mp.mpf("0.1"), 0.3135631967, 0.2236067977, 0.2197946262)]:
    check(row + "a", bisect(d_log, R / 2, mp.mpf(0), mp.mpf(1)), bao, 9)
    check(row + "b", mp.sqrt(R / 2), pinsker, 9)
    check(row + "c", bisect(psi_rw_log, R, mp.mpf(0), mp.mpf(1) / 2), rw, 9)
check("N26", mp.sqrt(2 * mp.mpf("0.01")), 0.1414213562, 9)

print("Table N: Reid & Williamson branches")


def branches(H, dH, c, al):
    f = lambda x: -H(x)
    df = -dH(c)
    return f(c + al) - f(c) - df * al, f(c - al) - f(c) + df * al


dH_log = lambda q: mp.log((1 - q) / q)
check("N30", psi_rw_log(mp.mpf("0.1")), 0.02013551355, 10)
check("N31", H_exp(mp.mpf(1) / 2) - H_exp(mp.mpf("0.6")), 0.02020410289, 10)
up, lo = branches(H_log, dH_log, mp.mpf("0.3"), mp.mpf("0.1"))
check("N33a", up, 0.02258242108, 10)
check("N33b", lo, 0.02573209248, 10)
up, lo = branches(lambda q: -xlnx(q), lambda q: -mp.log(q) - 1, mp.mpf("0.5"), mp.mpf("0.1"))
check("N34a", up, 0.009392934076, 10)
check("N34b", lo, 0.01074257947, 10)
up, _ = branches(H_brier, lambda q: 1 - 2 * q, mp.mpf("0.3"), mp.mpf("0.1"))
check("C12", up, 0.01, 12)

print("Table F: focal loss minimisers")


def focal_risk(g, eta, q):
    return -eta * (1 - q) ** g * mp.log(q) - (1 - eta) * q**g * mp.log(1 - q)


for row, g, eta, qs in [("F1", 2, "0.7", 0.5784799858), ("F2", 2, "0.9", 0.6942128051), ("F3", 1, "0.7", 0.6172303148), ("F4", 1, "0.9", 0.7744253518)]:
    eta = mp.mpf(eta)
    q = mp.re(mp.findroot(lambda x: mp.diff(lambda y: focal_risk(g, eta, y), x), mp.mpf(qs)))
    check(row, q, qs, 10)
    h = lambda v: v / ((1 - v) ** g - g * v * (1 - v) ** (g - 1) * mp.log(v))
    check(row + " eta", h(q) / (h(q) + h(1 - q)), float(eta), 12)
    if row == "F1":
        check("F1 L(eta,eta)", focal_risk(g, eta, eta), 0.1994545237, 10)
        check("F1 L(eta,q*)", focal_risk(g, eta, q), 0.1548042439, 10)

print("Table N: hinge with linear partials (N38)")
check("N38a", mp.mpf("0.7") * 2 * (1 - mp.mpf("0.7")) + mp.mpf("0.3") * 2 * mp.mpf("0.7"), 0.84, 12)
check("N38b", mp.mpf("0.7") * 0 + mp.mpf("0.3") * 2, 0.6, 12)

print("Table N: boosting loss with the identity link (N39): l0'' changes sign at q = 1/4")
l0 = lambda q: mp.sqrt(q / (1 - q))
check("N39", mp.findroot(lambda q: mp.diff(l0, q, 2), mp.mpf("0.3")), 0.25, 12)

print("Table P: psi-transform psi(theta) = phi(0) - H((1 + theta)/2)")


def direct_H(phi, eta):
    return golden_min(lambda v: eta * phi(v) + (1 - eta) * phi(-v), mp.mpf(-20), mp.mpf(20))


margins = {
    "P1": (lambda v: mp.exp(-v), H_exp, [0.00501256289338, 0.133974596216, 0.564110105646], [0.1410673598, 0.4358898944]),
    "P2": (lambda v: mp.log(1 + mp.exp(-v)), H_log, [0.00500836684636, 0.130812035941, 0.494631937214], [0.1411851405, 0.4395892523]),
    "P3": (lambda v: mp.log(1 + mp.exp(-v)) / mp.log(2), H_bits, [0.00722554601219, 0.188721875541, 0.713603042884], [0.1176047775, None]),
    "P4": (lambda v: (1 - v) ** 2, lambda q: 4 * q * (1 - q), [0.01, 0.25, 0.81], [0.1, 0.316227766]),
    "P5": (lambda v: max(0, 1 - v) ** 2, lambda q: 4 * q * (1 - q), [0.01, 0.25, 0.81], [0.1, 0.316227766]),
    "P6": (lambda v: max(0, 1 - v), lambda q: 2 * min(q, 1 - q), [0.1, 0.5, 0.9], [None, None]),
}
for row, (phi, H, psis, invs) in margins.items():
    for eta in ["0.3", "0.55", "0.8"]:
        check(f"{row} H({eta})", direct_H(phi, mp.mpf(eta)), float(H(mp.mpf(eta))), 9)
    psi = lambda th: phi(0) - H((1 + th) / 2)
    for th, want in zip(["0.1", "0.5", "0.9"], psis):
        check(f"{row} psi({th})", psi(mp.mpf(th)), want, 11)
    for R, want in zip(["0.01", "0.1"], invs):
        if want is not None:
            check(f"{row} inv({R})", bisect(psi, mp.mpf(R), mp.mpf(0), mp.mpf(1)), want, 9)

print("failures:", failures or "none")
sys.exit(1 if failures else 0)
