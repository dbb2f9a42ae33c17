"""A generated corpus of bad scenario and study files, run through the command line.

Every case must end with exit status 2 and exactly one stderr line ``transit-risk: error:``
naming the file (and the key, where the problem has one), no traceback, and nothing written.
The files are generated from the two bundled demos and a small study file by rule — type
swaps on every key, values outside the plausibility envelope, broken distributions, bad rank
correlations, unknown keys and inputs — plus special files (FIFO, a symbolic link to
/dev/zero, a folder), deep nesting, a file over the size limit and byte-order marks.

The corpus runs in process through ``uq.cli.main``: a light default subset, the rest with
``-m slow``; three cases also run as real processes, to see the true exit status and stderr.
``corpus_tally.py`` beside this file runs every case as a real process and counts the
outcomes (clean exit 2 / unclean exit 2 / crash / accepted).
"""
from __future__ import annotations

import dataclasses
import os
import re
import shutil
import subprocess
import sys
from dataclasses import dataclass
from pathlib import Path

import pytest

from uq.cli import main
from uq.scenario.envelope import COMMON, GLIDER, PROPELLER
from uq.scenario.reader import MAX_FILE_BYTES

ROOT = Path(__file__).resolve().parents[3]
DEMOS = {"propeller": ROOT / "configs" / "under_ice_section.toml",
         "glider": ROOT / "configs" / "glider_transit.toml"}

STUDY = """\
[study]
name = "corpus-study"
scenario = "base.toml"
samples = 64
seed = 3
scheme = "monte-carlo"

[grid]
"setpoint.speed_m_s" = [1.2, 1.4]
"battery.nominal_energy_Wh" = [16000.0]
"""


@dataclass(frozen=True)
class Case:
    id: str
    command: str  # "check" (scenario file) or "study"
    file: str  # name of the file inside the corpus folder ("" = made by a maker)
    text: str | bytes | None  # content; None when ``make`` builds it
    key: str | None  # a fragment the error line must contain (the key), or None
    make: str | None = None  # special file: fifo, devzero, folder, missing, huge


# ------------------------------------------------------------------ scanning the demo files
_SECTION = re.compile(r"^\s*\[(\[?)([A-Za-z_.]+)\]?\]\s*(#.*)?$")
_ASSIGN = re.compile(r"^(\s*)([A-Za-z_]+)(\s*=\s*)(.+?)\s*(#.*)?$")


def _lines_with_keys(text: str):
    """(line index, dotted key fragment, leaf key, value text) of every ``key = value``."""
    section, leg, counts = "", None, {}
    out = []
    for i, line in enumerate(text.splitlines()):
        m = _SECTION.match(line)
        if m:
            section = m.group(2)
            if m.group(1):
                counts[section] = counts.get(section, -1) + 1
            leg = None
            continue
        m = _ASSIGN.match(line)
        if not m or line.lstrip().startswith("#"):
            continue
        key, value = m.group(2), m.group(4)
        if section == "legs":
            if key == "name":
                leg = value.strip('"')
                fragment = f"legs[{counts['legs']}].name"
            else:
                fragment = f"legs.{leg}.{key}"
        elif section in ("decision.tests", "correlations"):
            fragment = f"{section}[{counts[section]}].{key}"
        else:
            fragment = f"{section}.{key}"
        out.append((i, fragment, key, value))
    return out


def _replace_value(text: str, index: int, new: str) -> str:
    lines = text.splitlines()
    m = _ASSIGN.match(lines[index])
    lines[index] = f"{m.group(1)}{m.group(2)}{m.group(3)}{new}"
    return "\n".join(lines) + "\n"


def _insert_after(text: str, index: int, new_line: str) -> str:
    lines = text.splitlines()
    lines.insert(index + 1, new_line)
    return "\n".join(lines) + "\n"


_TYPE_SWAPS = {"bool": "true", "array": "[1, 2]", "date": "1979-05-27", "table": "{x = 1}",
               "string": '"abc"'}
_STRING_KEYS = {"name", "description", "kind", "currency", "scheme", "reference"}


def _type_swaps(kind: str, text: str):
    for i, fragment, key, value in _lines_with_keys(text):
        for label, new in _TYPE_SWAPS.items():
            if label == "string" and key in _STRING_KEYS - {"kind", "currency", "scheme", "reference"}:
                continue  # any string is a valid name or description
            if label == "date" and re.fullmatch(r"\d{4}-\d{2}-\d{2}", value):
                continue  # a date in a date field is no type swap
            yield Case(f"{kind}-type-{fragment}-{label}", "check", f"{kind}.toml",
                       _replace_value(text, i, new), fragment)


