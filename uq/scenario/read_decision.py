"""The decision half of the scenario reader: ``[hardware]``, ``[[correlations]]`` (with the
positive-definiteness check), ``[decision]`` with ``[[decision.tests]]``, and ``[analysis]``.
"""
from __future__ import annotations

import datetime
from typing import Any

import numpy as np

from uq.scenario.field_reader import FieldReader
from uq.scenario.errors import MISSING
from uq.scenario.fields import (
    CORRELATION, CURRENCY_CODE, FRACTION_CLOSED0_OPEN1, HAZARD, MONEY, PROBABILITY, SCHEMES,
    SHIP_BOOKINGS, SHIP_DAYS, WEIBULL_SHAPE, is_number,
)
from uq.scenario.types import Analysis, Decision, Hardware, RankCorrelation, Subsystem, TestCandidate

__all__ = ["DecisionSections"]


class DecisionSections(FieldReader):
    """Readers of the hardware, correlations, decision and analysis sections."""

    def hardware(self, value: Any) -> Hardware:
        table = self.table(value, "hardware")
        fields = {"subsystems": lambda r, v, p: r.subsystems(v, p)}
        return Hardware(**self.read_fields(table, "hardware", fields))

    def subsystems(self, value: Any, path: str) -> tuple[Subsystem, ...]:
        if not isinstance(value, (list, tuple)):
            self.fail(path, value, "an array of tables [[hardware.subsystems]]")
        fields = {
            "name": lambda r, v, p: r.text(v, p, what="the subsystem's name"),
            "rate_per_day": lambda r, v, p: r.number(v, p, HAZARD, uncertain=False),
            "weibull_shape": lambda r, v, p: r.number(v, p, WEIBULL_SHAPE, uncertain=False),
        }
        out = []
        for i, item in enumerate(value):
            item_path = f"{path}[{i}]"
            table = self.table(item, item_path, how="a [[hardware.subsystems]] table")
            out.append(Subsystem(**self.read_fields(table, item_path, fields,
                                                    ("name", "rate_per_day"))))
        return tuple(out)

    def correlations_raw(self, value: Any) -> list[tuple[int, tuple[str, str], float]]:
        if not isinstance(value, (list, tuple)):
            self.fail("correlations", value, "an array of tables [[correlations]]")
        fields = {
            "inputs": lambda r, v, p: r.name_list(v, p, length=2),
            "rank": lambda r, v, p: r.number(v, p, CORRELATION, uncertain=False),
        }
        out = []
        for i, item in enumerate(value):
            path = f"correlations[{i}]"
            table = self.table(item, path, how="a [[correlations]] table")
            got = self.read_fields(table, path, fields, ("inputs", "rank"))
            out.append((i, got["inputs"], got["rank"]))
        return out

    def correlations_check(self, raw: list[tuple[int, tuple[str, str], float]]) -> tuple[RankCorrelation, ...]:
        order = [m.name for m in self.inputs]
        seen: dict[frozenset[str], int] = {}
        for i, (a, b), _ in raw:
            for name in (a, b):
                self.check_name(name, f"correlations[{i}].inputs")
            pair = frozenset((a, b))
            if pair in seen:
                self.fail(f"correlations[{i}].inputs", [a, b],
                          f"each pair once (already in correlations[{seen[pair]}])")
            seen[pair] = i
        if not raw:
            return ()
        involved = sorted({n for _, pair, _ in raw for n in pair}, key=order.index)
        index = {n: k for k, n in enumerate(involved)}
        rank = np.eye(len(involved))
        for _, (a, b), r in raw:
            rank[index[a], index[b]] = rank[index[b], index[a]] = r
        # The rank matrix and the normal-copula matrix 2 sin(pi r / 6) (Pearson for normal
        # scores with Spearman r) must both be positive definite.
        for matrix, what in ((rank, "rank-correlation"),
                             (2.0 * np.sin(np.pi * rank / 6.0), "normal-copula (2 sin(pi r/6))")):
            smallest = float(np.linalg.eigvalsh(matrix)[0])
            if smallest <= 1e-10:
                self.fail("correlations", [r for _, _, r in raw],
                          f"a positive-definite {what} matrix over {len(involved)} inputs "
                          f"(smallest eigenvalue {smallest:.3g}); weaken or drop a correlation")
        return tuple(RankCorrelation(inputs=pair, coefficient=r) for _, pair, r in raw)

    def decision(self, value: Any) -> Decision:
        table = self.table(value, "decision")
        plain = lambda rng: (lambda r, v, p: r.number(v, p, rng, uncertain=False))  # noqa: E731
        fields = {
            "required_probability": plain(PROBABILITY),
            "confidence": plain(PROBABILITY),
            "currency": lambda r, v, p: r.currency(v, p),
            "ship_day_rate": plain(MONEY),
            "booking_quantile": plain(PROBABILITY),
            "value_of_success": plain(MONEY),
            "cost_of_failure": plain(MONEY),
            "cost_of_no_go": plain(MONEY),
            "tests": lambda r, v, p: r.tests(v, p),
            "ship_booking": lambda r, v, p: r.choice(v, p, SHIP_BOOKINGS, what="how the ship is booked"),
            "deployment_date": lambda r, v, p: r.date(v, p),
            "recovery_window": lambda r, v, p: r.quantile_pair(v, p),
            "ship_transit_days": plain(SHIP_DAYS),
            "cost_of_reserve_breach": plain(MONEY),
            "cost_of_late_arrival": plain(MONEY),
            "knowledge": lambda r, v, p: r.name_list(v, p),
            "variability": lambda r, v, p: r.name_list(v, p),
            "required_credibility": plain(PROBABILITY),
        }
        out = self.read_fields(table, "decision", fields)
        if out.get("ship_booking") == "recovery_window" and "deployment_date" not in out:
            self.fail("decision.deployment_date", MISSING,
                      "a deployment date (e.g. 2027-04-12) for ship_booking = 'recovery_window'")
        return Decision(**out)

    def date(self, value: Any, path: str) -> datetime.date:
        if isinstance(value, datetime.datetime) or not isinstance(value, datetime.date):
            self.fail(path, value, "a TOML local date such as 2027-04-12 (no quotes, no time)")
        return value

    def quantile_pair(self, value: Any, path: str) -> tuple[float, float]:
        ok = (isinstance(value, (list, tuple)) and len(value) == 2
              and all(is_number(q) and 0.0 < float(q) < 1.0 for q in value)
              and float(value[0]) < float(value[1]))
        if not ok:
            self.fail(path, value, "two arrival quantiles in (0, 1), earliest first, e.g. [0.05, 0.95]")
        return (float(value[0]), float(value[1]))

    def currency(self, value: Any, path: str) -> str:
        if not isinstance(value, str) or not CURRENCY_CODE.fullmatch(value):
            self.fail(path, value, "an ISO 4217 currency code of three capital letters, e.g. 'EUR'")
        return value

    def tests(self, value: Any, path: str) -> tuple[TestCandidate, ...]:
        if not isinstance(value, (list, tuple)):
            self.fail(path, value, "an array of tables [[decision.tests]]")
        fields = {
            "name": lambda r, v, p: r.text(v, p, what="the test's name"),
            "cost": lambda r, v, p: r.number(v, p, MONEY, uncertain=False),
            "inputs": lambda r, v, p: r.name_list(v, p),
            "residual_fraction": lambda r, v, p: r.number(v, p, FRACTION_CLOSED0_OPEN1, uncertain=False),
        }
        seen: dict[str, int] = {}
        out = []
        for i, item in enumerate(value):
            item_path = f"{path}[{i}]"
            table = self.table(item, item_path, how="a [[decision.tests]] table")
            got = self.read_fields(table, item_path, fields, ("name", "cost", "inputs"))
            if got["name"] in seen:
                self.fail(f"{item_path}.name", got["name"],
                          f"a unique test name ({path}[{seen[got['name']]}] has it already)")
            seen[got["name"]] = i
            out.append(TestCandidate(**got))
        return tuple(out)

    def analysis(self, value: Any) -> Analysis:
        table = self.table(value, "analysis")
        fields = {
            "samples": lambda r, v, p: r.integer(v, p, minimum=1, what="number of samples"),
            "seed": lambda r, v, p: r.integer(v, p, minimum=0, what="random seed"),
            "scheme": lambda r, v, p: r.choice(v, p, SCHEMES, what="the sampling scheme"),
            "replicates": lambda r, v, p: r.integer(v, p, minimum=1, what="independent replicates"),
            "sensitivity_base_n": lambda r, v, p: r.integer(v, p, minimum=2, what="Sobol' base sample size"),
            "rare_events": lambda r, v, p: r.choice(v, p, ("auto", "always", "off"),
                                                    what="when to use the rare-event estimator"),
            "max_looks": lambda r, v, p: r.integer(v, p, minimum=1, what="looks at P(success)"),
        }
        out = self.read_fields(table, "analysis", fields)
        result = Analysis(**out)
        if result.scheme == "sobol" and not _power_of_two(result.samples):
            self.fail("analysis.samples", result.samples,
                      "a power of two for scheme = 'sobol' (scrambled Sobol' points need n = 2^m), e.g. "
                      f"{_next_power_of_two(result.samples)}")
        if not _power_of_two(result.sensitivity_base_n):
            self.fail("analysis.sensitivity_base_n", result.sensitivity_base_n,
                      "a power of two (the Sobol'-index design is built on Sobol' points), e.g. "
                      f"{_next_power_of_two(result.sensitivity_base_n)}")
        return result


def _power_of_two(n: int) -> bool:
    return n >= 1 and n & (n - 1) == 0


def _next_power_of_two(n: int) -> int:
    return 1 << max(0, int(n - 1).bit_length())
