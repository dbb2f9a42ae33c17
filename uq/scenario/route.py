"""Routes given as waypoints: legs on the WGS84 ellipsoid.

A ``[route]`` section lists waypoints (latitude, longitude, optional per-leg attributes) in
the scenario file or in a CSV file beside it. Each pair of consecutive waypoints is a leg; its
length and bearings come from the geodesic on the WGS84 ellipsoid (Karney's algorithm as
exposed by ``pyproj.Geod``), never from a flat-earth formula. Attributes written on a waypoint
belong to the leg that *ends* at it (``leg`` names it; default ``leg_<k>``).

pyproj is part of the optional ``ocean`` extra; it is imported only when a route is read, so
the core install (leg-length routes) does not need it.

References
----------
.. [1] C. F. F. Karney (2013), Algorithms for geodesics, J. Geodesy 87:43-55.
"""
from __future__ import annotations

import csv
import datetime as _dt
import importlib
import math
import os
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from uq.scenario.errors import MISSING, ScenarioError

__all__ = ["RouteLeg", "LegTrack", "read_waypoints", "geodesic_legs", "leg_track",
           "require_extra", "resolve_path", "WINDOW_KEYS"]

#: per-leg attributes that time the environment sampling rather than set a leg field
WINDOW_KEYS = ("window_start", "window_end")
_LEG_NAME = re.compile(r"[A-Za-z0-9_-]+")
_LAT_KEYS = ("lat", "latitude")
_LON_KEYS = ("lon", "longitude")


@dataclass(frozen=True)
class RouteLeg:
    """One leg of a waypoint route.

    Attributes
    ----------
    name : str
    start, end : tuple of float
        (latitude, longitude) of the waypoints [deg].
    length_km : float
        Geodesic length on WGS84 [km].
    bearing_deg : float
        Forward azimuth at the start, clockwise from true north [deg].
    final_bearing_deg : float
        Forward azimuth on arrival [deg] (differs from the start on long legs).
    attributes : Mapping
        Per-leg values written on the waypoint that ends the leg (leg keys of the scenario).
    window : tuple or None
        (start, end) datetimes of a time window stated for this leg.
    """

    name: str
    start: tuple[float, float]
    end: tuple[float, float]
    length_km: float
    bearing_deg: float
    final_bearing_deg: float
    attributes: Mapping[str, Any] = field(default_factory=dict)
    window: tuple[_dt.datetime, _dt.datetime] | None = None


@dataclass(frozen=True)
class LegTrack:
    """Points along a leg's geodesic.

    Attributes
    ----------
    latitude, longitude : ndarray
        [deg], from the start waypoint to the end waypoint inclusive.
    bearing_deg : ndarray
        Forward azimuth of the geodesic at each point [deg].
    distance_m : ndarray
        Distance along the geodesic from the leg start [m].
    """

    latitude: np.ndarray
    longitude: np.ndarray
    bearing_deg: np.ndarray
    distance_m: np.ndarray


def require_extra(module: str, *, file: str, key: str | None, value: Any = MISSING):
    """Import ``module`` of the ``ocean`` extra, or raise a one-line :class:`ScenarioError`."""
    try:
        return importlib.import_module(module)
    except ImportError as exc:
        raise ScenarioError(file, key, value,
                            f"the optional package {module!r}, which this section needs; install "
                            "it with: pip install 'transit-risk[ocean]'") from exc


def resolve_path(name: str, source: str) -> str:
    """A file named in a scenario: absolute, or relative to the scenario file's folder."""
    if os.path.isabs(name):
        return name
    base = os.path.dirname(source) if os.path.isfile(source) else os.getcwd()
    return os.path.normpath(os.path.join(base, name))


