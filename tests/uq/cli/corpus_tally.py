"""Tally the bad-input corpus: every case through the command line, each in its own process.

The corpus is the one ``test_bad_input_corpus.py`` generates (all of it, the slow part too).
Each case is run as ``transit-risk <command> <file>`` in a separate process with a timeout and
classified:

* ``clean``     exit status 2 and exactly one stderr line ``transit-risk: error: ...`` that
                names the file (and the key, where the case has one), nothing written;
* ``unclean``   exit status 2, but more lines, or the file or key not named, or files written;
* ``crash``     any other exit status, a traceback, ``internal error``, ``MemoryError``, or no
                end within the timeout (a hang: a FIFO or ``/dev/zero`` read for ever);
* ``accepted``  exit status 0 (the bad input was taken as good).

How a case runs: a runner process imports the command line once under the code being measured
(``--code DIR`` puts DIR first on ``PYTHONPATH``, e.g. an old commit's worktree) and forks one
child per case, which runs ``python -m uq.cli``'s entry point with its own stdout/stderr, an
address-space limit (so reading ``/dev/zero`` ends in MemoryError instead of taking the
machine's memory) and the timeout (the child is killed). ``--fresh`` starts a new interpreter
per case instead (``python -m uq.cli``; about a second each, so much slower) to check that the
two agree.

Usage::

    python tests/uq/cli/corpus_tally.py                       # the current code
    python tests/uq/cli/corpus_tally.py --code /tmp/old --demos /tmp/old/configs --timeout 20
    python tests/uq/cli/corpus_tally.py --only special- --details

``--demos`` builds the corpus from another folder's demo scenarios (an old commit's demos use
the keys its reader knows). ``--json FILE`` writes every case's class and stderr.
"""
from __future__ import annotations

import argparse
import collections
import importlib.util
import json
import os
import re
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parents[2]

# The runner: executed by the interpreter under measurement; reads the cases as JSON on stdin,
# writes one JSON line per case on stdout.
RUNNER = r'''
import json, os, resource, signal, sys, time, traceback, runpy
os.environ.setdefault("OMP_NUM_THREADS", "1")
import contextlib, importlib, io
cli = importlib.import_module("uq.cli.main")  # imported once; every child starts warm
timeout, mem_extra, warm = float(sys.argv[1]), int(sys.argv[2]), sys.argv[3]
# a good check and a refused study in the runner import what the commands import lazily
# (scipy.stats, the study reader, ...), so a child does only its own case's work
for argv in (["check", warm], ["study", warm, "--quiet"]):
    with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
        try:
            cli.main(argv)
        except BaseException:
            pass

def vm_size():
    with open("/proc/self/status") as fh:
        for line in fh:
            if line.startswith("VmSize:"):
                return int(line.split()[1]) * 1024
    return 0

for raw in sys.stdin:
    case = json.loads(raw)
    err_path = case["stderr_path"]
    t0 = time.monotonic()
    pid = os.fork()
    if pid == 0:
        try:
            limit = vm_size() + mem_extra
            resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
            os.chdir(case["cwd"])
            fd = os.open(err_path, os.O_WRONLY | os.O_CREAT | os.O_TRUNC, 0o644)
            os.dup2(fd, 2)
            null = os.open(os.devnull, os.O_WRONLY)
            os.dup2(null, 1)
            sys.argv = ["transit-risk", *case["argv"]]
            try:
                runpy.run_module("uq.cli", run_name="__main__", alter_sys=True)
                code = 0
            except SystemExit as exc:
                code = exc.code if isinstance(exc.code, int) else (0 if exc.code is None else 1)
            except BaseException:
                traceback.print_exc()
                code = 1
            sys.stderr.flush()
        finally:
            pass
        os._exit(code)
    deadline = t0 + timeout
    status, timed_out = None, False
    while True:
        done, st = os.waitpid(pid, os.WNOHANG)
        if done:
            status = st
            break
        if time.monotonic() > deadline:
            os.kill(pid, signal.SIGKILL)
            os.waitpid(pid, 0)
            timed_out = True
            break
        time.sleep(0.005)
    rc = None if timed_out else (os.waitstatus_to_exitcode(status))
    print(json.dumps({"id": case["id"], "rc": rc, "timed_out": timed_out,
                      "seconds": time.monotonic() - t0}), flush=True)
'''


def _corpus_module(demos: Path | None):
    spec = importlib.util.spec_from_file_location("bad_input_corpus", HERE / "test_bad_input_corpus.py")
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module  # dataclasses look their module up there
    spec.loader.exec_module(module)
    if demos is not None:
        module.DEMOS = {"propeller": demos / "under_ice_section.toml",
                        "glider": demos / "glider_transit.toml"}
        module.CORPUS = module._corpus()
    return module


def _prepare(module, folder: Path, only: str | None, demos: Path | None):
    """Write every case's file (and the study corpus's side files) into ``folder``."""
    shutil.copy(module.DEMOS["propeller"], folder / "base.toml")
    os.mkfifo(folder / "pipe.fifo")
    (folder / "zero.link").symlink_to("/dev/zero")
    cases = [c for c in module.CORPUS if only is None or only in c.id]
    jobs = []
    for case in cases:
        path = module._materialise(case, folder)
        work = folder / "work" / case.id
        work.mkdir(parents=True)
        argv = [case.command, str(path)]
        if case.command == "study":
            argv += ["--quiet", "--out", str(work / "out")]
        jobs.append({"id": case.id, "argv": argv, "cwd": str(work),
                     "stderr_path": str(folder / "stderr" / f"{case.id}.txt")})
    (folder / "stderr").mkdir()
    return cases, jobs


