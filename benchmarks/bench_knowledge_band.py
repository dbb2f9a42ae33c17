"""Knowledge band of P(success): regression on the existing sample vs a nested design.

Model: the under-ice demo with the vehicle's properties as knowledge inputs (propulsive
efficiency, appendage factor, cold derating) and everything else as variability (no rank
correlation crosses the two groups, so the nested design can draw them independently).

Estimators compared, side by side in one run:
  * regression: the project's `uq.decisions.knowledge_band` (logistic fit on the existing
    N-sample, no extra model runs) at N = 2^11, 2^13;
  * nested: M outer knowledge points (scrambled Sobol') x n_i inner variability samples,
    P(success | theta_j) = inner mean, at M x n_i = 64 x 128 and 128 x 512;
  * reference: nested with 256 x 2048 (0.5 M runs) unless --quick.
Reported: model runs, wall time, band 5/50/95 % points, credibility P(P >= p*).

    python benchmarks/bench_knowledge_band.py            # with the 0.5 M-run reference
    python benchmarks/bench_knowledge_band.py --quick    # reference 128 x 1024
"""
from __future__ import annotations

import _machine  # noqa: F401  (pins BLAS threads first)

import argparse
import time

import numpy as np
from scipy.stats import qmc

from uq import decisions
from uq.scenario import load_scenario
from uq.simulate import ScenarioModel
from uq.studies.assess import _settings, input_model_of, propagate

KNOWLEDGE = ("vehicle.propulsive_efficiency", "vehicle.hull.appendage_factor", "battery.cold_derating")


def nested(scenario, outer: int, inner: int, seed: int) -> tuple[np.ndarray, int]:
    """P(success | theta_j) for `outer` knowledge points, each from `inner` variability samples."""
    model = ScenarioModel(scenario)
    im = input_model_of(scenario)
    names = scenario.input_names
    k_cols = [names.index(k) for k in KNOWLEDGE]
    theta_u = qmc.Sobol(len(k_cols), scramble=True, seed=seed).random(outer)
    rng = np.random.default_rng(seed + 1)
    out = np.empty(outer)
    for j in range(outer):
        x = im.transform(rng.random((inner, len(names))))
        for c, col in enumerate(k_cols):
            x[:, col] = scenario.inputs[col].quantile(float(theta_u[j, c]))
        out[j] = np.mean(model(x)["success"])
    return out, outer * inner


def summary(values: np.ndarray, p_star: float) -> str:
    q = np.quantile(values, [0.05, 0.5, 0.95])
    return (f"5/50/95 % = {q[0]:.4f} / {q[1]:.4f} / {q[2]:.4f}, credibility {np.mean(values >= p_star):.3f}, "
            f"mean {values.mean():.4f}")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="smaller reference (128 x 1024)")
    args = ap.parse_args()
    print(_machine.machine_report())
    scenario = load_scenario(_machine.PROPELLER_DEMO)
    p_star = scenario.decision.required_probability
    natures = {n: ("knowledge" if n in KNOWLEDGE else "variability") for n in scenario.input_names}
    for log2n in (11, 13):
        settings = _settings(scenario, samples=2**log2n)
        t0 = time.perf_counter()
        prop = propagate(scenario, settings)
        t1 = time.perf_counter()
        band = decisions.knowledge_band(
            prop.outcomes["success"], {n: prop.inputs[:, i] for i, n in enumerate(prop.input_names)},
            natures, required_probability=p_star, n_bootstrap=0)
        t2 = time.perf_counter()
        print(f"regression N = 2^{log2n}: {2**log2n:,} runs (the assessment's own), sample {t1 - t0:.1f} s "
              f"+ fit {t2 - t1:.2f} s; {summary(band.sample_values, p_star)}")
    for outer, inner in ((64, 128), (128, 512)):
        t0 = time.perf_counter()
        values, runs = nested(scenario, outer, inner, seed=7)
        print(f"nested {outer} x {inner}: {runs:,} extra runs, {time.perf_counter() - t0:.1f} s; "
              f"{summary(values, p_star)}")
    outer, inner = (128, 1024) if args.quick else (256, 2048)
    t0 = time.perf_counter()
    values, runs = nested(scenario, outer, inner, seed=99)
    print(f"REFERENCE nested {outer} x {inner}: {runs:,} runs, {time.perf_counter() - t0:.1f} s; "
          f"{summary(values, p_star)}")


if __name__ == "__main__":
    main()
