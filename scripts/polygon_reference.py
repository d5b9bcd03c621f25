"""Reference conformal radii for tests/polygon.rs (mpmath 1.3.0).

Run: python3 scripts/polygon_reference.py > tests/data/polygon_reference.json

* Square [-1, 1]^2 seen from its centre: the Schwarz-Christoffel map of the unit disk onto the
  square, f(w) = C * int_0^w (1 + t^4)^(-1/2) dt, has f'(0) = C, and the corner e^{i pi/4} goes to
  1 + i, so C = sqrt(2) / I with I = int_0^1 (1 - s^4)^(-1/2) ds; CR = C (textbook SC formula).
* Ellipse x^2/a^2 + y^2/b^2 < 1 (a = 1, b = 0.6) seen from z0: log CR = H(z0) where H is
  harmonic inside with H = log|zeta - z0| on the boundary (Green's function). H is expanded in
  harmonic polynomials Re/Im z^n, n <= 48, fitted by least squares at 600 boundary points at
  40 digits; the residual on the boundary is printed as a check (it bounds the error by the
  maximum principle).
"""
import json
import mpmath as mp

mp.mp.dps = 40

I = mp.quad(lambda s: (1 - s**4) ** mp.mpf(-0.5), [0, 1])
square = mp.sqrt(2) / I


def ellipse_log_cr(a, b, z0, n=48, m=600):
    a, b = mp.mpf(a), mp.mpf(b)
    z0 = mp.mpc(z0)
    rows, rhs, pts = [], [], []
    for k in range(m):
        th = 2 * mp.pi * k / m
        z = mp.mpc(a * mp.cos(th), b * mp.sin(th))
        pts.append(z)
        row = [mp.mpf(1)]
        for j in range(1, n + 1):
            zj = z**j
            row += [zj.real, zj.imag]
        rows.append(row)
        rhs.append(mp.log(abs(z - z0)))
    A = mp.matrix(rows)
    y = mp.matrix(rhs)
    x, res = mp.qr_solve(A, y)
    h0 = x[0]
    for j in range(1, n + 1):
        zj = z0**j
        h0 += x[2 * j - 1] * zj.real + x[2 * j] * zj.imag
    # Maximum boundary residual, on a finer set of points.
    worst = 0
    for k in range(3 * m):
        th = 2 * mp.pi * (k + mp.mpf(1) / 3) / (3 * m)
        z = mp.mpc(a * mp.cos(th), b * mp.sin(th))
        h = x[0]
        for j in range(1, n + 1):
            zj = z**j
            h += x[2 * j - 1] * zj.real + x[2 * j] * zj.imag
        worst = max(worst, abs(h - mp.log(abs(z - z0))))
    return h0, worst


out = {"square_centre": float(square), "source": "scripts/polygon_reference.py, mpmath " + mp.__version__}
for name, z0 in [("ellipse_centre", 0), ("ellipse_off_centre", mp.mpc("0.3", "0.2"))]:
    h, worst = ellipse_log_cr(1, 0.6, z0)
    out[name] = float(mp.e**h)
    out[name + "_boundary_residual"] = float(worst)
print(json.dumps(out, indent=2))