def _envelope_values(kind: str, text: str):
    rows = {r.field: r for r in (*COMMON, *(PROPELLER if kind == "propeller" else GLIDER))}
    for i, fragment, key, value in _lines_with_keys(text):
        parts = fragment.split(".")
        field = f"legs.*.{parts[-1]}" if parts[0] == "legs" else fragment
        row = rows.get(field)
        if row is None:
            continue
        lo, hi = row.possible
        bad = ["-1e300", "nan", "-inf", "1" + "0" * 400]  # 10^400: beyond the float range
        if hi != float("inf"):  # (an unbounded field takes 1e300 as "never"; inf likewise)
            bad += ["1e300", repr(hi * 10 + 1)]
            if not field.endswith("seabed_m"):  # seabed_m = inf is "no seabed limit"
                bad.append("inf")
        if lo > 0 or lo < 0:
            bad.append(repr(lo - abs(lo) * 10 - 1))
        for v in bad:
            yield Case(f"{kind}-envelope-{fragment}-{v[:12]}", "check", f"{kind}.toml",
                       _replace_value(text, i, v), fragment)
        # a distribution reaching outside the possible range
        span = (hi - lo) if hi != float("inf") else 1e6
        mean = (lo + hi) / 2 if hi != float("inf") else lo + 1.0
        yield Case(f"{kind}-envelope-{fragment}-wide-normal", "check", f"{kind}.toml",
                   _replace_value(text, i, f'{{dist = "normal", mean = {mean!r}, sd = {span!r}}}'),
                   fragment)


_BROKEN_DISTRIBUTIONS = {
    "no-params": '{dist = "normal"}',
    "unknown-family": '{dist = "gaussian", mean = 1.0, sd = 0.1}',
    "negative-sd": '{dist = "normal", mean = 1.0, sd = -0.1}',
    "zero-sd": '{dist = "normal", mean = 1.0, sd = 0.0}',
    "pert-unordered": '{dist = "pert", min = 3.0, mode = 2.0, max = 1.0}',
    "uniform-empty": '{dist = "uniform", low = 1.0, high = 1.0}',
    "lognormal-negative": '{dist = "lognormal", median = -1.0, log_sd = 0.5}',
    "string-param": '{dist = "normal", mean = "one", sd = 0.1}',
    "unknown-param": '{dist = "normal", mean = 1.0, sd = 0.1, skew = 2.0}',
    "huge-params": '{dist = "normal", mean = 1e308, sd = 1e308}',
    "nan-param": '{dist = "uniform", low = nan, high = 1.0}',
    "no-dist": '{mean = 1.0, sd = 0.1}',
    "beta-bad": '{dist = "beta", alpha = -1.0, beta = 2.0, low = 0.0, high = 1.0}',
}


def _broken_distributions(kind: str, text: str):
    for i, fragment, key, value in _lines_with_keys(text):
        if not value.startswith("{dist"):
            continue
        for label, new in _BROKEN_DISTRIBUTIONS.items():
            yield Case(f"{kind}-dist-{fragment}-{label}", "check", f"{kind}.toml",
                       _replace_value(text, i, new), fragment)


def _unknown_keys(kind: str, text: str):
    seen = set()
    for i, fragment, key, value in _lines_with_keys(text):
        section = fragment.rsplit(".", 1)[0]
        if section in seen:
            continue
        seen.add(section)
        yield Case(f"{kind}-unknown-key-{section}", "check", f"{kind}.toml",
                   _insert_after(text, i, "colour_of_hull = 1.0"), "colour_of_hull")
    yield Case(f"{kind}-unknown-section", "check", f"{kind}.toml",
               text + "\n[weather]\nwind_m_s = 3.0\n", "weather")


