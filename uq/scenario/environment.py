"""Legs of a waypoint route, with their environment taken from gridded ocean data.

The ``[route]`` section gives the waypoints; the optional ``[environment]`` section points the
environmental leg fields at data files::

    [environment]
    start = 2027-05-01T00:00:00Z      # deployment (launch) time, UTC
    progress_m_s = 0.30               # nominal speed made good, times the legs
    launch_window_days = 10.0         # launch shifted over [0, 10] days in the data's steps
    seabed_clearance_m = 20.0
    current = {file = "sea.nc"}       # eastward/northward_sea_water_velocity
    temperature = {file = "sea.nc"}
    salinity = {file = "sea.nc"}
    bathymetry = {file = "sea.nc"}
    ice = {file = "ice.nc", draft_m = 15.0, threshold = 0.15}

How a leg's inputs are made (one rule for every field):

* **Realizations.** The vehicle is flown along its nominal schedule (launch at ``start``, the
  legs timed at ``progress_m_s``, or a leg's own ``window_start``/``window_end``). Each
  ensemble member and each launch time in ``[start, start + launch_window_days]`` (the data's
  own time steps) is one realization: the field is interpolated (linear in latitude, longitude
  and time) at the points of the leg's geodesic at the times the vehicle passes them, averaged
  over the vehicle's depth band (glider: its dive band cut at the seabed; propeller vehicle:
  its running depth), resolved on the local geodesic bearing (currents) and averaged along the
  leg. R = members x launch times realizations of every leg, on one common index.
* **Distribution.** A current component is ``normal(mean, sd)`` fitted by moments to its R
  values; temperature and salinity are the same normal truncated to their physical range
  (the truncation lies many sd away, so the moments are kept). Moments rather than an
  empirical-quantile shape because R is small (tens) and the energy of a leg is close to
  linear in the along-track current, so its mean and variance are what the answer depends
  on; tails beyond the data are the normal's, which the report says.
* **Dependence.** The Spearman rank correlation of every pair of data-derived current
  components (along and across, all legs) over the same R realizations feeds the scenario's
  Gaussian copula. Temperature and salinity enter the transit only through seawater density
  (a small effect on buoyancy and drag) and are left independent; their time-only spread is
  nearly rank-identical across legs and would add a near-singular block for no gain. If the matrix (or its copula form
  2 sin(pi r/6)) is not comfortably positive definite it is shrunk toward the identity by
  the smallest listed amount that fixes it; the amount is reported.
* **Seabed and ice.** ``seabed_m`` is the shallowest bathymetry along the leg less the
  clearance; ``ice_ceiling_m`` is ``draft_m`` where the ice fraction reaches ``threshold`` at
  any point in any realization (0 elsewhere).

A value written on the route for a leg always wins over the data; the report lists, for each
leg field, the file, variables, time window and method that produced it (:class:`FieldSource`).
"""
from __future__ import annotations

import math
import os
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from uq.scenario.field_table import keys_of
from uq.scenario.errors import MISSING, ScenarioError
from uq.scenario.ocean import OceanDataError, band_bottom, band_mean, file_sha256, open_field
from uq.scenario.route import (RouteLeg, geodesic_legs, leg_track, parse_time,
                               read_waypoints, require_extra, resolve_path)

__all__ = ["FieldSource", "DataCorrelation", "RouteBuild", "build_route", "fit_marginal",
           "rank_correlation"]

_TEMPERATURE_RANGE = (-3.0, 40.0)   # the scenario's range of in-situ temperature [degC]
_SALINITY_RANGE = (0.0, 42.0)       # the scenario's range of practical salinity
_SHRINKAGE = (0.0, 0.02, 0.05, 0.1, 0.2, 0.3, 0.5)
_MIN_EIGENVALUE = 1e-3
_CORRELATED = ("current_along_m_s", "current_across_m_s")  # fields whose dependence is estimated
_SD_FLOOR = 1e-9                    # below this spread a field is taken as fixed


