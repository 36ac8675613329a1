#!/usr/bin/env python3
"""Independent check values for the tests, computed with mpmath at 50 digits.

Run:  python3 scripts/reference-values.py   (needs `pip install mpmath`;
written against mpmath 1.3.0). The printed values are pasted into the tests
named below (docs/references.md, Independent computations).

Each quantity is computed two ways that share no code with the project and
as little formula as possible with each other; the script stops if the two
disagree beyond 1e-30 relative (1e-20 for the double-integral route).

- Nagaoka's coefficient K_N(d/l): Lorenz's closed form in complete elliptic
  integrals (mpmath ellipk/ellipe, parameter m = k^2), and the current
  sheet's self-inductance as the double integral of Maxwell's coaxial-loop
  mutual inductance over the winding length (mpmath quad).
  -> lc-host/src/coil/solenoid.rs, test nagaoka_against_independent_values
- Mutual inductance of two coaxial loops: Maxwell's closed form and the
  Neumann line integral by mpmath quad.
  -> lc-host/src/coil/filament.rs, test maxwell_against_mpmath
- Steinhart-Hart through three points: the 3x3 linear system solved exactly
  in 50-digit arithmetic (mpmath lu_solve), and predicted temperatures from
  the fitted coefficients; cross-checked by substituting back.
  -> lc-core/src/temperature/model.rs, test three_point_fit_against_mpmath
"""
from mpmath import mp, mpf, ellipk, ellipe, quad, sqrt, pi, cos, log, matrix, lu_solve

mp.dps = 50
MU0 = 4 * pi * mpf(10) ** -7


def maxwell(a, b, d):
    """M of coaxial loops, radii a and b, axial separation d (m -> H).

    Evaluated at three times the working precision so that m = k^2 stays
    below 1 for separations down to 1e-60 of the radius."""
    with mp.workdps(3 * mp.dps):
        m = 4 * a * b / ((a + b) ** 2 + d**2)  # m = k^2
        k = sqrt(m)
        v = MU0 * sqrt(a * b) * ((2 / k - k) * ellipk(m) - (2 / k) * ellipe(m))
    return +v


def neumann(a, b, d):
    """M by Neumann's formula reduced to one integral: (mu0/2) a b int cos/R."""
    f = lambda p: cos(p) / sqrt(a * a + b * b + d * d - 2 * a * b * cos(p))
    return MU0 / 2 * a * b * quad(f, [0, pi / 2, pi, 3 * pi / 2, 2 * pi])


def nagaoka_closed(d_over_l):
    d, l = mpf(d_over_l), mpf(1)
    k2 = d * d / (d * d + l * l)
    k = sqrt(k2)
    kp = l / sqrt(d * d + l * l)
    return 4 / (3 * pi * kp) * ((kp**2 / k2) * (ellipk(k2) - ellipe(k2)) + ellipe(k2) - k)


def nagaoka_double_integral(d_over_l):
    # Current sheet of radius r, length l, N turns: L = (N/l)^2 * 2 * int_0^l
    # (l - u) M(r, r, u) du; K_N = L / (mu0 pi r^2 N^2 / l). N = 1.
    r, l = mpf(d_over_l) / 2, mpf(1)
    # M(r, r, u) has an integrable log singularity at u = 0; drop u < 1e-60
    # (it adds at most about 1e-57 to the integral).
    g = lambda u: (l - u) * maxwell(r, r, u) if u > mpf(10) ** -60 else mpf(0)
    pts = [mpf(0)] + [l * mpf(x) / 8 for x in range(1, 9)]
    lsheet = 2 * quad(g, pts) / l**2
    return lsheet / (MU0 * pi * r * r / l)


def main():
    print("# Nagaoka K_N against d/l (mpmath", mp.dps, "digits)")
    for dl in ["0.1", "0.2", "0.5", "1", "2", "5", "10"]:
        a = nagaoka_closed(dl)
        b = nagaoka_double_integral(dl)
        assert abs(a / b - 1) < mpf(10) ** -20, (dl, a, b)
        print(f"    ({dl}, {mp.nstr(a, 17)}),")

    print("# Maxwell M(a, b, d) in H (mpmath", mp.dps, "digits)")
    cases = [
        ("0.01", "0.01", "0.005"),
        ("0.01", "0.02", "0"),
        ("0.01", "0.005", "0.01"),
        ("0.05", "0.05", "0.1"),
        ("1", "0.1", "2"),
        ("0.0049", "0.0045", "0.0016"),
    ]
    for a, b, d in cases:
        a_, b_, d_ = mpf(a), mpf(b), mpf(d)
        m1 = maxwell(a_, b_, d_)
        m2 = neumann(a_, b_, d_)
        assert abs(m1 / m2 - 1) < mpf(10) ** -30, (a, b, d, m1, m2)
        print(f"    ({a}, {b}, {d}, {mp.nstr(m1, 17)}),")

    print("# Steinhart-Hart through (0 C, 32650), (25 C, 10000), (50 C, 3600)")
    pts = [(mpf(0), mpf(32650)), (mpf(25), mpf(10000)), (mpf(50), mpf(3600))]
    rows, rhs = [], []
    for t, r in pts:
        x = log(r)
        rows.append([1, x, x**3])
        rhs.append(1 / (t + mpf("273.15")))
    a, b, c = lu_solve(matrix(rows), matrix(rhs))
    for t, r in pts:
        x = log(r)
        assert abs(1 / (a + b * x + c * x**3) - (t + mpf("273.15"))) < mpf(10) ** -40
    print(f"    A = {mp.nstr(a, 17)}, B = {mp.nstr(b, 17)}, C = {mp.nstr(c, 17)}")
    for r in ["100000", "20000", "5000", "1000"]:
        x = log(mpf(r))
        t = 1 / (a + b * x + c * x**3) - mpf("273.15")
        print(f"    ({r}, {mp.nstr(t, 17)}),")


if __name__ == "__main__":
    main()