def _bad_correlations(kind: str, text: str, inputs: tuple[str, str, str]):
    a, b, c = inputs
    bad = {
        "rank-above-1": f'inputs = ["{a}", "{b}"]\nrank = 1.5',
        "rank-below-minus-1": f'inputs = ["{a}", "{b}"]\nrank = -2.0',
        "rank-nan": f'inputs = ["{a}", "{b}"]\nrank = nan',
        "unknown-input": f'inputs = ["{a}", "vehicle.colour"]\nrank = 0.3',
        "same-input": f'inputs = ["{a}", "{a}"]\nrank = 0.3',
        "fixed-input": f'inputs = ["{a}", "battery.fade_per_day"]\nrank = 0.3',
        "one-input": f'inputs = ["{a}"]\nrank = 0.3',
        "rank-string": f'inputs = ["{a}", "{b}"]\nrank = "high"',
        "rank-distribution": f'inputs = ["{a}", "{b}"]\nrank = {{dist = "uniform", low = 0.1, high = 0.2}}',
    }
    for label, body in bad.items():
        yield Case(f"{kind}-corr-{label}", "check", f"{kind}.toml",
                   text + f"\n[[correlations]]\n{body}\n", "correlations")
    # three pairwise correlations that no positive-definite matrix can hold
    body = (f'[[correlations]]\ninputs = ["{a}", "{b}"]\nrank = 0.95\n'
            f'[[correlations]]\ninputs = ["{a}", "{c}"]\nrank = 0.95\n'
            f'[[correlations]]\ninputs = ["{b}", "{c}"]\nrank = -0.95\n')
    yield Case(f"{kind}-corr-not-positive-definite", "check", f"{kind}.toml",
               text + "\n" + body, "correlations")
    yield Case(f"{kind}-test-unknown-input", "check", f"{kind}.toml",
               text.replace("[analysis]", '[[decision.tests]]\nname = "x"\ncost = 1.0\n'
                            'inputs = ["vehicle.colour"]\n\n[analysis]', 1), "decision.tests")


def _whole_file_cases(kind: str, text: str):
    bom = "\ufeff".encode()
    yield Case(f"{kind}-bom-and-bad-value", "check", f"{kind}.toml",
               bom + _replace_value(text, _lines_with_keys(text)[3][0], "true").encode(),
               _lines_with_keys(text)[3][1])
    yield Case(f"{kind}-syntax-error", "check", f"{kind}.toml", text + "\nthis is = = not toml\n", None)
    yield Case(f"{kind}-bad-utf8", "check", f"{kind}.toml", text.encode() + b"\n# \xff\xfe\n", None)
    yield Case(f"{kind}-duplicate-key", "check", f"{kind}.toml",
               text.replace("[battery]\n", "[battery]\nreserve_fraction = 0.1\n", 1), None)
    yield Case(f"{kind}-missing-legs", "check", f"{kind}.toml",
               re.sub(r"\[\[legs\]\][\s\S]*?(?=\n\[\[correlations|\n\[decision)", "", text), "legs")
    yield Case(f"{kind}-deep-array", "check", f"{kind}.toml",
               text + "\ndeep = " + "[" * 5000 + "]" * 5000 + "\n", None)
    yield Case(f"{kind}-deep-inline-table", "check", f"{kind}.toml",
               text + "\ndeep = " + "{a = " * 3000 + "1" + "}" * 3000 + "\n", None)
    yield Case(f"{kind}-deep-dotted-key", "check", f"{kind}.toml",
               text + "\n[vehicle.hull]\n" + ".".join(["a"] * 3000) + " = 1\n", None)
    yield Case(f"{kind}-huge-integer", "check", f"{kind}.toml",
               _replace_value(text, _lines_with_keys(text)[4][0], "9" * 5000), None)
    yield Case(f"{kind}-empty", "check", f"{kind}.toml", "", None)


def _special_files():
    for make in ("fifo", "devzero", "folder", "missing", "huge"):
        yield Case(f"special-{make}", "check", f"special-{make}.toml", None, None, make)
        yield Case(f"special-study-{make}", "study", f"special-study-{make}.toml", None, None, make)


