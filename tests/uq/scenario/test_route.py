"""Waypoint routes: leg lengths and bearings from geodesics (uq.scenario.route)."""
import math

import pytest

pytest.importorskip("pyproj", reason="waypoint routes need the ocean extra: pip install 'transit-risk[ocean]'")

from uq.scenario import ScenarioError, parse_scenario  # noqa: E402
from uq.scenario.demos import demo_text  # noqa: E402
from uq.scenario.route import geodesic_legs, leg_track, read_waypoints  # noqa: E402


def _waypoints(*points):
    return read_waypoints([{"lat": a, "lon": b} for a, b in points], file="<t>", path="route.waypoints",
                          leg_keys=("current_along_m_s",))


def test_boston_to_portland_matches_the_pyproj_documentation():
    # pyproj documentation, Geod.inv example (from memory / pyproj documentation): Boston
    # 42d15'N 71d07'W to Portland OR 45d31'N 123d41'W gives az12 -66.531 deg, az21 75.654 deg,
    # 4164192.708 m. The example is computed on the Clarke 1866 ellipsoid (ellps='clrk66'),
    # not WGS84 (on WGS84 the same line is 4164074 m).
    boston = (42.0 + 15.0 / 60.0, -(71.0 + 7.0 / 60.0))
    portland = (45.0 + 31.0 / 60.0, -(123.0 + 41.0 / 60.0))
    (leg,) = geodesic_legs(_waypoints(boston, portland), file="<t>", ellipsoid="clrk66")
    # tolerances: the documentation prints 3 decimals
    assert leg.length_km * 1000.0 == pytest.approx(4164192.708, abs=5e-4)
    assert leg.bearing_deg == pytest.approx(360.0 - 66.531, abs=5e-4)
    assert leg.final_bearing_deg == pytest.approx((75.654 + 180.0) % 360.0, abs=5e-4)


def test_vincenty_test_line_a_on_the_bessel_ellipsoid():
    # T. Vincenty (1975), Survey Review 23(176), test line (a), Bessel ellipsoid (from memory):
    # phi1 = 55d45'N, phi2 = 33d26'S, L = 108d13'00", s = 14110526.170 m,
    # alpha1 = 96d36'08.79", alpha2 = 137d52'22.01" (the line's azimuth at P2, direction of travel).
    (leg,) = geodesic_legs(_waypoints((55.75, 0.0), (-(33.0 + 26.0 / 60.0), 108.0 + 13.0 / 60.0)),
                           file="<t>", ellipsoid="bessel")
    assert leg.length_km * 1000.0 == pytest.approx(14110526.170, abs=2e-3)  # printed to 1 mm
    assert leg.bearing_deg == pytest.approx(96 + 36 / 60 + 8.79 / 3600, abs=1e-5)  # 0.01" printed
    assert leg.final_bearing_deg == pytest.approx(137 + 52 / 60 + 22.01 / 3600, abs=1e-5)


def test_wgs84_quarter_meridian():
    # Equator to pole on WGS84: 10001965.729 m (the quarter meridian; from memory, a standard
    # geodetic constant, e.g. NIMA TR8350.2 derived quantities)
    (leg,) = geodesic_legs(_waypoints((0.0, 10.0), (90.0, 10.0)), file="<t>")
    assert leg.length_km * 1000.0 == pytest.approx(10001965.729, abs=1e-3)
    assert leg.bearing_deg == pytest.approx(0.0, abs=1e-9)


def test_track_points_are_even_and_carry_the_local_bearing():
    (leg,) = geodesic_legs(_waypoints((42.25, -71.1167), (45.5167, -123.683)), file="<t>")
    track = leg_track(leg, spacing_km=200.0, file="<t>")
    assert track.latitude[0] == pytest.approx(42.25) and track.longitude[-1] == pytest.approx(-123.683)
    assert track.bearing_deg[0] == pytest.approx(leg.bearing_deg, abs=1e-9)
    assert track.bearing_deg[-1] == pytest.approx(leg.final_bearing_deg, abs=1e-9)
    assert math.ceil(leg.length_km / 200.0) + 1 == track.latitude.size


