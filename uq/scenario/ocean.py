"""Gridded ocean data (netCDF or any file xarray opens) sampled along a route.

Variables are found by their CF standard name [1]_ (or by a name the scenario states), axes by
their CF attributes (``axis``, ``standard_name``, ``units``, ``positive``), never by guessing
from dimension order. Units are converted to the scenario's (m/s, degC, PSS-78, m positive
down); anything not understood is refused with one line naming the data file, the variable
and what was expected (:class:`OceanDataError`, a :class:`ScenarioError`, exit status 2).

xarray and a netCDF engine belong to the optional ``ocean`` extra and are imported only when
a scenario names a data file.

References
----------
.. [1] CF Conventions 1.11, Appendix A and the standard name table.
"""
from __future__ import annotations

import hashlib
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from uq.scenario.errors import MISSING, ScenarioError
from uq.scenario.route import require_extra

__all__ = ["OceanDataError", "GriddedField", "open_field", "depth_band_weights",
           "STANDARD_NAMES", "file_sha256"]


class OceanDataError(ScenarioError):
    """A data file named by a scenario cannot be used: ``<data file>: <variable> = ...``."""

    def __reduce__(self):
        return (OceanDataError, (self.file, self.key, self.value, self.expected, self.suggestion))


#: accepted CF standard names per environmental quantity, in order of preference
STANDARD_NAMES = {
    "eastward": ("eastward_sea_water_velocity",),
    "northward": ("northward_sea_water_velocity",),
    "temperature": ("sea_water_temperature", "sea_water_potential_temperature"),
    "salinity": ("sea_water_practical_salinity", "sea_water_absolute_salinity"),
    "bathymetry": ("sea_floor_depth_below_geoid", "sea_floor_depth_below_sea_surface",
                   "sea_floor_depth_below_mean_sea_level"),
    "ice": ("sea_ice_area_fraction",),
}

# units: (accepted spellings, scale, offset) to the scenario's unit
_UNITS = {
    "velocity": ({"m s-1": 1.0, "m/s": 1.0, "m s**-1": 1.0, "m.s-1": 1.0, "meter second-1": 1.0,
                  "meters/second": 1.0, "cm s-1": 0.01, "cm/s": 0.01}, 0.0, "m s-1 or cm s-1"),
    "temperature": ({"degc": 1.0, "degree_celsius": 1.0, "degrees_celsius": 1.0, "celsius": 1.0,
                     "degree_c": 1.0, "degrees_c": 1.0, "k": 1.0, "kelvin": 1.0}, 0.0,
                    "degC or K"),
    "practical": ({"1": 1.0, "psu": 1.0, "pss-78": 1.0, "0.001": 1.0, "": 1.0}, 0.0,
                  "1 (PSS-78)"),
    "absolute": ({"g kg-1": 1.0, "g/kg": 1.0, "g kg**-1": 1.0}, 0.0, "g kg-1"),
    "depth": ({"m": 1.0, "meter": 1.0, "meters": 1.0, "metre": 1.0, "metres": 1.0}, 0.0, "m"),
    "fraction": ({"1": 1.0, "": 1.0, "%": 0.01, "percent": 0.01}, 0.0, "1 or %"),
}
_KELVIN = ("k", "kelvin")
_MEMBER_DIMS = ("realization", "member", "ensemble", "number")


