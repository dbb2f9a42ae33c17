"""The data demo against the glider demo: wall time of ``transit-risk assess`` and the share
spent extracting the environment from the netCDF file (on demand; needs the ocean extra).

For each demo, in one process per repeat (fresh imports, so the first-use cost of xarray and
the netCDF engine is counted as a user would pay it):

* load     - ``uq.scenario.load_scenario`` (for the data demo: opening the file, sampling the
  four legs' geodesics over 5 members x 8 launch times, fitting, Spearman matrix);
* assess   - ``uq.studies.assess.assess`` with the scenario's [analysis] settings (or the
  sample sizes given on the command line);
* report   - ``uq.report.write_report`` into a temporary folder (with the exports).

The data-extraction share is load / (load + assess + report). The baseline is the glider
demo, whose legs are typed in by hand.

Run from the repository root:

    python benchmarks/bench_ocean_demo.py                    # [analysis] settings, best of 2
    python benchmarks/bench_ocean_demo.py --samples 2048 --sensitivity-base 256 --repeat 3
"""
from __future__ import annotations

import _machine  # noqa: F401  (pins BLAS threads before numpy is imported)

import argparse
import json
import subprocess
import sys

CHILD = r"""
import json, sys, tempfile, time
t0 = time.perf_counter()
from uq.scenario import load_scenario
sc = load_scenario(sys.argv[1])
t1 = time.perf_counter()
from uq.studies.assess import assess
kw = json.loads(sys.argv[2])
a = assess(sc, **kw)
t2 = time.perf_counter()
from uq.report import write_report
with tempfile.TemporaryDirectory() as d:
    write_report(a, d + "/r")
t3 = time.perf_counter()
print(json.dumps({"load": t1 - t0, "assess": t2 - t1, "report": t3 - t2,
                  "inputs": len(sc.inputs), "p": a.propagation.p_success.estimate}))
"""


def run(config, kwargs) -> dict:
    out = subprocess.run([sys.executable, "-c", CHILD, str(config), json.dumps(kwargs)],
                         capture_output=True, text=True, check=True, cwd=_machine.ROOT)
    return json.loads(out.stdout.strip().splitlines()[-1])


def main() -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--samples", type=int)
    p.add_argument("--sensitivity-base", type=int)
    p.add_argument("--repeat", type=int, default=2)
    args = p.parse_args()
    kwargs = {}
    if args.samples:
        kwargs["samples"] = args.samples
    if args.sensitivity_base is not None:
        kwargs["sensitivity_base_n"] = args.sensitivity_base
    print(_machine.machine_report())
    print(f"settings: {kwargs or 'each scenario [analysis]'}; best of {args.repeat} by total")
    demos = {"glider demo (legs typed in)": _machine.GLIDER_DEMO,
             "data demo (route + netCDF)": _machine.CONFIGS / "sollen_sea_transit.toml"}
    rows = {}
    for label, config in demos.items():
        runs = [run(config, kwargs) for _ in range(args.repeat)]
        best = min(runs, key=lambda r: r["load"] + r["assess"] + r["report"])
        rows[label] = best
        total = best["load"] + best["assess"] + best["report"]
        print(f"{label:30s} inputs {best['inputs']:3d}  load {best['load']:6.2f} s  "
              f"assess {best['assess']:6.2f} s  report {best['report']:6.2f} s  total {total:6.2f} s  "
              f"load share {100 * best['load'] / total:5.1f} %  P(success) {best['p']:.3f}")
    g, d = rows.values()
    ratio = sum(d[k] for k in ("load", "assess", "report")) / sum(g[k] for k in ("load", "assess", "report"))
    print(f"data demo / glider demo total time: {ratio:.2f}x")
    print(f"machine after the runs: {_machine.load_average()}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
