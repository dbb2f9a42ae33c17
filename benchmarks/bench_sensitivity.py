"""On-demand benchmark of the two sensitivity paths (not part of the test suite).

(a) Sobol' indices from PCE coefficients (Sudret 2008) on one expansion: Ishigami, 3 inputs,
    total degree 8 (165 terms). The baseline is the same coefficient-sum method as a
    competent user writes it (a Python loop over the terms); chaospy's Sens_m + Sens_t
    (conditional-expectation algebra) is listed apart, as the reference for the values.
    Targets: max |difference| <= 1e-8 against chaospy.
(b) Model runs needed: PCE total indices within 0.02 of a Saltelli reference
    at base N = 2^16 using at most 1/100 of its runs; Ishigami and a smooth
    5-input function.

Run from the repository root:

    python benchmarks/bench_sensitivity.py            # both parts
    python benchmarks/bench_sensitivity.py --skip-chaospy   # part (b) only

chaospy's Sens_m + Sens_t take tens of seconds at degree 8; they are run once.
"""

from __future__ import annotations

import argparse
import sys
import time
import timeit
from pathlib import Path

import chaospy
import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from uq.estimators.pce import chaospy_reference_indices, fit_polynomial_chaos  # noqa: E402
from uq.estimators.sobol import saltelli_design, sobol_indices  # noqa: E402

# Ishigami & Homma 1990; Homma & Saltelli 1996 (a = 7, b = 0.1).
ISHIGAMI_TOTAL = np.array([0.5576, 0.4424, 0.2437])


def ishigami(x):
    return np.sin(x[:, 0]) + 7.0 * np.sin(x[:, 1]) ** 2 + 0.1 * x[:, 2] ** 4 * np.sin(x[:, 0])


def smooth5(x):
    """A smooth 5-input test function on U(0, 1)^5 with interactions."""
    return (
        np.exp(0.8 * x[:, 0] + 0.4 * x[:, 1])
        + 2.0 * x[:, 2] * x[:, 3]
        + np.sin(2.0 * x[:, 4])
        + 0.5 * x[:, 0] * np.cos(x[:, 4])
    )


CASES = {
    "ishigami": dict(f=ishigami, d=3, lo=-np.pi, hi=np.pi),
    "smooth5": dict(f=smooth5, d=5, lo=0.0, hi=1.0),
}


def coefficient_sum_by_loop(coefficients, multi_indices):
    """First and total Sobol indices from an orthonormal PCE, term by term in plain Python.

    Sudret 2008, Reliab. Eng. Syst. Saf. 93(7):964-979: S_i sums c_a^2 over the terms with
    only input i active, S_Ti over the terms where input i is active, both over the variance
    sum of c_a^2 for a != 0.
    """
    terms = [(float(c), [int(v) for v in a]) for c, a in zip(coefficients, multi_indices)]
    d = len(terms[0][1])
    variance = sum(c * c for c, a in terms if any(a))
    first = [sum(c * c for c, a in terms if a[i] > 0 and sum(a) == a[i]) / variance for i in range(d)]
    total = [sum(c * c for c, a in terms if a[i] > 0) / variance for i in range(d)]
    return np.array(first), np.array(total)


