"""One vocabulary: every probability and count of one run reads the same in summary.json, the
CSV tables and the HTML page (issue: the sweep said 31.0 % beside the verdict's 30.9 %, and
"arrived" counted successes on one table and arrivals on another).

One run of the under-ice demo with a sweep that includes the scenario's own setpoint and a
comparison with a bigger pack, written by :func:`uq.write_report`; the page is parsed with
the standard library's HTML parser (its text and its table cells), not with the package's own
formatting functions. Tolerances: a percentage shown with d decimals is within half a unit
of its last digit of the fraction in summary.json (derived: rounding); counts are exact.
"""
from __future__ import annotations

import csv
import json
import re
import tomllib
from html.parser import HTMLParser
from pathlib import Path

import pytest

from physics.states import FAILURE_MODE_NAMES, FailureMode
from uq.report import write_report
from uq.scenario import load_scenario, parse_scenario
from uq.studies.assess import assess
from uq.studies.sweeps import compare_scenarios, sweep_setpoint

CONFIGS = Path(__file__).resolve().parents[3] / "configs"
GLIDER_ONLY = [FAILURE_MODE_NAMES[m] for m in (FailureMode.INFEASIBLE_GLIDE,
                                               FailureMode.CANNOT_TRIM,
                                               FailureMode.CANNOT_HOLD_FLIGHT)]


