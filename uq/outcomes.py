"""Per-sample transit outcomes: the one typed carrier from the model to everything after it.

:func:`uq.simulate.simulate_arrays` fills it; the streaming engine's reducers, the
estimators, the decisions and the report read it (re-exported as ``uq.simulate.Outcomes``).
"""
from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Iterator, Sequence

import numpy as np
import pandas as pd

from physics.states import FAILURE_MODE_NAMES, FailureMode

if TYPE_CHECKING:  # the scenario only names the legs of a table
    from uq.scenario import Scenario

__all__ = ["Outcomes"]


@dataclass(frozen=True, eq=False)  # arrays have no single truth value: compare fields
class Outcomes:
    """Per-sample transit outcomes in report units, one entry per sample row.

    The one typed carrier of outcomes between the model, the estimators, the decisions and the
    report. Fields can also be read by name (``outcomes["range_km"]``), which is how the
    streaming engine's reducers address them; only the fields below exist.

    Attributes
    ----------
    range_km : distance at which drawable energy reaches the reserve [km], (n,)
    range_censored : range still open at the extension cap [bool], (n,)
    arrived : reached the route end without a stop (no headway / no glide) [bool], (n,)
    reaches_recovery : arrived with drawn energy within the usable energy, on the reserve if
        need be -- THE definition of "reached the recovery point" used for ship bookings [bool]
    success : arrived with the reserve intact, within the time limit [bool], (n,)
    failure_mode : first event along the route, :class:`physics.states.FailureMode` codes, (n,)
    failing_leg : index of the leg of that event, -1 for success, (n,)
    duration_days : time to the route end if arrived, else to the stop [d], (n,)
    margin_Wh : drawable energy left at the route end, negative = shortfall [Wh], (n,)
    margin_fraction : margin over usable energy at arrival [-], (n,)
    energy_per_km_Wh : energy drawn per km on each leg [Wh/km], (n, J); NaN on legs not flown
    route_energy_per_km_Wh : energy drawn over distance flown on the route [Wh/km], (n,)
    route_km : route length of each sample [km], (n,)
    flight_events : :class:`physics.states.FlightEvent` bits seen on the route (re-trimmed for
        fouling, flew at the engine's limit, drifted across the track), (n,)
    surfacings : number of surfacings on the route (gliders; 0 otherwise) [-], (n,)
    turned_back : aborted at the point of no return (or where a current stopped it under ice)
        and flew back to a safe exit [bool], (n,)
    lost_under_ice : neither recovered nor returned, ends on a leg under ice [bool], (n,)
    point_of_no_return_km : first point of no return along the route [km], inf where the
        vehicle could turn back anywhere short of the recovery point, (n,)
    p_no_fault, p_fault_under_ice, p_fault_open_water : probability of no hardware fault
        before the mission ends, of a first fault under ice (a loss) and in open water (a
        recovery); they sum to 1 [-], (n,)
    """

    range_km: np.ndarray
    range_censored: np.ndarray
    arrived: np.ndarray
    reaches_recovery: np.ndarray
    success: np.ndarray
    failure_mode: np.ndarray
    failing_leg: np.ndarray
    duration_days: np.ndarray
    margin_Wh: np.ndarray
    margin_fraction: np.ndarray
    energy_per_km_Wh: np.ndarray
    route_energy_per_km_Wh: np.ndarray
    route_km: np.ndarray
    flight_events: np.ndarray
    surfacings: np.ndarray
    turned_back: np.ndarray
    lost_under_ice: np.ndarray
    point_of_no_return_km: np.ndarray
    p_no_fault: np.ndarray
    p_fault_under_ice: np.ndarray
    p_fault_open_water: np.ndarray

    # ---- mapping-style access by field name (reducers, tables) -------------------------------
    def __getitem__(self, key: str) -> np.ndarray:
        if key not in _OUTCOME_FIELDS:
            raise KeyError(f"no outcome {key!r}; outcomes are {', '.join(_OUTCOME_FIELDS)}")
        return getattr(self, key)

    def __contains__(self, key: object) -> bool:
        return key in _OUTCOME_FIELDS

    def keys(self) -> tuple[str, ...]:
        return _OUTCOME_FIELDS

    def items(self) -> Iterator[tuple[str, np.ndarray]]:
        return ((k, getattr(self, k)) for k in _OUTCOME_FIELDS)

    def __iter__(self) -> Iterator[str]:
        return iter(_OUTCOME_FIELDS)

    def __len__(self) -> int:
        return int(np.shape(self.range_km)[0])

    @property
    def n(self) -> int:
        """Number of samples."""
        return len(self)

    def take(self, index: Any) -> "Outcomes":
        """The outcomes of the selected samples (boolean mask, slice or integer indices)."""
        return Outcomes(**{k: np.asarray(getattr(self, k))[index] for k in _OUTCOME_FIELDS})

    @classmethod
    def from_columns(cls, columns: Any) -> "Outcomes":
        """Build from a mapping of field name -> array (e.g. a collecting reducer's result)."""
        return cls(**{k: np.asarray(columns[k]) for k in _OUTCOME_FIELDS})

    @classmethod
    def concatenate(cls, parts: Sequence["Outcomes"]) -> "Outcomes":
        """Samples of several parts, in order."""
        return cls(**{k: np.concatenate([np.asarray(getattr(p, k)) for p in parts])
                      for k in _OUTCOME_FIELDS})

    def to_frame(self, scenario: Scenario | None = None) -> pd.DataFrame:
        """One row per sample; failure modes by name, legs by name when ``scenario`` is given.

        Columns: range_km, range_censored, arrived, reaches_recovery, success, failure_mode,
        failing_leg, duration_days, margin_Wh, margin_fraction, route_energy_per_km_Wh and
        energy_per_km_Wh.<leg> for every leg (NaN where the leg was never reached).
        """
        names = ([leg.name for leg in scenario.legs] if scenario is not None
                 else [f"leg{j}" for j in range(np.shape(self.energy_per_km_Wh)[1])])
        frame = pd.DataFrame({
            "range_km": self.range_km,
            "range_censored": self.range_censored,
            "arrived": self.arrived,
            "reaches_recovery": self.reaches_recovery,
            "success": self.success,
            "failure_mode": [FAILURE_MODE_NAMES[FailureMode(m)] for m in self.failure_mode],
            "failing_leg": [names[j] if j >= 0 else "" for j in self.failing_leg],
            "duration_days": self.duration_days,
            "margin_Wh": self.margin_Wh,
            "margin_fraction": self.margin_fraction,
            "route_energy_per_km_Wh": self.route_energy_per_km_Wh,
        })
        for j, name in enumerate(names):
            frame[f"energy_per_km_Wh.{name}"] = self.energy_per_km_Wh[:, j]
        return frame


_OUTCOME_FIELDS: tuple[str, ...] = tuple(f.name for f in dataclasses.fields(Outcomes))