def file_sha256(path: str) -> str:
    """SHA-256 of a data file's bytes (recorded with every distribution it produced)."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


@dataclass(frozen=True)
class GriddedField:
    """One variable of a data file with its CF axes identified.

    Attributes
    ----------
    path : str
        The data file.
    variable : str
        The variable's name in the file.
    standard_name : str
    data : xarray.DataArray
        Values in the scenario's unit, dims renamed to ``lat``, ``lon`` and, where present,
        ``depth`` (positive down), ``time``, ``member``.
    """

    path: str
    variable: str
    standard_name: str
    data: Any

    def fail(self, value: Any, expected: str) -> None:
        raise OceanDataError(self.path, self.variable, value, expected)

    @property
    def members(self) -> int:
        return int(self.data.sizes.get("member", 1))

    @property
    def times(self) -> np.ndarray | None:
        return self.data["time"].values if "time" in self.data.dims else None

    def check_inside(self, latitude: np.ndarray, longitude: np.ndarray, what: str) -> np.ndarray:
        """Refuse points outside the grid; return longitudes in the grid's convention."""
        lat = self.data["lat"].values
        lon = self.data["lon"].values
        lon_q = np.asarray(longitude, float)
        if lon.max() > 180.0:
            lon_q = np.mod(lon_q, 360.0)
        else:
            lon_q = np.where(lon_q > 180.0, lon_q - 360.0, lon_q)
        lat_q = np.asarray(latitude, float)
        bad = ((lat_q < lat.min()) | (lat_q > lat.max()) | (lon_q < lon.min()) | (lon_q > lon.max()))
        if bad.any():
            k = int(np.argmax(bad))
            self.fail((round(float(lat_q[k]), 4), round(float(longitude[k]), 4)),
                      f"{what} inside the grid's extent, latitude [{lat.min():g}, {lat.max():g}] "
                      f"and longitude [{lon.min():g}, {lon.max():g}] deg")
        return lon_q

    def check_times(self, times: np.ndarray, what: str) -> None:
        t = self.times
        if t is None:
            return
        lo, hi = t.min(), t.max()
        bad = (times < lo) | (times > hi)
        if bad.any():
            k = int(np.argmax(bad.ravel()))
            self.fail(str(np.datetime_as_string(times.ravel()[k], unit="h")),
                      f"{what} inside the file's time range {np.datetime_as_string(lo, unit='h')} "
                      f"to {np.datetime_as_string(hi, unit='h')}")

    def sample(self, latitude, longitude, times=None) -> Any:
        """Linear interpolation at points (dim ``point``); other axes (depth, member) kept."""
        xr = require_extra("xarray", file=self.path, key=self.variable)
        idx = {"lat": xr.DataArray(np.asarray(latitude, float), dims="point"),
               "lon": xr.DataArray(np.asarray(longitude, float), dims="point")}
        if "time" in self.data.dims:
            idx["time"] = xr.DataArray(np.asarray(times, "datetime64[ns]"), dims="point")
        if "time" in self.data.dims and self.data.sizes["time"] == 1:
            return self.data.isel(time=0).interp({k: v for k, v in idx.items() if k != "time"})
        return self.data.interp(idx)


def open_field(path: str, quantity: str, variable: str | None, *, file: str, key: str,
               cache: dict | None = None) -> GriddedField:
    """Open ``path`` and return the variable of ``quantity`` in the scenario's units.

    Parameters
    ----------
    path : str
        Data file (netCDF or anything ``xarray.open_dataset`` opens).
    quantity : str
        A key of :data:`STANDARD_NAMES`.
    variable : str or None
        The variable's name, when the scenario states it; else found by standard name.
    file, key : str
        The scenario file and key that named the data file (for an unreadable file).
    cache : dict, optional
        Opened datasets by path, shared across the fields of one scenario.

    Raises
    ------
    OceanDataError
        Missing variable, unknown units, inconsistent coordinates.
    """
    xr = require_extra("xarray", file=file, key=key, value=path)
    cache = {} if cache is None else cache
    if path not in cache:
        try:
            cache[path] = xr.open_dataset(path)
        except (OSError, ValueError) as exc:
            raise ScenarioError(file, key, path, f"a data file xarray can open ({exc})") from exc
    ds = cache[path]
    names = STANDARD_NAMES[quantity]
    if variable is not None:
        if variable not in ds.data_vars:
            raise OceanDataError(path, variable, MISSING, f"a variable named {variable!r} "
                                 f"(the file has: {', '.join(map(str, ds.data_vars))})")
        da = ds[variable]
    else:
        found = [v for n in names for v in ds.data_vars if ds[v].attrs.get("standard_name") == n]
        if not found:
            raise OceanDataError(path, names[0], MISSING,
                                 "a variable with standard_name " + " or ".join(names)
                                 + f" (the file has: {', '.join(map(str, ds.data_vars)) or 'none'})")
        da = ds[found[0]]
    standard = str(da.attrs.get("standard_name", names[0] if variable is None else ""))
    if variable is not None and standard and standard not in names:
        raise OceanDataError(path, str(da.name), standard, "standard_name " + " or ".join(names))
    standard = standard or names[0]
    da = _axes(da, path)
    da = _to_scenario_units(da, quantity, standard, path)
    return GriddedField(path=path, variable=str(da.name), standard_name=standard, data=da)


