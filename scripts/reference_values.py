#!/usr/bin/env python3
"""Reference values for the special functions and exact laws of `sleek`.

Computes, with the general-purpose arbitrary-precision library mpmath
(install with `pip install mpmath`; version 1.3.0 was used for the committed
file), reference values that `tests/special_laws.rs` compares against:

* Gamma and log|Gamma| at a spread of points (small, half-integers, negative
  arguments, points close to the poles 0, -1, -2, large arguments);
* the Gauss hypergeometric function 2F1 at Schramm's arguments
  (a = 1/2, b = 4/kappa, c = 3/2, z = -s^2) and at further parameter sets
  (integer a - b, z close to 1, large negative z, terminating series, ...);
* Schramm's left-passage probability (Schramm, Electron. Comm. Probab. 2001),
  evaluated from the 2F1 form and cross-checked inside this script against an
  independent route (numerical quadrature of the Student-t-like density
  K (1 + u^2)^(-4/kappa));
* the law of T = -log CR for CLE_kappa (Schramm, Sheffield & Wilson,
  Commun. Math. Phys. 2009): lambda*, the gasket dimension, the moment
  generating function E[exp(lambda T)] at several lambda (including lambda
  below -kappa mu^2/8 where the cosine becomes a hyperbolic cosine), and the
  first four cumulants obtained by mpmath's numerical differentiation of
  log E[exp(lambda T)] at lambda = 0 -- a route independent of the closed forms
  for E[T] and Var[T], which are cross-checked here too;
* the Taylor coefficients of (sec^2 x - tan(x)/x)/x^2 used by the small-nu
  expansion of Var[T].

Every input is an IEEE double (so the Rust side can use exactly the same
argument); mpmath evaluates at the exact value of that double with 50 working
digits, and results are written as decimal strings with 30 significant digits.

Usage:  python3 scripts/reference_values.py   (run from the crate root)
Output: tests/data/reference_values.json
"""

import json
import os
import platform
import sys

import mpmath
from mpmath import mp, mpf

SCRIPT = "scripts/reference_values.py"
WORK_DPS = 50
OUT_DIGITS = 30

mp.dps = WORK_DPS


def s30(v):
    """A real mpmath number as a 30-significant-digit decimal string."""
    v = mpmath.re(v) if isinstance(v, mpmath.mpc) else v
    return mpmath.nstr(mpf(v), OUT_DIGITS, min_fixed=-1, max_fixed=-1) if v != 0 else "0"


def X(x):
    """The exact value of the double x as an mpmath number."""
    return mpf(float(x))


def check(name, got, want, rel):
    """Abort when two independent routes disagree."""
    got, want = mpf(mpmath.re(got)), mpf(mpmath.re(want))
    err = abs(got - want) / max(abs(want), mpf(10) ** (-WORK_DPS + 5))
    if err > rel:
        sys.exit(f"cross-check failed for {name}: {got} vs {want} (rel. err {err})")


# ---------------------------------------------------------------- Gamma ----
GAMMA_POINTS = [
    1e-8, 0.001, 0.1, 0.5, 1.0, 1.5, 2.0, 2.5, 3.0, 3.7, 4.5, 7.25, 10.0,
    20.5, 33.3, 57.5, 100.0, 100.5, 150.3, 170.5, 171.6,
    -0.5, -1.5, -2.5, -0.4999, -0.999999, -1.000001, -1.9999, -2.0001,
    -3.3, -10.5, -1e-8,
]
LN_GAMMA_POINTS = [
    1e-8, 0.001, 0.1, 0.5, 0.9, 1.0, 1.0001, 1.5, 1.9999, 2.0, 2.0001,
    2.5, 3.0, 10.0, 100.0, 171.6, 1000.0, 12345.678, 1e5, 1e10,
    -0.5, -2.5, -0.999999, -10.5,
]


def gamma_table():
    return [{"x": x, "value": s30(mp.gamma(X(x)))} for x in GAMMA_POINTS]


LN_GAMMA_RATIO_POINTS = [(200.0, 200.5), (1000.0, 999.5), (250.25, 171.5), (12.5, 300.0),
                         (170.5, 169.0), (400.0, 400.0 + 1e-9), (1e6, 1e6 + 0.5)]


def ln_gamma_ratio_table():
    return [{"x": x, "y": y, "value": s30(mp.loggamma(X(x)) - mp.loggamma(X(y)))}
            for x, y in LN_GAMMA_RATIO_POINTS]


def ln_gamma_table():
    # log|Gamma(x)| (for negative x the real log of the absolute value).
    return [{"x": x, "value": s30(mp.log(abs(mp.gamma(X(x)))))} for x in LN_GAMMA_POINTS]