class _Page(HTMLParser):
    """Text and table rows (cell texts) of every <section id=...> of a page."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.sections: dict[str, dict] = {}
        self.current = None
        self.row = None
        self.cell = None

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        if tag == "section":
            self.current = self.sections.setdefault(attrs.get("id", ""),
                                                    {"text": [], "rows": []})
        elif tag == "tr" and self.current is not None:
            self.row = []
        elif tag in ("td", "th") and self.row is not None:
            self.cell = []
        elif tag == "br" and self.cell is not None:
            self.cell.append(" ")

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self.cell is not None:
            self.row.append(" ".join("".join(self.cell).split()))
            self.cell = None
        elif tag == "tr" and self.row is not None:
            self.current["rows"].append(self.row)
            self.row = None
        elif tag == "section":
            self.current = None

    def handle_data(self, data):
        if self.current is not None:
            self.current["text"].append(data)
        if self.cell is not None:
            self.cell.append(data)

    def text(self, section: str) -> str:
        return " ".join("".join(self.sections[section]["text"]).split())

    def rows(self, section: str) -> list[list[str]]:
        return self.sections[section]["rows"]


def _percent(text: str) -> tuple[float, int]:
    """'83.2' -> (0.832, 1 decimal)."""
    decimals = len(text.split(".")[1]) if "." in text else 0
    return float(text) / 100.0, decimals


def _agrees(shown: str, fraction: float) -> bool:
    value, decimals = _percent(shown)
    return abs(value - fraction) <= 0.5 * 10.0 ** (-decimals - 2) + 1e-12


def _count(text: str) -> int:
    return int(text.replace(",", ""))


def _csv(path: Path) -> list[dict]:
    with path.open(newline="", encoding="utf-8") as f:
        return list(csv.DictReader(f))


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    scenario = load_scenario(CONFIGS / "under_ice_section.toml")
    doc = tomllib.loads((CONFIGS / "under_ice_section.toml").read_text())
    doc["scenario"]["name"] = "bigger-pack"
    doc["battery"]["nominal_energy_Wh"] = 17000.0
    other = parse_scenario(doc)
    a = assess(scenario, samples=2048, seed=5, sensitivity_base_n=0)
    own = scenario.setpoint.speed_m_s
    sweep = sweep_setpoint(scenario, "setpoint.speed_m_s", [1.1, own], settings=a.settings)
    pair = compare_scenarios(scenario, other, settings=a.settings)
    folder = write_report(a, tmp_path_factory.mktemp("vocab") / "report", sweep=sweep,
                          comparison=pair)
    page = _Page()
    page.feed((folder / "index.html").read_text(encoding="utf-8"))
    summary = json.loads((folder / "summary.json").read_text(encoding="utf-8"))
    return {"folder": folder, "page": page, "summary": summary, "own": own}


def test_success_count_and_probability_agree_in_json_and_csv(run):
    s, folder = run["summary"], run["folder"]
    n = s["p_success"]["n"]
    successes = round(s["p_success"]["estimate"] * n)
    assert s["failure_modes"]["samples"] - s["failure_modes"]["failures"] == successes
    outcome = {r["class"]: r for r in s["outcomes"]}
    assert outcome["success"]["count"] == successes
    # the failure probability is 1 - P(success), bounds swapped: one computation
    assert s["failure_modes"]["failure_probability_low"] == pytest.approx(
        1.0 - s["p_success"]["upper"], abs=1e-15)
    sweep = {float(r["speed_m_s"]): r for r in _csv(folder / "sweep.csv")}[run["own"]]
    for key in ("p_success", "p_success_low", "p_success_high"):
        # exact: the sweep runs on the assessment's own samples with its estimator
        assert float(sweep[key]) == s["p_success"][key.replace("p_success", "estimate")
                                                   .replace("estimate_low", "lower")
                                                   .replace("estimate_high", "upper")]
    assert int(sweep["successes"]) == successes
    first = _csv(folder / "comparison.csv")[0]
    assert first["configuration"] == s["scenario"]["name"]
    assert int(float(first["successes"])) == successes
    assert float(first["p_success"]) == s["p_success"]["estimate"]
    assert float(first["p_success_low"]) == s["p_success"]["lower"]
    assert first["verdict"] == s["verdict"]
    assert s["comparison"]["p_success_a"] == s["p_success"]["estimate"]


def test_reached_recovery_is_one_count_everywhere(run):
    s, folder = run["summary"], run["folder"]
    n = s["p_reached_recovery"]["n"]
    reached = round(s["p_reached_recovery"]["estimate"] * n)
    assert s["contingency"]["reached_recovery"] == reached
    assert s["contingency"]["not_reached_recovery"] == n - reached
    assert s["duration_days"]["reached"] == reached
    sweep = {float(r["speed_m_s"]): r for r in _csv(folder / "sweep.csv")}[run["own"]]
    assert int(sweep["reached_recovery"]) == reached
    assert "p_arrive" not in s and "probability_of_arrival" not in s["contingency"]


def test_failure_table_matches_json_and_lists_only_possible_modes(run):
    s, folder = run["summary"], run["folder"]
    rows = _csv(folder / "failures.csv")
    modes = {r["name"]: int(r["count"]) for r in rows if r["kind"] == "mode"}
    assert modes == {m["name"]: m["count"] for m in s["failure_modes"]["modes"]}
    assert sum(modes.values()) == s["failure_modes"]["failures"]
    assert not set(GLIDER_ONLY) & set(modes)  # a propeller vehicle cannot fail to trim
    table = run["page"].rows("failures")
    shown = {r[1] for r in table[1:]}
    assert not set(GLIDER_ONLY) & shown
    for r in table[1:]:
        if r[0] == "mode":
            assert _count(r[2]) == modes[r[1]]


def test_every_p_success_on_the_page_is_the_verdicts(run):
    s, page = run["summary"], run["page"]
    p = s["p_success"]
    own_sections = [k for k in page.sections
                    if k not in ("sweep", "comparison", "tests", "inputs", "go-requirements",
                                 "sensitivity", "")]
    seen = 0
    for section in own_sections:
        text = page.text(section)
        for m in re.finditer(r"P\(success\)\s*[=(]?\s*(\d+(?:\.\d+)?) %"
                             r"(?:\s*\(\d+ % CI (\d+(?:\.\d+)?)\D(\d+(?:\.\d+)?) %)?", text):
            seen += 1
            assert _agrees(m.group(1), p["estimate"]), (section, m.group(0))
            if m.group(2):
                assert _agrees(m.group(2), p["lower"]) and _agrees(m.group(3), p["upper"]), \
                    (section, m.group(0))
    assert seen >= 2  # the verdict and the baseline at least: the check can fail


def test_counts_on_the_page_match_the_json(run):
    s, page = run["summary"], run["page"]
    n = s["p_success"]["n"]
    successes = round(s["p_success"]["estimate"] * n)
    reached = s["contingency"]["reached_recovery"]
    failed = re.search(r"([\d,]+) of ([\d,]+) samples failed \((\d+(?:\.\d+)?) %",
                       page.text("failures"))
    assert _count(failed.group(1)) == n - successes and _count(failed.group(2)) == n
    assert _agrees(failed.group(3), 1.0 - s["p_success"]["estimate"])
    note = re.search(r"over the ([\d,]+) of ([\d,]+) samples that reached the recovery point",
                     page.text("contingency"))
    assert _count(note.group(1)) == reached
    outcome_rows = {r[0]: r for r in page.rows("outcomes")[1:]}
    assert _count(outcome_rows["success"][1]) == successes
    assert _agrees(outcome_rows["success"][2].rstrip(" %"), s["p_success"]["estimate"])
    sweep_rows = page.rows("sweep")
    header = sweep_rows[0]
    own = next(r for r in sweep_rows[1:] if float(r[0].split()[0]) == run["own"])
    assert _count(own[header.index("Successes [samples]")]) == successes
    assert _count(own[header.index("Reached recovery [samples]")]) == reached
    assert _agrees(own[header.index("P(success) [%]")].rstrip(" %"), s["p_success"]["estimate"])
    pair_rows = page.rows("comparison")
    first = next(r for r in pair_rows if r and r[0] == s["scenario"]["name"])
    assert _count(first[1]) == successes
    assert _agrees(first[2].rstrip(" %"), s["p_success"]["estimate"])
    assert first[4].lower() == s["verdict"]


def test_table_columns_carry_units(run):
    folder = run["folder"]
    header = next(csv.reader((folder / "range_curve.csv").open(encoding="utf-8")))
    assert header[0] == "range_km"
    header = next(csv.reader((folder / "sweep.csv").open(encoding="utf-8")))
    assert "speed_m_s" in header and "mean_margin_Wh" in header and "mean_margin" not in header
    header = next(csv.reader((folder / "contingency.csv").open(encoding="utf-8")))
    assert "contingency_cost_money" in header and "currency" in header
    for name in ("sweep.csv", "comparison.csv", "range_curve.csv", "contingency.csv"):
        header = next(csv.reader((folder / name).open(encoding="utf-8")))
        assert not {"threshold", "mean_margin", "cost", "value", "arrived"} & set(header), name


def test_range_curve_at_the_route_is_labelled_beside_the_verdict(run):
    # the page states the curve's value at the route length (read from range_curve.csv
    # here, linear between grid points) as energy alone, next to the verdict's P(success)
    s, page, folder = run["summary"], run["page"], run["folder"]
    rows = _csv(folder / "range_curve.csv")
    x = [float(r["range_km"]) for r in rows]
    p = [float(r["probability"]) for r in rows]
    route = s["scenario"]["route_km"]
    k = next(i for i, v in enumerate(x) if v >= route)
    at_route = p[k - 1] + (p[k] - p[k - 1]) * (route - x[k - 1]) / (x[k] - x[k - 1])
    m = re.search(r"the curve reads (\d+(?:\.\d+)?) %: the probability of the energy lasting "
                  r"that far, on energy alone\. It is not the verdict's P\(success\) "
                  r"\((\d+(?:\.\d+)?) %\)", page.text("range-curve"))
    assert m is not None
    assert _agrees(m.group(1), at_route)
    assert _agrees(m.group(2), s["p_success"]["estimate"])