def _role(coord) -> str | None:
    attrs = coord.attrs
    axis = str(attrs.get("axis", "")).upper()
    std = str(attrs.get("standard_name", ""))
    units = str(attrs.get("units", "")).lower()
    name = str(coord.name).lower()
    if axis == "Y" or std == "latitude" or units in ("degrees_north", "degree_north", "degrees_n"):
        return "lat"
    if axis == "X" or std == "longitude" or units in ("degrees_east", "degree_east", "degrees_e"):
        return "lon"
    if axis == "T" or std == "time" or np.issubdtype(coord.dtype, np.datetime64):
        return "time"
    if axis == "Z" or std in ("depth", "altitude", "height") or "positive" in attrs:
        return "depth"
    if std == "realization" or name in _MEMBER_DIMS:
        return "member"
    return None


def _axes(da, path: str):
    """Rename the dims to lat/lon/depth/time/member, depth positive down, coords ascending."""
    rename: dict[str, str] = {}
    for dim in da.dims:
        coord = da[dim] if dim in da.coords else None
        role = _role(coord) if coord is not None else (
            "member" if str(dim).lower() in _MEMBER_DIMS else None)
        if role is None:
            raise OceanDataError(path, str(da.name), f"dimension {dim!r}",
                                 "dimensions identified by CF attributes (axis X/Y/Z/T, "
                                 "standard_name latitude/longitude/depth/time/realization, "
                                 "or units degrees_north/degrees_east)")
        if role in rename.values():
            raise OceanDataError(path, str(da.name), f"dimension {dim!r}",
                                 f"one {role} axis (two dimensions claim it)")
        rename[dim] = role
    for need in ("lat", "lon"):
        if need not in rename.values():
            raise OceanDataError(path, str(da.name), list(map(str, da.dims)),
                                 f"a {'latitude' if need == 'lat' else 'longitude'} axis "
                                 "(1-D coordinate with CF attributes)")
    da = da.rename(rename)
    if "member" not in da.coords and "member" in da.dims:
        da = da.assign_coords(member=np.arange(da.sizes["member"]))
    for dim in ("lat", "lon", "depth", "time"):
        if dim not in da.dims:
            continue
        values = da[dim].values
        if values.ndim != 1 or (dim != "time" and not np.all(np.isfinite(values))):
            raise OceanDataError(path, str(dim), "non-finite or multi-dimensional coordinate",
                                 "a 1-D coordinate of finite values")
        step = np.diff(values)
        if dim == "time":
            increasing = np.all(step > np.timedelta64(0, "ns"))
            decreasing = np.all(step < np.timedelta64(0, "ns"))
        else:
            increasing, decreasing = np.all(step > 0), np.all(step < 0)
        if not (increasing or decreasing):
            raise OceanDataError(path, dim, "coordinate not strictly monotonic",
                                 f"strictly increasing or decreasing {dim} values")
        if decreasing and values.size > 1:
            da = da.isel({dim: slice(None, None, -1)})
    if "depth" in da.dims:
        da = _depth_down(da, path)
    return da


def _depth_down(da, path: str):
    z = da["depth"]
    units = str(z.attrs.get("units", "m")).strip().lower()
    if units not in _UNITS["depth"][0]:
        raise OceanDataError(path, "depth", units, "depth units m")
    positive = str(z.attrs.get("positive", "")).lower()
    values = z.values.astype(float)
    if positive == "up" or (positive == "" and np.all(values <= 0.0)):
        da = da.assign_coords(depth=-values).isel(depth=slice(None, None, -1))
    elif positive not in ("down", ""):
        raise OceanDataError(path, "depth", positive, "positive = 'down' or 'up'")
    if np.any(da["depth"].values < -1e-6):
        raise OceanDataError(path, "depth", float(da["depth"].values.min()),
                             "depths below the sea surface (positive down, >= 0 m)")
    return da


