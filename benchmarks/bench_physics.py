"""Vectorized physics against the scalar loop a competent user would write (run on demand).

Usage (project installed, or from the repository root with PYTHONPATH=.):
    python benchmarks/bench_physics.py [--n 1000000] [--loop-n 20000] [--seed 1]

Times propeller_energy_per_distance and steady_glide on n samples in one call, against a plain
Python loop of the same equations written with ``math`` (not the vectorized functions called
on one-element arrays, which would flatter the ratio), run on a loop_n subset and scaled to n.
The loop's answers are checked against the vectorized ones first. Prints the ratios and the
machine. Inputs are drawn from invented but plausible ranges.
"""

import argparse
import math
import os
import platform
import time

import numpy as np

from physics import glide, propulsion


def _best_of(func, repeats):
    best = np.inf
    for _ in range(repeats):
        start = time.perf_counter()
        func()
        best = min(best, time.perf_counter() - start)
    return best


def _inputs(n, rng):
    return {
        "density": rng.uniform(1020.0, 1030.0, n),
        "speed": rng.uniform(0.5, 2.5, n),
        "drag_coefficient": rng.uniform(0.002, 0.006, n),
        "reference_area": rng.uniform(1.0, 4.0, n),
        "propulsive_efficiency": rng.uniform(0.3, 0.5, n),
        "hotel_load": rng.uniform(10.0, 50.0, n),
        "glide_angle": np.radians(rng.uniform(12.0, 35.0, n)),
        "net_buoyancy": rng.uniform(1.0, 2.5, n),
        "wing_area": rng.uniform(0.08, 0.12, n),
        "zero_lift_drag": rng.uniform(0.08, 0.15, n),
        "induced_drag_factor": rng.uniform(0.1, 0.3, n),
    }


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, default=1_000_000)
    parser.add_argument("--loop-n", type=int, default=20_000)
    parser.add_argument("--seed", type=int, default=1)
    args = parser.parse_args(argv)
    x = _inputs(args.n, np.random.default_rng(args.seed))
    m = args.loop_n

    def propeller_vector():
        propulsion.propeller_energy_per_distance(
            x["density"], x["speed"], x["drag_coefficient"], x["reference_area"],
            x["propulsive_efficiency"], x["hotel_load"])

    cols = {k: v[:m].tolist() for k, v in x.items()}  # Python floats, as a scalar user has them

    def propeller_loop():
        # energy per metre = D / eta + P_hotel / U, D = 1/2 rho U^2 C_D A (MODEL.md s5)
        out = []
        for rho, u, cd, a, eta, hotel in zip(cols["density"], cols["speed"], cols["drag_coefficient"],
                                             cols["reference_area"], cols["propulsive_efficiency"],
                                             cols["hotel_load"]):
            out.append(0.5 * rho * u * u * cd * a / eta + hotel / u)
        return out

    def glide_vector():
        glide.steady_glide(x["glide_angle"], x["net_buoyancy"], x["density"], x["wing_area"],
                           x["zero_lift_drag"], x["induced_drag_factor"],
                           max_lift_coefficient=1.0)

    def glide_loop():
        # efficient root of K C_L^2 - tan(g) C_L + C_D0 = 0, stall at C_L,max = 1, then
        # V = sqrt(2 B cos g / (rho S C_L)) (MODEL.md s4); None for an infeasible glide
        out = []
        for g, b, rho, s, cd0, k in zip(cols["glide_angle"], cols["net_buoyancy"], cols["density"],
                                        cols["wing_area"], cols["zero_lift_drag"],
                                        cols["induced_drag_factor"]):
            t = math.tan(g)
            disc = t * t - 4.0 * k * cd0
            if disc < 0.0:
                out.append(None)
                continue
            cl = (t - math.sqrt(disc)) / (2.0 * k)
            if cl > 1.0:
                out.append(None)
                continue
            v = math.sqrt(2.0 * b * math.cos(g) / (rho * s * cl))
            out.append((v * math.cos(g), v * math.sin(g)))
        return out

    # the baseline must compute the same thing before its time means anything
    vec = propulsion.propeller_energy_per_distance(
        x["density"][:m], x["speed"][:m], x["drag_coefficient"][:m], x["reference_area"][:m],
        x["propulsive_efficiency"][:m], x["hotel_load"][:m])
    np.testing.assert_allclose(propeller_loop(), vec, rtol=1e-12)
    sol = glide.steady_glide(x["glide_angle"][:m], x["net_buoyancy"][:m], x["density"][:m],
                             x["wing_area"][:m], x["zero_lift_drag"][:m],
                             x["induced_drag_factor"][:m], max_lift_coefficient=1.0)
    scalar = glide_loop()
    ok = np.array([r is not None for r in scalar])
    np.testing.assert_array_equal(ok, np.asarray(sol.state) == glide.GLIDE_OK)
    np.testing.assert_allclose([r[0] for r in scalar if r is not None],
                               np.asarray(sol.horizontal_speed)[ok], rtol=1e-10)

    print(f"machine: {platform.platform()} | {platform.processor() or platform.machine()} | "
          f"os.cpu_count()={os.cpu_count()} | python {platform.python_version()} | "
          f"numpy {np.__version__}")
    print(f"n = {args.n:,} vectorized; scalar math loop on {m:,} samples scaled x{args.n / m:g}")
    for name, vector, loop in (("propeller_energy_per_distance", propeller_vector, propeller_loop),
                               ("steady_glide", glide_vector, glide_loop)):
        t_vec = _best_of(vector, 5)
        t_loop = _best_of(loop, 1) * args.n / m
        print(f"{name:32s} vectorized {t_vec * 1e3:9.1f} ms   loop (scaled) {t_loop:8.2f} s"
              f"   ratio {t_loop / t_vec:8.0f}x   ({t_vec / args.n * 1e9:.1f} ns/sample)")


if __name__ == "__main__":
    main()