# ------------------------------------------------------------------ 2F1 ----
SCHRAMM_KAPPAS = [1.0, 2.0, 8.0 / 3.0, 3.0, 4.0, 6.0, 7.5]
SCHRAMM_S = [-3.0, -0.4, 0.5, 1.0, 2.0, 10.0, 200.0]

# (a, b, c, z, note)
EXTRA_2F1 = [
    (0.1, 0.2, 0.3, 0.4, "series region"),
    (3.0, 4.0, 5.5, -0.45, "series region, alternating"),
    (5.0, 6.0, 2.5, 0.5, "series region edge, large a, b"),
    (2.5, -1.5, 0.75, 0.3, "series region, b < 0"),
    (-3.0, 2.0, 0.5, -7.0, "terminating series (a = -3), large negative z"),
    (0.5, 0.5, 1.5, -4.0, "a - b = 0 (Schramm kappa = 8), z < -1"),
    (0.5, 1.5, 1.5, -9.0, "a - b = -1 (Schramm kappa = 8/3)"),
    (1.0, 3.0, 2.0, -5.0, "a - b = -2"),
    (2.0, 2.0, 3.0, 0.7, "a - b = 0, z > 1/2"),
    (0.3, 0.6, 1.7, 0.95, "z near 1"),
    (0.5, 0.5, 1.0, 0.95, "complete elliptic K form, c - a - b = 0, z near 1"),
    (1.5, 2.25, 3.1, 0.999, "z very near 1, c - a - b < 0"),
    (0.5, 0.8, 1.9, -1e4, "large negative z"),
    (1.0, 1.0, 2.0, -1e4, "ln(1 - z)/(-z)"),
    (0.5, 1.5, 2.25, -1e4, "large negative z, a - b = -1"),
    (0.25, 0.75, 1.25, -1e6, "very large negative z"),
    (1.2, 0.02, 1.03, 0.9, "small b and c - b (endpoint singularities)"),
    (-0.7, 0.4, 2.6, 0.75, "a < 0, z > 1/2"),
    (3.0, 4.0, 2.5, 0.8, "c < a, b, z > 1/2 (Euler transform + series)"),
    (0.5, 12.5, 1.5, -0.3, "large b, alternating series (Schramm kappa = 0.32)"),
    (0.5, 30.0, 1.5, -0.8, "large b (Schramm kappa = 0.133), |z| < 1"),
    (10.25, 0.75, 1.5, -0.9, "large a, every series alternates or has a large prefactor"),
    (7.5, -6.3, 0.7, -0.6, "mixed signs"),
    (0.5, 0.5, 1.0, 1.0 - 1e-9, "elliptic K form, 1 - z = 1e-9 (log singularity)"),
    (0.3, 0.6, 1.7, 1.0 - 1e-12, "1 - z = 1e-12, c - a - b > 0"),
    (1.5, 2.25, 3.1, 1.0 - 1e-7, "1 - z = 1e-7, c - a - b < 0"),
    (2.5, 0.5, 1.5, 1.0 - 1e-10, "1 - z = 1e-10, large value"),
    (0.5, 1.5, 2.0, -1e8, "z = -1e8"),
]


def schramm_sweep():
    """A wider, seeded sweep of Schramm's arguments: kappa in (0.2, 8) (with extra points near
    8/3, 4 and 8), s = +-10^u, u uniform in [-3, 3]."""
    import random
    rng = random.Random(20240611)
    out = []
    kappas = [rng.uniform(0.2, 8.0) for _ in range(120)]
    kappas += [8.0 / 3.0 + d for d in (-1e-9, 1e-9, -1e-3, 1e-3)]
    kappas += [4.0 + d for d in (-1e-9, 1e-9)] + [7.9, 7.99, 7.999]
    for k in kappas:
        s = rng.choice([-1.0, 1.0]) * 10.0 ** rng.uniform(-3.0, 3.0)
        a, b, c, z = 0.5, 4.0 / k, 1.5, -(s * s)
        out.append({"kappa": k, "s": s, "a": a, "b": b, "c": c, "z": z,
                    "value": s30(mp.hyp2f1(X(a), X(b), X(c), X(z)))})
    return out


def hyp2f1_tables():
    schramm = []
    for k in SCHRAMM_KAPPAS:
        for s in SCHRAMM_S:
            a, b, c, z = 0.5, 4.0 / k, 1.5, -(s * s)
            schramm.append({"kappa": k, "s": s, "a": a, "b": b, "c": c, "z": z,
                            "value": s30(mp.hyp2f1(X(a), X(b), X(c), X(z)))})
    extra = []
    for a, b, c, z, note in EXTRA_2F1:
        extra.append({"a": a, "b": b, "c": c, "z": z, "note": note,
                      "value": s30(mp.hyp2f1(X(a), X(b), X(c), X(z)))})
    return schramm, extra


