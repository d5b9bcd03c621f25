#!/usr/bin/env python3
"""Reference values for the modified Bessel functions of `sleek::bessel`.

Computes, with the general-purpose arbitrary-precision library mpmath
(install with `pip install mpmath`; version 1.3.0 was used for the committed
file), reference values that `tests/bessel.rs` compares against:

* I_nu(z), exp(-z) I_nu(z), K_nu(z) and exp(z) K_nu(z) (mpmath.besseli,
  mpmath.besselk) for orders nu in {0, 0.1, 1/6, 0.25, 0.5, 5/6, 0.9, 1,
  -0.3, -5/6, -1} and a few larger ones {1.5, 2.5, 3.7, 10.3}, at z from 1e-8
  to 700 (a fixed list including both sides of the method switches z = 2 and
  z = 20, plus 40 log-spaced points), and at 300 pseudo-random points (fixed
  seed) with nu in [-1, 1] and z log-uniform in [1e-8, 700];
* the Bessel-bridge hitting probability p = 1 - I_nu(z)/I_{-nu}(z), computed
  in the cancellation-free form (2/pi) sin(pi nu) K_nu(z) / I_{-nu}(z), and the
  ratio I_nu(z)/I_{-nu}(z), at nu = 4/kappa - 1/2 for kappa in
  {3, 4, 16/3, 6, 7.5} and at further orders in [0, 1] (including orders
  within 1e-6 of 0 and 1), z from 0 (and the smallest subnormal) to 400, plus
  300 pseudo-random points (fixed seed) with nu in [0, 1] and z log-uniform in
  [1e-10, 346]; and the ratio at negative orders.
  Inside this script p is cross-checked against the direct form
  1 - I_nu/I_{-nu} evaluated with enough extra digits to absorb the
  cancellation (about 2z/ln(10) digits), and at nu = 1/2 against the closed
  form 2/(1 + e^{2z}).

Every input is an IEEE double (so the Rust side can use exactly the same
argument); mpmath evaluates at the exact value of that double with 50 working
digits, and results are written as decimal strings with 25 significant digits.

With --rgamma-taylor the script instead prints the Taylor coefficients of
1/Gamma(1 + x) about x = 0 (mpmath.taylor(mpmath.rgamma, 1, 25)) as the
shortest round-trip doubles used in `src/bessel.rs` (RGAMMA_TAYLOR).

Usage:  python3 scripts/bessel_reference.py   (run from the crate root)
Output: tests/data/bessel_reference.json
"""

import json
import os
import platform
import random
import sys

import mpmath
from mpmath import mp, mpf

DPS = 50
DIGITS = 25


def s(x):
    """An mpmath number as a decimal string with DIGITS significant digits."""
    return mpmath.nstr(x, DIGITS, min_fixed=1, max_fixed=0, strip_zeros=False)


def rgamma_taylor():
    mp.dps = DPS
    for c in mpmath.taylor(mpmath.rgamma, 1, 25):
        print(repr(float(c)))


# Orders of the plain functions (doubles; 1/6 and 5/6 are the nearest doubles).
ORDERS = [0.0, 0.1, 1.0 / 6.0, 0.25, 0.5, 5.0 / 6.0, 0.9, 1.0,
          -0.3, -5.0 / 6.0, -1.0, 1.5, 2.5, 3.7, 10.3]

Z_FIXED = [1e-8, 1e-6, 1e-4, 1e-3, 0.01, 0.05, 0.1, 0.2, 0.3, 0.5, 0.75, 1.0,
           1.25, 1.5, 1.75, 1.999, 2.0, 2.001, 2.25, 2.5, 3.0, 3.5, 4.0, 5.0,
           6.0, 7.0, 8.0, 9.0, 10.0, 12.0, 14.0, 16.0, 18.0, 19.999, 20.0,
           20.001, 22.0, 25.0, 30.0, 40.0, 50.0, 70.0, 100.0, 150.0, 200.0,
           300.0, 400.0, 500.0, 600.0, 700.0]


def z_grid():
    # 40 log-spaced points between 1e-8 and 700, offset so they avoid round numbers.
    lo, hi = -8.0, 2.845
    pts = [10.0 ** (lo + (hi - lo) * (j + 0.37) / 40.0) for j in range(40)]
    return sorted(set(Z_FIXED + pts))


def random_bessel_points():
    # 300 pseudo-random points (fixed seed): nu uniform in [-1, 1], log10 z uniform in [-8, 2.845].
    rng = random.Random(20250601)
    return [(rng.uniform(-1.0, 1.0), 10.0 ** rng.uniform(-8.0, 2.845)) for _ in range(300)]


def bessel_rows():
    rows = []
    points = [(nu, z) for nu in ORDERS for z in z_grid()] + random_bessel_points()
    for nu, z in points:
        n, x = mpf(nu), mpf(z)
        i = mpmath.besseli(n, x)
        k = mpmath.besselk(n, x)
        rows.append({
            "nu": nu, "z": z,
            "i": s(i), "i_scaled": s(i * mpmath.exp(-x)),
            "k": s(k), "k_scaled": s(k * mpmath.exp(x)),
        })
    return rows


