"""The assess command prints the base N that would resolve an unresolved sensitivity order."""
from pathlib import Path
from types import SimpleNamespace

from uq.cli.console import Console
from uq.cli.main import _finish
from uq.estimators.sensitivity import rank_factors


def _assessment(order):
    verdict = SimpleNamespace(sentence="UNDECIDED: test.", verdict="undecided")
    return SimpleNamespace(propagation=SimpleNamespace(outcome_table=None), verdict=verdict,
                           knowledge_band=None, sensitivity_order=lambda: order)


def test_overlapping_neighbours_print_the_suggested_base_n(capsys):
    # totals 0.30 [0.20, 0.40] and 0.25 [0.15, 0.35] at base N 512 overlap; derived: the
    # half widths shrink as 1/sqrt(N), so they separate at 512 ((0.10 + 0.10) / 0.05)^2 = 8192
    order = rank_factors(["drag", "hotel"], [["drag"], ["hotel"]], [0.3, 0.25], [0.2, 0.15],
                         [0.4, 0.35], [0.3, 0.25], [0.2, 0.15], [0.4, 0.35], base_n=512,
                         output="failure")
    assert not order.order_resolved
    _finish(Console(quiet=False), _assessment(order), Path("out"))
    out = capsys.readouterr().out.splitlines()
    assert any("--sensitivity-base 8192" in line for line in out)
    assert out[-1] == "UNDECIDED: test."  # the verdict stays the last line


def test_a_resolved_order_prints_no_hint(capsys):
    order = rank_factors(["drag", "hotel"], [["drag"], ["hotel"]], [0.6, 0.1], [0.55, 0.05],
                         [0.65, 0.15], [0.6, 0.1], [0.55, 0.05], [0.65, 0.15], base_n=512,
                         output="failure")
    assert order.order_resolved
    _finish(Console(quiet=False), _assessment(order), Path("out"))
    assert "--sensitivity-base" not in capsys.readouterr().out