def _study_cases():
    def swap(old: str, new: str) -> str:
        assert old in STUDY
        return STUDY.replace(old, new, 1)

    cases = {
        "name-bool": (swap('name = "corpus-study"', "name = true"), "study.name"),
        "no-scenario": (swap('scenario = "base.toml"\n', ""), "study.scenario"),
        "scenario-missing-file": (swap('"base.toml"', '"nowhere.toml"'), "study.scenario"),
        "scenario-folder": (swap('"base.toml"', '"."'), "study.scenario"),
        "scenario-fifo": (swap('"base.toml"', '"pipe.fifo"'), "study.scenario"),
        "scenario-devzero": (swap('"base.toml"', '"zero.link"'), "study.scenario"),
        "samples-negative": (swap("samples = 64", "samples = -1"), "study.samples"),
        "samples-string": (swap("samples = 64", 'samples = "many"'), "study.samples"),
        "seed-float": (swap("seed = 3", "seed = 3.5"), "study.seed"),
        "scheme-unknown": (swap('"monte-carlo"', '"sobolev"'), "study.scheme"),
        "unknown-study-key": (swap("seed = 3\n", "seed = 3\ncolour = 1\n"), "colour"),
        "unknown-section": (STUDY + "\n[extra]\nx = 1\n", "extra"),
        "grid-not-list": (swap("[1.2, 1.4]", "1.2"), "setpoint.speed_m_s"),
        "grid-empty": (swap("[1.2, 1.4]", "[]"), "setpoint.speed_m_s"),
        "grid-unknown-field": (swap('"setpoint.speed_m_s"', '"setpoint.sped_m_s"'), "sped_m_s"),
        "grid-unknown-leg": (swap('"setpoint.speed_m_s" = [1.2, 1.4]',
                                  '"legs.nowhere.length_km" = [10.0]'), "nowhere"),
        "grid-scenario-field": (swap('"setpoint.speed_m_s"', '"scenario.name"'), "scenario.name"),
        "grid-out-of-envelope": (swap("[1.2, 1.4]", "[1.2, 1e6]"), "setpoint.speed_m_s"),
        "grid-negative-speed": (swap("[1.2, 1.4]", "[-1.0]"), "setpoint.speed_m_s"),
        "grid-type-swap": (swap("[1.2, 1.4]", '["fast"]'), "setpoint.speed_m_s"),
        "grid-wide-current": (swap('"setpoint.speed_m_s" = [1.2, 1.4]',
                                   '"legs.launch_approach.current_along_m_s" = '
                                   '[{dist = "normal", mean = 0.0, sd = 5.0}]'),
                              "current_along_m_s"),
        "grid-broken-distribution": (swap("[1.2, 1.4]", '[{dist = "normal", sd = -1.0}]'),
                                     "setpoint.speed_m_s"),
        "grid-and-variants": (STUDY + '\n[[variants]]\nname = "a"\n', "variants"),
        "variant-no-name": (STUDY.split("[grid]")[0] + '[[variants]]\noverrides = {}\n',
                            "variants"),
        "variant-bad-override": (STUDY.split("[grid]")[0] + '[[variants]]\nname = "a"\n'
                                 'overrides = {"battery.nominal_energy_Wh" = -5.0}\n',
                                 "nominal_energy_Wh"),
        "variant-huge-override": (STUDY.split("[grid]")[0] + '[[variants]]\nname = "a"\n'
                                  'overrides = {"vehicle.hull.diameter_m" = 1e300}\n',
                                  "diameter_m"),
        "variant-duplicate-names": (STUDY.split("[grid]")[0] + '[[variants]]\nname = "a"\n'
                                    '[[variants]]\nname = "a"\n', "variants"),
        "deep-nesting": (STUDY + "\ndeep = " + "[" * 5000 + "]" * 5000 + "\n", None),
        "bom-and-bad": ("\ufeff" + swap("samples = 64", "samples = -1"), "study.samples"),
        "syntax": (STUDY + "\n[grid\n", None),
    }
    for label, (text, key) in cases.items():
        yield Case(f"study-{label}", "study", "study.toml", text, key)


def _corpus() -> list[Case]:
    cases: list[Case] = []
    for kind, path in DEMOS.items():
        text = path.read_text(encoding="utf-8")
        cases += _type_swaps(kind, text)
        cases += _envelope_values(kind, text)
        cases += _broken_distributions(kind, text)
        cases += _unknown_keys(kind, text)
        inputs = (("legs.skerrow_ice_crossing.current_along_m_s", "vehicle.propulsive_efficiency",
                   "battery.cold_derating") if kind == "propeller" else
                  ("vehicle.pump_efficiency", "vehicle.polar.zero_lift_drag", "battery.cold_derating"))
        cases += _bad_correlations(kind, text, inputs)
        cases += _whole_file_cases(kind, text)
    cases += _special_files()
    cases += _study_cases()
    seen: dict[str, int] = {}
    unique = []
    for c in cases:  # a key repeated in an array of tables gets a counter
        n = seen[c.id] = seen.get(c.id, 0) + 1
        unique.append(c if n == 1 else dataclasses.replace(c, id=f"{c.id}-{n}"))
    assert len({c.id for c in unique}) == len(unique), "case ids must be unique"
    return unique


