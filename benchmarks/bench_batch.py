"""Batch-study benchmark: one study on the local backend (1 and 2 processes) and on a Dask
LocalCluster of 2 loopback worker processes, side by side in one run, with an identical-numbers
check.

Run on demand (not a test):

    python benchmarks/bench_batch.py                       # the example study, 1e5 MC samples
    python benchmarks/bench_batch.py --samples 20000 --scheme sobol

The study is configs/speed_and_battery_study.toml (20 variants). The Dask cluster is started
before its timed run (start-up is reported separately); needs the [dask] extra.
"""
from __future__ import annotations

import argparse
import dataclasses
import json
import os
import sys
import time
import warnings
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

import pandas as pd  # noqa: E402

from uq.sampling import backends  # noqa: E402
from uq.scenario.study_file import load_study  # noqa: E402
from uq.studies.batch import run_study  # noqa: E402


class _PayloadRecorder:
    """Wraps a DaskExecutor: records the pickled size of every task it ships, and of each
    object it sends to the cluster once, then maps as the executor does."""

    def __init__(self, executor, payloads):
        self.executor, self.payloads = executor, payloads

    def map(self, fn, iterable):
        import pickle

        tasks = list(iterable)
        sent_before = set(self.executor._sent)
        shipped = self.executor._scatter_shared_parts(tasks)
        self.payloads["tasks"].extend(len(pickle.dumps(t)) for t in shipped)
        self.payloads["sent once"].extend(
            len(pickle.dumps(obj)) for key, (obj, _) in self.executor._sent.items()
            if key not in sent_before)
        futures = self.executor.client.map(fn, shipped, retries=self.executor.retries,
                                           pure=False)
        return self.executor._results(futures)


def main(argv=None) -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--study", default=str(ROOT / "configs" / "speed_and_battery_study.toml"))
    p.add_argument("--samples", type=int, default=100_000)
    p.add_argument("--scheme", default="monte-carlo", choices=["monte-carlo", "sobol"])
    p.add_argument("--skip-dask", action="store_true")
    p.add_argument("--repeat", type=int, default=1,
                   help="rounds, each running every backend in turn; the least time is kept "
                        "(damps other load on a shared machine)")
    args = p.parse_args(argv)
    warnings.simplefilter("ignore")
    study = load_study(args.study)
    replicates = 1 if args.scheme == "monte-carlo" else study.replicates
    study = dataclasses.replace(study, scheme=args.scheme, replicates=replicates)
    print(f"study {study.name}: {len(study.variants)} variants x {args.samples} samples "
          f"({args.scheme}), {os.cpu_count()} CPUs")
    times, frames = {}, {}

    def timed(label, executor):
        t0 = time.perf_counter()
        frames[label] = run_study(study, samples=args.samples, executor=executor).to_frame()
        seconds = time.perf_counter() - t0
        times[label] = min(seconds, times.get(label, seconds))
        print(f"  {label:<22s} {seconds:7.1f} s", flush=True)

    startup = None
    payloads: dict[str, list[int]] = {"tasks": [], "sent once": []}
    for _ in range(max(1, args.repeat)):
        with backends.local_executor(1) as ex:
            timed("local, 1 process", ex)
        with backends.local_executor(2) as ex:
            timed("local, 2 processes", ex)
        if not args.skip_dask:
            t0 = time.perf_counter()
            with backends.dask_executor(local_workers=2) as ex:
                startup = time.perf_counter() - t0
                timed("dask LocalCluster(2)", _PayloadRecorder(ex, payloads))
    ref = frames["local, 1 process"]
    identical = {k: bool(ref.equals(f)) for k, f in frames.items()}
    t1 = times["local, 1 process"]
    out = {
        "variants": len(study.variants), "samples": args.samples, "scheme": args.scheme,
        "seconds_least_of_rounds": times, "rounds": max(1, args.repeat), "dask_startup_s": startup,
        "ratio_1_over_2_processes": t1 / times["local, 2 processes"],
        "ratio_local2_over_dask2": (times["local, 2 processes"] / times["dask LocalCluster(2)"]
                                    if "dask LocalCluster(2)" in times else None),
        "ratio_local1_over_dask2": (t1 / times["dask LocalCluster(2)"]
                                    if "dask LocalCluster(2)" in times else None),
        "identical_to_local_1_process": identical,
        # pickled bytes of what the Dask executor hands to client.map per task (shared
        # objects replaced by references), and of the objects it sent once
        "dask_payload_per_task_bytes_max": max(payloads["tasks"], default=None),
        "dask_objects_sent_once_bytes": sorted(set(payloads["sent once"]), reverse=True)[:4],
    }
    print(json.dumps(out, indent=2))
    with pd.option_context("display.width", 200):
        print(ref[["variant", "p_success", "p_success_low", "p_success_high", "verdict",
                   "contingency_days"]].to_string(index=False))
    return 0 if all(identical.values()) else 1


if __name__ == "__main__":
    sys.exit(main())
