"""Write the invented ocean of the bundled data demo: configs/sollen_sea.nc.

The Sollen Sea is invented: a western shelf, the Aster Current (a northward boundary current
over the shelf break), the Corran Eddy (a clockwise eddy drifting slowly west across the basin)
and a temperature and salinity front that creeps north. Five ensemble members differ in the
current's strength and core position, the eddy's position and strength, and a weak smooth
background; temperature and salinity have no members. Nothing here is real data.

Run from the repository root (needs the ocean extra)::

    python scripts/make_ocean_demo_data.py

The output is reproducible (fixed seed, no time stamps in the file) and about 1 MB.
"""
from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import xarray as xr

SEED = 20261202
OUT = Path(__file__).resolve().parents[1] / "configs" / "sollen_sea.nc"
MEMBERS = 5
LAT = np.arange(-36.0, -29.99, 0.25)       # deg north
LON = np.arange(-24.0, -15.99, 0.25)       # deg east
DEPTH = np.array([0.0, 25.0, 50.0, 100.0, 200.0, 400.0, 700.0, 1000.0, 1500.0])  # m, down
TIME = np.datetime64("2027-03-01") + np.arange(0, 90, 2) * np.timedelta64(1, "D")
KM_PER_DEG_LAT = 111.0


def bathymetry(lon2, lat2):
    """Shelf (150-190 m) west of 22.5 W, a slope to 4,000 m, a seamount plateau in the east."""
    shelf = 150.0 + 40.0 * (lon2 + 24.0) / 1.5
    slope = 190.0 + (4000.0 - 190.0) / (1.0 + np.exp(-(lon2 + 21.6) / 0.25))
    depth = np.where(lon2 < -22.5, shelf, np.maximum(shelf, slope))
    mount = 2600.0 * np.exp(-(((lon2 + 17.0) / 0.6) ** 2 + ((lat2 + 31.0) / 0.5) ** 2))
    return depth - mount


