"""Environments from gridded data: sampling, depth bands, fitted inputs, rank correlations,
and the one-line errors (uq.scenario.ocean, uq.scenario.environment)."""
import math

import numpy as np
import pytest

xr = pytest.importorskip("xarray", reason="data files need the ocean extra: pip install 'transit-risk[ocean]'")
pytest.importorskip("pyproj", reason="waypoint routes need the ocean extra: pip install 'transit-risk[ocean]'")
pytest.importorskip("netCDF4", reason="netCDF files need the ocean extra: pip install 'transit-risk[ocean]'")

from scipy import stats  # noqa: E402

from uq.scenario import ScenarioError, load_scenario  # noqa: E402
from uq.scenario.ocean import OceanDataError, band_bottom, band_mean, depth_band_weights  # noqa: E402

SCENARIO = '''
[scenario]
name = "data-test"
[vehicle]
kind = "propeller"
name = "test AUV"
hotel_load_W = 40.0
propulsive_efficiency = 0.4
[vehicle.hull]
length_m = 3.0
diameter_m = 0.5
[battery]
nominal_energy_Wh = 9000.0
[setpoint]
speed_m_s = 1.5
depth_m = 50.0
[route]
waypoints = [{{lat = 0.0, lon = 0.5}}, {{lat = 0.0, lon = 1.5, leg = "west"}}, {{lat = 0.0, lon = 2.5, leg = "east"}}]
[environment]
start = 2030-01-02T00:00:00Z
{environment}
'''


def _grid(members=1, times=30, depth=(0.0, 20.0, 50.0, 100.0, 400.0)):
    lat = np.linspace(-1.0, 1.0, 11)
    lon = np.linspace(0.0, 3.0, 31)
    time = np.datetime64("2030-01-01") + np.arange(times) * np.timedelta64(1, "D")
    coords = {"time": ("time", time), "depth": ("depth", np.asarray(depth), {"units": "m", "positive": "down"}),
              "lat": ("lat", lat, {"units": "degrees_north", "standard_name": "latitude"}),
              "lon": ("lon", lon, {"units": "degrees_east", "standard_name": "longitude"})}
    if members > 1:
        coords["member"] = ("member", np.arange(members), {"standard_name": "realization"})
    return coords


def _write(tmp_path, variables, coords, name="sea.nc"):
    ds = xr.Dataset(variables, coords=coords)
    ds.to_netcdf(tmp_path / name)
    return name


def _scenario(tmp_path, environment, text=SCENARIO):
    path = tmp_path / "s.toml"
    path.write_text(text.format(environment=environment))
    return load_scenario(path)


def _velocity(values, dims, std, units="m s-1"):
    return (dims, values, {"standard_name": std, "units": units})


# ------------------------------------------------------------------------------- depth band
def test_band_mean_of_a_linear_profile_is_exact():
    z = np.array([0.0, 10.0, 35.0, 80.0, 200.0, 500.0])
    v = 0.3 - 0.001 * z
    # derived: the mean of a + b z over [t, b] is a + b (t + b) / 2
    assert float(np.asarray(v) @ depth_band_weights(z, 15.0, 300.0)) == pytest.approx(0.3 - 0.001 * 157.5, abs=1e-12)
    # a single depth: linear interpolation (derived: 0.3 - 0.001 * 60)
    assert float(v @ depth_band_weights(z, 60.0, 60.0)) == pytest.approx(0.24, abs=1e-12)


def test_band_mean_of_an_exponential_profile():
    h = 200.0
    z = np.arange(0.0, 1001.0, 10.0)
    v = np.exp(-z / h)
    # derived: (1/D) int_0^D exp(-z/h) dz = h (1 - exp(-D/h)) / D; tolerance: the trapezoidal
    # rule's error (dz^2 / 12) max|f''| = 100/12/h^2 = 2.1e-4 bounds it
    exact = h * (1.0 - math.exp(-500.0 / h)) / 500.0
    assert float(v @ depth_band_weights(z, 0.0, 500.0)) == pytest.approx(exact, abs=2.1e-4)


