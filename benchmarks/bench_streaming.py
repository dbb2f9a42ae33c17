"""Streaming benchmark: wall time and peak memory of uq.sampling.engine.stream over sizes.

Run on demand (not a test):

    python benchmarks/bench_streaming.py --model under-ice --log2n 17 19 21 23
    python benchmarks/bench_streaming.py            # toy model, 1e6 and 1e7
    python benchmarks/bench_streaming.py --big      # toy model, also 1e8 (a few minutes)
    python benchmarks/bench_streaming.py --workers 2 --scheme sobol
    python benchmarks/bench_streaming.py --model assess --log2n 17 19 21   # whole assessment

Each size runs in a fresh subprocess so its peak RSS (resource.getrusage ru_maxrss) is its
own. ``--model under-ice`` streams the bundled under-ice demo (the real transit model,
configs/under_ice_section.toml, its inputs through the scenario's input model) through a
count of successes, a sum of the margin and a histogram of the range; ``--model toy`` (the
default) a cheap 5-input formula that is not a transit model, through a count and a
histogram. ``--model assess`` runs the whole assessment of that demo
(:func:`uq.studies.assess.assess`: propagation with its default row limit, sensitivity stage
at the scenario's ``sensitivity_base_n``, decisions; ``--report`` also writes the report) at
each size, and prints peak RSS and CPU time. Time should grow linearly in n and peak RSS
should not grow with n.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
from scipy import stats

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from uq.sampling.engine import CountReducer, HistogramReducer, MultiReducer, SumReducer, stream  # noqa: E402
from uq.sampling.inputs import InputModel, ScipyMarginal  # noqa: E402
from uq.sampling.plans import SampleDesign  # noqa: E402
from uq.estimators import histogram_exceedance_curve  # noqa: E402

EDGES = np.linspace(0.0, 20.0, 401)


def toy_model(x):
    """Cheap 5-input toy: a positive 'margin' and a threshold flag."""
    margin = x[:, 0] * x[:, 1] / (1.0 + x[:, 2]) + np.abs(x[:, 3]) - 0.5 * x[:, 4]
    return {"margin": margin, "short": margin < 1.0}


def input_model():
    return InputModel(
        [
            ScipyMarginal("a", stats.lognorm(s=0.3, scale=3.0)),
            ScipyMarginal("b", stats.uniform(loc=1.0, scale=2.0)),
            ScipyMarginal("c", stats.norm(loc=1.0, scale=0.1)),
            ScipyMarginal("d", stats.norm(loc=0.0, scale=1.0)),
            ScipyMarginal("e", stats.triang(c=0.5, loc=0.0, scale=2.0)),
        ],
        rank_correlation=np.array([
            [1.0, 0.3, 0.0, 0.0, 0.0],
            [0.3, 1.0, 0.0, 0.0, 0.0],
            [0.0, 0.0, 1.0, 0.0, 0.0],
            [0.0, 0.0, 0.0, 1.0, -0.2],
            [0.0, 0.0, 0.0, -0.2, 1.0],
        ]),
    )


def _real_model():
    """The under-ice demo: (model, input model, dimension, reducer)."""
    import warnings

    from uq.scenario import load_scenario
    from uq.simulate import ScenarioModel
    from uq.studies.assess import input_model_of

    warnings.simplefilter("ignore")  # water below 0 degC: the viscosity fit's range caution
    scenario = load_scenario(ROOT / "configs" / "under_ice_section.toml")
    reducer = MultiReducer({"short": CountReducer("success"), "sum": SumReducer("margin_Wh"),
                            "margin": HistogramReducer("range_km", np.linspace(0, 2000, 401))})
    return ScenarioModel(scenario), input_model_of(scenario), len(scenario.inputs), reducer


def run_assessment(n: int, workers: int, report: bool) -> dict:
    """One whole assessment of the under-ice demo at ``n`` samples (this process only)."""
    import tempfile
    import warnings

    from uq.report import write_report
    from uq.scenario import load_scenario
    from uq.studies.assess import assess

    warnings.simplefilter("ignore")  # water below 0 degC: the viscosity fit's range caution
    scenario = load_scenario(ROOT / "configs" / "under_ice_section.toml")
    rss_before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    t0, c0 = time.perf_counter(), time.process_time()
    a = assess(scenario, samples=n, workers=workers)
    if report:
        with tempfile.TemporaryDirectory() as tmp:
            write_report(a, Path(tmp) / "report")
    return {
        "model": "assess", "n": n, "scheme": a.settings.scheme, "workers": workers,
        "seconds": time.perf_counter() - t0, "cpu_seconds": time.process_time() - c0,
        "peak_rss_mib": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0,
        "peak_rss_before_stream_mib": rss_before / 1024.0,
        "peak_rss_worker_mib": resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024.0,
        "p_short": 1.0 - a.p_success.estimate, "kept_rows": a.propagation.kept_rows,
        "sensitivity_base_n": a.settings.sensitivity_base_n,
        "stage_seconds": {k: round(v, 2) for k, v in a.timings_s.items()},
    }


def run_one(n: int, scheme: str, workers: int, chunk_blocks: int, repeat: int = 1,
            model_name: str = "toy", report: bool = False) -> dict:
    if model_name == "assess":
        return run_assessment(n, workers, report)
    if model_name == "under-ice":
        model, inputs, dimension, reducer = _real_model()
        design = SampleDesign(scheme, n, dimension, seed=20240601)  # the engine's block size
    else:
        model, inputs, dimension = toy_model, input_model(), 5
        design = SampleDesign(scheme, n, 5, seed=20240601, block_size=2**16)
        reducer = MultiReducer({"short": CountReducer("short"),
                                "margin": HistogramReducer("margin", EDGES)})
    rss_before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    walls, cpus = [], []
    for _ in range(repeat):
        t0, c0 = time.perf_counter(), time.process_time()
        if workers > 1:
            from concurrent.futures import ProcessPoolExecutor

            with ProcessPoolExecutor(workers) as pool:
                result = stream(design, model, reducer, input_model=inputs,
                                chunk_blocks=chunk_blocks, executor=pool)
        else:
            result = stream(design, model, reducer, input_model=inputs,
                            chunk_blocks=chunk_blocks)
        walls.append(time.perf_counter() - t0)
        cpus.append(time.process_time() - c0)
    elapsed, cpu = min(walls), min(cpus)  # best of `repeat`: the machine may be shared
    usage_self = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    usage_children = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    curve = histogram_exceedance_curve(result["margin"])
    return {
        "model": model_name,
        "n": n,
        "scheme": scheme,
        "workers": workers,
        "seconds": elapsed,
        "cpu_seconds": cpu,
        "peak_rss_mib": usage_self / 1024.0,
        "peak_rss_before_stream_mib": rss_before / 1024.0,
        "peak_rss_worker_mib": usage_children / 1024.0,
        "p_short": result["short"].fraction,
        "p_margin_ge_5": float(curve.probability[np.searchsorted(EDGES, 5.0)]),
    }


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--big", action="store_true", help="also run n = 1e8")
    parser.add_argument("--scheme", default="monte-carlo", choices=["monte-carlo", "sobol"])
    parser.add_argument("--workers", type=int, default=1)
    parser.add_argument("--chunk-blocks", type=int, default=4)
    parser.add_argument("--repeat", type=int, default=3, help="best of this many runs per size")
    parser.add_argument("--model", choices=["toy", "under-ice", "assess"], default="toy",
                        help="toy formula (default), the bundled under-ice transit model, or "
                             "the whole assessment of that demo")
    parser.add_argument("--report", action="store_true",
                        help="with --model assess: also write the report (temporary folder)")
    parser.add_argument("--log2n", type=int, nargs="+", help="sizes as powers of two")
    parser.add_argument("--single", type=int, help=argparse.SUPPRESS)
    args = parser.parse_args(argv)

    if args.single:
        print(json.dumps(run_one(args.single, args.scheme, args.workers, args.chunk_blocks,
                                 args.repeat, args.model, args.report)))
        return 0

    sizes = [10**6, 10**7] + ([10**8] if args.big else [])
    if args.log2n:
        sizes = [1 << k for k in args.log2n]
    elif args.scheme == "sobol":
        sizes = [1 << (s.bit_length() - 1) for s in sizes]  # nearest power of two below
    rows = []
    for n in sizes:
        out = subprocess.run(
            [sys.executable, __file__, "--single", str(n), "--scheme", args.scheme,
             "--workers", str(args.workers), "--chunk-blocks", str(args.chunk_blocks),
             "--repeat", str(1 if n >= 10**8 else args.repeat), "--model", args.model]
            + (["--report"] if args.report else []),
            check=True, capture_output=True, text=True,
        )
        rows.append(json.loads(out.stdout.strip().splitlines()[-1]))
    described = {"under-ice": "configs/under_ice_section.toml, real transit model",
                 "assess": "uq.studies.assess.assess of configs/under_ice_section.toml, "
                           "default settings" + (" + write_report" if args.report else ""),
                 "toy": "a 5-input formula, not a transit model"}[args.model]
    if args.model == "assess":
        args.scheme = rows[0]["scheme"]
    print(f"model: {args.model} ({described}), scheme {args.scheme}, workers {args.workers}; "
          f"load average {' / '.join(f'{v:.2f}' for v in os.getloadavg())}")
    print(f"{'n':>12} {'wall s':>8} {'cpu s':>8} {'peak RSS MiB':>13} {'worker RSS MiB':>15} "
          f"{'P(short)':>9}")
    for r in rows:
        print(f"{r['n']:>12} {r['seconds']:>8.2f} {r['cpu_seconds']:>8.2f} {r['peak_rss_mib']:>13.1f} "
              f"{r['peak_rss_worker_mib']:>15.1f} {r['p_short']:>9.5f}")
    print(f"peak RSS growth {rows[0]['n']:.2e} -> {rows[-1]['n']:.2e}: "
          f"{100 * (rows[-1]['peak_rss_mib'] / rows[0]['peak_rss_mib'] - 1):+.1f} %")
    for r in rows:
        if "stage_seconds" in r:
            print(f"  n {r['n']:>10}: kept rows {r['kept_rows']:,}, sensitivity base N "
                  f"{r['sensitivity_base_n']}, stages [s] {r['stage_seconds']}")
    for a, b in zip(rows[:-1], rows[1:]):
        print(f"t({b['n']:.0e}) / t({a['n']:.0e}) = {b['seconds'] / a['seconds']:.2f} wall, "
              f"{b['cpu_seconds'] / a['cpu_seconds']:.2f} cpu (n ratio {b['n'] / a['n']:.0f})")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