# =============================================================================== waypoints
def read_waypoints(value: Any, *, file: str, path: str,
                   leg_keys: Sequence[str]) -> list[dict[str, Any]]:
    """The waypoints of ``route.waypoints`` (a list of tables) or ``route.csv`` (a file name).

    Parameters
    ----------
    value : list of Mapping or str
        The TOML array of tables, or the CSV file's name (relative to the scenario file).
    file : str
        The scenario file (for error messages and relative paths).
    path : str
        Key path of ``value`` ("route.waypoints" or "route.csv").
    leg_keys : sequence of str
        Per-leg keys a waypoint may carry (the scenario's leg fields).

    Returns
    -------
    list of dict
        One dict per waypoint: ``lat``, ``lon``, ``key`` (its key path for messages) and the
        per-leg attributes as read (numbers, distribution tables or date strings).
    """
    if isinstance(value, str):
        rows, where = _csv_rows(resolve_path(value, file), file, path, value)
    elif isinstance(value, (list, tuple)):
        rows = []
        for i, row in enumerate(value):
            if not isinstance(row, Mapping):
                raise ScenarioError(file, f"{path}[{i}]", row,
                                    "a waypoint table {lat = ..., lon = ...}")
            rows.append(dict(row))
        where = [(file, f"{path}[{i}]") for i in range(len(rows))]
    else:
        raise ScenarioError(file, path, value,
                            "a list of waypoint tables or the name of a CSV file of waypoints")
    if len(rows) < 2:
        raise ScenarioError(file, path, len(rows), "at least two waypoints (one leg)")
    known = ("lat", "latitude", "lon", "longitude", "leg", *leg_keys, *WINDOW_KEYS)
    out = []
    for row, (wfile, key) in zip(rows, where):
        point = {"key": key, "file": wfile}
        for name, v in row.items():
            if name not in known:
                raise ScenarioError(wfile, f"{key}.{name}", v,
                                    "a waypoint key (lat, lon, leg, " + ", ".join(
                                        k for k in (*leg_keys, *WINDOW_KEYS) if k != "length_km") + ")")
            if name == "length_km":
                raise ScenarioError(wfile, f"{key}.{name}", v,
                                    "no length_km on a waypoint route (leg lengths come from the "
                                    "WGS84 geodesic between the waypoints)")
        point["lat"] = _coordinate(row, _LAT_KEYS, -90.0, 90.0, wfile, key, "a latitude [deg] in [-90, 90]")
        point["lon"] = _coordinate(row, _LON_KEYS, -180.0, 360.0, wfile, key,
                                   "a longitude [deg] in [-180, 360]")
        point["leg"] = row.get("leg")
        point["attributes"] = {k: v for k, v in row.items()
                               if k not in ("lat", "latitude", "lon", "longitude", "leg")}
        out.append(point)
    return out


def _coordinate(row, names, lo, hi, file, key, expected) -> float:
    given = [n for n in names if n in row]
    if not given:
        raise ScenarioError(file, f"{key}.{names[0]}", MISSING, expected)
    v = row[given[0]]
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) or not lo <= v <= hi:
        raise ScenarioError(file, f"{key}.{given[0]}", v, expected)
    return float(v)


def _csv_rows(csv_path: str, file: str, path: str, value: str):
    try:
        with open(csv_path, newline="", encoding="utf-8") as fh:
            reader = csv.DictReader(row for row in fh if not row.lstrip().startswith("#"))
            rows = list(reader)
            header = reader.fieldnames or []
    except (OSError, UnicodeDecodeError, csv.Error) as exc:
        raise ScenarioError(file, path, value, f"a readable UTF-8 CSV file of waypoints ({exc})") from exc
    if not any(h in header for h in _LAT_KEYS) or not any(h in header for h in _LON_KEYS):
        raise ScenarioError(csv_path, None, expected=f"a header row with lat and lon columns (got {header})")
    out = []
    for row in rows:
        item = {}
        for k, v in row.items():
            if k is None or v is None or not v.strip():
                continue  # an empty cell: not given on this waypoint
            k = k.strip()
            v = v.strip()
            if k in ("leg", *WINDOW_KEYS):
                item[k] = v
            else:
                try:
                    item[k] = float(v)
                except ValueError:
                    item[k] = v  # refused with its key path by the reader of that field
        out.append(item)
    # line numbers: header is line 1 (comment lines are skipped)
    return out, [(csv_path, f"row[{i + 1}]") for i in range(len(out))]


# =============================================================================== geodesics
def _geod(file: str, ellipsoid: str = "WGS84"):
    pyproj = require_extra("pyproj", file=file, key="route")
    return pyproj, pyproj.Geod(ellps=ellipsoid)