def _run_forked(jobs, code: Path | None, timeout: float, mem_extra: int,
                warm: Path) -> dict[str, dict]:
    env = dict(os.environ, OMP_NUM_THREADS="1")
    if code is not None:
        env["PYTHONPATH"] = os.pathsep.join([str(code), env.get("PYTHONPATH", "")]).rstrip(os.pathsep)
    proc = subprocess.Popen([sys.executable, "-c", RUNNER, str(timeout), str(mem_extra), str(warm)],
                            stdin=subprocess.PIPE, stdout=subprocess.PIPE, text=True, env=env)
    out, _ = proc.communicate("".join(json.dumps(j) + "\n" for j in jobs))
    if proc.returncode != 0:
        raise SystemExit(f"the runner failed (exit {proc.returncode})")
    return {r["id"]: r for r in map(json.loads, out.splitlines())}


def _run_fresh(jobs, code: Path | None, timeout: float) -> dict[str, dict]:
    env = dict(os.environ, OMP_NUM_THREADS="1")
    if code is not None:
        env["PYTHONPATH"] = os.pathsep.join([str(code), env.get("PYTHONPATH", "")]).rstrip(os.pathsep)
    results = {}
    for job in jobs:
        t0 = time.monotonic()
        with open(job["stderr_path"], "wb") as err:
            try:
                proc = subprocess.run([sys.executable, "-m", "uq.cli", *job["argv"]], cwd=job["cwd"],
                                      stdout=subprocess.DEVNULL, stderr=err, env=env, timeout=timeout)
                rc, timed_out = proc.returncode, False
            except subprocess.TimeoutExpired:
                rc, timed_out = None, True
        results[job["id"]] = {"id": job["id"], "rc": rc, "timed_out": timed_out,
                              "seconds": time.monotonic() - t0}
    return results


def classify(case, path_name: str, rc: int | None, timed_out: bool, stderr: str,
             written: bool) -> tuple[str, str]:
    """(class, reason) of one case's outcome (see the module docstring)."""
    if timed_out:
        return "crash", "timeout"
    for mark in ("Traceback", "internal error", "MemoryError", "RecursionError"):
        if mark in stderr:
            return "crash", mark
    if rc == 0:
        return "accepted", "exit 0"
    if rc != 2:
        return "crash", f"exit {rc}"
    lines = stderr.splitlines()
    if len(lines) != 1:
        return "unclean", f"{len(lines)} stderr lines"
    if not re.match(r"transit-risk( [a-z]+)?: error: ", lines[0]):
        return "unclean", "not an error line"
    if path_name not in lines[0]:
        return "unclean", "file not named"
    if case.key is not None and case.key not in lines[0]:
        return "unclean", "key not named"
    if written:
        return "unclean", "files written"
    return "clean", ""


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--code", type=Path, help="run the CLI of this source tree (first on PYTHONPATH)")
    parser.add_argument("--demos", type=Path, help="build the corpus from this folder's demo scenarios")
    parser.add_argument("--timeout", type=float, default=20.0, help="seconds per case (default 20)")
    parser.add_argument("--memory-mb", type=int, default=1536,
                        help="address space a case may add to the warm runner [MiB] (default 1536)")
    parser.add_argument("--only", help="run only the cases whose id contains this text")
    parser.add_argument("--fresh", action="store_true", help="a new interpreter per case (slow)")
    parser.add_argument("--details", action="store_true", help="print every case that is not clean")
    parser.add_argument("--json", type=Path, help="write every case's class and stderr here")
    args = parser.parse_args(argv)

    module = _corpus_module(args.demos)
    t0 = time.monotonic()
    with tempfile.TemporaryDirectory(prefix="corpus-tally-") as tmp:
        folder = Path(tmp)
        cases, jobs = _prepare(module, folder, args.only, args.demos)
        results = (_run_fresh(jobs, args.code, args.timeout) if args.fresh else
                   _run_forked(jobs, args.code, args.timeout, args.memory_mb * 1024 * 1024,
                               folder / "base.toml"))
        rows = []
        for case, job in zip(cases, jobs):
            r = results[case.id]
            stderr = Path(job["stderr_path"]).read_text(encoding="utf-8", errors="replace")
            written = any(Path(job["cwd"]).iterdir())
            cls, reason = classify(case, Path(job["argv"][1]).name, r["rc"], r["timed_out"],
                                   stderr, written)
            rows.append({"id": case.id, "command": case.command, "class": cls, "reason": reason,
                         "exit": r["rc"], "seconds": round(r["seconds"], 3),
                         "stderr": stderr[-2000:]})
    counts = collections.Counter(row["class"] for row in rows)
    reasons = collections.Counter(f"{row['class']}: {row['reason']}" for row in rows
                                  if row["class"] != "clean")
    print(f"corpus: {len(rows)} cases ({time.monotonic() - t0:.0f} s, "
          f"{'fresh interpreter' if args.fresh else 'forked'} per case, timeout {args.timeout:g} s)")
    for cls in ("clean", "unclean", "crash", "accepted"):
        print(f"  {cls:9s} {counts.get(cls, 0):5d}")
    for reason, n in reasons.most_common():
        print(f"    {n:5d}  {reason}")
    if args.details:
        for row in rows:
            if row["class"] != "clean":
                last = row["stderr"].strip().splitlines()[-1:] or [""]
                print(f"{row['class']:8s} {row['id']}: {row['reason']}: {last[0][:200]}")
    if args.json:
        args.json.write_text(json.dumps(rows, indent=1), encoding="utf-8")
    return 0 if counts.get("clean", 0) == len(rows) else 1


if __name__ == "__main__":
    sys.exit(main())
