"""The under-ice demo's report shows how deployments end: outcome classes, P(lost) beside
P(success), the point of no return and the hardware risk (summary.json, page, CLI line).

Checks are identities against the assessment's own per-sample outcomes counted here
independently (classes partition the samples; P(success) in the table is the headline one).
"""
from __future__ import annotations

import json
from pathlib import Path

import pytest

from uq.cli.main import main
from uq.decisions.outcomes import OutcomeClass

FAST = ["--samples", "256", "--sensitivity-base", "0", "--quiet"]
DEMO = Path(__file__).resolve().parents[3] / "configs" / "under_ice_section.toml"


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    out = tmp_path_factory.mktemp("ui") / "rep"
    assert main(["assess", str(DEMO), "--out", str(out), *FAST[:-1]]) == 0
    return out


def test_summary_outcomes_partition_the_samples(report):
    summary = json.loads((report / "summary.json").read_text())
    rows = {r["class"]: r for r in summary["outcomes"]}
    assert set(rows) == {c.name.lower() for c in OutcomeClass}
    assert sum(r["count"] for r in rows.values()) == summary["samples"]
    assert rows["success"]["probability"] == pytest.approx(summary["p_success"]["estimate"])
    for r in rows.values():
        assert 0.0 <= r["lower"] <= r["probability"] <= r["upper"] <= 1.0
    pnr = summary["point_of_no_return_km"]
    qs = [q["estimate"] for q in pnr["quantiles"]]
    # beyond the 38 km open-water launch leg and short of the 285 km route, in order
    assert qs == sorted(qs) and 38.0 < qs[0] and qs[-1] < 285.0
    hw = summary["hardware_risk"]
    total = sum(hw[k]["estimate"] for k in ("p_no_fault", "p_fault_under_ice",
                                            "p_fault_open_water"))
    assert total == pytest.approx(1.0, abs=1e-12)
    assert hw["p_lost_any_cause"]["estimate"] >= rows["lost_under_ice"]["probability"]


def test_page_and_cli_state_p_lost_beside_p_success(report, tmp_path, capsys):
    html = (report / "index.html").read_text()
    assert "P(lost under ice)" in html and 'id="outcomes"' in html
    assert "Point of no return" in html
    assert main(["assess", str(DEMO), "--out", str(tmp_path / "r"), *FAST[:-1]]) == 0
    out = capsys.readouterr().out
    line = next(l for l in out.splitlines() if l.startswith("Outcomes:"))
    assert "P(success)" in line and "P(lost under ice)" in line
