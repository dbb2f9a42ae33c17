"""Command line of transit-risk: a thin layer over :func:`uq.studies.assess.assess` and the report.

Sub-commands::

    transit-risk assess [SCENARIO]          full assessment and report (bundled demo by default)
    transit-risk check SCENARIO             validate; print the nominal (all-medians) result
    transit-risk sweep SCENARIO --values .. P(success) over setpoint values, with the report
    transit-risk compare SCENARIO_A SCENARIO_B   paired comparison of two configurations
    transit-risk starter PATH               write a commented starter scenario to edit
    transit-risk study STUDYFILE            batch study of many variants on shared samples

Every command goes through :func:`main`: errors in what the user gave (scenario or study
file, options, output folder) print one line ``transit-risk: error: <message>`` on stderr
and exit with status 2 (``--debug`` adds the traceback); an interrupt exits 130 (SIGINT) or
143 (SIGTERM) and leaves no partial output; a closed stdout pipe stops quietly. The output
folder is checked before any computation (:func:`uq.report.prepare_output`). Warnings raised
during a run (e.g. a seawater fit used outside its range) become cautions: one plain line
``transit-risk: caution: <text>`` on stderr (not with ``--quiet``), and a line in the report;
worker processes never print them.
"""
from __future__ import annotations

from uq.errors import InputError, TransitRiskError

import argparse
import os
import re
import signal
import sys
import tempfile
import traceback
import warnings
from contextlib import contextmanager
from pathlib import Path
from typing import Sequence

from uq.sampling.allocator import keep_blocks_in_heap
from uq.cli.console import PROG, Console, one_line
from uq.scenario.demos import DEMOS, STARTERS, STUDY_STARTER_BASE, demo_path, starter_text

__all__ = ["main", "build_parser", "DEMOS"]

DEFAULT_DEMO = DEMOS["propeller"]

_EXIT_USER_ERROR = 2
_EXIT_INTERNAL = 1
_EXIT_SIGINT = 130
_EXIT_SIGTERM = 143

class _Terminated(KeyboardInterrupt):
    """SIGTERM, raised in the main thread so that clean-up runs as for Ctrl-C."""


class _UsageError(InputError):
    """A user error found by the CLI itself (not by the library)."""


# =============================================================================== parser
class _Parser(argparse.ArgumentParser):
    """argparse, but a usage error is one line ``transit-risk: error: ...`` (exit 2)."""

    def error(self, message: str):  # noqa: D401 - argparse API
        self.exit(_EXIT_USER_ERROR, f"{PROG}: error: {one_line(message)}\n")


def _positive_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"{text!r}: expected a positive whole number")
    return value


def _nonnegative_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
    if value < 0:
        raise argparse.ArgumentTypeError(f"{text!r}: expected a whole number >= 0")
    return value


