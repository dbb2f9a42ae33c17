"""Vectorized transit model against a per-sample Python loop (run on demand, not a test).

Usage (project installed, or from the repository root with PYTHONPATH=.):
    python benchmarks/bench_mission.py [--n 10000 100000] [--loop-n 200] [--repeats 3] [--seed 1]

For each demo scenario (configs/*.toml; batch-study files are skipped) draws n rows by inverse transform of its marginals,
times ``uq.simulate.simulate_arrays`` on all of them in one call (best of ``repeats``), and
times the same function called once per row on ``loop_n`` rows, scaled to per-sample cost.
Prints samples per second of both, their ratio (target >= 200x) and the machine.
"""

import argparse
import os
import platform
import time
import tomllib
import warnings
from pathlib import Path

import numpy as np

from uq.scenario import load_scenario
from uq.simulate import simulate_arrays

CONFIGS = Path(__file__).resolve().parents[1] / "configs"
TARGET_RATIO = 200.0


def _rows(scenario, n, rng):
    u = rng.random((n, len(scenario.inputs)))
    if not scenario.inputs:
        return np.empty((n, 0))
    return np.column_stack([m.ppf(u[:, i]) for i, m in enumerate(scenario.inputs)])


def _best_of(func, repeats):
    best = np.inf
    for _ in range(repeats):
        start = time.perf_counter()
        func()
        best = min(best, time.perf_counter() - start)
    return best


def _machine():
    return (f"{platform.platform()}; {platform.processor() or platform.machine()}; "
            f"{os.cpu_count()} logical CPUs; Python {platform.python_version()}; numpy {np.__version__}")


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, nargs="+", default=[10_000, 100_000])
    parser.add_argument("--loop-n", type=int, default=200)
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--seed", type=int, default=1)
    args = parser.parse_args(argv)

    print(f"machine: {_machine()}")
    print(f"{'scenario':<26}{'n':>8}{'vector s':>11}{'vector /s':>12}{'loop /s':>10}{'ratio':>9}  target")
    # the under-ice demo runs below 0 degC, outside the viscosity fit: it warns on every call
    warnings.simplefilter("ignore")
    for path in sorted(CONFIGS.glob("*.toml")):
        with open(path, "rb") as f:
            if "study" in tomllib.load(f):  # a batch-study file (uq.studies.batch), not a scenario
                continue
        scenario = load_scenario(path)
        rng = np.random.default_rng(args.seed)
        loop_x = _rows(scenario, args.loop_n, rng)
        simulate_arrays(scenario, loop_x[:1])  # warm-up (imports, caches)
        start = time.perf_counter()
        for i in range(args.loop_n):
            simulate_arrays(scenario, loop_x[i:i + 1])
        loop_rate = args.loop_n / (time.perf_counter() - start)
        for n in args.n:
            x = _rows(scenario, n, rng)
            seconds = _best_of(lambda: simulate_arrays(scenario, x), args.repeats)
            rate = n / seconds
            ratio = rate / loop_rate
            verdict = "met" if ratio >= TARGET_RATIO else "MISSED"
            print(f"{path.stem:<26}{n:>8}{seconds:>11.3f}{rate:>12.0f}{loop_rate:>10.0f}{ratio:>8.0f}x  "
                  f">= {TARGET_RATIO:.0f}x {verdict}")


if __name__ == "__main__":
    main()