@dataclass(frozen=True)
class FieldSource:
    """Where one leg field came from (one row of the report's environment table)."""

    leg: str
    field: str
    value: str           # the distribution or number, as described to the reader
    file: str            # data file name ("" when stated on the route)
    variables: str
    window: str
    method: str
    sha256: str = ""


@dataclass(frozen=True)
class DataCorrelation:
    """A rank correlation estimated from data."""

    inputs: tuple[str, str]
    rank: float
    realizations: int


@dataclass(frozen=True)
class RouteBuild:
    """What a ``[route]`` (+ ``[environment]``) section produced.

    ``legs`` are ``[[legs]]``-shaped tables for the scenario reader, which validates them like
    hand-written legs; ``correlations`` are data-derived rank correlations.
    """

    legs: tuple[dict, ...]
    route: tuple[RouteLeg, ...]
    sources: tuple[FieldSource, ...]
    correlations: tuple[DataCorrelation, ...]
    shrinkage: float = 0.0
    realizations: int = 0


# =============================================================================== fitting
def fit_marginal(values: np.ndarray, field: str) -> tuple[Any, str]:
    """The distribution table of a leg field fitted to its realizations (see module notes).

    Returns
    -------
    table : dict or float
        A distribution table ``{dist = ...}`` or a fixed number (no spread in the data).
    family : str
        The words for the report.
    """
    x = np.asarray(values, dtype=float)
    mean = float(np.mean(x))
    sd = float(np.std(x, ddof=1)) if x.size > 1 else 0.0
    if sd <= _SD_FLOOR:
        return mean, "fixed (no spread across the realizations)"
    if field in ("temperature_C", "practical_salinity"):
        lo, hi = _TEMPERATURE_RANGE if field == "temperature_C" else _SALINITY_RANGE
        low = max(mean - 6.0 * sd, lo + 1e-6)
        high = min(mean + 6.0 * sd, hi - 1e-6)
        return ({"dist": "truncnormal", "mean": mean, "sd": sd, "low": low, "high": high},
                "normal by moments, truncated at 6 sd")
    return {"dist": "normal", "mean": mean, "sd": sd}, "normal by moments"


def rank_correlation(matrix: np.ndarray) -> tuple[np.ndarray, float]:
    """Spearman rank correlation of the columns of ``matrix`` (R, d), made positive definite.

    Returns
    -------
    rho : ndarray (d, d)
        (1 - s) * spearman + s * I for the smallest s in (0, 0.02, 0.05, ..., 0.5) that gives
        both rho and 2 sin(pi rho / 6) a smallest eigenvalue of at least 1e-3.
    s : float
        The shrinkage used.
    """
    from scipy import stats

    x = np.asarray(matrix, dtype=float)
    rho = np.atleast_2d(stats.spearmanr(x).statistic) if x.shape[1] > 1 else np.eye(1)
    if x.shape[1] == 2:
        rho = np.array([[1.0, float(rho[0, 0]) if rho.size == 1 else rho[0, 1]],
                        [float(rho[0, 0]) if rho.size == 1 else rho[1, 0], 1.0]])
    rho = np.nan_to_num(rho, nan=0.0)
    np.fill_diagonal(rho, 1.0)
    eye = np.eye(rho.shape[0])
    for s in _SHRINKAGE:
        r = (1.0 - s) * rho + s * eye
        if min(np.linalg.eigvalsh(r)[0], np.linalg.eigvalsh(2.0 * np.sin(np.pi * r / 6.0))[0]) \
                >= _MIN_EIGENVALUE:
            return r, s
    return eye, 1.0


