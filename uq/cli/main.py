"""Command line of transit-risk: a thin layer over :func:`uq.studies.assess.assess` and the report.

Sub-commands::

    transit-risk assess [SCENARIO]          full assessment and report (bundled demo by default)
    transit-risk check SCENARIO             validate; print the nominal (all-medians) result
    transit-risk sweep SCENARIO --values .. P(success) over setpoint values, with the report
    transit-risk compare SCENARIO_A SCENARIO_B   paired comparison of two configurations
    transit-risk starter PATH               write a commented starter scenario to edit

Errors in what the user gave (scenario file, options, output folder) print one line
``transit-risk: error: <message>`` on stderr and exit with status 2 (``--debug`` adds the
traceback). An interrupt exits 130 (SIGINT) or 143 (SIGTERM) and leaves no partial report.
"""
from __future__ import annotations

from uq.errors import InputError

import argparse
import os
import re
import signal
import sys
import tempfile
import traceback
import warnings
from pathlib import Path
from typing import Sequence

from uq.scenario.demos import DEMOS, demo_path, demo_text

__all__ = ["main", "build_parser", "DEMOS"]

PROG = "transit-risk"

DEFAULT_DEMO = DEMOS["propeller"]

_EXIT_USER_ERROR = 2
_EXIT_INTERNAL = 1
_EXIT_SIGINT = 130
_EXIT_SIGTERM = 143

_STAGE_LABELS = {
    "propagation": "propagation (samples)",
    "sensitivity": "sensitivity (Saltelli + polynomial chaos)",
    "decisions": "decisions (verdict, contingency, tests)",
}


class _Terminated(KeyboardInterrupt):
    """SIGTERM, raised in the main thread so that clean-up runs as for Ctrl-C."""


class _UsageError(InputError):
    """A user error found by the CLI itself (not by the library)."""


