"""The efficient flight policy's search: the least-energy glide angle at a held speed.

Private to :func:`physics.glide.glide_trim` (policy FLY_EFFICIENT); kept apart because it is
the glider model's inner loop (called at every Runge-Kutta stage), written for speed with the
same result as a plain scan of the whole angle grid.
"""
import numpy as np

__all__ = ["efficient_trim"]

# angle grid of the efficient policy: tan(gamma) = tan(gamma_flat) * tau, tau in [1, 1 + 5]
_TAU = 1.0 + 5.0 * np.linspace(0.0, 1.0, 41) ** 2
_ALL = np.arange(_TAU.size)
_COARSE = _ALL[::4]  # first pass of the search: every 4th angle of the grid
_WINDOW = np.arange(-5, 6)  # second pass: the best coarse angle +- 5 (its neighbours included)
_TRIM_BLOCK = 1024  # rows per grid evaluation: 11 x 1024 doubles = 88 KiB, heap and cache


def efficient_trim(u, rho, area, cd0, k, cl_max, b_max, eta, overhead, flat):
    """Least-energy angle holding speed u within B <= b_max, on a grid (1-D inputs).

    The grid is tan(gamma) = tan(gamma_flat) tau; on it the efficient root is
    C_L = 2 C_D0 / (t + sqrt(t^2 - 4 K C_D0)) (no stall: C_L falls as t rises from the
    flattest angle) and B = rho S C_L u^2 (1 + t^2)^(3/2) / 2, the closed forms of
    :func:`physics.glide.steady_glide` and :func:`physics.glide.net_buoyancy_for_speed`,
    written out for speed.

    The grid's least cost is found in two passes with the same result as a scan of all 41
    angles: every 4th angle first, then the 11 angles around the best of those. The cost
    falls then rises along the grid and the feasible angles (B <= b_max, B falling then
    rising in t) form one run, so the least cost is within 4 angles of the best coarse one;
    rows with no feasible coarse angle, or whose best angle falls on the window's edge, are
    scanned in full (tests/physics/test_flight_policy.py checks the search against the
    objective at all 41 angles).
    """
    if u.size > _TRIM_BLOCK:  # rows in blocks whose grids stay in cache (same results)
        parts = [efficient_trim(*(a[i:i + _TRIM_BLOCK] for a in (
            u, rho, area, cd0, k, cl_max, b_max, eta, overhead, flat)))
            for i in range(0, u.size, _TRIM_BLOCK)]
        return tuple(np.concatenate(p) for p in zip(*parts))
    # layout (angles, rows): the long axis last, so numpy's inner loops run over the rows
    row = (lambda a: a[None, :])
    tan_flat = np.tan(flat)
    terms = (row(2.0 * cd0), row(4.0 * k * cd0), row(0.5 * rho * area * u ** 2), row(b_max),
             row(eta), row(overhead))
    coarse = _trim_grid(tan_flat, _COARSE[:, None], *terms)[3]
    centre = _COARSE[np.argmin(coarse, axis=0)]
    window = np.clip(centre[None, :] + _WINDOW[:, None], 0, _TAU.size - 1)
    grid = _trim_grid(tan_flat, window, *terms)
    # scanned in full: rows with no feasible coarse angle, and any whose best angle is at the
    # window's edge (the cost would not be falling then rising there)
    best = np.argmin(grid[3], axis=0)
    edge = ((best == 0) & (window[0] > 0)) | ((best == _WINDOW.size - 1)
                                              & (window[-1] < _TAU.size - 1))
    full = edge | ~np.isfinite(coarse).any(axis=0)
    g, b_out, limited = _pick_trim(*grid, window, cd0, k, rho, area, u, b_max, eta, overhead)
    if full.any():
        rows = np.flatnonzero(full)
        sub = tuple(a[rows] for a in (cd0, k, rho, area, u, b_max, eta, overhead))
        grid = _trim_grid(tan_flat[rows], _ALL[:, None], *(a[:, rows] for a in terms))
        g[rows], b_out[rows], limited[rows] = _pick_trim(
            *grid, np.broadcast_to(_ALL[:, None], (_ALL.size, rows.size)), *sub)
    return g, b_out, limited