def _number_list(text: str) -> tuple[float, ...]:
    parts = [p.strip() for p in text.split(",") if p.strip()]
    try:
        values = tuple(float(p) for p in parts)
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"{text!r}: expected comma-separated numbers, e.g. 1.0,1.2,1.4") from None
    if not values:
        raise argparse.ArgumentTypeError(f"{text!r}: expected at least one number")
    if any(v != v or v in (float("inf"), float("-inf")) for v in values):
        raise argparse.ArgumentTypeError(f"{text!r}: expected finite numbers")
    return values


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of ``transit-risk`` (sub-commands and their options)."""
    output = _Parser(add_help=False)
    output.add_argument("--quiet", action="store_true",
                        help="print nothing but errors")
    output.add_argument("--debug", action="store_true",
                        help="show the full traceback of an error")

    run = _Parser(add_help=False)
    run.add_argument("--samples", type=_positive_int, metavar="N",
                     help="samples of the propagation (default: the scenario's [analysis]; "
                          "rounded to a power of two per replicate for the Sobol' scheme)")
    run.add_argument("--seed", type=_nonnegative_int, metavar="S",
                     help="random seed (default: the scenario's [analysis] seed)")
    run.add_argument("--sensitivity-base", type=_nonnegative_int, metavar="N",
                     dest="sensitivity_base",
                     help="Saltelli base N, a power of two; 0 skips the sensitivity stage")
    run.add_argument("--out", metavar="DIR",
                     help="report folder (default reports/<scenario name>/)")
    run.add_argument("--overwrite", action="store_true",
                     help="replace an existing report folder")

    where = _where_to_run()

    parser = _Parser(
        prog=PROG,
        description="Will the vehicle reach its recovery point with energy to spare, and how "
                    "sure are we? Probabilistic range and energy risk for AUVs and gliders.",
        epilog="Run 'transit-risk COMMAND --help' for the options of a command.")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", required=True,
                                parser_class=_Parser)

    p = sub.add_parser("assess", parents=[output, run, where],
                       help="full assessment and report of a scenario",
                       description="Run the full assessment of SCENARIO (default: the bundled "
                                   "under-ice demo) and write the report folder.")
    p.add_argument("scenario", nargs="?", metavar="SCENARIO",
                   help=f"scenario file (TOML); default: the bundled demo {DEFAULT_DEMO}")
    levers = p.add_mutually_exclusive_group()
    levers.add_argument("--go-requirements", dest="go_requirements", action="store_const",
                        const="always", default="never",
                        help="also find the battery energy, setpoint and reserve fraction that "
                             "give GO (for a GO: the margin); re-runs the model on shared "
                             "samples, about a minute for the demos")
    levers.add_argument("--no-go-requirements", dest="go_requirements", action="store_const",
                        const="never", help="skip the search for what would make it GO (default)")
    p.add_argument("--extends", metavar="SUMMARY",
                   help="take the next look of the recorded run whose summary.json is given, "
                        "with more --samples, under the looks it declared ([analysis] "
                        "max_looks)")
    p.set_defaults(func=_cmd_assess)

    p = sub.add_parser("check", parents=[output],
                       help="validate a scenario and print its nominal result",
                       description="Validate SCENARIO and print the deterministic result with "
                                   "every uncertain input at its median.")
    p.add_argument("scenario", metavar="SCENARIO", help="scenario file (TOML)")
    p.set_defaults(func=_cmd_check)

    p = sub.add_parser("sweep", parents=[output, run, where],
                       help="P(success) over values of a setpoint",
                       description="Assess SCENARIO and sweep one setpoint over VALUES on "
                                   "shared samples; the report gets a sweep section.")
    p.add_argument("scenario", metavar="SCENARIO", help="scenario file (TOML)")
    p.add_argument("--values", type=_number_list, required=True, metavar="V1,V2,...",
                   help="setpoint values, comma-separated, in the field's unit")
    p.add_argument("--field", metavar="FIELD",
                   help="setpoint to vary: setpoint.speed_m_s (propeller, the default), "
                        "setpoint.glide_angle_deg (glider default) or setpoint.net_buoyancy_N")
    p.set_defaults(func=_cmd_sweep)

    p = sub.add_parser("compare", parents=[output, run, where],
                       help="paired comparison of two configurations",
                       description="Assess SCENARIO_A and compare it with SCENARIO_B on shared "
                                   "samples; the report of A gets a comparison section.")
    p.add_argument("scenario", metavar="SCENARIO_A", help="scenario file (TOML)")
    p.add_argument("other", metavar="SCENARIO_B", help="scenario file (TOML)")
    p.add_argument("--force", action="store_true",
                   help="compare even a pair that is not comparable (other vehicle kind, or "
                        "route lengths more than 5 %% apart), with a caution")
    p.set_defaults(func=_cmd_compare)

    p = sub.add_parser("starter", parents=[output],
                       help="write a commented starter scenario to edit",
                       description="Write a clean, commented starter scenario (or study file) "
                                   "to PATH; a study starter comes with its base scenario "
                                   "beside it (PATH's name + _scenario.toml).")
    p.add_argument("path", metavar="PATH", help="file to write (.toml)")
    p.add_argument("--kind", choices=list(STARTERS), default="propeller",
                   help="propeller (drag from hull geometry), propeller-drag (a known C_D), "
                        "glider, or study (default propeller)")
    p.add_argument("--overwrite", action="store_true", help="replace an existing file")
    p.set_defaults(func=_cmd_starter)

    p = sub.add_parser("study", parents=[output, where],
                       help="batch study of many scenario variants on shared samples",
                       description="Run every variant of the study file's base scenario on "
                                   "shared samples and write the study folder.")
    p.add_argument("studyfile", metavar="STUDYFILE", help="study file (TOML)")
    p.add_argument("--samples", type=_positive_int, metavar="N",
                   help="samples per variant (default: the study file's)")
    p.add_argument("--seed", type=_nonnegative_int, metavar="S",
                   help="random seed (default: the study file's)")
    p.add_argument("--out", metavar="DIR", help="study folder (default reports/<study name>/)")
    p.add_argument("--overwrite", action="store_true",
                   help="replace an existing study folder written by transit-risk")
    p.set_defaults(func=_cmd_study)
    return parser


def _where_to_run() -> argparse.ArgumentParser:
    """The options that say where the model runs, shared by every command that samples."""
    where = _Parser(add_help=False)
    group = where.add_mutually_exclusive_group()
    group.add_argument("--workers", type=_positive_int, metavar="W", default=1,
                       help="local worker processes (default 1); this and the three below "
                            "exclude each other, and the numbers do not depend on them")
    group.add_argument("--scheduler", metavar="ADDRESS",
                       help="a running Dask scheduler, e.g. tcp://10.0.0.5:8786 (needs the "
                            "dask extra; workers need the same transit-risk version)")
    group.add_argument("--scheduler-file", metavar="PATH", dest="scheduler_file",
                       help="the scheduler file a Dask scheduler wrote (HPC batch jobs)")
    group.add_argument("--local-cluster", type=_positive_int, metavar="N", dest="local_cluster",
                       help="start a loopback Dask cluster of N worker processes")
    return where


# =============================================================================== helpers
def _executor(args):
    """The executor the options ask for (a context manager; None: this process)."""
    from uq.sampling import backends

    return backends.executor_for(workers=args.workers, scheduler=args.scheduler,
                                 scheduler_file=args.scheduler_file,
                                 local_cluster=args.local_cluster)


def _load(path: str | os.PathLike):
    """Read a scenario; its cautions (implausible values, defaults) go to stderr once."""
    from uq.scenario import load_scenario

    scenario = load_scenario(path)
    for text in scenario.cautions:
        _CAUTIONS.note(text)
    return scenario


def _out_dir(args, name: str, console: Console, suffix: str = "") -> Path:
    """The output folder (``--out`` or ``reports/<safe name>``), checked before any work."""
    from uq.report import default_output_dir, prepare_output

    out = Path(args.out) if args.out else default_output_dir(name, suffix=suffix)
    prepare_output(out, overwrite=args.overwrite, notes=console.message)
    return out


def _assess(args, scenario, console: Console, executor):
    from uq.studies.assess import assess

    extends = getattr(args, "extends", None)
    if extends is not None:
        from uq.studies.extension import load_recorded_run

        extends = load_recorded_run(extends)
    return assess(scenario, samples=args.samples, seed=args.seed,
                  sensitivity_base_n=args.sensitivity_base, executor=executor,
                  extends=extends, progress=console.stage)


def _report(args, assessment, out: Path, console: Console, **extra) -> Path:
    from uq.report import write_report

    folder = write_report(assessment, out, overwrite=args.overwrite, progress=console.step,
                          notes=console.message, **extra)
    console.close_bar()
    return folder


def _finish(console: Console, assessment, folder: Path) -> None:
    table = getattr(assessment.propagation, "outcome_table", None)
    if table is not None:
        console.result(table.sentence())
    order = assessment.sensitivity_order()
    if order is not None and not order.order_resolved and order.suggested_base_n:
        console.result(f"{order.sentence} To resolve it: --sensitivity-base "
                       f"{order.suggested_base_n}.")
    console.result(f"Report: {folder / 'index.html'}")
    band = getattr(assessment, "knowledge_band", None)
    # the last line: the verdict, then how sure it is over what we don't yet know
    console.result(assessment.verdict.sentence + (f" {band.sentence}" if band is not None else ""))


# =============================================================================== commands
def _cmd_assess(args, console: Console) -> int:
    if args.scenario is None:
        with demo_path(DEFAULT_DEMO) as path:
            scenario = _load(path)
    else:
        scenario = _load(args.scenario)
    out = _out_dir(args, scenario.name, console)
    with _executor(args) as executor:
        assessment = _assess(args, scenario, console, executor)
    mode = getattr(args, "go_requirements", "never")
    if mode == "always" or (mode == "unless-go" and assessment.verdict.verdict != "go"):
        from uq.studies.requirements import with_go_requirements

        console.stage("what would make it GO", 0, 1)
        assessment = with_go_requirements(assessment)
        console.stage("what would make it GO", 1, 1)
    folder = _report(args, assessment, out, console)
    _finish(console, assessment, folder)
    return 0


def _cmd_check(args, console: Console) -> int:
    from uq.simulate import nominal

    scenario = _load(args.scenario)
    result = nominal(scenario)
    row = result.outcome
    lines = [
        f"{scenario.name}: the scenario is valid ({args.scenario}).",
        f"Nominal result, every one of the {len(scenario.inputs)} uncertain inputs at its median "
        "(deterministic; run 'transit-risk assess' for the probabilities):",
        f"  route length      {result.route_km:,.1f} km over {len(scenario.legs)} legs",
        f"  range             {row['range_km']:,.1f} km"
        + (" (or more: censored at the model's look-ahead)" if row["range_censored"] else ""),
        f"  duration          {row['duration_days']:,.2f} days" + _limit_text(scenario),
        _margin_text(row),
        f"  success           {'yes' if result.success else 'no'}"
        + ("" if result.success else
           f" - {row['failure_mode']}" + (f" on leg {row['failing_leg']}" if row["failing_leg"] else "")),
        "  energy per km by leg:",
    ]
    width = max(len(n) for n in result.energy_per_km_Wh)
    for leg, value in result.energy_per_km_Wh.items():
        shown = f"{value:,.2f} Wh/km" if value == value and abs(value) != float("inf") else "- (not reached)"
        lines.append(f"    {leg:<{width}}  {shown}")
    console.result("\n".join(lines))
    return 0


def _margin_text(row) -> str:
    """The energy margin above the reserve, or the shortfall below it, in plain words."""
    margin, fraction = float(row["margin_Wh"]), float(row["margin_fraction"])
    share = (f"{100 * abs(fraction):.1f} % of usable energy" if abs(fraction) < 10
             else f"{abs(fraction):,.0f} times the usable energy")
    if margin >= 0:
        return f"  energy margin     {margin:,.0f} Wh above the reserve at arrival ({share})"
    return (f"  energy shortfall  {-margin:,.0f} Wh below the reserve ({share}): the vehicle "
            "runs out before the recovery point")


def _limit_text(scenario) -> str:
    limit = scenario.limits.max_duration_days
    if isinstance(limit, (int, float)):
        return "" if limit == float("inf") else f" (limit {limit:,.2f} days)"
    return f" (limit uncertain, median {limit.median:,.2f} days)"


def _cmd_sweep(args, console: Console) -> int:
    from uq.studies import sweeps as studies

    scenario = _load(args.scenario)
    field = args.field or next(iter(studies.SWEEPABLE[scenario.vehicle.kind]))
    suffix = "-sweep-" + field.split(".")[-1]
    out = _out_dir(args, scenario.name, console, suffix)
    # validate the field before the long stages
    studies.with_setpoint(scenario, field, args.values[0])
    with _executor(args) as executor:
        assessment = _assess(args, scenario, console, executor)
        console.message(f"sweeping {field} over {len(args.values)} values...")
        sweep = studies.sweep_setpoint(scenario, field, args.values,
                                       reference=assessment, executor=executor)
    folder = _report(args, assessment, out, console, sweep=sweep)
    console.result(sweep.summary.sentence)
    _finish(console, assessment, folder)
    return 0


def _cmd_compare(args, console: Console) -> int:
    from uq.studies import sweeps as studies

    a = _load(args.scenario)
    b = _load(args.other)
    problem = studies.comparability_problem(a, b)
    if problem is not None and not args.force:  # refused before any work
        raise studies.StudyError(f"not comparable: {problem} (pass --force to compare anyway)")
    if problem is not None:
        console.message(f"caution: compared although not comparable: {problem}")
    out = _out_dir(args, a.name, console, f"-vs-{b.name}")
    with _executor(args) as executor:
        assessment = _assess(args, a, console, executor)
        console.message(f"comparing {a.name} with {b.name} on shared samples...")
        comparison = studies.compare_scenarios(a, b, reference=assessment,
                                               force=args.force, executor=executor)
    folder = _report(args, assessment, out, console, comparison=comparison)
    console.result(comparison.comparison.sentence)
    _finish(console, assessment, folder)
    return 0


def _cmd_starter(args, console: Console) -> int:
    target = Path(args.path)
    _check_starter_target(target, args.overwrite)
    files = {target: starter_text(args.kind)}
    if args.kind == "study":  # the base scenario the study names, beside it
        base = target.with_name(f"{target.stem}_scenario.toml")
        _check_starter_target(base, args.overwrite)
        files[target] = files[target].replace(f'scenario = "{STUDY_STARTER_BASE}"',
                                              f'scenario = "{base.name}"', 1)
        files[base] = starter_text("propeller")
    for path, text in files.items():
        stem = re.sub(r"[^A-Za-z0-9_-]+", "-", path.stem).strip("-") or "my-mission"
        text = re.sub(r'(\[(?:scenario|study)\]\s*\nname\s*=\s*)"[^"\n]*"',
                      lambda m: f'{m.group(1)}"{stem}"', text, count=1)
        _write_starter(path, text)
    then = f"{PROG} study {target}" if args.kind == "study" else f"{PROG} check {target}"
    console.result(f"Wrote {', '.join(str(p) for p in files)} ({args.kind} starter). "
                   f"Edit it, then: {then}")
    return 0


def _check_starter_target(target: Path, overwrite: bool) -> None:
    """Refuse to replace a file without --overwrite, and anything but a .toml file ever."""
    if (target.exists() or target.is_symlink()) and not overwrite:
        raise FileExistsError(f"{str(target)!r} already exists; pass --overwrite to replace it")
    if target.is_dir():
        raise IsADirectoryError(f"{str(target)!r} is a folder; expected a file name such as "
                                "my_mission.toml")
    if (target.exists() or target.is_symlink()) and (
            target.suffix.lower() != ".toml" or target.is_symlink() or not target.is_file()):
        raise FileExistsError(f"{str(target)!r} exists and is not a .toml scenario file: "
                              "transit-risk never replaces it (not even with --overwrite)")


def _write_starter(target: Path, text: str) -> None:
    """Write ``text`` to ``target`` through a temporary file (no half-written file)."""
    target.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".partial", dir=target.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(text)
        os.chmod(tmp, 0o644)
        os.replace(tmp, target)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise


def _cmd_study(args, console: Console) -> int:
    from uq.report import write_study
    from uq.scenario.study_file import load_study
    from uq.studies.batch import run_study

    study = load_study(args.studyfile)
    out = _out_dir(args, study.name, console)
    total = args.samples if args.samples is not None else study.samples
    with _executor(args) as executor:
        result = run_study(study, samples=args.samples, seed=args.seed, executor=executor,
                           progress=lambda rows: console.stage("study", rows, total))
    console.close_bar()
    written = write_study(result, out, overwrite=args.overwrite, cautions=_CAUTIONS.seen,
                          notes=console.message)
    frame = result.to_frame()
    cols = ["variant", "p_success", "p_success_low", "p_success_high", "verdict",
            "contingency_days", "mean_margin_Wh", "top_input"]
    import pandas as pd

    with pd.option_context("display.width", 200, "display.max_columns", 20,
                           "display.max_colwidth", 60):
        console.result(frame[cols].to_string(index=False))
    console.result(f"Study: {written / 'index.html'} ({len(result.variants)} variants, "
                   f"{result.samples:,} samples each, seed {result.seed}, "
                   f"{result.elapsed_s:.1f} s)")
    return 0


# =============================================================================== warnings
class _CautionLines:
    """Warnings of a run as cautions: one plain stderr line each, once, never from workers.

    Installed as :func:`warnings.showwarning` by :func:`main`. A forked worker process
    inherits it and stays silent (its pid differs); spawned workers (Dask) inherit
    ``PYTHONWARNINGS=ignore`` from :func:`main`'s environment. The parent's own warnings
    are kept in ``seen`` (first line of each, in order) for the study page.
    """

    def __init__(self) -> None:
        self.pid = os.getpid()
        self.quiet = True
        self.seen: list[str] = []

    def reset(self, *, quiet: bool) -> None:
        self.pid, self.quiet, self.seen = os.getpid(), quiet, []

    def showwarning(self, message, category, filename, lineno, file=None, line=None):
        # deprecations inside the libraries we call are for their developers, not a caution
        # about the user's mission
        if issubclass(category, (DeprecationWarning, PendingDeprecationWarning)):
            return
        self.note(str(message).split("\n")[0])

    def note(self, text: str) -> None:
        """One caution line on stderr (once per text, not when quiet, not in a worker)."""
        if os.getpid() != self.pid:
            return
        text = one_line(text)
        if text in self.seen:
            return
        self.seen.append(text)
        if not self.quiet:
            print(f"{PROG}: caution: {text}", file=sys.stderr, flush=True)


_CAUTIONS = _CautionLines()


@contextmanager
def _warnings_as_cautions(quiet: bool):
    _CAUTIONS.reset(quiet=quiet)
    saved = os.environ.get("PYTHONWARNINGS")
    os.environ["PYTHONWARNINGS"] = "ignore"  # spawned workers (Dask) print nothing
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("default")
            warnings.showwarning = _CAUTIONS.showwarning
            yield
    finally:
        if saved is None:
            os.environ.pop("PYTHONWARNINGS", None)
        else:
            os.environ["PYTHONWARNINGS"] = saved


# =============================================================================== main
def _on_sigterm(signum, frame):
    raise _Terminated()


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit status (0 ok, 1 internal error, 2 user error,
    130 interrupted, 143 terminated)."""
    arguments = list(sys.argv[1:] if argv is None else argv)
    keep_blocks_in_heap()  # large temporaries reused, not page-faulted anew (uq/sampling/allocator.py)
    parser = build_parser()
    try:
        args = parser.parse_args(arguments)
    except SystemExit as exc:  # --help (0) or a usage error (2, already printed)
        return exc.code if isinstance(exc.code, int) else _EXIT_USER_ERROR
    console = Console(quiet=args.quiet)
    previous = None
    try:
        previous = signal.signal(signal.SIGTERM, _on_sigterm)
    except ValueError:  # not the main thread: leave SIGTERM alone
        previous = None
    try:
        with _warnings_as_cautions(args.quiet):
            return args.func(args, console)
    except BrokenPipeError:  # e.g. 'transit-risk check x.toml | head': stop quietly
        try:
            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, sys.stdout.fileno())
        except (OSError, ValueError):
            pass
        return _EXIT_INTERNAL
    except _Terminated:
        return _fail(console, args, "terminated (SIGTERM); no report was written",
                     _EXIT_SIGTERM, show_trace=False)
    except KeyboardInterrupt:
        return _fail(console, args, "interrupted; no report was written", _EXIT_SIGINT,
                     show_trace=False)
    except RecursionError as exc:  # deep nesting that slipped past a reader
        return _fail(console, args, f"input too deeply nested to read ({one_line(exc)})",
                     _EXIT_USER_ERROR)
    except (TransitRiskError, ValueError, OSError) as exc:  # ScenarioError is a ValueError
        return _fail(console, args, one_line(exc), _EXIT_USER_ERROR)
    except Exception as exc:  # a defect, not the user's fault
        return _fail(console, args, f"internal error: {type(exc).__name__}: {one_line(exc)}"
                     + ("" if args.debug else " (run with --debug for the traceback)"),
                     _EXIT_INTERNAL)
    finally:
        console.stop()
        if previous is not None:
            signal.signal(signal.SIGTERM, previous)


def _fail(console: Console, args, message: str, code: int, *, show_trace: bool = True) -> int:
    console.close_bar()
    if args.debug and show_trace:
        traceback.print_exc(file=sys.stderr)
    print(f"{PROG}: error: {message}", file=sys.stderr, flush=True)
    return code


if __name__ == "__main__":
    sys.exit(main())