# =============================================================================== parser
class _Parser(argparse.ArgumentParser):
    """argparse, but a usage error is one line ``transit-risk: error: ...`` (exit 2)."""

    def error(self, message: str):  # noqa: D401 - argparse API
        self.exit(_EXIT_USER_ERROR, f"{PROG}: error: {_one_line(message)}\n")


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
    run.add_argument("--workers", type=_positive_int, metavar="W", default=1,
                     help="worker processes for the propagation (default 1); results do not "
                          "depend on it")
    run.add_argument("--out", metavar="DIR",
                     help="report folder (default reports/<scenario name>/)")
    run.add_argument("--overwrite", action="store_true",
                     help="replace an existing report folder")

    parser = _Parser(
        prog=PROG,
        description="Will the vehicle reach its recovery point with energy to spare, and how "
                    "sure are we? Probabilistic range and energy risk for AUVs and gliders.",
        epilog="Run 'transit-risk COMMAND --help' for the options of a command.")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", required=True,
                                parser_class=_Parser)

    p = sub.add_parser("assess", parents=[output, run],
                       help="full assessment and report of a scenario",
                       description="Run the full assessment of SCENARIO (default: the bundled "
                                   "under-ice demo) and write the report folder.")
    p.add_argument("scenario", nargs="?", metavar="SCENARIO",
                   help=f"scenario file (TOML); default: the bundled demo {DEFAULT_DEMO}")
    p.set_defaults(func=_cmd_assess)

    p = sub.add_parser("check", parents=[output],
                       help="validate a scenario and print its nominal result",
                       description="Validate SCENARIO and print the deterministic result with "
                                   "every uncertain input at its median.")
    p.add_argument("scenario", metavar="SCENARIO", help="scenario file (TOML)")
    p.set_defaults(func=_cmd_check)

    p = sub.add_parser("sweep", parents=[output, run],
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

    p = sub.add_parser("compare", parents=[output, run],
                       help="paired comparison of two configurations",
                       description="Assess SCENARIO_A and compare it with SCENARIO_B on shared "
                                   "samples; the report of A gets a comparison section.")
    p.add_argument("scenario", metavar="SCENARIO_A", help="scenario file (TOML)")
    p.add_argument("other", metavar="SCENARIO_B", help="scenario file (TOML)")
    p.set_defaults(func=_cmd_compare)

    p = sub.add_parser("starter", parents=[output],
                       help="write a commented starter scenario to edit",
                       description="Write a starter scenario (a commented copy of a bundled "
                                   "demo) to PATH.")
    p.add_argument("path", metavar="PATH", help="file to write (.toml)")
    p.add_argument("--kind", choices=sorted(DEMOS), default="propeller",
                   help="vehicle kind of the starter (default propeller)")
    p.add_argument("--overwrite", action="store_true", help="replace an existing file")
    p.set_defaults(func=_cmd_starter)

    sub.add_parser("study", add_help=False,
                   help="batch study of many scenario variants on shared samples "
                        "(see 'transit-risk study --help')")
    return parser


# =============================================================================== output
def _one_line(text: object) -> str:
    return " ".join(str(text).split()) or "unknown error"


class _Console:
    """Progress on stderr: tqdm bars on a terminal, one-line stage messages when piped."""

    def __init__(self, *, quiet: bool, stream=None):
        self.stream = stream if stream is not None else sys.stderr
        self.quiet = quiet
        try:
            self.tty = bool(self.stream.isatty())
        except (AttributeError, ValueError):
            self.tty = False
        self._bar = None
        self._stage = None
        self._ticker = None

    def _tick(self, stop) -> None:
        """Refresh the open bar twice a second so elapsed time moves in long stages."""
        while not stop.wait(0.5):
            bar = self._bar
            if bar is not None:
                try:
                    bar.refresh()
                except Exception:  # a bar closed under our feet: nothing to show
                    pass

    def _start_ticker(self) -> None:
        if self._ticker is None:
            import threading

            stop = threading.Event()
            thread = threading.Thread(target=self._tick, args=(stop,), daemon=True)
            thread.start()
            self._ticker = (stop, thread)

    def stop(self) -> None:
        """Close the bar and stop the refresher thread."""
        self.close_bar()
        if self._ticker is not None:
            self._ticker[0].set()
            self._ticker[1].join(timeout=1.0)
            self._ticker = None

    def message(self, text: str) -> None:
        """A one-line status message (not when quiet)."""
        if self.quiet:
            return
        self.close_bar()
        print(f"{PROG}: {text}", file=self.stream, flush=True)

    def stage(self, name: str, done: int, total: int) -> None:
        """Progress callback of :func:`uq.studies.assess.assess`."""
        if self.quiet:
            return
        label = _STAGE_LABELS.get(name, name)
        if name != self._stage:
            self.close_bar()
            self._stage = name
            if self.tty:
                from tqdm import tqdm

                self._start_ticker()
                self._bar = tqdm(total=total, desc=label, file=self.stream, leave=True,
                                 unit="" if total <= 1 else " samples", dynamic_ncols=True,
                                 bar_format=None if total > 1 else "{desc}: {elapsed}")
            else:
                print(f"{PROG}: {label}...", file=self.stream, flush=True)
        if self._bar is not None:
            self._bar.n = min(done, self._bar.total or done)
            self._bar.refresh()

    def step(self, text: str) -> None:
        """Progress callback of :func:`uq.report.write_report`."""
        if self.quiet:
            return
        if self._stage != "report":
            self.close_bar()
            self._stage = "report"
            if self.tty:
                from tqdm import tqdm

                self._bar = tqdm(total=4, desc="report", file=self.stream, leave=True,
                                 dynamic_ncols=True, bar_format="{desc}: {n}/{total} {postfix} [{elapsed}]")
            else:
                print(f"{PROG}: writing the report...", file=self.stream, flush=True)
        if self._bar is not None:
            self._bar.set_postfix_str(text, refresh=False)
            if self._bar.n < self._bar.total:
                self._bar.update(1)
            else:
                self._bar.refresh()

    def close_bar(self) -> None:
        if self._bar is not None:
            self._bar.close()
            self._bar = None
        self._stage = None

    def result(self, text: str) -> None:
        """A result line on stdout (not when quiet)."""
        if not self.quiet:
            self.close_bar()
            print(text, flush=True)


# =============================================================================== helpers
def _load(path: str | os.PathLike):
    from uq.scenario import load_scenario

    return load_scenario(path)


def _out_dir(args, scenario, suffix: str = "") -> Path:
    from uq.report import default_report_dir

    if args.out:
        return Path(args.out)
    return default_report_dir(scenario.name, suffix=suffix)


def _assess(args, scenario, console: _Console):
    from uq.studies.assess import assess

    return assess(scenario, samples=args.samples, seed=args.seed,
                  sensitivity_base_n=args.sensitivity_base, workers=args.workers,
                  progress=console.stage)


def _report(args, assessment, out: Path, console: _Console, **extra) -> Path:
    from uq.report import write_report

    folder = write_report(assessment, out, overwrite=args.overwrite, progress=console.step,
                          **extra)
    console.close_bar()
    return folder


def _finish(console: _Console, assessment, folder: Path) -> None:
    console.result(assessment.verdict.sentence)
    table = getattr(assessment.propagation, "outcome_table", None)
    if table is not None:
        console.result(table.sentence())
    console.result(f"Report: {folder / 'index.html'}")


# =============================================================================== commands
def _cmd_assess(args, console: _Console) -> int:
    if args.scenario is None:
        with demo_path(DEFAULT_DEMO) as path:
            scenario = _load(path)
    else:
        scenario = _load(args.scenario)
    out = _out_dir(args, scenario)
    _check_out(out, args.overwrite)
    assessment = _assess(args, scenario, console)
    folder = _report(args, assessment, out, console)
    _finish(console, assessment, folder)
    return 0


def _cmd_check(args, console: _Console) -> int:
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
        f"  energy margin     {row['margin_Wh']:,.0f} Wh at arrival "
        f"({100 * row['margin_fraction']:.1f} % of usable energy, above the reserve)",
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


def _limit_text(scenario) -> str:
    limit = scenario.limits.max_duration_days
    if isinstance(limit, (int, float)):
        return "" if limit == float("inf") else f" (limit {limit:,.2f} days)"
    return f" (limit uncertain, median {limit.median:,.2f} days)"


def _cmd_sweep(args, console: _Console) -> int:
    from uq.studies import sweeps as studies

    scenario = _load(args.scenario)
    field = args.field or next(iter(studies.SWEEPABLE[scenario.vehicle.kind]))
    suffix = "-sweep-" + field.split(".")[-1]
    out = _out_dir(args, scenario, suffix)
    _check_out(out, args.overwrite)
    # validate the field before the long stages
    studies.with_setpoint(scenario, field, args.values[0])
    assessment = _assess(args, scenario, console)
    console.message(f"sweeping {field} over {len(args.values)} values...")
    sweep = studies.sweep_setpoint(scenario, field, args.values, samples=args.samples,
                                   seed=args.seed)
    folder = _report(args, assessment, out, console, sweep=sweep)
    console.result(sweep.summary.sentence)
    _finish(console, assessment, folder)
    return 0


def _cmd_compare(args, console: _Console) -> int:
    from uq.studies import sweeps as studies

    a = _load(args.scenario)
    b = _load(args.other)
    out = _out_dir(args, a, f"-vs-{b.name}")
    _check_out(out, args.overwrite)
    assessment = _assess(args, a, console)
    console.message(f"comparing {a.name} with {b.name} on shared samples...")
    comparison = studies.compare_scenarios(a, b, samples=args.samples, seed=args.seed)
    folder = _report(args, assessment, out, console, comparison=comparison)
    console.result(comparison.comparison.sentence)
    _finish(console, assessment, folder)
    return 0


def _cmd_starter(args, console: _Console) -> int:
    target = Path(args.path)
    if (target.exists() or target.is_symlink()) and not args.overwrite:
        raise FileExistsError(f"{str(target)!r} already exists; pass --overwrite to replace it")
    if target.is_dir():
        raise IsADirectoryError(f"{str(target)!r} is a folder; expected a file name such as "
                                "my_mission.toml")
    demo = DEMOS[args.kind]
    text = demo_text(demo)
    stem = re.sub(r"[^A-Za-z0-9_-]+", "-", target.stem).strip("-") or "my-mission"
    text = re.sub(r'(\[scenario\]\s*\nname\s*=\s*)"[^"\n]*"', lambda m: f'{m.group(1)}"{stem}"',
                  text, count=1)
    header = (
        f"# Starter scenario ({args.kind} vehicle) written by '{PROG} starter' from the bundled\n"
        f"# demo {demo}. Everything below is an invented example: replace the vehicle, battery,\n"
        "# setpoint, legs and decision values with your own, then run\n"
        f"#   {PROG} check {target.name}     (validate, nominal result)\n"
        f"#   {PROG} assess {target.name}    (probabilities and the report)\n#\n"
    )
    target.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".partial", dir=target.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(header + text)
        os.chmod(tmp, 0o644)
        os.replace(tmp, target)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise
    console.result(f"Wrote {target} ({args.kind} starter). Edit it, then: {PROG} check {target}")
    return 0


def _check_out(out: Path, overwrite: bool) -> None:
    """Refuse an existing report folder before computing anything."""
    from uq.report.writer import ReportExistsError

    if (out.exists() or out.is_symlink()) and not overwrite:
        if not (out.is_dir() and not any(out.iterdir())):
            raise ReportExistsError(
                f"report folder {str(out)!r} already exists; choose another --out or pass "
                "--overwrite to replace it")


# =============================================================================== main
def _on_sigterm(signum, frame):
    raise _Terminated()


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit status (0 ok, 1 internal error, 2 user error,
    130 interrupted, 143 terminated)."""
    arguments = list(sys.argv[1:] if argv is None else argv)
    if arguments[:1] == ["study"]:  # batch studies have their own parser (uq.studies.batch)
        from uq.studies.batch import study_main

        return study_main(arguments[1:])
    parser = build_parser()
    try:
        args = parser.parse_args(arguments)
    except SystemExit as exc:  # --help (0) or a usage error (2, already printed)
        return exc.code if isinstance(exc.code, int) else _EXIT_USER_ERROR
    console = _Console(quiet=args.quiet)
    previous = None
    try:
        previous = signal.signal(signal.SIGTERM, _on_sigterm)
    except ValueError:  # not the main thread: leave SIGTERM alone
        previous = None
    try:
        with warnings.catch_warnings():
            if args.quiet:
                warnings.simplefilter("ignore")
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
    except (ValueError, OSError) as exc:  # ScenarioError is a ValueError
        return _fail(console, args, _one_line(exc), _EXIT_USER_ERROR)
    except Exception as exc:  # a defect, not the user's fault
        return _fail(console, args, f"internal error: {type(exc).__name__}: {_one_line(exc)}"
                     + ("" if args.debug else " (run with --debug for the traceback)"),
                     _EXIT_INTERNAL)
    finally:
        console.stop()
        if previous is not None:
            signal.signal(signal.SIGTERM, previous)


def _fail(console: _Console, args, message: str, code: int, *, show_trace: bool = True) -> int:
    console.close_bar()
    if args.debug and show_trace:
        traceback.print_exc(file=sys.stderr)
    print(f"{PROG}: error: {message}", file=sys.stderr, flush=True)
    return code


if __name__ == "__main__":
    sys.exit(main())
