"""Vectorized physics against a per-sample Python loop (run on demand, not a test).

Usage (project installed, or from the repository root with PYTHONPATH=.):
    python benchmarks/bench_physics.py [--n 1000000] [--loop-n 20000] [--seed 1]

Times propeller_energy_per_distance and steady_glide on n samples in one call, and the same
functions called once per sample on a loop_n subset, scaled to n. Prints the ratio and the
machine. Inputs are drawn from invented but plausible ranges.
"""

import argparse
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

    def propeller_loop():
        for i in range(m):
            propulsion.propeller_energy_per_distance(
                x["density"][i], x["speed"][i], x["drag_coefficient"][i],
                x["reference_area"][i], x["propulsive_efficiency"][i], x["hotel_load"][i])

    def glide_vector():
        glide.steady_glide(x["glide_angle"], x["net_buoyancy"], x["density"], x["wing_area"],
                           x["zero_lift_drag"], x["induced_drag_factor"],
                           max_lift_coefficient=1.0)

    def glide_loop():
        for i in range(m):
            glide.steady_glide(x["glide_angle"][i], x["net_buoyancy"][i], x["density"][i],
                               x["wing_area"][i], x["zero_lift_drag"][i],
                               x["induced_drag_factor"][i], max_lift_coefficient=1.0)

    print(f"machine: {platform.platform()} | {platform.processor() or platform.machine()} | "
          f"os.cpu_count()={os.cpu_count()} | python {platform.python_version()} | "
          f"numpy {np.__version__}")
    print(f"n = {args.n:,} vectorized; loop on {m:,} samples scaled x{args.n / m:g}")
    for name, vector, loop in (("propeller_energy_per_distance", propeller_vector, propeller_loop),
                               ("steady_glide", glide_vector, glide_loop)):
        t_vec = _best_of(vector, 5)
        t_loop = _best_of(loop, 1) * args.n / m
        print(f"{name:32s} vectorized {t_vec * 1e3:9.1f} ms   loop (scaled) {t_loop:8.2f} s"
              f"   ratio {t_loop / t_vec:8.0f}x   ({t_vec / args.n * 1e9:.1f} ns/sample)")


if __name__ == "__main__":
    main()
