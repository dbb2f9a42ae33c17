"""The decision half of the scenario reader: ``[hardware]``, ``[[correlations]]`` (with the
positive-definiteness check), ``[decision]`` with ``[[decision.tests]]``, and ``[analysis]``.
"""
from __future__ import annotations

import datetime
from typing import Any

import numpy as np

from uq.scenario.field_reader import FieldReader
from uq.scenario.field_table import section
from uq.scenario.errors import MISSING
from uq.scenario.fields import CURRENCY_CODE, is_number
from uq.scenario.types import Analysis, Decision, Hardware, RankCorrelation, Subsystem, TestCandidate

__all__ = ["DecisionSections"]


class DecisionSections(FieldReader):
    """Readers of the hardware, correlations, decision and analysis sections."""

    def hardware(self, value: Any) -> Hardware:
        return self.plain_section(value, "hardware", Hardware)

    def subsystems(self, value: Any, path: str) -> tuple[Subsystem, ...]:
        if not isinstance(value, (list, tuple)):
            self.fail(path, value, "an array of tables [[hardware.subsystems]]")
        keys = section("hardware.subsystems")
        out = []
        for i, item in enumerate(value):
            item_path = f"{path}[{i}]"
            table = self.table(item, item_path, how="a [[hardware.subsystems]] table")
            out.append(Subsystem(**self.read_fields(table, item_path, keys.fields, keys.required)))
        return tuple(out)

    def correlations_raw(self, value: Any) -> list[tuple[int, tuple[str, str], float]]:
        if not isinstance(value, (list, tuple)):
            self.fail("correlations", value, "an array of tables [[correlations]]")
        keys = section("correlations")
        out = []
        for i, item in enumerate(value):
            path = f"correlations[{i}]"
            table = self.table(item, path, how="a [[correlations]] table")
            got = self.read_fields(table, path, keys.fields, keys.required)
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

    def input_pair(self, value: Any, path: str) -> tuple[str, str]:
        return self.name_list(value, path, length=2)

    def decision(self, value: Any) -> Decision:
        table = self.table(value, "decision")
        out = self.read_section(table, "decision")
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
        keys = section("decision.tests")
        seen: dict[str, int] = {}
        out = []
        for i, item in enumerate(value):
            item_path = f"{path}[{i}]"
            table = self.table(item, item_path, how="a [[decision.tests]] table")
            got = self.read_fields(table, item_path, keys.fields, keys.required)
            if got["name"] in seen:
                self.fail(f"{item_path}.name", got["name"],
                          f"a unique test name ({path}[{seen[got['name']]}] has it already)")
            seen[got["name"]] = i
            out.append(TestCandidate(**got))
        return tuple(out)

    def analysis(self, value: Any) -> Analysis:
        table = self.table(value, "analysis")
        out = self.read_section(table, "analysis")
        result = Analysis(**out)
        if result.scheme == "sobol" and not _power_of_two(result.samples):
            self.fail("analysis.samples", result.samples,
                      "a power of two for scheme = 'sobol' (scrambled Sobol' points need n = 2^m), e.g. "
                      f"{_next_power_of_two(result.samples)}")
        if result.kept_rows < 2 * result.replicates:
            self.fail("analysis.kept_rows", result.kept_rows,
                      f"at least 2 rows per replicate ({2 * result.replicates} with "
                      f"replicates = {result.replicates})")
        if not _power_of_two(result.sensitivity_base_n):
            self.fail("analysis.sensitivity_base_n", result.sensitivity_base_n,
                      "a power of two (the Sobol'-index design is built on Sobol' points), e.g. "
                      f"{_next_power_of_two(result.sensitivity_base_n)}")
        return result


def _power_of_two(n: int) -> bool:
    return n >= 1 and n & (n - 1) == 0


def _next_power_of_two(n: int) -> int:
    return 1 << max(0, int(n - 1).bit_length())