def geodesic_legs(waypoints: Sequence[Mapping[str, Any]], *, file: str,
                  ellipsoid: str = "WGS84") -> tuple[RouteLeg, ...]:
    """Legs between consecutive waypoints, measured on the WGS84 ellipsoid.

    Parameters
    ----------
    waypoints : sequence of Mapping
        As returned by :func:`read_waypoints`.
    file : str
        The scenario file (error messages).
    ellipsoid : str, optional
        pyproj ellipsoid name; scenarios always use "WGS84" (other ellipsoids let the tests
        reproduce published examples computed on them).

    Returns
    -------
    tuple of RouteLeg
        Lengths from ``pyproj.Geod(ellps=ellipsoid).inv`` [1]_.
    """
    _, geod = _geod(file, ellipsoid)
    legs = []
    seen: dict[str, str] = {}
    for k in range(1, len(waypoints)):
        a, b = waypoints[k - 1], waypoints[k]
        name = b["leg"] if b["leg"] is not None else f"leg_{k}"
        if not isinstance(name, str) or not _LEG_NAME.fullmatch(name):
            raise ScenarioError(b["file"], f"{b['key']}.leg", name, "a leg name of letters, digits, _ and - only")
        if name in seen:
            raise ScenarioError(b["file"], f"{b['key']}.leg", name, f"a unique leg name ({seen[name]} has it)")
        seen[name] = b["key"]
        az12, az21, dist = geod.inv(a["lon"], a["lat"], b["lon"], b["lat"])
        if not dist > 0.0:
            raise ScenarioError(b["file"], b["key"], (b["lat"], b["lon"]),
                                f"a waypoint apart from the one before it (leg {name!r} has zero length)")
        attributes = dict(b["attributes"])
        window = _window(attributes, b)
        legs.append(RouteLeg(name=name, start=(a["lat"], a["lon"]), end=(b["lat"], b["lon"]),
                             length_km=dist / 1000.0, bearing_deg=float(az12) % 360.0,
                             final_bearing_deg=(float(az21) + 180.0) % 360.0,
                             attributes=attributes, window=window))
    return tuple(legs)


def _window(attributes: dict[str, Any], point: Mapping[str, Any]):
    given = {k: attributes.pop(k) for k in WINDOW_KEYS if k in attributes}
    if not given:
        return None
    if len(given) != 2:
        missing = [k for k in WINDOW_KEYS if k not in given][0]
        raise ScenarioError(point["file"], f"{point['key']}.{missing}", MISSING,
                            "both window_start and window_end, or neither")
    times = []
    for k in WINDOW_KEYS:
        times.append(parse_time(given[k], file=point["file"], key=f"{point['key']}.{k}"))
    if not times[0] < times[1]:
        raise ScenarioError(point["file"], f"{point['key']}.window_end", given["window_end"],
                            "a time after window_start")
    return tuple(times)


def parse_time(value: Any, *, file: str, key: str) -> _dt.datetime:
    """A TOML date/datetime or an ISO 8601 string, as a naive UTC datetime."""
    if isinstance(value, _dt.datetime):
        t = value
    elif isinstance(value, _dt.date):
        t = _dt.datetime(value.year, value.month, value.day)
    elif isinstance(value, str):
        try:
            t = _dt.datetime.fromisoformat(value.strip().replace("Z", "+00:00"))
        except ValueError as exc:
            raise ScenarioError(file, key, value, "an ISO 8601 date or time, e.g. 2027-05-01T00:00Z") from exc
    else:
        raise ScenarioError(file, key, value, "a date or time, e.g. 2027-05-01T00:00Z")
    if t.tzinfo is not None:
        t = t.astimezone(_dt.timezone.utc).replace(tzinfo=None)
    return t


def leg_track(leg: RouteLeg, *, spacing_km: float, file: str) -> LegTrack:
    """Points along the geodesic of ``leg``, about ``spacing_km`` apart, both ends included.

    Parameters
    ----------
    leg : RouteLeg
    spacing_km : float
        Largest spacing between points [km]; at least 3 points are returned.
    file : str
        The scenario file (error messages).

    Returns
    -------
    LegTrack
        Evenly spaced points with the geodesic's forward azimuth at each.
    """
    pyproj, geod = _geod(file)
    n = max(3, int(math.ceil(leg.length_km / spacing_km)) + 1)
    (lat1, lon1), (lat2, lon2) = leg.start, leg.end
    r = geod.inv_intermediate(lon1, lat1, lon2, lat2, npts=n, initial_idx=0, terminus_idx=0,
                              flags=pyproj.enums.GeodIntermediateFlag.AZIS_KEEP,
                              return_back_azimuth=False)
    lons = np.asarray(r.lons, dtype=float)
    lats = np.asarray(r.lats, dtype=float)
    azis = np.asarray(r.azis, dtype=float) % 360.0
    distance = np.linspace(0.0, leg.length_km * 1000.0, n)
    return LegTrack(latitude=lats, longitude=lons, bearing_deg=azis, distance_m=distance)
