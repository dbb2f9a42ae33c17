"""Two revisions of the project side by side: glider and propeller per-sample cost, assessment.

Usage (from the repository root):
    python benchmarks/bench_before_after.py --before c10ea1d [--after REV] [--n 16384]
        [--rounds 3] [--assess]

The ``--before`` revision (and ``--after``, else this working tree) is exported with
``git archive`` into a temporary directory. Each measurement runs in a fresh subprocess with
``PYTHONPATH`` set to one side's tree (so that tree's ``physics`` and ``uq`` are imported),
and the two sides alternate round by round: a load spike on the shared machine hits both.
Figures are the best of the rounds, in CPU seconds of the process (``time.process_time``:
less sensitive to other jobs than wall time, which is printed beside it).

Measured per side (models: the bundled demos, inputs by inverse transform of their marginals):
* glider (configs/glider_transit.toml) and propeller (configs/under_ice_section.toml) of each
  side's own tree (the demos changed along the history: the older side may fly a simpler
  demo), each
  in its own process, ``uq.simulate.simulate_arrays``: us/sample in one call of n rows, and n rows in calls of
  4096 and 512 rows (the assessment's Saltelli and former replicate call sizes), and the
  glider / propeller ratio at equal call size;
* with ``--assess``: the default ``assess`` of each demo (``uq.studies.assess``, or
  ``uq.assess`` in the layout before the reorganisation), CPU and wall, and its stage
  timings (``Assessment.timings_s``). The two sides may not do the same work: compare the
  stages they share, and read the added stages as added work.
"""
from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DEMOS = {"glider": "glider_transit.toml", "propeller": "under_ice_section.toml"}


def _demo(name: str) -> Path:
    """The demo scenario of the side being measured (its own configs/: the scenario format
    and the demos changed along the history)."""
    return Path(os.environ.get("PYTHONPATH", str(ROOT)).split(os.pathsep)[0]) / "configs" / DEMOS[name]
CALL_SIZES = (4096, 512)


def _child_model(name: str, n: int) -> dict:
    import warnings

    import numpy as np

    from uq.scenario import load_scenario
    from uq.simulate import simulate_arrays

    warnings.simplefilter("ignore")  # the under-ice demo is below the viscosity fit's range
    out = {}
    for path in (_demo(name),):
        scenario = load_scenario(path)
        u = np.random.default_rng(1).random((n, len(scenario.inputs)))
        x = np.column_stack([m.ppf(u[:, i]) for i, m in enumerate(scenario.inputs)])
        simulate_arrays(scenario, x[:64])  # warm-up
        for size in (n,) + CALL_SIZES:
            cpu, wall = time.process_time(), time.perf_counter()
            for start in range(0, n, size):
                simulate_arrays(scenario, x[start:start + size])
            out[f"{name} {size}"] = ((time.process_time() - cpu) / n * 1e6,
                                     (time.perf_counter() - wall) / n * 1e6)
    return out


def _child_assess(name: str) -> dict:
    import warnings

    from uq.scenario import load_scenario
    try:
        from uq.studies.assess import assess
    except ImportError:  # the layout before the reorganisation (2469529 and earlier)
        from uq.assess import assess

    warnings.simplefilter("ignore")
    scenario = load_scenario(_demo(name))
    cpu, wall = time.process_time(), time.perf_counter()
    result = assess(scenario)
    label = f"assess {name}"
    out = {label: (time.process_time() - cpu, time.perf_counter() - wall)}
    for stage, seconds in result.timings_s.items():
        out[f"  {name}: {stage}"] = (float(seconds), float(seconds))
    out[f"P(success) {name}"] = (float(result.propagation.p_success.estimate),) * 2
    return out


def _run(tree: Path, what: str, n: int) -> dict:
    env = dict(os.environ, PYTHONPATH=str(tree), OMP_NUM_THREADS="1",
               OPENBLAS_NUM_THREADS="1", MKL_NUM_THREADS="1")
    proc = subprocess.run([sys.executable, str(Path(__file__).resolve()), "--child", what,
                           "--n", str(n)], env=env, cwd=tempfile.gettempdir(),
                          capture_output=True, text=True, check=True)
    return json.loads(proc.stdout.strip().splitlines()[-1])


def _export(revision: str, into: Path) -> Path:
    """The tree of ``revision`` (git archive) in directory ``into``."""
    into.mkdir(parents=True)
    archive = subprocess.run(["git", "-C", str(ROOT), "archive", revision],
                             capture_output=True, check=True).stdout
    subprocess.run(["tar", "-x", "-C", str(into)], input=archive, check=True)
    return into


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--before", default="c10ea1d", help="git revision of the 'before' side")
    parser.add_argument("--after", default=None,
                        help="git revision of the 'after' side (default: this working tree)")
    parser.add_argument("--n", type=int, default=16384)
    parser.add_argument("--rounds", type=int, default=3)
    parser.add_argument("--assess", action="store_true")
    parser.add_argument("--child", choices=("glider", "propeller", "assess-glider",
                                            "assess-propeller"), help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.child:
        print(json.dumps(_child_assess(args.child.split("-")[1])
                         if args.child.startswith("assess") else _child_model(args.child, args.n)))
        return
    sys.path.insert(0, str(Path(__file__).resolve().parent))
    import _machine

    print(_machine.machine_report())
    with tempfile.TemporaryDirectory() as tmp:
        sides = {"before": _export(args.before, Path(tmp) / "before"),
                 "after": ROOT if args.after is None else _export(args.after, Path(tmp) / "after")}
        best: dict = {side: {} for side in sides}
        # one model per process: glibc's heap state after one model (its mmap threshold
        # is raised by large frees) changed the next one's timing by up to 40 %
        for what in ("glider", "propeller") + (("assess-glider", "assess-propeller")
                                               if args.assess else ()):
            for _ in range(args.rounds):
                for side, tree in sides.items():
                    for key, value in _run(tree, what, args.n).items():
                        old = best[side].get(key)
                        best[side][key] = value if old is None else min(old, value)
    print(f"before = {args.before}, after = {args.after or 'working tree'}; best of {args.rounds} alternating "
          f"rounds; load average now {_machine.load_average()}")
    unit = lambda key: "s" if key.startswith(("assess", "  ")) else ""  # noqa: E731
    print(f"{'measure':<26}{'before CPU':>12}{'after CPU':>12}{'ratio':>8}"
          f"{'before wall':>13}{'after wall':>12}")
    keys = list(best["after"]) + [k for k in best["before"] if k not in best["after"]]
    for key in keys:
        nan = (float("nan"),) * 2
        b, a = best["before"].get(key, nan), best["after"].get(key, nan)
        label = key if unit(key) or key.startswith("P(") else f"{key} rows/call [us/sample]"
        print(f"{label:<26}{b[0]:>12.4g}{a[0]:>12.4g}{b[0] / a[0]:>8.2f}"
              f"{b[1]:>13.4g}{a[1]:>12.4g}")
    for side in sides:
        ratios = [best[side][f"glider {s}"][0] / best[side][f"propeller {s}"][0]
                  for s in (args.n,) + CALL_SIZES]
        print(f"glider / propeller per sample ({side}), calls of "
              f"{', '.join(str(s) for s in (args.n,) + CALL_SIZES)} rows: "
              + ", ".join(f"{r:.0f}x" for r in ratios))


if __name__ == "__main__":
    main()
