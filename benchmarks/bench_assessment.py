"""End-to-end default assessment: wall time, peak memory and where the time goes (on demand).

Runs ``uq.studies.assess.assess`` on a demo scenario with its [analysis] defaults, writing nothing,
each repeat in a fresh subprocess so its peak RSS (``resource.getrusage(RUSAGE_SELF)
.ru_maxrss``) is its own. Inside, the pieces are timed by wrapping them:

* sampling    - ``SampleDesign.unit_points`` + ``InputModel.transform`` in the propagation;
* model       - ``uq.simulate.simulate_arrays`` in the propagation;
* estimators  - the rest of ``uq.studies.assess.propagate`` (collecting rows, intervals, curves);
* sensitivity - ``uq.studies.assess.sensitivity_analysis`` (Saltelli design, its model runs, SALib
  indices with bootstrap, the polynomial chaos fit), with its own split;
* decisions   - ``uq.simulate.nominal`` + the decision stage;
* report      - ``uq.report.write_report`` into a temporary directory, when ``uq.report``
  exists; timed after ``assess`` (the target is on the assessment) and shown both as a share
  of assess() + report and in seconds; the import of ``uq.report`` (matplotlib) is apart.

Targets (issue 7): <= 30 s wall and <= 1.5 GiB peak RSS for the under-ice demo's default
assessment.

Run from the repository root:

    python benchmarks/bench_assessment.py                  # both demos, best of 3
    python benchmarks/bench_assessment.py --config configs/under_ice_section.toml --repeat 5
    python benchmarks/bench_assessment.py --profile        # + cProfile top 25 (one run)
"""

from __future__ import annotations

import _machine  # noqa: F401  (pins BLAS threads before numpy is imported)

import argparse
import json
import subprocess
import sys
import time
from pathlib import Path

TARGET_WALL_S = 30.0
TARGET_RSS_GIB = 1.5


class _Timer:
    """Accumulates wall time per (stage, piece); nested calls of the same piece count once."""

    def __init__(self):
        self.stage = "outside"
        self.seconds: dict[tuple[str, str], float] = {}
        self._depth: dict[str, int] = {}

    def wrap(self, piece, fn):
        import functools

        @functools.wraps(fn)
        def timed(*args, **kwargs):
            depth = self._depth.get(piece, 0)
            self._depth[piece] = depth + 1
            t0 = time.perf_counter()
            try:
                return fn(*args, **kwargs)
            finally:
                self._depth[piece] = depth
                if depth == 0:
                    key = (self.stage, piece)
                    self.seconds[key] = self.seconds.get(key, 0.0) + time.perf_counter() - t0
        return timed

    def stage_wrap(self, stage, fn):
        import functools

        @functools.wraps(fn)
        def staged(*args, **kwargs):
            previous, self.stage = self.stage, stage
            t0 = time.perf_counter()
            try:
                return fn(*args, **kwargs)
            finally:
                key = (stage, "total")
                self.seconds[key] = self.seconds.get(key, 0.0) + time.perf_counter() - t0
                self.stage = previous
        return staged

    def get(self, stage, piece):
        return self.seconds.get((stage, piece), 0.0)