# ----------------------------------------------------- Schramm's formula ----
def schramm_hyp(kappa, s):
    """Schramm's formula in its 2F1 form (Schramm, Electron. Comm. Probab. 2001)."""
    # 1/2 + (...) cancels when P is tiny, so work with 200 digits here.
    with mp.workdps(200):
        k, s = X(kappa), X(s)
        pref = mp.gamma(4 / k) / (mp.sqrt(mp.pi) * mp.gamma((8 - k) / (2 * k)))
        v = mpf(1) / 2 + pref * s * mp.hyp2f1(mpf(1) / 2, 4 / k, mpf(3) / 2, -s * s)
    return +v


def schramm_quad(kappa, s):
    """Independent route (no 2F1): with b = 4/kappa and p = b - 1/2,
    P = K * integral_{-inf}^{s} (1 + u^2)^(-b) du,  K = Gamma(b)/(sqrt(pi) Gamma(p)).
    The substitution t = 1/(1 + u^2) turns the integral over (-inf, -|s|) into
    (1/2) * integral_0^{x0} t^(p-1) (1-t)^(-1/2) dt with x0 = 1/(1 + s^2), and
    v = t^p removes the endpoint singularity:  (1/(2p)) integral_0^{x0^p}
    (1 - v^(1/p))^(-1/2) dv, a smooth integrand that mpmath's quadrature handles
    to full precision.  P(s) = 1 - P(-s) for s > 0."""
    k, s = X(kappa), X(s)
    b = 4 / k
    p = b - mpf(1) / 2
    K = mp.gamma(b) / (mp.sqrt(mp.pi) * mp.gamma(p))
    x0 = 1 / (1 + s * s)
    lower = K / (2 * p) * mp.quad(lambda v: (1 - v ** (1 / p)) ** (-mpf(1) / 2), [0, x0 ** p])
    return lower if s <= 0 else 1 - lower


def schramm_table():
    out = []
    for k in SCHRAMM_KAPPAS:
        for s in SCHRAMM_S:
            v = schramm_hyp(k, s)
            check(f"Schramm kappa={k} s={s}", schramm_quad(k, s), v, mpf(10) ** -25)
            out.append({"kappa": k, "x": s, "y": 1.0, "value": s30(v)})
    # the same probabilities with y != 1 (scale invariance: only x/y matters)
    # plus small kappa, where P is far from 1/2 already for |x/y| < 1 (tiny probabilities)
    for k, x, y in [(6.0, 1.5, 3.0), (6.0, 3.0, 3.0), (6.0, 6.0, 3.0), (2.0, -0.25, 0.125),
                    (4.0, 1e-3, 2e-3), (7.5, -1e5, 1.0),
                    (0.1, -0.99, 1.0), (0.1, 0.5, 1.0), (0.05, -0.5, 1.0), (0.2, -0.9, 1.0),
                    (0.3, -0.2, 1.0), (0.5, -1.0, 1.0), (0.02, -0.3, 1.0), (0.1, -30.0, 1.0),
                    (1.0, -200.0, 1.0), (0.5, 0.05, 1.0)]:
        # x / y is formed in double precision on the Rust side; use the same double.
        v = schramm_hyp(k, x / y)
        check(f"Schramm kappa={k} x={x} y={y}", schramm_quad(k, x / y), v, mpf(10) ** -25)
        out.append({"kappa": k, "x": x, "y": y, "value": s30(v)})
    return out


# ------------------------------------------------------------------ CLE ----
CLE_KAPPAS = [3.0, 3.5, 4.0, 4.0001, 16.0 / 3.0, 6.0, 7.0]


def cle_mgf(kappa, lam):
    """E[exp(lam T)] (Schramm, Sheffield & Wilson, Commun. Math. Phys. 2009).

    mpmath's complex square root turns the cosine into a hyperbolic cosine
    automatically when mu^2 + 8 lam / kappa < 0.
    """
    k = mpf(kappa)
    mu = 1 - 4 / k
    return mpmath.re(-mp.cos(4 * mp.pi / k) / mp.cos(mp.pi * mp.sqrt(mpmath.mpc(mu * mu + 8 * lam / k))))


