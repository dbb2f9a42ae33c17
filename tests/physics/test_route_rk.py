"""Checks of the Runge-Kutta route integrator's root finder against numpy's polynomial roots."""
import numpy as np

from physics.route_rk import hermite_root


def test_hermite_root_matches_numpy_roots_of_the_cubic():
    # Reference: numpy.roots on the cubic Hermite interpolant written in the power basis
    # (h00 = 2s^3 - 3s^2 + 1, h10 = s^3 - 2s^2 + s, h01 = -2s^3 + 3s^2, h11 = s^3 - s^2;
    # any numerical-analysis text, from memory). Data: a sign change on [0, 1] with slopes
    # drawn wide, consistent and not; the root in the bracket must agree to 1e-11 (numpy.roots
    # is an eigenvalue solver: ~1e-13 on these scales), and the sign change must hold at it.
    rng = np.random.default_rng(3)
    n = 2000
    y0 = rng.uniform(0.01, 5.0, n)
    y1 = -rng.uniform(0.0, 5.0, n)
    d0 = rng.uniform(-10.0, 2.0, n)
    d1 = rng.uniform(-10.0, 2.0, n)
    s = hermite_root(y0, y1, d0, d1)
    assert np.all((s >= 0.0) & (s <= 1.0))
    checked = 0
    for i in range(n):
        coeffs = [2 * y0[i] + d0[i] - 2 * y1[i] + d1[i],
                  -3 * y0[i] - 2 * d0[i] + 3 * y1[i] - d1[i], d0[i], y0[i]]
        roots = np.roots(coeffs)
        real = np.sort(roots[(np.abs(roots.imag) < 1e-9) & (roots.real >= -1e-12)
                             & (roots.real <= 1 + 1e-12)].real)
        if real.size == 1:  # one crossing: the root is unique, compare it
            assert abs(s[i] - real[0]) < 1e-11
            checked += 1
        else:  # several crossings: any of them is a valid answer
            assert np.min(np.abs(real - s[i])) < 1e-9
    assert checked > n // 2
    # increasing form: y0 <= 0 < y1 is the mirror image
    s_up = hermite_root(-y0, -y1, -d0, -d1, increasing=True)
    np.testing.assert_allclose(s_up, s, rtol=0, atol=1e-12)


def test_hermite_root_of_a_row_does_not_depend_on_the_other_rows():
    # Reproducibility rule of the project (results independent of block size): each row's
    # root must be the same whether it is solved alone or beside any other rows (derived).
    rng = np.random.default_rng(11)
    n = 300
    y0, y1 = rng.uniform(0.01, 5.0, n), -rng.uniform(0.0, 5.0, n)
    d0, d1 = rng.uniform(-10.0, 2.0, n), rng.uniform(-10.0, 2.0, n)
    together = hermite_root(y0, y1, d0, d1)
    alone = np.array([hermite_root(y0[i:i + 1], y1[i:i + 1], d0[i:i + 1], d1[i:i + 1])[0]
                      for i in range(n)])
    np.testing.assert_array_equal(together, alone)