def _to_scenario_units(da, quantity: str, standard: str, path: str):
    kind = {"eastward": "velocity", "northward": "velocity", "temperature": "temperature",
            "bathymetry": "depth", "ice": "fraction"}.get(quantity)
    if quantity == "salinity":
        kind = "absolute" if standard.endswith("absolute_salinity") else "practical"
    spellings, _, shown = _UNITS[kind]
    raw = da.attrs.get("units")
    units = "" if raw is None else str(raw).strip()
    key = units.lower()
    if raw is None and kind not in ("practical", "fraction"):
        raise OceanDataError(path, str(da.name), MISSING, f"a units attribute ({shown})")
    if key not in spellings:
        raise OceanDataError(path, str(da.name), units, f"units {shown}")
    values = da.astype(float) * spellings[key]
    if kind == "temperature" and key in _KELVIN:
        values = values - 273.15
    if kind == "depth" and standard == "sea_floor_depth_below_geoid" and \
            str(da.attrs.get("positive", "down")).lower() == "up":
        values = -values
    values.attrs = dict(da.attrs)
    values.name = da.name
    return values


# =============================================================================== depth bands
def depth_band_weights(levels: Sequence[float], top: float, bottom: float) -> np.ndarray:
    """Weights w so that ``values @ w`` is the mean over [top, bottom] of a profile.

    Parameters
    ----------
    levels : sequence of float
        Depths of the profile's levels, increasing [m, positive down].
    top, bottom : float
        The band [m]; ``top == bottom`` gives linear interpolation at that depth.

    Returns
    -------
    ndarray, shape (len(levels),)
        Sum to one.

    Notes
    -----
    The profile is taken as piecewise linear between levels and constant beyond the first
    and last level; the band mean (1/(b - t)) * integral_t^b v(z) dz is then exact by the
    trapezoidal rule on the breakpoints {t, b} and the levels inside (derived). A glider at
    constant vertical speed spends equal time per metre, so its dive-cycle mean is this
    uniform depth mean (derived from the steady glide).
    """
    z = np.asarray(levels, dtype=float)
    eye = np.eye(z.size)

    if bottom <= top:
        return np.array([np.interp(float(top), z, eye[i]) for i in range(z.size)])
    breaks = np.concatenate([[top], z[(z > top) & (z < bottom)], [bottom]])
    rows = np.stack([np.interp(breaks, z, eye[i]) for i in range(z.size)], axis=-1)  # (B, nz)
    dz = np.diff(breaks)
    trap = np.zeros(breaks.size)
    trap[:-1] += dz / 2.0
    trap[1:] += dz / 2.0
    return trap @ rows / (bottom - top)


def _deepest_valid(valid: np.ndarray) -> np.ndarray:
    """Index of each column's deepest valid level (-1 where it has none)."""
    return np.where(valid.any(-1), valid.shape[-1] - 1 - np.argmax(valid[..., ::-1], axis=-1), -1)


def band_mean(values: np.ndarray, levels: np.ndarray, top: float, bottom: float) -> np.ndarray:
    """Depth-band mean of profiles ``values[..., level]``, cut at each profile's last valid level.

    Below the seabed a grid holds NaN: the band of such a column ends at its deepest valid
    level (the vehicle cannot dive deeper). A column with no valid level in reach is NaN.
    """
    v = np.asarray(values, dtype=float)
    valid = np.isfinite(v)
    deepest = _deepest_valid(valid)
    out = np.full(v.shape[:-1], np.nan)
    filled = np.where(valid, v, 0.0)
    for j in np.unique(deepest):
        if j < 0:
            continue
        sel = deepest == j
        b = min(bottom, float(levels[j]))
        t = min(top, b)
        w = depth_band_weights(levels[: j + 1], t, b)
        col = filled[sel][:, : j + 1]
        ok = valid[sel][:, : j + 1] | (w == 0.0)
        out[sel] = np.where(ok.all(-1), col @ w, np.nan)  # a gap inside the band: refused
    return out


def band_bottom(values: np.ndarray, levels: np.ndarray, bottom: float) -> float:
    """The deepest depth [m] the band reaches at the shallowest column of ``values[..., level]``.

    ``bottom`` where every column holds data down to it; shallower where the seabed (the
    first NaN level from below) cuts the band as :func:`band_mean` does; NaN if no column
    has data.
    """
    deepest = _deepest_valid(np.isfinite(np.asarray(values, dtype=float)))
    deepest = deepest[deepest >= 0]
    if deepest.size == 0:
        return float("nan")
    return min(float(bottom), float(np.asarray(levels, dtype=float)[int(deepest.min())]))
