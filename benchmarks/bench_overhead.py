"""Framework overhead against model time at equal N (on demand, not a test).

For each demo and scheme, side by side in one run (interleaved, best of ``--repeat``):

(a) bare model   - ``ScenarioModel(scenario)(x)`` on a pre-generated (N, d) array of physical
                   inputs, one call;
(a') bare model  - the same, called block by block with the engine's block size (what (b)
                   actually calls; shows whether block size alone costs anything);
(b) full stream  - ``uq.sampling.engine.stream`` with sampling, the input transform and three reducers
                   (CountReducer on success, HistogramReducer on range_km with 241 edges,
                   SumReducer on margin_Wh).

overhead = (b - a) / a; target (issue 7) <= 1, i.e. sampling + transform + reducers cost no
more than the model. The pieces of (b) are also timed on their own (unit points, transform,
reducers' map on stored outputs) so a miss can be traced.

Run from the repository root:

    python benchmarks/bench_overhead.py                     # N = 2^16, both demos, both schemes
    python benchmarks/bench_overhead.py --log2n 18 --demo propeller --scheme sobol --repeat 5
"""

from __future__ import annotations

import _machine  # noqa: F401  (pins BLAS threads before numpy is imported)

import argparse
import time
import warnings

import numpy as np

from uq.studies.assess import input_model_of
from uq.sampling.engine import CountReducer, HistogramReducer, MultiReducer, SumReducer, stream
from uq.sampling.plans import SampleDesign
from uq.scenario import load_scenario
from uq.simulate import ScenarioModel

DEMOS = {"propeller": _machine.PROPELLER_DEMO, "glider": _machine.GLIDER_DEMO}
TARGET_OVERHEAD = 1.0


def _reducer(route_km: float) -> MultiReducer:
    return MultiReducer({
        "success": CountReducer("success"),
        "range": HistogramReducer("range_km", np.linspace(0.0, 1.5 * route_km, 241)),
        "margin": SumReducer("margin_Wh"),
    })


def measure(demo: str, scheme: str, log2n: int, repeat: int, block_size: int) -> dict:
    scenario = load_scenario(DEMOS[demo])
    model = ScenarioModel(scenario)
    input_model = input_model_of(scenario)
    d = len(scenario.inputs)
    n = 1 << log2n
    design = SampleDesign(scheme, n, d, seed=20260702, block_size=block_size)
    x = input_model.transform(design.unit_points())  # pre-generated, outside the clock
    blocks = [design.block_rows(k) for k in range(design.n_blocks)]
    outputs = [model(x[a:b]) for a, b in blocks]  # for timing the reducers alone
    reducer = _reducer(scenario.route_length_km).prepare(design)

    def bare():
        model(x)

    def bare_blocks():
        for a, b in blocks:
            model(x[a:b])

    def full():
        stream(design, model, _reducer(scenario.route_length_km), input_model=input_model)

    def unit_points():
        for a, b in blocks:
            design.unit_points(a, b)

    u_blocks = [design.unit_points(a, b) for a, b in blocks]

    def transform():
        for u in u_blocks:
            input_model.transform(u)

    def reducers():
        reducer.reduce([reducer.map(k, out) for k, out in enumerate(outputs)])

    cases = {"bare": bare, "bare_blocks": bare_blocks, "full": full,
             "unit_points": unit_points, "transform": transform, "reducers": reducers}
    best = {name: np.inf for name in cases}
    loads = []
    for _ in range(repeat):  # interleaved: a load spike hits every case of a round
        for name, fn in cases.items():
            t0 = time.perf_counter()
            fn()
            best[name] = min(best[name], time.perf_counter() - t0)
        loads.append(_machine.load_average())
    best["overhead"] = (best["full"] - best["bare"]) / best["bare"]
    best["overhead_blocks"] = (best["full"] - best["bare_blocks"]) / best["bare_blocks"]
    best.update(demo=demo, scheme=scheme, n=n, d=d, block_size=block_size, loads=loads)
    return best


def _default_block_size() -> int:
    """The block size an assessment uses by default (read, not copied, so it cannot go stale)."""
    import dataclasses

    from uq.studies.assess import Settings

    return next(f.default for f in dataclasses.fields(Settings) if f.name == "block_size")


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--demo", choices=[*DEMOS, "both"], default="both")
    parser.add_argument("--scheme", choices=["sobol", "monte-carlo", "both"], default="both")
    parser.add_argument("--log2n", type=int, default=16, help="N = 2^m samples (default 16)")
    parser.add_argument("--repeat", type=int, default=3, help="best of this many rounds")
    parser.add_argument("--block-size", type=int, default=_default_block_size(),
                        help="engine block size (default: that of uq.studies.assess.Settings)")
    args = parser.parse_args(argv)

    print(_machine.machine_report())
    demos = list(DEMOS) if args.demo == "both" else [args.demo]
    schemes = ["sobol", "monte-carlo"] if args.scheme == "both" else [args.scheme]
    print(f"N = 2^{args.log2n}, block size {args.block_size}, best of {args.repeat}; seconds")
    header = (f"{'demo':<10}{'scheme':<12}{'d':>3}{'(a) bare':>10}{'(a) blocks':>11}{'(b) stream':>11}"
              f"{'overhead':>10}{'points':>9}{'transform':>10}{'reducers':>9}  target")
    print(header)
    print("-" * len(header))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # seawater range warnings of the demos' cold legs
        for demo in demos:
            for scheme in schemes:
                r = measure(demo, scheme, args.log2n, args.repeat, args.block_size)
                verdict = "met" if r["overhead"] <= TARGET_OVERHEAD else "MISSED"
                print(f"{demo:<10}{scheme:<12}{r['d']:>3}{r['bare']:>10.3f}{r['bare_blocks']:>11.3f}"
                      f"{r['full']:>11.3f}{r['overhead']:>10.2f}{r['unit_points']:>9.3f}"
                      f"{r['transform']:>10.3f}{r['reducers']:>9.3f}  <= {TARGET_OVERHEAD:g} {verdict}")
                print(f"{'':<10}overhead vs block-wise bare model {r['overhead_blocks']:.2f}; "
                      f"model {r['n'] / r['bare'] / 1e3:.0f} k samples/s; load per round: "
                      + "; ".join(r["loads"]))
    print(f"load average now {_machine.load_average()}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