# =============================================================================== building
def build_route(route: Any, environment: Any, *, file: str, setpoint: Any, kind: str,
                leg_keys: tuple[str, ...]) -> RouteBuild:
    """Legs (and data-derived inputs) of a ``[route]`` with an optional ``[environment]``.

    Parameters
    ----------
    route : Mapping
        The ``[route]`` table: ``waypoints`` (array of tables) or ``csv`` (file name), and
        optionally ``sample_spacing_km`` (along-track spacing of the sampled points).
    environment : Mapping or None
        The ``[environment]`` table (module notes), or None.
    file : str
        The scenario file (messages, relative paths).
    setpoint : PropellerSetpoint or GliderSetpoint
        Gives the depth band and (propeller) the nominal progress.
    kind : str
        "propeller" or "glider".
    leg_keys : tuple of str
        The per-leg keys of the scenario (attributes a waypoint may carry).

    Raises
    ------
    ScenarioError, OceanDataError
        One line naming the file, key or variable, and what was expected.
    """
    if not isinstance(route, Mapping):
        raise ScenarioError(file, "route", route, "a table [route] with waypoints or csv")
    for key in route:
        if key not in keys_of("route"):
            raise ScenarioError(file, f"route.{key}", route[key],
                                f"a key of [route] (one of: {', '.join(keys_of('route'))})")
    given = [k for k in ("waypoints", "csv") if k in route]
    if len(given) != 1:
        raise ScenarioError(file, "route.waypoints", MISSING if not given else route["csv"],
                            "exactly one of route.waypoints (a list) or route.csv (a file name)")
    spacing = _positive(route.get("sample_spacing_km", 10.0), file, "route.sample_spacing_km",
                        "an along-track sampling spacing [km]")
    points = read_waypoints(route[given[0]], file=file, path=f"route.{given[0]}", leg_keys=leg_keys)
    legs = geodesic_legs(points, file=file)
    tables = [{"name": leg.name, "length_km": leg.length_km, **leg.attributes} for leg in legs]
    if environment is None:
        for leg in legs:
            if leg.window is not None:
                raise ScenarioError(file, f"route.legs.{leg.name}.window_start", leg.window[0],
                                    "a time window only together with an [environment] section")
        return RouteBuild(legs=tuple(tables), route=legs, sources=(), correlations=())
    return _Environment(file, environment, setpoint, kind, legs, tables, spacing).build()


def _positive(value, file, key, what, *, allow_zero=False) -> float:
    ok = (not isinstance(value, bool) and isinstance(value, (int, float)) and math.isfinite(value)
          and (value >= 0 if allow_zero else value > 0))
    if not ok:
        raise ScenarioError(file, key, value, f"{what}, a {'non-negative' if allow_zero else 'positive'} number")
    return float(value)


def _median(value) -> float:
    return float(value) if isinstance(value, (int, float)) else float(value.median)


_FIELD_KEYS = {
    "current": ("file", "eastward", "northward"),
    "temperature": ("file", "variable"),
    "salinity": ("file", "variable"),
    "bathymetry": ("file", "variable"),
    "ice": ("file", "variable", "draft_m", "threshold"),
}
#: the settings of [environment] (the other keys are the data fields above), from the field table
_SETTINGS = tuple(k for k in keys_of("environment") if k not in _FIELD_KEYS)


