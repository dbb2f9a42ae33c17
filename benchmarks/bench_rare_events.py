"""Small failure probabilities: subset simulation against plain sampling (on demand).

Model: a lognormal energy shortfall, ln E = ln M + w.z over four independent standard-normal
inputs (|w| = s = 0.08), failure when E < E_req; with everything else fixed the transit range
is proportional to usable energy, so this is the probability of falling short of the route.
Closed form [derived]: P = Phi((ln E_req - ln M) / s), so E_req is set to give P = 1e-4 and
1e-6 exactly.

For each P the script runs subset simulation (Au & Beck 2001; p0 = 0.1, 2,000 samples per
level, modified Metropolis, 10 independent runs behind a Student-t interval), prints the
estimate, its interval, the relative half width and the model runs, and the number of runs
plain (independent) sampling would need for the same relative half width,
n = z^2 (1 - P) / (P h^2) [derived from the normal approximation of the binomial].

Targets (issue 13): truth inside the interval, relative half width <= 30 %, <= 2e5 runs.

Run from the repository root:

    python benchmarks/bench_rare_events.py
    python benchmarks/bench_rare_events.py --seed 7
"""
from __future__ import annotations

import _machine  # noqa: F401  (pins BLAS threads before numpy is imported)

import argparse
import time

import numpy as np
from scipy import stats

from uq.estimators.rare_events import plain_sampling_runs_for, subset_simulation

LOG_SD = 0.08
WEIGHTS = np.array([0.05, 0.04, 0.03, 0.039]) / np.linalg.norm([0.05, 0.04, 0.03, 0.039]) * LOG_SD


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--seed", type=int, default=2)
    args = parser.parse_args()
    print(_machine.machine_report())
    for p_true in (1e-4, 1e-6):
        gap = LOG_SD * stats.norm.ppf(p_true)
        t0 = time.perf_counter()
        est = subset_simulation(lambda z: z @ WEIGHTS - gap, 4, rng=args.seed)
        elapsed = time.perf_counter() - t0
        p = est.probability
        plain = plain_sampling_runs_for(p_true, est.relative_half_width)
        print(f"P = {p_true:.0e}: estimate {p.estimate:.3e} [{p.lower:.3e}, {p.upper:.3e}] "
              f"covers={p.lower <= p_true <= p.upper}; relative half width "
              f"{est.relative_half_width:.1%}; {est.model_runs:,} model runs "
              f"({elapsed:.1f} s); plain sampling would need {plain:,} runs "
              f"({plain / est.model_runs:,.0f}x)")


if __name__ == "__main__":
    main()