def _trim_grid(tan_flat, index, two_cd0, four_k_cd0, half_rho_s_u2, b_max, eta, overhead):
    """t, C_L, sec^3, cost (inf where B > b_max) and feasibility at grid angles ``index``
    (shape (angles, rows) or (angles, 1); the row terms are (1, rows))."""
    # the same operations as the formulas in the docstring of efficient_trim, in place where
    # a temporary can be reused (fewer large allocations: page faults cost as much as the math)
    t = _TAU[index] * tan_flat[None, :]
    secant3 = t * t
    cl = secant3 - four_k_cd0
    np.maximum(cl, 0.0, out=cl)
    np.sqrt(cl, out=cl)
    cl += t
    np.divide(two_cd0, cl, out=cl)
    secant3 += 1.0  # sec^2
    cost = np.sqrt(secant3)
    secant3 *= cost  # 1 / cos^3 (a square root is cheaper than ** 1.5)
    b = np.multiply(cl, secant3, out=cost)
    b *= half_rho_s_u2
    feasible = b <= b_max
    cost = np.divide(b, eta, out=b)
    cost += overhead
    cost *= t
    np.putmask(cost, ~feasible, np.inf)
    return t, cl, secant3, cost, feasible


def _pick_trim(t, cl, secant3, cost, feasible, index, cd0, k, rho, area, u, b_max, eta,
               overhead):
    """Best angle of the grid points given (per row, consecutive grid indices ``index``,
    shape (angles, rows)): the least cost refined by a parabola, else the engine's limit at
    the fastest angle."""
    best = np.argmin(cost, axis=0)
    m = u.size
    rows = np.arange(m)
    at = best * m + rows  # flat positions of the best points (gathers cheaper than [best, rows])
    held = np.take(feasible, at)
    j_grid = np.take(index, at) if index.shape[1] == m else index[best, 0]
    t_best = np.take(t, at)
    b_out = (np.take(cl, at) * np.take(secant3, at)) * (0.5 * rho * area * u ** 2)
    # refine inside the bracket: vertex of the parabola through the three grid points
    inner = held & (j_grid > 0) & (j_grid < _TAU.size - 1) & (best > 0) \
        & (best < index.shape[0] - 1)
    if inner.any():
        i = rows[inner]
        mid = at[inner]
        x0, x1, x2 = np.take(t, mid - m), np.take(t, mid), np.take(t, mid + m)
        y0, y1, y2 = np.take(cost, mid - m), np.take(cost, mid), np.take(cost, mid + m)
        with np.errstate(invalid="ignore", divide="ignore"):
            num = (x1 - x0) ** 2 * (y1 - y2) - (x1 - x2) ** 2 * (y1 - y0)
            den = (x1 - x0) * (y1 - y2) - (x1 - x2) * (y1 - y0)
            x_v = x1 - 0.5 * num / den
        good = np.isfinite(x_v) & (x_v > x0) & (x_v < x2)
        x_v = np.where(good, x_v, x1)
        cd0_i, k_i = cd0[i], k[i]
        cl_v = 2.0 * cd0_i / (x_v + np.sqrt(np.maximum(x_v * x_v - 4.0 * k_i * cd0_i, 0.0)))
        b_v = 0.5 * rho[i] * area[i] * cl_v * u[i] ** 2 * (1.0 + x_v * x_v) ** 1.5
        better = good & (b_v <= b_max[i]) & ((b_v / eta[i] + overhead[i]) * x_v <= y1)
        t_best[i] = np.where(better, x_v, x1)
        b_out[i] = np.where(better, b_v, b_out[i])
    g = np.arctan(t_best)
    if not held.all():
        # fallback: the engine's limit at the angle of the highest horizontal speed; at fixed
        # B, u = sqrt(2 B / (rho S C_L (1 + t^2)^(3/2))): the largest 1 / (C_L secant^3)
        lost = rows[~held]
        fastest = np.argmax(1.0 / (cl[:, lost] * secant3[:, lost]), axis=0)
        g[lost] = np.arctan(t[fastest, lost])
        b_out[lost] = b_max[lost]
    return g, b_out, ~held