class _Environment:
    """One pass over an ``[environment]`` table (kept out of the reader: it opens files)."""

    def __init__(self, file, table, setpoint, kind, legs, tables, spacing):
        if not isinstance(table, Mapping):
            raise ScenarioError(file, "environment", table, "a table [environment]")
        for key in table:
            if key not in _SETTINGS and key not in _FIELD_KEYS:
                raise ScenarioError(file, f"environment.{key}", table[key], "a key of [environment] (one of: "
                                    + ", ".join((*_SETTINGS, *_FIELD_KEYS)) + ")")
        self.file, self.table, self.kind = file, table, kind
        self.legs, self.tables, self.spacing = legs, tables, spacing
        if kind == "glider":
            self.band = (_median(setpoint.top_depth_m), _median(setpoint.bottom_depth_m))
        else:
            self.band = (_median(setpoint.depth_m),) * 2
        self.default_progress = _median(setpoint.speed_m_s) if kind == "propeller" else None
        self.cache: dict[str, Any] = {}
        self.sources: list[FieldSource] = []
        self.columns: dict[str, np.ndarray] = {}
        self.cut: dict[int, float] = {}  # leg index -> band bottom at its shallowest point [m]

    # ------------------------------------------------------------------ settings
    def field_spec(self, name):
        spec = self.table.get(name)
        if spec is None:
            return None
        key = f"environment.{name}"
        if not isinstance(spec, Mapping):
            raise ScenarioError(self.file, key, spec, f"a table {{file = ...}} ({', '.join(_FIELD_KEYS[name])})")
        for k in spec:
            if k not in _FIELD_KEYS[name]:
                raise ScenarioError(self.file, f"{key}.{k}", spec[k],
                                    f"a key of {key} (one of: {', '.join(_FIELD_KEYS[name])})")
        if not isinstance(spec.get("file"), str) or not spec["file"].strip():
            raise ScenarioError(self.file, f"{key}.file", spec.get("file", MISSING), "the data file's name")
        path = resolve_path(spec["file"], self.file)
        if not os.path.isfile(path):
            raise ScenarioError(self.file, f"{key}.file", spec["file"], f"an existing data file ({path})")
        for k in ("variable", "eastward", "northward"):
            if k in spec and not isinstance(spec[k], str):
                raise ScenarioError(self.file, f"{key}.{k}", spec[k], "a variable name (a string)")
        return {**spec, "path": path}

    def schedule(self, time_dependent: bool):
        """(launch offsets [timedelta64], per-leg point times [datetime64]) or (None, None)."""
        if not time_dependent:
            return None, None
        t = self.table
        if "start" not in t:
            raise ScenarioError(self.file, "environment.start", MISSING,
                                "the deployment time (a TOML datetime, e.g. 2027-05-01T00:00:00Z)")
        start = np.datetime64(parse_time(t["start"], file=self.file, key="environment.start"), "ns")
        progress = t.get("progress_m_s", self.default_progress)
        if progress is None:
            raise ScenarioError(self.file, "environment.progress_m_s", MISSING,
                                "the glider's nominal speed made good [m/s] (it times the legs "
                                "in the data; typical 0.2-0.4 m/s)")
        progress = _positive(progress, self.file, "environment.progress_m_s", "a speed made good [m/s]")
        window = _positive(t.get("launch_window_days", 0.0), self.file,
                           "environment.launch_window_days", "a launch window [days]", allow_zero=True)
        self.window_days, self.start, self.progress = window, start, progress
        times, leg_start = [], start
        for leg, track in zip(self.legs, self.tracks):
            if leg.window is not None:
                w0, w1 = (np.datetime64(w, "ns") for w in leg.window)
                frac = track.distance_m / track.distance_m[-1]
                times.append(w0 + (frac * (w1 - w0).astype(float)).astype("timedelta64[ns]"))
                leg_start = w1
            else:
                secs = track.distance_m / progress
                times.append(leg_start + (secs * 1e9).astype("timedelta64[ns]"))
                leg_start = times[-1][-1]
        return window, times

    def launch_offsets(self, field) -> np.ndarray:
        data_times = field.times
        steps = np.diff(data_times).astype("timedelta64[s]").astype(float)
        step = float(np.median(steps)) if steps.size else 0.0
        if self.window_days == 0.0 or step <= 0.0:
            return np.zeros(1, dtype="timedelta64[ns]")
        k = int(math.floor(self.window_days * 86400.0 / step + 1e-9))
        return (np.arange(k + 1) * step * 1e9).astype("timedelta64[ns]")

    # ------------------------------------------------------------------ build
    def build(self) -> RouteBuild:
        specs = {name: self.field_spec(name) for name in _FIELD_KEYS}
        self.tracks = [leg_track(leg, spacing_km=self.spacing, file=self.file) for leg in self.legs]
        fields = {}
        for name, spec in specs.items():
            if spec is None:
                continue
            key = f"environment.{name}"
            if name == "current":
                fields[name] = (open_field(spec["path"], "eastward", spec.get("eastward"), file=self.file,
                                           key=key, cache=self.cache),
                                open_field(spec["path"], "northward", spec.get("northward"), file=self.file,
                                           key=key, cache=self.cache))
            else:
                fields[name] = (open_field(spec["path"], name, spec.get("variable"), file=self.file,
                                           key=key, cache=self.cache),)
        timed = [f for pair in fields.values() for f in pair if f.times is not None and f.times.size > 1]
        _, self.point_times = self.schedule(bool(timed))
        self.offsets = self.launch_offsets(timed[0]) if timed else np.zeros(1, "timedelta64[ns]")
        members = {f.members for pair in fields.values() for f in pair if f.members > 1}
        if len(members) > 1:
            f = next(f for pair in fields.values() for f in pair if f.members > 1)
            raise OceanDataError(f.path, f.variable, sorted(members),
                                 "the same number of ensemble members in every data file")
        self.members = members.pop() if members else 1
        self.realizations = self.members * self.offsets.size
        if "bathymetry" in fields:
            self.seabed(fields["bathymetry"][0], specs["bathymetry"])
        if "current" in fields:
            self.currents(*fields["current"])
        salinity = self.scalar(fields["salinity"][0], "practical_salinity") if "salinity" in fields else None
        if "temperature" in fields:
            self.scalar(fields["temperature"][0], "temperature_C", salinity=salinity)
        if "ice" in fields:
            self.ice(fields["ice"][0], specs["ice"])
        for ds in self.cache.values():
            ds.close()
        return self.finish()

    def window_text(self) -> str:
        if self.point_times is None:
            return "static field (no time axis)"
        first = np.min([t[0] for t in self.point_times])
        last = np.max([t[-1] for t in self.point_times]) + self.offsets[-1]
        fmt = lambda t: str(np.datetime_as_string(t, unit="m")).replace("T", " ")  # noqa: E731
        return (f"{fmt(first)} to {fmt(last)} UTC ({self.offsets.size} launch time"
                f"{'s' if self.offsets.size > 1 else ''} over {self.window_days:g} days)")

    # ------------------------------------------------------------------ sampling
    def sample(self, field, leg_index: int) -> np.ndarray:
        """(member, launch, point[, depth]) values of ``field`` along one leg."""
        leg, track = self.legs[leg_index], self.tracks[leg_index]
        what = f"leg {leg.name!r}"
        lon = field.check_inside(track.latitude, track.longitude, f"every point of {what}")
        n, k = track.latitude.size, self.offsets.size
        if field.times is not None and field.times.size > 1:
            times = (self.point_times[leg_index][None, :] + self.offsets[:, None])  # (k, n)
            field.check_times(times, f"the times the vehicle is on {what}")
            out = field.sample(np.tile(track.latitude, k), np.tile(lon, k), times.ravel())
        else:
            out = field.sample(np.tile(track.latitude, k), np.tile(lon, k),
                               np.zeros(n * k, "datetime64[ns]") if field.times is not None else None)
            if "time" in out.dims:
                out = out.isel(time=0)
        order = [d for d in ("member", "point", "depth") if d in out.dims]
        values = np.asarray(out.transpose(*order).values, dtype=float)
        if "member" not in order:
            values = values[None]
        values = values.reshape(values.shape[0], k, n, *values.shape[2:])
        if values.shape[0] == 1 and self.members > 1:
            values = np.broadcast_to(values, (self.members, *values.shape[1:]))
        return values

    def banded(self, field, leg_index: int) -> np.ndarray:
        """(member, launch, point) depth-band means; land or no data in the band is refused."""
        values = self.sample(field, leg_index)
        if "depth" in field.data.dims:
            top, bottom = self.band
            levels = field.data["depth"].values
            reach = band_bottom(values, levels, bottom)
            if np.isfinite(reach) and reach < bottom:
                self.cut[leg_index] = min(reach, self.cut.get(leg_index, bottom))
            values = band_mean(values, levels, top, bottom)
        bad = ~np.isfinite(values)
        if bad.any():
            m, k, p = np.unravel_index(int(np.argmax(bad)), bad.shape)
            track = self.tracks[leg_index]
            field.fail((round(float(track.latitude[p]), 4), round(float(track.longitude[p]), 4)),
                       f"sea values in the depth band {self.band[0]:g}-{self.band[1]:g} m at every "
                       f"point of leg {self.legs[leg_index].name!r} (all NaN here: land, or "
                       "seabed above the band)")
        return values

    def currents(self, east, north) -> None:
        from physics.currents import track_components

        for j, leg in enumerate(self.legs):
            u = self.banded(east, j)
            v = self.banded(north, j)
            comp = track_components(u, v, self.tracks[j].bearing_deg)
            for name, values in (("current_along_m_s", comp.along), ("current_across_m_s", comp.across)):
                self.put(j, name, values.mean(axis=-1).ravel(), east,
                         f"{east.variable}, {north.variable}",
                         "resolved on the local geodesic bearing, ")

    def scalar(self, field, name, *, salinity=None) -> list[np.ndarray]:
        gsw = None
        out = []
        for j, leg in enumerate(self.legs):
            values = self.banded(field, j).mean(axis=-1)  # (member, launch)
            track = self.tracks[j]
            lat, lon = float(np.mean(track.latitude)), float(np.mean(track.longitude))
            p = None
            note = ""
            if field.standard_name in ("sea_water_absolute_salinity", "sea_water_potential_temperature"):
                gsw = gsw or require_extra("gsw", file=field.path, key=field.variable)
                p = float(gsw.p_from_z(-0.5 * (self.band[0] + self.band[1]), lat))
            if field.standard_name == "sea_water_absolute_salinity":
                values = gsw.SP_from_SA(values, p, lon, lat)
                note = f"practical salinity from absolute (TEOS-10) at {p:.0f} dbar, "
            elif field.standard_name == "sea_water_potential_temperature":
                sp = salinity[j] if salinity is not None else np.full_like(values, 35.0)
                sa = gsw.SA_from_SP(sp, p, lon, lat)
                values = gsw.t_from_CT(sa, gsw.CT_from_pt(sa, values), p)
                note = f"in-situ from potential temperature (TEOS-10) at {p:.0f} dbar, "
            out.append(values)
            self.put(j, name, np.asarray(values).ravel(), field, field.variable, note)
        return out

    def put(self, j, name, values, field, variables, note) -> None:
        leg = self.legs[j]
        if name in leg.attributes:
            return self.stated(leg, name)
        if name == "temperature_C" or name == "practical_salinity":
            lo, hi = _TEMPERATURE_RANGE if name == "temperature_C" else _SALINITY_RANGE
            if values.min() < lo or values.max() > hi:
                field.fail(round(float(values.min() if values.min() < lo else values.max()), 3),
                           f"{name} on leg {leg.name!r} in [{lo:g}, {hi:g}] after conversion")
        table, family = fit_marginal(values, name)
        self.tables[j][name] = table
        if isinstance(table, Mapping):
            self.columns[f"legs.{leg.name}.{name}"] = values
        depth = (f"at {self.band[0]:g} m" if self.band[0] == self.band[1]
                 else f"over {self.band[0]:g}-{self.band[1]:g} m")
        if j in self.cut:
            depth += (f" (cut at the seabed where shallower: down to {self.cut[j]:g} m at the "
                      "shallowest point of the leg)")
        self.sources.append(FieldSource(
            leg=leg.name, field=name, value=_describe(table), file=os.path.basename(field.path),
            variables=variables, window=self.window_text(),
            method=(f"{family} over {values.size} realizations ({self.members} member"
                    f"{'s' if self.members > 1 else ''} x {self.offsets.size} launch time"
                    f"{'s' if self.offsets.size > 1 else ''}); {note}mean {depth} and along the leg"),
            sha256=file_sha256(field.path)))

    def stated(self, leg, name) -> None:
        self.sources.append(FieldSource(leg=leg.name, field=name, value=_describe(leg.attributes[name]),
                                        file="", variables="", window="",
                                        method="stated on the route (overrides the data)"))

    def seabed(self, field, spec) -> None:
        clearance = _positive(self.table.get("seabed_clearance_m", 0.0), self.file,
                              "environment.seabed_clearance_m", "a clearance above the seabed [m]",
                              allow_zero=True)
        for j, leg in enumerate(self.legs):
            if "seabed_m" in leg.attributes:
                self.stated(leg, "seabed_m")
                continue
            track = self.tracks[j]
            lon = field.check_inside(track.latitude, track.longitude, f"every point of leg {leg.name!r}")
            depth = np.asarray(field.sample(track.latitude, lon, None).values, float)
            depth = depth.reshape(-1, track.latitude.size).min(axis=0) if depth.ndim > 1 else depth
            if not np.all(np.isfinite(depth)) or np.any(depth <= 0.0):
                p = int(np.argmax(~np.isfinite(depth) | (depth <= 0.0)))
                field.fail((round(float(track.latitude[p]), 4), round(float(track.longitude[p]), 4)),
                           f"a sea-floor depth > 0 m at every point of leg {leg.name!r} (land or "
                           "missing bathymetry here)")
            shallowest = float(depth.min())
            if shallowest - clearance <= 0.0:
                field.fail(round(shallowest, 1), f"a shallowest depth on leg {leg.name!r} deeper than "
                           f"environment.seabed_clearance_m = {clearance:g}")
            self.tables[j]["seabed_m"] = shallowest - clearance
            self.sources.append(FieldSource(
                leg=leg.name, field="seabed_m", value=f"{shallowest - clearance:.1f}",
                file=os.path.basename(field.path), variables=field.variable, window="static",
                method=f"shallowest of {depth.size} points on the geodesic ({shallowest:.1f} m) "
                       f"less {clearance:g} m clearance", sha256=file_sha256(field.path)))

    def ice(self, field, spec) -> None:
        draft = _positive(spec.get("draft_m", MISSING), self.file, "environment.ice.draft_m",
                          "the ice draft (keel depth plus clearance) [m]")
        threshold = spec.get("threshold", 0.15)
        if isinstance(threshold, bool) or not isinstance(threshold, (int, float)) or not 0 < threshold <= 1:
            raise ScenarioError(self.file, "environment.ice.threshold", threshold, "an ice fraction in (0, 1]")
        for j, leg in enumerate(self.legs):
            if "ice_ceiling_m" in leg.attributes:
                self.stated(leg, "ice_ceiling_m")
                continue
            cover = float(np.max(self.banded(field, j)))
            ceiling = draft if cover >= threshold else 0.0
            self.tables[j]["ice_ceiling_m"] = ceiling
            self.sources.append(FieldSource(
                leg=leg.name, field="ice_ceiling_m", value=f"{ceiling:g}",
                file=os.path.basename(field.path), variables=field.variable, window=self.window_text(),
                method=f"largest ice fraction on the leg {cover:.2f} vs threshold {threshold:g}: "
                       f"ceiling {'= draft ' + format(draft, 'g') + ' m' if ceiling else 'none'}",
                sha256=file_sha256(field.path)))

    def finish(self) -> RouteBuild:
        correlate = self.table.get("correlate", True)
        if not isinstance(correlate, bool):
            raise ScenarioError(self.file, "environment.correlate", correlate, "true or false")
        names = [n for n in self.columns if n.endswith(_CORRELATED)]
        pairs: list[DataCorrelation] = []
        shrink = 0.0
        if correlate and len(names) > 1 and self.realizations > 2:
            rho, shrink = rank_correlation(np.column_stack([self.columns[n] for n in names]))
            for a in range(len(names)):
                for b in range(a + 1, len(names)):
                    pairs.append(DataCorrelation((names[a], names[b]), float(rho[a, b]), self.realizations))
        return RouteBuild(legs=tuple(self.tables), route=self.legs, sources=tuple(self.sources),
                          correlations=tuple(pairs), shrinkage=shrink, realizations=self.realizations)


def _describe(value) -> str:
    if isinstance(value, Mapping):
        v = dict(value)
        kind = v.pop("dist")
        shown = ", ".join(f"{k} {x:.4g}" for k, x in v.items() if k in ("mean", "sd"))
        return f"{kind}({shown})"
    if isinstance(value, (int, float)):
        return f"{float(value):.4g}"
    return str(value)