def run_child(config: str, profile: bool) -> dict:
    """One assessment in this (fresh) process; returns its figures."""
    import importlib.util
    import resource
    import tempfile
    import warnings

    t_import = time.perf_counter()
    import uq.studies.assess as assess_module
    import uq.estimators.pce as pce_module
    import uq.estimators.sobol as sensitivity_module
    import uq.simulate as simulate_module
    from uq.sampling.inputs import InputModel
    from uq.sampling.plans import SampleDesign
    from uq.scenario import load_scenario

    import_s = time.perf_counter() - t_import
    timer = _Timer()
    SampleDesign.unit_points = timer.wrap("sampling", SampleDesign.unit_points)
    InputModel.transform = timer.wrap("sampling", InputModel.transform)
    simulate_module.simulate_arrays = timer.wrap("model", simulate_module.simulate_arrays)
    sensitivity_module.saltelli_design = timer.wrap("salib_design", sensitivity_module.saltelli_design)
    sensitivity_module.sobol_indices = timer.wrap("salib_indices", sensitivity_module.sobol_indices)
    pce_module.fit_polynomial_chaos = timer.wrap("pce_fit", pce_module.fit_polynomial_chaos)
    assess_module.propagate = timer.stage_wrap("propagation", assess_module.propagate)
    assess_module.sensitivity_analysis = timer.stage_wrap(
        "sensitivity", assess_module.sensitivity_analysis)
    assess_module.nominal = timer.stage_wrap("decisions", assess_module.nominal)
    assess_module._decide = timer.stage_wrap("decisions", assess_module._decide)

    t0 = time.perf_counter()
    scenario = load_scenario(config)
    load_s = time.perf_counter() - t0
    rss_before_kib = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    profiler = None
    if profile:
        import cProfile

        profiler = cProfile.Profile()
        profiler.enable()
    t0, c0 = time.perf_counter(), time.process_time()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        result = assess_module.assess(scenario)
    assess_s = time.perf_counter() - t0
    assess_cpu_s = time.process_time() - c0
    if profiler is not None:
        profiler.disable()
    rss_kib = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss

    report_s = None
    report_import_s = None
    if importlib.util.find_spec("uq.report") is not None:
        t0 = time.perf_counter()
        import uq.report  # pulls in matplotlib: timed apart, like the other imports

        report_import_s = time.perf_counter() - t0
        with tempfile.TemporaryDirectory() as tmp:
            t0 = time.perf_counter()
            uq.report.write_report(result, tmp)
            report_s = time.perf_counter() - t0
    rss_with_report_kib = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss

    prop = timer.get("propagation", "total")
    sens = timer.get("sensitivity", "total")
    figures = {
        "config": config,
        "samples": result.settings.samples,
        "replicates": result.settings.replicates,
        "sensitivity_base_n": result.settings.sensitivity_base_n,
        "sensitivity_runs": result.sensitivity.runs if result.sensitivity else 0,
        "p_success": result.p_success.estimate,
        "import_s": import_s,
        "load_s": load_s,
        "assess_s": assess_s,
        "assess_cpu_s": assess_cpu_s,
        "sampling_s": timer.get("propagation", "sampling"),
        "model_s": timer.get("propagation", "model"),
        "estimators_s": prop - timer.get("propagation", "sampling") - timer.get("propagation", "model"),
        "sensitivity_s": sens,
        "sens_sampling_s": timer.get("sensitivity", "sampling") + timer.get("sensitivity", "salib_design"),
        "sens_model_s": timer.get("sensitivity", "model"),
        "sens_indices_s": timer.get("sensitivity", "salib_indices"),
        "sens_pce_s": timer.get("sensitivity", "pce_fit"),
        "decisions_s": timer.get("decisions", "total"),
        "decisions_model_s": timer.get("decisions", "model"),
        "report_s": report_s,
        "report_import_s": report_import_s,
        "peak_rss_before_assess_mib": rss_before_kib / 1024.0,
        "peak_rss_mib": rss_kib / 1024.0,
        "peak_rss_with_report_mib": rss_with_report_kib / 1024.0,
        "stage_timings_s": result.timings_s,
    }
    if profiler is not None:
        import io
        import pstats

        text = io.StringIO()
        pstats.Stats(profiler, stream=text).sort_stats("cumulative").print_stats(25)
        tottime = io.StringIO()
        pstats.Stats(profiler, stream=tottime).sort_stats("tottime").print_stats(15)
        figures["profile"] = text.getvalue() + tottime.getvalue()
    return figures


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--config", nargs="+",
                        default=[str(_machine.PROPELLER_DEMO), str(_machine.GLIDER_DEMO)])
    parser.add_argument("--repeat", type=int, default=3, help="fresh subprocesses; best wall kept")
    parser.add_argument("--profile", action="store_true", help="print a cProfile of one run")
    parser.add_argument("--child", help=argparse.SUPPRESS)
    args = parser.parse_args(argv)

    if args.child:
        print(json.dumps(run_child(args.child, args.profile)))
        return 0

    print(_machine.machine_report())
    for config in args.config:
        runs = []
        for _ in range(max(1, args.repeat)):
            out = subprocess.run(
                [sys.executable, __file__, "--child", config] + (["--profile"] if args.profile else []),
                check=True, capture_output=True, text=True,
            )
            runs.append(json.loads(out.stdout.strip().splitlines()[-1]))
        best = min(runs, key=lambda r: r["assess_s"])
        walls = ", ".join(f"{r['assess_s']:.2f}" for r in runs)
        total = best["assess_s"]
        print(f"\n{Path(config).name}: {best['samples']} samples ({best['replicates']} replicates), "
              f"Saltelli base N {best['sensitivity_base_n']} ({best['sensitivity_runs']} runs); "
              f"P(success) {best['p_success']:.4f}")
        print(f"  assess() wall: best {total:.2f} s of [{walls}]   (target <= {TARGET_WALL_S:g} s: "
              f"{'met' if total <= TARGET_WALL_S else 'MISSED'})")
        print(f"  assess() CPU time of that run {best['assess_cpu_s']:.2f} s; "
              f"+ imports {best['import_s']:.2f} s, scenario load {best['load_s']:.3f} s")
        rss_gib = max(r["peak_rss_mib"] for r in runs) / 1024.0
        print(f"  peak RSS: {1024 * rss_gib:.0f} MiB (after imports, before assess: "
              f"{best['peak_rss_before_assess_mib']:.0f} MiB)   (target <= {TARGET_RSS_GIB:g} GiB: "
              f"{'met' if rss_gib <= TARGET_RSS_GIB else 'MISSED'})")
        pieces = [
            ("sampling (unit points + input transform)", best["sampling_s"]),
            ("model (simulate_arrays, main sample)", best["model_s"]),
            ("estimators (rest of propagate)", best["estimators_s"]),
            ("sensitivity (Sobol + PCE)", best["sensitivity_s"]),
            ("    of which Saltelli design + transform", best["sens_sampling_s"]),
            ("    of which model runs", best["sens_model_s"]),
            ("    of which Sobol indices + bootstrap", best["sens_indices_s"]),
            ("    of which PCE fit (incl. LOO, holdout)", best["sens_pce_s"]),
            ("decisions (nominal + decision stage)", best["decisions_s"]),
        ]
        accounted = sum(s for name, s in pieces if not name.startswith(" "))
        pieces.append(("other (assess() glue, warnings, versions)", total - accounted))
        report_s = best["report_s"]
        if report_s is not None:
            pieces.append(("report (uq.report.write_report)", report_s))
        # Two shares: of assess() alone (what the target is on) and of assess() + the report
        # (what one `transit-risk` run with a report costs after the imports).
        with_report = total + (report_s or 0.0)
        print(f"  share of wall (best run): {'':<27} seconds  of assess()  of assess()+report")
        for name, s in pieces:
            in_assess = "" if name.startswith("report") else f"{100 * s / total:6.1f} %"
            print(f"    {name:<44} {s:7.3f} s {in_assess:>10} {100 * s / with_report:10.1f} %")
        if report_s is not None:
            print(f"  report: uq.report.write_report {report_s:.2f} s of [" +
                  ", ".join(f"{r['report_s']:.2f}" for r in runs) +
                  f"] (import of uq.report, with matplotlib, {best['report_import_s']:.2f} s apart); "
                  f"assess() + report {with_report:.2f} s; peak RSS with report "
                  f"{max(r['peak_rss_with_report_mib'] for r in runs):.0f} MiB")
        else:
            print("  report: uq.report not present; not timed")
        if args.profile:
            print(best["profile"])
    print(f"\nload average now {_machine.load_average()}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
