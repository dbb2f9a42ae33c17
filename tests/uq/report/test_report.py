"""Report folder: files, summary.json schema, sections, escaping, atomic writing.

Small samples (256, Saltelli base 64) keep the file fast; the checks are about what the
report shows and how it is written, with expected numbers recomputed independently.
"""
from __future__ import annotations

import dataclasses
import json
import math
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import optimize, stats

from uq.studies import sweeps as studies
from uq.studies.assess import assess
from uq.report import (
    SECTION_IDS,
    ReportExistsError,
    build_summary,
    default_report_dir,
    safe_folder_name,
    write_report,
)
from uq.report import figures as figure_module
from uq.report._format import DASH, Formatter, json_safe
from uq.scenario import load_scenario, parse_scenario

ROOT = Path(__file__).resolve().parents[3]
DEMO = ROOT / "configs" / "under_ice_section.toml"
GLIDER = ROOT / "configs" / "glider_transit.toml"
SMALL = dict(samples=256, sensitivity_base_n=64)

CORE_SECTIONS = [s for s in SECTION_IDS if s not in ("sweep", "comparison", "glide-polar")]
REQUIRED_KEYS = {
    "p_success": dict, "verdict": str, "verdict_sentence": str, "samples": int, "seed": int,
    "scheme": str, "required_probability": float, "range_km": dict, "duration_days": dict,
    "contingency": dict, "sensitivity_ranking": list, "test_ranking": dict,
    "failure_modes": dict, "nominal": dict, "scenario": dict, "versions": dict,
    "timings_s": dict,
}
FILES = ["index.html", "summary.json", "range_curve.csv", "sensitivity.csv", "tests.csv",
         "contingency.csv", "failures.csv", "inputs.csv", "energy_along_route.csv",
         "energy_by_leg.csv"]
FIGURES = ["range_curve", "failures", "sensitivity_range_km", "sensitivity_failure",
           "contingency", "knowledge_band", "energy_fan", "energy_split"]


def _no_nan(text: str):
    def reject(token):
        raise AssertionError(f"summary.json contains {token}")
    return json.loads(text, parse_constant=reject)


def _visible(html: str) -> str:
    """The page without embedded images and style (base64 may contain any letters)."""
    html = re.sub(r'(src|srcset)="data:[^"]*"', 'src=""', html)
    return re.sub(r"<style>.*?</style>", "", html, flags=re.S)


@pytest.fixture(scope="module")
def demo():
    return assess(load_scenario(DEMO), **SMALL)


@pytest.fixture(scope="module")
def demo_report(demo, tmp_path_factory):
    out = tmp_path_factory.mktemp("rep") / "demo"
    return write_report(demo, out)