def cle_table():
    out = []
    for kd in CLE_KAPPAS:
        k = X(kd)
        mu = 1 - 4 / k
        nu = abs(mu)
        lam_star = 1 - 2 / k - 3 * k / 32
        gasket = 2 - (8 - k) * (3 * k - 8) / (32 * k)
        check(f"lambda* kappa={kd}", 2 - gasket, lam_star, mpf(10) ** -40)
        logm = lambda lam: mp.log(cle_mgf(kd, lam))
        # cumulants by numerical differentiation of log E[e^{lam T}] at 0
        c1, c2, c3, c4 = (mp.diff(logm, 0, n) for n in (1, 2, 3, 4))
        # closed forms (cross-check only)
        if nu != 0:
            mean_cf = 4 * mp.pi * mp.tan(mp.pi * nu) / (k * nu)
            var_cf = 16 * mp.pi / (k * k * nu * nu) * (mp.pi * mp.sec(mp.pi * nu) ** 2
                                                       - mp.tan(mp.pi * nu) / nu)
            check(f"E[T] kappa={kd}", c1, mean_cf, mpf(10) ** -30)
            check(f"Var[T] kappa={kd}", c2, var_cf, mpf(10) ** -30)
        boundary = -k * mu * mu / 8  # below this lambda the cosh branch applies
        lams = [-5.0, -1.0, -0.3, -0.01, 0.0, 0.02, float(lam_star) * 0.5,
                float(lam_star) * 0.99]
        if float(boundary) != 0.0:
            lams += [float(boundary) * 1.5, float(boundary) * 0.5]
        mgf = []
        for lam in sorted(set(lams)):
            lx = X(lam)
            mgf.append({"lambda": lam,
                        "branch": "cosh" if mu * mu + 8 * lx / k < 0 else "cos",
                        "value": s30(cle_mgf(kd, lx))})
        out.append({
            "kappa": kd,
            "mu": s30(mu),
            "lambda_star": s30(lam_star),
            "gasket_dimension": s30(gasket),
            "mean_t": s30(c1),
            "var_t": s30(c2),
            "third_cumulant_t": s30(c3),
            "fourth_cumulant_t": s30(c4),
            "mgf": mgf,
        })
    return out


def var_taylor_coefficients():
    """Coefficients of (sec^2 x - tan(x)/x)/x^2 in powers of x^2, from mpmath's
    Taylor expansion (mp.taylor differentiates numerically at high precision)."""
    f = lambda x: (mp.sec(x) ** 2 - mp.tan(x) / x) / (x * x) if x != 0 else mpf(2) / 3
    mp.dps = 60
    co = mp.taylor(f, mpf(0), 12)
    mp.dps = WORK_DPS
    even = [co[2 * j] for j in range(7)]
    # exact values from the tangent numbers: 2k T_{2k+1}, tan x = sum T_{2k+1} x^{2k+1}
    exact = [mpf(2) / 3, mpf(8) / 15, mpf(34) / 105, mpf(496) / 2835]
    for j, e in enumerate(exact):
        check(f"Var Taylor coefficient {j}", even[j], e, mpf(10) ** -20)
    return [s30(c) for c in even]


def tan_taylor_coefficients():
    """T_{2k+1}, k = 0..12, in tan x = sum_k T_{2k+1} x^{2k+1}: mpmath's Taylor expansion of
    tan, cross-checked against 2^{2k+2}(2^{2k+2}-1)|B_{2k+2}|/(2k+2)! with mpmath's Bernoulli
    numbers."""
    co = mp.taylor(mp.tan, mpf(0), 25)
    out = []
    for k in range(13):
        n = 2 * k + 2
        exact = mpf(2) ** n * (mpf(2) ** n - 1) * abs(mp.bernoulli(n)) / mp.factorial(n)
        check(f"tan Taylor coefficient {k}", co[2 * k + 1], exact, mpf(10) ** -25)
        out.append(s30(exact))
    return out


def main():
    schramm_2f1, extra_2f1 = hyp2f1_tables()
    data = {
        "generator": SCRIPT,
        "library": "mpmath",
        "mpmath_version": mpmath.__version__,
        "python_version": platform.python_version(),
        "working_digits": WORK_DPS,
        "output_digits": OUT_DIGITS,
        "note": "Inputs are IEEE doubles; values are mpmath evaluations at those exact doubles.",
        "gamma": gamma_table(),
        "ln_gamma_abs": ln_gamma_table(),
        "ln_gamma_ratio": ln_gamma_ratio_table(),
        "hyp2f1_schramm": schramm_2f1,
        "hyp2f1_other": extra_2f1,
        "hyp2f1_schramm_sweep": schramm_sweep(),
        "schramm_left_passage": schramm_table(),
        "cle": cle_table(),
        "var_taylor_coefficients_in_x2": var_taylor_coefficients(),
        "tan_taylor_odd_coefficients": tan_taylor_coefficients(),
    }
    os.makedirs("tests/data", exist_ok=True)
    with open("tests/data/reference_values.json", "w") as fh:
        json.dump(data, fh, indent=1)
        fh.write("\n")
    for row in data["cle"]:
        print(f"kappa={row['kappa']:.6g}: E[T]={float(row['mean_t']):.10g} "
              f"Var[T]={float(row['var_t']):.10g} lambda*={float(row['lambda_star']):.10g}")
    print(f"wrote tests/data/reference_values.json with mpmath {mpmath.__version__}")


if __name__ == "__main__":
    main()
