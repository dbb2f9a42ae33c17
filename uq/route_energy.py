"""Energy along the route: the typed carrier :func:`uq.simulate.route_energy` fills.

The report's fan chart and per-leg energy split read it. It is computed for a bounded
subsample of an assessment's own sample rows (:func:`subsample_rows`), re-flown through the
same model, so its end values are the assessment's own outcomes for those rows.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["RouteEnergy", "DEFAULT_ROWS", "subsample_rows", "FAN_QUANTILES"]

#: rows of an assessment re-flown for the energy profile (bounded: the report's cost stays
#: small whatever the sample size)
DEFAULT_ROWS = 400
#: quantiles drawn in the fan chart: 90 % band, 50 % band and median
FAN_QUANTILES = (0.05, 0.25, 0.5, 0.75, 0.95)


def subsample_rows(n: int, limit: int = DEFAULT_ROWS) -> np.ndarray:
    """At most ``limit`` row indices of ``n``, evenly spread over the plan order.

    Deterministic (no random draw): the rows of a pooled RQMC plan are spread over every
    replicate, and the same assessment always gives the same rows.
    """
    if n <= 0:
        return np.zeros(0, dtype=int)
    if n <= limit:
        return np.arange(n)
    return np.unique(np.round(np.linspace(0, n - 1, int(limit))).astype(int))


@dataclass(frozen=True, eq=False)
class RouteEnergy:
    """Energy of every re-flown sample at each profile column, report units.

    Columns: 0 is the departure, then ``steps_per_leg`` columns per leg (``column_leg``); a
    stopped sample keeps its stop state in later columns.

    Attributes
    ----------
    leg_names : names of the legs, (J,)
    position_km : distance made good [km], (n, K)
    elapsed_days : [d], (n, K)
    usable_Wh : energy the pack can deliver at that time, reserve included [Wh], (n, K)
    drawn_Wh : energy drawn so far [Wh], (n, K)
    reserve_Wh : the reserve the policy keeps at that time [Wh], (n, K)
    column_leg : leg of the step that ends at each column, (K,)
    leg_split_Wh : energy drawn on each leg by term (propulsion or pump, hotel, ...) [Wh],
        each (n, J); the terms add up to the energy drawn on the leg
    recovery_point_Wh : loiter and homing at the recovery point [Wh], (n,) (0 if not there)
    drawable_at_end_Wh : energy above the reserve available when the mission ends [Wh], (n,)
    arrived, turned_back : [bool], (n,)
    turn_position_km : where a vehicle turned back [km] (inf where it did not), (n,)
    margin_Wh : the transit's arrival margin after loiter and homing (the assessment's
        ``margin_Wh``) [Wh], (n,)
    under_ice : legs under an ice ceiling [bool], (J,)
    route_km : route length of each sample [km], (n,)
    """

    leg_names: tuple[str, ...]
    position_km: np.ndarray
    elapsed_days: np.ndarray
    usable_Wh: np.ndarray
    drawn_Wh: np.ndarray
    reserve_Wh: np.ndarray
    column_leg: np.ndarray
    leg_split_Wh: dict
    recovery_point_Wh: np.ndarray
    drawable_at_end_Wh: np.ndarray
    arrived: np.ndarray
    turned_back: np.ndarray
    turn_position_km: np.ndarray
    margin_Wh: np.ndarray
    under_ice: np.ndarray
    route_km: np.ndarray

    @property
    def n(self) -> int:
        return int(self.position_km.shape[0])

    @property
    def remaining_Wh(self) -> np.ndarray:
        """Usable energy left in the pack (reserve included) [Wh], (n, K)."""
        return self.usable_Wh - self.drawn_Wh

    @property
    def end_above_reserve_Wh(self) -> np.ndarray:
        """Energy above the reserve once loiter and homing at the recovery point are paid
        [Wh], (n,): equals :attr:`margin_Wh` for every sample that arrived."""
        return self.drawable_at_end_Wh - self.drawn_Wh[:, -1] - self.recovery_point_Wh

    def planned_position_km(self) -> np.ndarray:
        """Where each column lies on the route at the median leg lengths [km], (K,)."""
        return np.median(self.position_km[self.arrived], axis=0) if self.arrived.any() \
            else np.max(self.position_km, axis=0)

    def flying(self) -> np.ndarray:
        """Samples still flying forward at each column [bool], (n, K): not stopped short of
        it, not turned back before it."""
        reached = self.position_km >= self.planned_position_km()[None, :] * (1 - 1e-9) - 1e-9
        before_turn = self.position_km <= self.turn_position_km[:, None] + 1e-9
        return reached & before_turn

    def fan(self, quantiles=FAN_QUANTILES) -> np.ndarray:
        """Quantiles over the flying samples of the remaining usable energy [Wh],
        (len(quantiles), K); NaN where fewer than 5 samples fly."""
        remaining = np.where(self.flying(), self.remaining_Wh, np.nan)
        out = np.full((len(quantiles), remaining.shape[1]), np.nan)
        count = np.sum(np.isfinite(remaining), axis=0)
        ok = count >= 5
        if ok.any():
            out[:, ok] = np.nanquantile(remaining[:, ok], quantiles, axis=0)
        return out

    def mean_split_Wh(self) -> dict[str, np.ndarray]:
        """Mean over the samples that did not turn back of the energy drawn on each leg by
        term [Wh], (J,) each, plus ``recovery point`` (loiter and homing) as a (1,) array.

        A vehicle that turned back is left out: its profile is the forward flight it
        abandoned, not the flight it made (all zeros when every sample turned back)."""
        keep = ~self.turned_back
        if not keep.any():
            return {**{k: np.zeros(v.shape[1]) for k, v in self.leg_split_Wh.items()},
                    "recovery point": np.zeros(1)}
        out = {k: np.mean(v[keep], axis=0) for k, v in self.leg_split_Wh.items()}
        out["recovery point"] = np.array([float(np.mean(self.recovery_point_Wh[keep]))])
        return out