def test_band_stops_at_the_seabed_and_refuses_land():
    z = np.array([0.0, 100.0, 200.0, 300.0, 400.0])
    deep = np.array([1.0, 1.0, 3.0, 3.0, 3.0])
    shelf = np.array([1.0, 1.0, 3.0, np.nan, np.nan])
    land = np.full(5, np.nan)
    got = band_mean(np.stack([deep, shelf, land]), z, 0.0, 400.0)
    # derived: deep: (100*1 + 100*2 + 200*3)/400 = 2.25; shelf (cut at 200 m): (100 + 200)/200 = 1.5
    assert got[0] == pytest.approx(2.25) and got[1] == pytest.approx(1.5) and np.isnan(got[2])


def test_band_bottom_names_where_the_seabed_cuts_the_band():
    z = np.array([0.0, 100.0, 200.0, 300.0, 400.0])
    deep = np.array([1.0, 1.0, 3.0, 3.0, 3.0])
    shelf = np.array([1.0, 1.0, 3.0, np.nan, np.nan])
    # derived: the shelf column's last valid level is 200 m, so a 0-400 m band reaches 200 m
    assert band_bottom(np.stack([deep, shelf]), z, 400.0) == 200.0
    assert band_bottom(deep[None], z, 400.0) == 400.0          # nothing cut
    assert band_bottom(deep[None], z, 250.0) == 250.0          # band ends above the seabed
    assert math.isnan(band_bottom(np.full((1, 5), np.nan), z, 400.0))


def test_method_text_says_where_the_seabed_cut_the_band(tmp_path):
    # u = 0.2 m/s everywhere, but west of 1.0 deg E the grid has no data below 20 m (a bank):
    # the 50 m running depth of the first leg (0.5 -> 1.5 E) is cut there at 20 m
    coords = _grid(times=5)
    lon = coords["lon"][1]
    depth = np.asarray(coords["depth"][1])
    u = np.full((5, depth.size, 11, lon.size), 0.2)
    u[:, depth > 20.0, :, :] = np.where(lon < 1.0, np.nan, 0.2)[None, None, None, :]
    dims = ("time", "depth", "lat", "lon")
    name = _write(tmp_path, {"uo": _velocity(u, dims, "eastward_sea_water_velocity"),
                             "vo": _velocity(np.zeros_like(u), dims, "northward_sea_water_velocity")},
                  coords)
    sc = _scenario(tmp_path, f'current = {{file = "{name}"}}')
    src = {(s.leg, s.field): s.method for s in sc.environment}
    assert "cut at the seabed" in src[("west", "current_along_m_s")]
    assert "down to 20 m" in src[("west", "current_along_m_s")]
    assert "cut at the seabed" not in src[("east", "current_along_m_s")]


# ------------------------------------------------------------------------------- fitting
def test_ensemble_spread_and_rank_correlation_are_recovered(tmp_path):
    # 40 members; the leg-mean along-track current of the two legs is drawn per member from a
    # bivariate normal with known parameters. Along the equator eastward = along-track, and a
    # field linear in longitude has its along-leg mean at the leg's middle (derived), so the
    # file is u_m(lon) = a_m + g_m (lon - 1.5) with a_m = (w_m + e_m)/2, g_m = e_m - w_m.
    rng = np.random.default_rng(17)
    rho = 0.7
    cov = np.array([[0.05**2, rho * 0.05 * 0.08], [rho * 0.05 * 0.08, 0.08**2]])
    w, e = rng.multivariate_normal([0.10, -0.05], cov, size=40).T
    coords = _grid(members=40, times=5, depth=(0.0, 100.0))
    lon = coords["lon"][1]
    u = (0.5 * (w + e))[:, None] + (e - w)[:, None] * (lon[None, :] - 1.5)       # (member, lon)
    u = np.broadcast_to(u[:, None, None, None, :], (40, 5, 2, 11, 31))
    dims = ("member", "time", "depth", "lat", "lon")
    name = _write(tmp_path, {"uo": _velocity(u, dims, "eastward_sea_water_velocity"),
                             "vo": _velocity(np.zeros_like(u), dims, "northward_sea_water_velocity")},
                  coords)
    sc = _scenario(tmp_path, f'current = {{file = "{name}"}}')
    west, east = sc.legs
    # exact recovery of the members' sample moments (tolerance: float rounding of the file)
    assert west.current_along_m_s.params["mean"] == pytest.approx(w.mean(), abs=1e-9)
    assert west.current_along_m_s.params["sd"] == pytest.approx(w.std(ddof=1), abs=1e-9)
    assert east.current_along_m_s.params["sd"] == pytest.approx(e.std(ddof=1), abs=1e-9)
    # ... which estimate the known parameters within sampling error (n = 40: se(mean) = sd/6.3)
    assert west.current_along_m_s.params["mean"] == pytest.approx(0.10, abs=3 * 0.05 / math.sqrt(40))
    # no northward current, bearing 090: nothing across (fixed, not a distribution)
    assert west.current_across_m_s == pytest.approx(0.0, abs=1e-12)
    pairs = {frozenset(c.inputs): c.coefficient for c in sc.correlations}
    got = pairs[frozenset(("legs.west.current_along_m_s", "legs.east.current_along_m_s"))]
    # reference: scipy.stats.spearmanr of the drawn member values
    assert got == pytest.approx(stats.spearmanr(w, e).statistic, abs=1e-9)
    # population value for a normal pair: (6/pi) asin(rho/2) (Pearson 1907; derived), 40 draws:
    # se ~ 0.09, so 3 se
    assert got == pytest.approx(6 / math.pi * math.asin(rho / 2), abs=0.27)
    src = {(s.leg, s.field): s for s in sc.environment}
    assert src[("west", "current_along_m_s")].file == name
    assert "40 members" in src[("west", "current_along_m_s")].method