def main() -> int:
    rng = np.random.default_rng(SEED)
    lat2, lon2 = np.meshgrid(LAT, LON, indexing="ij")
    x_km = (lon2 + 20.0) * KM_PER_DEG_LAT * np.cos(np.deg2rad(lat2))
    y_km = (lat2 + 33.0) * KM_PER_DEG_LAT
    days = (TIME - TIME[0]) / np.timedelta64(1, "D")
    z = DEPTH[:, None, None]
    u = np.zeros((MEMBERS, TIME.size, DEPTH.size, LAT.size, LON.size))
    v = np.zeros_like(u)
    for m in range(MEMBERS):
        strength = 0.55 * (1.0 + 0.18 * rng.standard_normal())
        core = -21.8 + 0.12 * rng.standard_normal()
        eddy_x0 = 260.0 + 40.0 * rng.standard_normal()     # km east of 20 W at day 0
        eddy_y0 = 5.0 + 30.0 * rng.standard_normal()       # km north of 33 S
        eddy_speed = 0.40 * (1.0 + 0.2 * rng.standard_normal())
        bg_phase = rng.uniform(0, 2 * np.pi, size=2)
        for k, d in enumerate(days):
            # Aster Current: northward jet over the slope, meandering with a 24-day period
            jet_core = core + 0.15 * np.sin(2 * np.pi * d / 24.0 + m)
            jet = strength * np.exp(-(((lon2 - jet_core) / 0.35) ** 2))
            v[m, k] += jet[None] * np.exp(-z / 350.0)
            # Corran Eddy: Gaussian eddy turning clockwise seen from above (a cyclone in the
            # southern hemisphere), radius 70 km, drifting west at 3 km/day
            ex, ey = eddy_x0 - 3.0 * d, eddy_y0 + 0.5 * d
            r2 = ((x_km - ex) ** 2 + (y_km - ey) ** 2) / 70.0**2
            # velocity of the streamfunction psi = A exp(-r2): u = -dpsi/dy, v = dpsi/dx,
            # scaled so that the peak azimuthal speed is eddy_speed
            scale = eddy_speed / (np.sqrt(2.0) * np.exp(-0.5) / 70.0)
            ue = scale * 2.0 * (y_km - ey) / 70.0**2 * np.exp(-r2)
            ve = -scale * 2.0 * (x_km - ex) / 70.0**2 * np.exp(-r2)
            decay = np.exp(-z / 600.0)
            u[m, k] += ue[None] * decay
            v[m, k] += ve[None] * decay
            # weak smooth background
            u[m, k] += 0.03 * np.sin(y_km / 150.0 + bg_phase[0] + d / 15.0)[None] * decay
            v[m, k] += 0.03 * np.cos(x_km / 180.0 + bg_phase[1] - d / 20.0)[None] * decay
    # temperature and salinity: a front near 33 S creeping north 0.02 deg/day, a thermocline
    front_lat = -33.2 + 0.02 * days[:, None, None, None]
    cross = np.tanh((lat2[None, None] - front_lat) / 0.4)
    thermocline = np.exp(-z[None] / 250.0)
    temperature = 4.0 + (9.0 + 3.0 * cross) * thermocline + 0.5 * np.sin(days / 30.0)[:, None, None, None]
    salinity = 34.45 + (0.55 + 0.25 * cross) * thermocline
    seabed = bathymetry(lon2, lat2)
    below = DEPTH[:, None, None] > seabed[None]
    u[:, :, below] = np.nan
    v[:, :, below] = np.nan
    temperature = np.where(below[None], np.nan, np.broadcast_to(temperature, (TIME.size, *below.shape)))
    salinity = np.where(below[None], np.nan, np.broadcast_to(salinity, (TIME.size, *below.shape)))

    coords = {
        "member": ("member", np.arange(MEMBERS, dtype="int32"), {"standard_name": "realization"}),
        "time": ("time", TIME, {"standard_name": "time", "axis": "T"}),
        "depth": ("depth", DEPTH, {"standard_name": "depth", "units": "m", "positive": "down", "axis": "Z"}),
        "lat": ("lat", LAT, {"standard_name": "latitude", "units": "degrees_north", "axis": "Y"}),
        "lon": ("lon", LON, {"standard_name": "longitude", "units": "degrees_east", "axis": "X"}),
    }
    dims4 = ("member", "time", "depth", "lat", "lon")
    dims3 = ("time", "depth", "lat", "lon")
    ds = xr.Dataset(
        {
            "uo": (dims4, u.astype("float32"), {"standard_name": "eastward_sea_water_velocity", "units": "m s-1"}),
            "vo": (dims4, v.astype("float32"), {"standard_name": "northward_sea_water_velocity", "units": "m s-1"}),
            "thetao": (dims3, temperature.astype("float32"), {"standard_name": "sea_water_temperature", "units": "degC"}),
            "so": (dims3, salinity.astype("float32"), {"standard_name": "sea_water_practical_salinity", "units": "1"}),
            "deptho": (("lat", "lon"), seabed.astype("float32"),
                       {"standard_name": "sea_floor_depth_below_geoid", "units": "m", "positive": "down"}),
        },
        coords=coords,
        attrs={"title": "Sollen Sea: an invented ocean for the transit-risk data demo",
               "Conventions": "CF-1.11", "source": "scripts/make_ocean_demo_data.py (synthetic, invented)",
               "seed": SEED},
    )
    encoding = {name: {"zlib": True, "complevel": 6, "least_significant_digit": 3, "shuffle": True, "_FillValue": np.float32(np.nan)}
                for name in ("uo", "vo", "thetao", "so", "deptho")}
    encoding["time"] = {"units": "days since 2027-03-01 00:00:00", "calendar": "standard", "dtype": "int32"}
    ds.to_netcdf(OUT, encoding=encoding, engine="netcdf4", format="NETCDF4")
    print(f"wrote {OUT} ({OUT.stat().st_size / 1e6:.2f} MB)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