def _glider_with_route(route: str, legs_tests: bool = False) -> str:
    text = demo_text("glider_transit.toml")
    head = text.split("[[legs]]")[0]
    tail = "[[correlations]]" + text.split("[[correlations]]", 1)[1]
    tail = tail.split("[[decision.tests]]")[0] + "[analysis]" + tail.split("[analysis]")[1]
    return head + route + "\n" + tail


def test_route_in_the_scenario_makes_geodesic_legs_with_their_attributes():
    sc = parse_scenario(_glider_with_route('''
[route]
waypoints = [
  {lat = 10.0, lon = -30.0},
  {lat = 11.0, lon = -29.0, leg = "shelf", seabed_m = 400.0},
  {lat = 12.5, lon = -27.0, current_along_m_s = {dist = "normal", mean = 0.0, sd = 0.05}},
]'''))
    assert [leg.name for leg in sc.legs] == ["shelf", "leg_2"]
    assert sc.legs[0].seabed_m == 400.0
    assert "legs.leg_2.current_along_m_s" in sc.input_names
    assert sc.legs[0].length_km == pytest.approx(sc.route[0].length_km)
    # on a sphere of the same area the chord-free great circle differs by < 0.5 %: a sanity
    # bound (derived: WGS84 flattening 1/298), not the check of the value itself
    r = 6371.0
    p1, p2 = math.radians(10.0), math.radians(11.0)
    hav = math.sin((p2 - p1) / 2) ** 2 + math.cos(p1) * math.cos(p2) * math.sin(math.radians(1.0) / 2) ** 2
    assert sc.legs[0].length_km == pytest.approx(2 * r * math.asin(math.sqrt(hav)), rel=5e-3)


def test_route_from_csv(tmp_path):
    (tmp_path / "wp.csv").write_text("# my route\nlat,lon,leg,fouling_growth_factor\n"
                                     "10,-30,,\n10.5,-30,north,1.3\n10.5,-29.5,east,\n")
    path = tmp_path / "s.toml"
    path.write_text(_glider_with_route('[route]\ncsv = "wp.csv"'))
    from uq.scenario import load_scenario
    sc = load_scenario(path)
    assert [leg.name for leg in sc.legs] == ["north", "east"]
    assert sc.legs[0].fouling_growth_factor == 1.3 and sc.legs[1].fouling_growth_factor == 1.0
    # 0.5 deg of latitude near 10 N is about 55.3 km (common practice, no source: 1 deg ~ 110.6 km there)
    assert sc.legs[0].length_km == pytest.approx(55.3, abs=0.2)


@pytest.mark.parametrize("route, match", [
    ('[route]\nwaypoints = [{lat = 10.0, lon = -30.0}]', "at least two waypoints"),
    ('[route]\nwaypoints = [{lat = 10.0, lon = -30.0}, {lat = 95.0, lon = 0.0}]',
     r"route.waypoints\[1\].lat = 95.0: expected a latitude"),
    ('[route]\nwaypoints = [{lat = 10.0, lon = -30.0}, {lat = 10.0, lon = -30.0}]', "zero length"),
    ('[route]\nwaypoints = [{lat = 10.0, lon = -30.0}, {lat = 11.0, lon = -30.0, length_km = 5.0}]',
     "no length_km on a waypoint route"),
    ('[route]\nwaypoints = [{lat = 10.0, lon = -30.0}, {lat = 11.0, lon = -30.0, speed = 5.0}]',
     r"route.waypoints\[1\].speed = 5.0: expected a waypoint key"),
])
def test_route_errors_are_one_line(route, match):
    with pytest.raises(ScenarioError, match=match) as info:
        parse_scenario(_glider_with_route(route), source="s.toml")
    assert "\n" not in str(info.value)


def test_legs_and_route_together_are_refused():
    text = demo_text("glider_transit.toml") + '\n[route]\nwaypoints = [{lat = 1.0, lon = 2.0}, {lat = 2.0, lon = 2.0}]\n'
    with pytest.raises(ScenarioError, match="not both"):
        parse_scenario(text)