CORPUS = _corpus()
_BULK = ("-type-", "-envelope-", "-dist-")  # the large rule-generated families
_EVERY = 20  # the default run takes every 20th case of those families, the slow run the rest


def _default(case: Case, index: int) -> bool:
    return not any(b in case.id for b in _BULK) or index % _EVERY == 0


DEFAULT = [c for i, c in enumerate(CORPUS) if _default(c, i)]
SLOW = [c for i, c in enumerate(CORPUS) if not _default(c, i)]


def test_the_corpus_is_large_enough():
    # the default run stays light (a few seconds); -m slow and corpus_tally.py run all of it
    assert len(DEFAULT) >= 200, len(DEFAULT)
    assert len(CORPUS) >= 2000, len(CORPUS)


# ------------------------------------------------------------------ running a case
@pytest.fixture(scope="module")
def corpus_dir(tmp_path_factory):
    folder = tmp_path_factory.mktemp("corpus")
    shutil.copy(DEMOS["propeller"], folder / "base.toml")
    os.mkfifo(folder / "pipe.fifo")
    (folder / "zero.link").symlink_to("/dev/zero")
    (folder / "work").mkdir()
    return folder


def _materialise(case: Case, folder: Path) -> Path:
    path = folder / f"{case.id}.toml" if case.make is None else folder / case.file
    if case.make is None:
        data = case.text.encode("utf-8") if isinstance(case.text, str) else case.text
        path.write_bytes(data)
    elif case.make == "fifo" and not path.exists():
        os.mkfifo(path)
    elif case.make == "devzero" and not path.is_symlink():
        path.symlink_to("/dev/zero")
    elif case.make == "folder":
        path.mkdir(exist_ok=True)
    elif case.make == "huge" and not path.exists():
        with path.open("wb") as fh:  # a valid-looking comment, just too long
            fh.write(b"# " + b"x" * (MAX_FILE_BYTES + 10) + b"\n")
    return path


def _snapshot(folder: Path) -> set[str]:
    return {str(p.relative_to(folder)) for p in folder.rglob("*")}


@pytest.mark.parametrize("case", [
    *DEFAULT, *(pytest.param(c, marks=pytest.mark.slow) for c in SLOW)],
    ids=[c.id for c in (*DEFAULT, *SLOW)])
def test_bad_input_is_refused_with_one_line(case, corpus_dir, capsys, monkeypatch):
    path = _materialise(case, corpus_dir)
    work = corpus_dir / "work"
    monkeypatch.chdir(work)
    out = work / "out"
    before = _snapshot(corpus_dir)
    argv = [case.command, str(path)]
    if case.command == "study":
        argv += ["--quiet", "--out", str(out)]
    status = main(argv)
    err = capsys.readouterr().err
    assert status == 2, f"exit {status}: {err}"
    lines = err.splitlines()
    assert len(lines) == 1, err
    assert lines[0].startswith("transit-risk: error: ") and "Traceback" not in err
    assert "internal error" not in lines[0]
    assert path.name in lines[0], lines[0]
    if case.key is not None:
        assert case.key in lines[0], lines[0]
    assert _snapshot(corpus_dir) == before  # nothing written


# ------------------------------------------------------------------ byte-order marks
def test_a_byte_order_mark_is_accepted(tmp_path, capsys):
    path = tmp_path / "bom.toml"
    path.write_bytes("\ufeff".encode() + DEMOS["propeller"].read_bytes())
    assert main(["check", str(path), "--quiet"]) == 0
    assert capsys.readouterr().err == ""


# ------------------------------------------------------------------ real processes
# (corpus_tally.py runs every case as a real process; here the ones a process must show:
# a FIFO that could block, /dev/zero that could fill memory, nesting that could blow the stack)
_REAL = ["special-fifo", "special-devzero", "propeller-deep-array"]


@pytest.mark.parametrize("case_id", _REAL)
def test_real_processes_exit_2_with_one_line(case_id, corpus_dir):
    case = next(c for c in CORPUS if c.id == case_id)
    path = _materialise(case, corpus_dir)
    argv = [case.command, str(path)] + (["--quiet", "--out", str(corpus_dir / "work" / "o")]
                                        if case.command == "study" else [])
    proc = subprocess.run([sys.executable, "-m", "uq.cli", *argv], capture_output=True,
                          text=True, timeout=60, cwd=corpus_dir / "work")
    assert proc.returncode == 2, proc.stderr
    assert len(proc.stderr.splitlines()) == 1 and "Traceback" not in proc.stderr