def test_launch_window_follows_the_vehicle_in_time(tmp_path):
    # one member, u(t) = 0.01 * (days since 2030-01-01) everywhere: along-track = u at the time
    # the vehicle passes. Legs of L = 111.32 km (1 deg on the equator) at 1.5 m/s take
    # L/1.5 = 0.859 days; launch 2030-01-02 (day 1) shifted by 0..6 days (daily steps).
    coords = _grid(times=12, depth=(0.0, 100.0))
    days = np.arange(12.0)
    u = np.broadcast_to((0.01 * days)[:, None, None, None], (12, 2, 11, 31))
    dims = ("time", "depth", "lat", "lon")
    name = _write(tmp_path, {"u": _velocity(u, dims, "eastward_sea_water_velocity"),
                             "v": _velocity(np.zeros_like(u), dims, "northward_sea_water_velocity")},
                  coords)
    sc = _scenario(tmp_path, f'launch_window_days = 6.0\ncurrent = {{file = "{name}"}}')
    leg_days = sc.legs[0].length_km * 1000.0 / 1.5 / 86400.0
    # derived by hand: mean over launches (offset mean 3 days) of u at the leg's middle time
    west_mid = 1.0 + 3.0 + leg_days / 2
    east_mid = 1.0 + 3.0 + 1.5 * leg_days
    assert sc.legs[0].current_along_m_s.params["mean"] == pytest.approx(0.01 * west_mid, abs=1e-9)
    assert sc.legs[1].current_along_m_s.params["mean"] == pytest.approx(0.01 * east_mid, abs=1e-9)
    # derived: sd of 0.01 * (0, 1, ..., 6) with ddof = 1 is 0.01 * sqrt(14 / 3)
    assert sc.legs[0].current_along_m_s.params["sd"] == pytest.approx(0.01 * math.sqrt(14 / 3), abs=1e-9)
    # both legs rise together: rank correlation 1 in the data, shrunk by the documented 0.02
    (corr,) = sc.correlations
    assert corr.coefficient == pytest.approx(0.98)
    assert sc.data_correlations[0].realizations == 7


# ------------------------------------------------------------------------------- errors
def _simple_file(tmp_path, **change):
    coords = _grid(times=5)
    dims = ("time", "depth", "lat", "lon")
    u = np.full((5, 5, 11, 31), 0.1)
    attrs_u = {"standard_name": "eastward_sea_water_velocity", "units": "m s-1"}
    attrs_u.update(change.pop("u_attrs", {}))
    variables = {"u": (dims, change.pop("u", u), attrs_u),
                 "v": _velocity(np.zeros_like(u), dims, "northward_sea_water_velocity")}
    for key, value in change.items():
        coords[key] = value
    return _write(tmp_path, variables, coords)


