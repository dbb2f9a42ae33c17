"""What would make it GO: battery energy, setpoint and reserve policy, each changed alone.

Every lever value is evaluated by re-running the assessment's propagation with the same
designs (seed, replicates, sample points): common random numbers, so P(success) changes only
through the lever. The root finding itself is :func:`uq.decisions.requirements.go_requirement`.
"""
from __future__ import annotations

import dataclasses

import numpy as np

from uq.decisions.requirements import GoRequirement, go_requirement
from uq.scenario import Scenario
from uq.studies.assess import Assessment, Settings, propagate
from uq.studies.sweeps import with_setpoint

__all__ = ["LEVERS", "go_requirements", "with_go_requirements", "DEFAULT_REQUIREMENT_SAMPLES"]

#: samples of each re-run (capped at the assessment's own): a smaller sample widens the
#: interval, so a requirement found on it is conservative for the full run
DEFAULT_REQUIREMENT_SAMPLES = 2048

#: levers by vehicle kind: (scenario key, label, unit, search range as multiples of the
#: current value or absolute bounds, relative tolerance)
LEVERS = {
    "propeller": (
        ("battery.nominal_energy_Wh", "nominal battery energy", "Wh"),
        ("setpoint.speed_m_s", "speed through water", "m/s"),
        ("battery.reserve_fraction", "reserve fraction", ""),
    ),
    "glider": (
        ("battery.nominal_energy_Wh", "nominal battery energy", "Wh"),
        ("setpoint.net_buoyancy_N", "net buoyancy", "N"),
        ("battery.reserve_fraction", "reserve fraction", ""),
    ),
}


def _with_lever(scenario: Scenario, key: str, value: float) -> Scenario:
    section, attribute = key.split(".", 1)
    if section == "setpoint":
        return with_setpoint(scenario, key, value)
    battery = dataclasses.replace(scenario.battery, **{attribute: float(value)})
    return dataclasses.replace(scenario, battery=battery)


def _search(key: str, current: float) -> list[float]:
    if key == "battery.reserve_fraction":
        return sorted({0.0, current, min(max(2.0 * current, current + 0.1), 0.6)})
    if key.startswith("setpoint."):
        return [current * f for f in (0.6, 0.8, 1.0, 1.25, 1.5)]
    return [current * f for f in (0.5, 1.0, 2.0)]


def _tolerance(key: str, current: float) -> float:
    return 0.001 if key == "battery.reserve_fraction" else 0.001 * abs(current)


def go_requirements(assessment: Assessment, *, samples: int | None = None,
                    executor=None) -> tuple[GoRequirement, ...]:
    """The smallest change of each lever, alone, that gives GO on the confidence bound.

    Parameters
    ----------
    assessment : Assessment
        Supplies the scenario and the propagation settings (seed, scheme, replicates).
    samples : int, optional
        Samples of each re-run; default ``min(assessment samples, 2048)``.
    executor : optional
        As for :func:`uq.studies.assess.propagate`.

    Returns
    -------
    tuple of GoRequirement
        One row per lever of the vehicle kind (battery energy, setpoint, reserve fraction);
        a lever that is uncertain in the scenario is skipped (changing it would change the
        sample columns, so no common random numbers).
    """
    scenario = assessment.scenario
    settings: Settings = assessment.settings
    n = int(samples or min(settings.samples, DEFAULT_REQUIREMENT_SAMPLES))
    if settings.scheme == "sobol":
        per = max(n // settings.replicates, 2)
        n = (1 << int(round(np.log2(per)))) * settings.replicates
    run = dataclasses.replace(settings, samples=n)
    p_star = scenario.decision.required_probability
    rows = []
    for key, label, unit in LEVERS[scenario.vehicle.kind]:
        section, attribute = key.split(".", 1)
        current = getattr(getattr(scenario, section), attribute)
        if not isinstance(current, (int, float)):
            continue

        def evaluate(value, _key=key):
            p = propagate(_with_lever(scenario, _key, value), run, executor=executor).p_success
            return p.lower, p.estimate, p.upper

        rows.append(go_requirement(
            evaluate, lever=key, label=label, unit=unit, current_value=float(current),
            search=_search(key, float(current)), required_probability=p_star, samples=n,
            xtol=_tolerance(key, float(current))))
    return tuple(rows)


def with_go_requirements(assessment: Assessment, **options) -> Assessment:
    """The assessment with :attr:`Assessment.go_requirements` filled in."""
    return dataclasses.replace(assessment, go_requirements=go_requirements(assessment, **options))