KAPPAS = [3.0, 4.0, 16.0 / 3.0, 6.0, 7.5]
BRIDGE_EXTRA_ORDERS = [1e-6, 0.1, 0.9, 0.999999, 0.0, 1.0]
BRIDGE_Z = [0.0, 5e-324, 1e-300, 1e-12, 1e-8, 1e-6, 1e-4, 1e-3, 0.01, 0.03, 0.1, 0.2, 0.3, 0.5,
            0.7, 1.0, 1.3, 1.7, 1.999, 2.0, 2.001, 2.5, 3.0, 4.0, 5.0, 6.5, 8.0,
            10.0, 12.5, 15.0, 17.5, 19.999, 20.0, 20.001, 25.0, 30.0, 40.0,
            60.0, 80.0, 100.0, 150.0, 200.0, 250.0, 300.0, 340.0, 345.0, 345.5,
            346.0, 346.5, 350.0, 400.0]


def hit_probability(nu, z):
    """(p, ratio) at 50 digits: p = (2/pi) sin(pi nu) K_nu / I_{-nu}, ratio = 1 - p."""
    n, x = mpf(nu), mpf(z)
    if x == 0:
        return mpf(1), mpf(0)
    if n == int(n):
        # Integer order: I_{-n} = I_n exactly, so p = 0 and the ratio is 1 (mpmath's besseli
        # at negative integer order fails to converge at the smallest z).
        return mpf(0), mpf(1)
    p = 2 / mpmath.pi * mpmath.sinpi(n) * mpmath.besselk(n, x) / mpmath.besseli(-n, x)
    ratio = mpmath.besseli(n, x) / mpmath.besseli(-n, x)
    return p, ratio


def check_direct(nu, z, p):
    """Cross-check p against 1 - I_nu/I_{-nu} with extra digits for the cancellation."""
    extra = int(2 * z / 2.302585) + 20
    with mpmath.workdps(DPS + extra):
        n, x = mpf(nu), mpf(z)
        direct = 1 - mpmath.besseli(n, x) / mpmath.besseli(-n, x)
    if p == 0:
        assert abs(direct) < mpf(10) ** (-(DPS + extra - 10)), (nu, z, direct)
        return
    err = abs(direct / p - 1)
    assert err < mpf(10) ** (-40), (nu, z, p, direct, err)


def bridge_rows():
    rows = []
    orders = [(kappa, 4.0 / kappa - 0.5) for kappa in KAPPAS]
    orders += [(None, nu) for nu in BRIDGE_EXTRA_ORDERS]
    points = [(kappa, nu, z) for kappa, nu in orders for z in BRIDGE_Z]
    # 300 pseudo-random points (fixed seed): nu uniform in [0, 1], log10 z uniform in
    # [-10, log10(346)].
    rng = random.Random(20250602)
    points += [(None, rng.uniform(0.0, 1.0), 10.0 ** rng.uniform(-10.0, 2.539))
               for _ in range(300)]
    for kappa, nu, z in points:
        if z == 0.0 and nu in (0.0, 1.0):
            continue  # a convention, not a limit; tested separately
        p, ratio = hit_probability(nu, z)
        if z > 0 and nu not in (0.0, 1.0):
            check_direct(nu, z, p)
        if nu == 0.5:
            closed = 2 / (1 + mpmath.exp(2 * mpf(z)))
            assert abs(closed / p - 1) < mpf(10) ** (-45), (z, p, closed)
        rows.append({"kappa": kappa, "nu": nu, "z": z, "p": s(p), "ratio": s(ratio)})
    return rows


RATIO_NEGATIVE_ORDERS = [-1e-6, -0.1, -1.0 / 6.0, -0.3, -0.5, -5.0 / 6.0, -0.999999]


def ratio_negative_rows():
    rows = []
    for nu in RATIO_NEGATIVE_ORDERS:
        for z in BRIDGE_Z:
            if z < 1e-12:
                continue  # the ratio overflows a double for the smallest z
            n, x = mpf(nu), mpf(z)
            ratio = mpmath.besseli(n, x) / mpmath.besseli(-n, x)
            rows.append({"nu": nu, "z": z, "ratio": s(ratio)})
    return rows


def main():
    if "--rgamma-taylor" in sys.argv[1:]:
        rgamma_taylor()
        return
    mp.dps = DPS
    data = {
        "source": "mpmath %s (besseli, besselk, sinpi), %d working digits, "
                  "written by scripts/bessel_reference.py" % (mpmath.__version__, DPS),
        "python": platform.python_version(),
        "digits": DIGITS,
        "bessel": bessel_rows(),
        "bridge": bridge_rows(),
        "ratio_negative": ratio_negative_rows(),
    }
    root = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    out = os.path.join(root, "tests", "data", "bessel_reference.json")
    with open(out, "w") as f:
        json.dump(data, f, indent=1)
        f.write("\n")
    print("wrote %s: %d Bessel rows, %d bridge rows, %d negative-order ratio rows"
          % (out, len(data["bessel"]), len(data["bridge"]), len(data["ratio_negative"])))


if __name__ == "__main__":
    main()