@pytest.mark.parametrize("kind, environment, match", [
    ("missing", 'current = {file = "sea.nc", eastward = "uo"}', r"sea.nc: uo = <missing>: expected a variable named 'uo'"),
    ("units", 'current = {file = "sea.nc"}', r"sea.nc: u = 'furlongs/fortnight': expected units m s-1"),
    ("outside", 'current = {file = "sea.nc"}', r"sea.nc: u = \(0.0, \S+\): expected every point of leg 'east' inside the grid's extent"),
    ("time", 'current = {file = "sea.nc"}\nlaunch_window_days = 9.0', r"sea.nc: u = '2030-01-0\d.*expected the times the vehicle is on leg 'west' inside the file's time range"),
    ("land", 'current = {file = "sea.nc"}', r"sea.nc: u = \(0.0, \S+\): expected sea values in the depth band 50-50 m at every point of leg 'east'"),
    ("coords", 'current = {file = "sea.nc"}', r"sea.nc: lat = 'coordinate not strictly monotonic'"),
])
def test_data_errors_are_one_line_and_name_file_variable_and_expectation(tmp_path, kind, environment, match):
    if kind == "units":
        _simple_file(tmp_path, u_attrs={"units": "furlongs/fortnight"})
    elif kind == "outside":
        _simple_file(tmp_path, lon=("lon", np.linspace(0.0, 2.0, 31), {"units": "degrees_east"}))
    elif kind == "land":
        u = np.full((5, 5, 11, 31), 0.1)
        u[:, :, :, 20] = np.nan  # a strip of land at lon = 2.0
        _simple_file(tmp_path, u=u)
    elif kind == "coords":
        lat = np.linspace(-1.0, 1.0, 11)
        lat[5] = lat[4]
        _simple_file(tmp_path, lat=("lat", lat, {"units": "degrees_north"}))
    else:
        _simple_file(tmp_path)
    with pytest.raises(OceanDataError, match=match) as info:
        _scenario(tmp_path, environment)
    assert isinstance(info.value, ScenarioError) and "\n" not in str(info.value)
    if kind == "land":
        assert "'east'" in str(info.value)  # the strip is on the second leg


def test_cli_exits_2_with_one_line(tmp_path, capsys):
    from uq.cli import main

    _simple_file(tmp_path, u_attrs={"units": "knots"})
    path = tmp_path / "s.toml"
    path.write_text(SCENARIO.format(environment='current = {file = "sea.nc"}'))
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "sea.nc: u = 'knots': expected units" in err[0]


def test_depth_positive_up_and_kelvin_and_percent_are_converted(tmp_path):
    coords = _grid(times=5, depth=(-400.0, -100.0, -50.0, -20.0, 0.0))
    coords["depth"] = ("depth", np.array([-400.0, -100.0, -50.0, -20.0, 0.0]),
                       {"units": "m", "positive": "up", "axis": "Z"})
    dims = ("time", "depth", "lat", "lon")
    depth_up = np.array([-400.0, -100.0, -50.0, -20.0, 0.0])
    # temperature 4 degC + 0.02 degC per metre above 400 m depth, written in kelvin
    temp = 273.15 + 4.0 + 0.02 * (400.0 + depth_up)
    t = np.broadcast_to(temp[None, :, None, None], (5, 5, 11, 31))
    name = _write(tmp_path, {"thetao": (dims, t, {"standard_name": "sea_water_temperature", "units": "K"})},
                  coords)
    sc = _scenario(tmp_path, f'temperature = {{file = "{name}"}}')
    # derived: at the running depth 50 m: 4 + 0.02 * 350 = 11 degC (no spread: fixed)
    assert sc.legs[0].temperature_C == pytest.approx(11.0, abs=1e-9)


def test_bundled_data_demo_loads_with_data_derived_legs():
    from uq.scenario.demos import DATA_DEMO, demo_path

    with demo_path(DATA_DEMO) as path:
        sc = load_scenario(path)
    assert len(sc.route) == 4 and len(sc.legs) == 4
    fields = {(s.leg, s.field) for s in sc.environment if s.file == "sollen_sea.nc"}
    assert ("corran_basin", "current_along_m_s") in fields and ("shelf_departure", "seabed_m") in fields
    assert sc.data_correlations and all(-1.0 < c.rank < 1.0 for c in sc.data_correlations)