def part_a(rng_seed: int = 0) -> None:
    print("(a) Sobol' from coefficients vs chaospy Sens_m + Sens_t, Ishigami, degree 8")
    rng = np.random.default_rng(rng_seed)
    x = rng.uniform(-np.pi, np.pi, size=(2000, 3))
    pce = fit_polynomial_chaos(
        [chaospy.Uniform(-np.pi, np.pi) for _ in range(3)], x, ishigami(x),
        max_degree=8, q_norm=1.0, holdout_fraction=0.0, seed=1,
    )
    print(f"    expansion: degree {pce.degree}, {pce.n_terms} terms, LOO {pce.loo_error:.2e}")
    reps = 2000
    t_ours = timeit.timeit(pce.sobol_indices, number=reps) / reps
    ours = pce.sobol_indices()
    t_loop = timeit.timeit(lambda: coefficient_sum_by_loop(pce.coefficients, pce.multi_indices),
                           number=200) / 200
    loop_first, loop_total = coefficient_sum_by_loop(pce.coefficients, pce.multi_indices)
    assert np.allclose(loop_first, ours.first, atol=1e-12) and np.allclose(loop_total, ours.total, atol=1e-12)
    t0 = time.perf_counter()
    first_ref, total_ref = chaospy_reference_indices(pce)
    t_ref = time.perf_counter() - t0
    diff = max(np.abs(ours.first - first_ref).max(), np.abs(ours.total - total_ref).max())
    print(f"    coefficients (project): {t_ours * 1e6:9.1f} us per call (mean of {reps})")
    print(f"    coefficients (loop)   : {t_loop * 1e6:9.1f} us per call  -> ratio {t_loop / t_ours:.1f}x"
          "   (the baseline: same method, plain Python)")
    print(f"    chaospy Sens_m+Sens_t : {t_ref:9.2f} s (one run; a different, symbolic method,"
          f" listed apart: {t_ref / t_ours:.3g}x)")
    print(f"    max |diff|  : {diff:9.2e}   (target <= 1e-8)")


def part_b(name: str, *, base_log2: int = 16, seed: int = 0) -> None:
    case = CASES[name]
    f, d, lo, hi = case["f"], case["d"], case["lo"], case["hi"]
    names = [f"x{i}" for i in range(d)]
    t0 = time.perf_counter()
    design = saltelli_design(names, base_n=2**base_log2, seed=seed)
    y = f(lo + (hi - lo) * design.unit_points)
    ref = sobol_indices(design, {"y": y}, n_bootstrap=100, seed=seed)["y"]
    t_ref = time.perf_counter() - t0
    budget = design.n_runs // 100
    print(f"(b) {name}: Saltelli reference N = 2^{base_log2}, {design.n_runs} runs ({t_ref:.1f} s);"
          f" budget 1/100 = {budget} runs")
    if name == "ishigami":
        print(f"    reference vs published ST: max |diff| {np.abs(ref.total - ISHIGAMI_TOTAL).max():.4f}")
    print(f"    {'runs':>6} {'degree':>6} {'terms':>6} {'LOO':>9} {'Q2':>8} {'quality':>7}"
          f" {'max|dST|':>9} {'max|dS1|':>9} {'fit s':>6}")
    first_ok = None
    for n in (64, 128, 256, 512, 1024, 2048, budget):
        if n > budget:
            break
        rng = np.random.default_rng(seed + n)
        x = rng.uniform(lo, hi, size=(n, d))
        t1 = time.perf_counter()
        try:
            pce = fit_polynomial_chaos(
                [chaospy.Uniform(lo, hi) for _ in range(d)], x, f(x),
                max_degree=14, q_norm=0.75, seed=seed,
            )
        except ValueError as exc:
            print(f"    {n:>6}  fit refused: {exc.__class__.__name__}")
            continue
        t_fit = time.perf_counter() - t1
        s = pce.sobol_indices()
        dst = np.abs(s.total - ref.total).max()
        ds1 = np.abs(s.first - ref.first).max()
        q2 = float("nan") if pce.q2_holdout is None else pce.q2_holdout
        print(f"    {n:>6} {pce.degree:>6} {pce.n_terms:>6} {pce.loo_error:>9.2e} {q2:>8.4f}"
              f" {pce.quality:>7} {dst:>9.4f} {ds1:>9.4f} {t_fit:>6.2f}")
        if first_ok is None and dst <= 0.02:
            first_ok = n
    if first_ok is None:
        print("    no PCE within 0.02 of the reference inside the budget")
    else:
        print(f"    first PCE within 0.02 (total indices): {first_ok} runs = "
              f"{design.n_runs / first_ok:.0f}x fewer than the reference")


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--skip-chaospy", action="store_true", help="skip part (a)")
    args = parser.parse_args(argv)
    if not args.skip_chaospy:
        part_a()
    for name in CASES:
        part_b(name)


if __name__ == "__main__":
    main()