# ---------------------------------------------------------------------- files
def test_report_writes_every_file_and_figure(demo_report):
    for name in FILES:
        assert (demo_report / name).is_file(), name
    for stem in FIGURES:
        png = (demo_report / "figures" / f"{stem}.png").read_bytes()
        assert png[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (ISO/IEC 15948)
        assert (demo_report / "figures" / f"{stem}.svg").read_text()[:200].count("<svg") <= 1
    # no temporary folder left beside the report
    assert [p.name for p in demo_report.parent.iterdir()] == ["demo"]


def test_summary_schema_types_and_no_nan(demo_report, demo):
    summary = _no_nan((demo_report / "summary.json").read_text(encoding="utf-8"))
    for key, kind in REQUIRED_KEYS.items():
        assert isinstance(summary[key], kind), key
    p = summary["p_success"]
    assert set(p) >= {"estimate", "lower", "upper", "confidence", "method"}
    assert 0.0 <= p["lower"] <= p["estimate"] <= p["upper"] <= 1.0
    # derived: P(success) is the share of successful samples
    assert p["estimate"] == pytest.approx(np.mean(demo.propagation.outcomes["success"]))
    assert summary["verdict"] in ("go", "no-go", "undecided")
    assert summary["samples"] == 256 and summary["scheme"] == "sobol"
    for q in summary["range_km"]["quantiles"] + summary["duration_days"]["quantiles"]:
        assert set(q) >= {"q", "estimate", "lower", "upper", "confidence"}
        assert q["lower"] <= q["estimate"] <= q["upper"]
    assert summary["test_ranking"]["basis"]
    assert {"name", "file", "sha256"} <= set(summary["scenario"])
    # the recorded hash is the SHA-256 of the file bytes (FIPS 180-4, via hashlib)
    import hashlib
    assert summary["scenario"]["sha256"] == hashlib.sha256(DEMO.read_bytes()).hexdigest()
    assert [r["quantile"] for r in summary["contingency"]["table"]] == [0.5, 0.8, 0.9, 0.95]


def test_json_safe_turns_non_finite_into_null():
    # derived: JSON (RFC 8259) has no NaN or Infinity literals
    out = json_safe({"a": float("nan"), "b": [np.inf, np.float64(2.0)], "c": np.int64(3)})
    assert out == {"a": None, "b": [None, 2.0], "c": 3}
    json.dumps(out, allow_nan=False)


def test_csv_tables_agree_with_independent_recomputation(demo_report, demo):
    curve = pd.read_csv(demo_report / "range_curve.csv",  # exact: pandas < 3 reads to ~1 ulp
                        converters={"range_km": float})
    ranges = demo.propagation.outcomes["range_km"]
    # derived: the exceedance curve at x is the share of samples with range >= x
    for x, p in zip(curve["range_km"][::40], curve["probability"][::40]):
        assert p == pytest.approx(np.mean(ranges >= x), abs=1e-12)
    inputs = pd.read_csv(demo_report / "inputs.csv").set_index("input")
    # PERT(0.30, 0.38, 0.44) = beta(1 + 4(m-a)/(b-a), 1 + 4(b-m)/(b-a)) on [a, b]
    # (Malcolm et al. 1959; Vose 2008), evaluated with scipy.stats
    a, m, b = 0.30, 0.38, 0.44
    ref = stats.beta(1 + 4 * (m - a) / (b - a), 1 + 4 * (b - m) / (b - a), loc=a, scale=b - a)
    row = inputs.loc["vehicle.propulsive_efficiency"]
    for q in (0.05, 0.5, 0.95):
        assert row[f"q{round(100 * q):02d}"] == pytest.approx(ref.ppf(q), rel=1e-9)
    sens = pd.read_csv(demo_report / "sensitivity.csv")
    assert set(sens["output"]) == {"range_km", "duration_days", "margin_Wh", "failure"}
    failures = pd.read_csv(demo_report / "failures.csv")
    # derived: the failure modes partition the failures
    assert failures.loc[failures["kind"] == "mode", "count"].sum() == \
        int((~demo.propagation.outcomes["success"]).sum())
    for name in ("tests.csv", "contingency.csv"):
        assert len(pd.read_csv(demo_report / name)) >= 1


# ---------------------------------------------------------------------- HTML
def test_html_has_every_section_in_order_and_is_self_contained(demo_report):
    html = (demo_report / "index.html").read_text(encoding="utf-8")
    positions = [html.find(f'<section id="{s}">') for s in CORE_SECTIONS]
    assert all(p >= 0 for p in positions), dict(zip(CORE_SECTIONS, positions))
    assert positions == sorted(positions)
    assert "@media print" in html
    assert "<script" not in html and "<link" not in html
    assert not re.search(r'(src|href)="(https?:)?//', html)  # no network fetches
    assert html.count('src="data:image/png;base64,') == len(FIGURES)
    text = _visible(html)
    assert not re.search(r"\b(nan|NaN|inf|Infinity)\b", text)
    for phrase in ("planning aid, not a guarantee", "vehicle's own trials",
                   "local regulations", "licensed practice"):
        assert phrase in text.replace("&#39;", "'")
    assert "Leave-one-out error" in text and "Holdout Q" in text
    assert "SHA-256" in text and "20261201" in text  # the demo's seed (configs file)


def test_formatter_prints_a_dash_for_missing_numbers():
    f = Formatter()
    assert f.num(float("nan"), 1, "km") == DASH
    assert f.pct(None) == DASH
    assert f.interval(1.0, float("inf"), 1, "km") == f"1.0\u2013{DASH} km"
    assert f.dashes == 3
    assert f.pct(1.0) == "100 %" and f.pct(0.5) == "50.0 %"


def test_formatter_never_prints_a_double_minus_or_a_rounded_certainty():
    f = Formatter()
    # U+2212 is the minus sign of typography (Unicode Standard, Mathematical Operators)
    assert f.interval(-422.4, -385.0, 0, "Wh") == "\u2212422 to \u2212385 Wh"
    assert "--" not in f.interval(-5, -1) and "-" not in f.interval(-5, -1)
    # an estimate of 0.9999996 is not certainty: it prints below 100 % at 3 decimals
    assert f.pct(0.9999996) == "> 99.999 %"
    assert f.pct(4e-7) == "< 0.001 %"
    assert f.pct_interval(0.9461, 0.9489) == "94.6\u201394.9 %"


def test_glider_report_has_the_glide_polar(tmp_path):
    a = assess(load_scenario(GLIDER), **SMALL)
    out = write_report(a, tmp_path / "glider")
    html = (out / "index.html").read_text(encoding="utf-8")
    assert '<section id="glide-polar">' in html
    assert (out / "figures" / "glide_polar.png").is_file()
    # derived (steady glide force balance, Graver 2005; MODEL.md s8): the demo flies the
    # "efficient" policy, holding u = 0.32 m/s at the angle that minimises the pump energy per
    # distance B tan(g) / eta with B = rho S C_L u^2 / (2 cos^3 g), i.e. the angle minimising
    # C_L tan(g) / cos^3(g) (rho, S, u and eta drop out), at the medians of the demo's
    # PERT(0.07, 0.08, 0.10) C_D0 and PERT(0.35, 0.40, 0.45) K; scipy's bounded minimiser
    # is the reference. w = u tan(g).
    def pert_median(a, m, b):
        return stats.beta(1 + 4 * (m - a) / (b - a), 1 + 4 * (b - m) / (b - a),
                          loc=a, scale=b - a).median()

    cd0, k = pert_median(0.07, 0.08, 0.10), pert_median(0.35, 0.40, 0.45)

    def pump_cost(g):
        t = np.tan(g)
        return (t - np.sqrt(t * t - 4 * k * cd0)) / (2 * k) * t / np.cos(g) ** 3

    lowest = np.arctan(2 * np.sqrt(k * cd0)) + 1e-9
    g = optimize.minimize_scalar(pump_cost, bounds=(lowest, 1.3), method="bounded",
                                 options={"xatol": 1e-10}).x
    m = re.search(r"horizontal speed ([0-9.]+) m/s, vertical speed ([0-9.]+) m/s", html)
    # 0.5 %: 3 decimals are printed; the policy's grid search is refined to ~0.05 %
    assert m and float(m.group(1)) == pytest.approx(0.32, rel=0.005)
    assert float(m.group(2)) == pytest.approx(0.32 * np.tan(g), rel=0.005)


def test_sweep_and_comparison_sections(demo, tmp_path):
    sc = demo.scenario
    sweep = studies.sweep_setpoint(sc, "setpoint.speed_m_s", [1.2, 1.4], samples=256, seed=1)
    slow = dataclasses.replace(sc, name="slower", setpoint=dataclasses.replace(
        sc.setpoint, speed_m_s=1.2))
    comparison = studies.compare_scenarios(sc, slow, samples=256, seed=1)
    out = write_report(demo, tmp_path / "both", sweep=sweep, comparison=comparison)
    html = (out / "index.html").read_text(encoding="utf-8")
    order = [html.find(f'<section id="{s}">') for s in ("contingency", "sweep", "comparison",
                                                         "inputs")]
    assert min(order) >= 0 and order == sorted(order)
    assert len(pd.read_csv(out / "sweep.csv")) == 2
    assert (out / "comparison.csv").is_file() and (out / "figures" / "sweep.png").is_file()
    summary = _no_nan((out / "summary.json").read_text())
    assert summary["sweep"]["rows"][0]["setpoint"] == 1.2
    assert summary["comparison"]["names"] == [sc.name, "slower"]


# ---------------------------------------------------------------------- hostile names
HOSTILE = "<script>alert(1)</script>../../x"


def _hostile_scenario():
    text = DEMO.read_text(encoding="utf-8")
    text = text.replace('name = "skerrow-under-ice"', f'name = "{HOSTILE}"')
    text = text.replace('description = "Propeller', 'description = "<img src=x onerror=alert(2)> Propeller')
    text = text.replace('name = "Thruster and motor bench test"',
                        'name = "<b onmouseover=alert(3)>bench</b>"')
    sc = parse_scenario(text, source="hostile.toml")
    legs = tuple(dataclasses.replace(leg, name=f"{leg.name}<script>alert(4)</script>../")
                 for leg in sc.legs)
    return dataclasses.replace(sc, legs=legs)  # leg names the loader would refuse


def test_scenario_strings_are_inert_in_html_and_folder_names(tmp_path):
    sc = _hostile_scenario()
    a = assess(sc, samples=256, sensitivity_base_n=0)
    root = tmp_path / "reports"
    out = write_report(a, default_report_dir(sc.name, root=root))
    assert out.parent == root and out.resolve().is_relative_to(root.resolve())
    assert re.fullmatch(r"[A-Za-z0-9._-]+", out.name) and not out.name.startswith(".")
    html = (out / "index.html").read_text(encoding="utf-8")
    assert "<script" not in html and "<img src=x" not in html and "<b onmouseover" not in html
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in html
    assert "&lt;img src=x onerror=alert(2)&gt;" in html
    assert "&lt;script&gt;alert(4)" in html  # leg names in the tables
    summary = _no_nan((out / "summary.json").read_text())
    assert summary["scenario"]["name"] == HOSTILE  # JSON keeps the data as given
    assert [p.name for p in tmp_path.iterdir()] == ["reports"]


@pytest.mark.parametrize("name, expected", [
    ("../../etc/passwd", "etc-passwd"),
    ("..", "scenario"),
    ("<script>alert(1)</script>", "script-alert-1-script"),
    ("CON", "scenario-CON"),  # Windows reserved device name (Microsoft naming rules)
    (".hidden", "hidden"),
    ("Fjord \u00e9t\u00e9 2026", "Fjord-ete-2026"),
])
def test_safe_folder_name(name, expected):
    assert safe_folder_name(name) == expected


# ---------------------------------------------------------------------- atomic writing
def test_existing_report_is_not_overwritten_without_permission(demo, tmp_path):
    out = write_report(demo, tmp_path / "r")
    before = (out / "summary.json").read_bytes()
    with pytest.raises(ReportExistsError, match=r"'.*r' already exists"):
        write_report(demo, out)
    assert (out / "summary.json").read_bytes() == before
    write_report(demo, out, overwrite=True)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["r"]  # no '.old' folder left


@pytest.mark.parametrize("error", [RuntimeError("disk on fire"), KeyboardInterrupt()])
def test_failure_mid_write_leaves_no_partial_report(demo, tmp_path, monkeypatch, error):
    def boom(*args, **kwargs):
        raise error

    monkeypatch.setattr(figure_module, "contingency_figure", boom)
    with pytest.raises(type(error)):
        write_report(demo, tmp_path / "r")
    assert list(tmp_path.iterdir()) == []


def test_failure_while_overwriting_keeps_the_old_report(demo, tmp_path, monkeypatch):
    out = write_report(demo, tmp_path / "r")
    before = (out / "index.html").read_bytes()
    monkeypatch.setattr(figure_module, "range_curve_figure",
                        lambda *a, **k: (_ for _ in ()).throw(OSError("no space left")))
    with pytest.raises(OSError, match="no space"):
        write_report(demo, out, overwrite=True)
    assert (out / "index.html").read_bytes() == before
    assert [p.name for p in tmp_path.iterdir()] == ["r"]


def test_build_summary_is_json_without_nan(demo):
    text = json.dumps(build_summary(demo), allow_nan=False)
    assert math.isfinite(_no_nan(text)["p_success"]["estimate"])


def test_board_sections_open_the_page_and_no_interval_has_a_double_minus(demo_report):
    html = (demo_report / "index.html").read_text(encoding="utf-8")
    order = [html.find(f'<section id="{s}">') for s in ("verdict", "plan", "energy", "range-curve")]
    assert -1 not in order and order == sorted(order)
    text = _visible(html)
    # an interval of two negative numbers reads "-422 to -385", never "-422--385" or "-422–-385"
    assert not re.search("[0-9][\u2013-][-\u2212][0-9]", text)
    assert "The plan being judged" in text and "Energy along the route" in text
    assert "100.000 %" not in text
