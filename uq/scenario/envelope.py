"""The plausibility envelope: one table per vehicle kind of what a physical input may be.

Every row names one scenario field (a dotted key path; ``legs.*.key`` for every leg), its
unit, the range outside which the value is **impossible** (the scenario is refused, exit
status 2) and the narrower range outside which it is **implausible** (the run goes on, with
a caution in the report and on stderr). A distribution is checked by its reach: its support
when bounded, else its 1e-6 and 1 - 1e-6 quantiles, must stay inside the possible range
(a normal current with sd 5 m/s is an error); its 1 % and 99 % quantiles are checked against
the plausible range. The reader (:mod:`uq.scenario.field_reader`) applies the table after its own
type and sign checks.

To add a field: add one :class:`Limit` row to :data:`COMMON` (both kinds) or to the kind's
own tuple, with the source of each number in a comment ("common practice, no source" for a
fact of the trade, "from memory" for a recalled figure). The README's scenario section
prints the same table (``python scripts/readme_tables.py`` regenerates it; a test compares).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

__all__ = ["Limit", "COMMON", "PROPELLER", "GLIDER", "ENVELOPE", "limit_for",
           "TAIL_PROBABILITY", "PLAUSIBLE_QUANTILES", "markdown_table"]

_INF = math.inf

#: A distribution may put at most this probability beyond a possible-range end.
TAIL_PROBABILITY = 1e-6
#: Quantiles of a distribution checked against the plausible range.
PLAUSIBLE_QUANTILES = (0.01, 0.99)


@dataclass(frozen=True)
class Limit:
    """One row of the envelope (file units).

    ``possible`` = (low, high): outside it the value is physically impossible for the trade.
    ``plausible`` = (low, high): outside it (but possible) the value is implausible.
    ``why`` says what the bounds mean, for the caution text and the README table.
    """

    field: str
    unit: str
    possible: tuple[float, float]
    plausible: tuple[float, float]
    why: str

    def __post_init__(self) -> None:
        lo, hi = self.possible
        plo, phi = self.plausible
        if not (lo <= plo < phi <= hi):
            raise ValueError(f"envelope row {self.field}: plausible range must lie in the "
                             "possible range")


# Every number below carries its source. Units are those of the scenario file.
COMMON: tuple[Limit, ...] = (
    # Fastest open-ocean currents ~2.5 m/s (Gulf Stream and Kuroshio cores, from memory);
    # tidal races reach ~5 m/s (from memory); no long AUV or glider transit is planned in
    # faster water (common practice, no source).
    Limit("legs.*.current_along_m_s", "m/s", (-5.0, 5.0), (-2.0, 2.0),
          "ocean currents beyond 5 m/s do not exist outside tidal races"),
    Limit("legs.*.current_across_m_s", "m/s", (-5.0, 5.0), (-2.0, 2.0),
          "ocean currents beyond 5 m/s do not exist outside tidal races"),
    # Freezing point of seawater at SP = 35 is about -1.9 degC (TEOS-10, from memory); the
    # warmest open-ocean surface water is about 32 degC (from memory). The reader refuses
    # values outside [-3, 40] degC already (TEOS-10's oceanographic range, common practice).
    Limit("legs.*.temperature_C", "degC", (-3.0, 40.0), (-2.0, 32.0),
          "seawater freezes near -1.9 degC; open-ocean water is below about 32 degC"),
    # Open ocean SP 32-37 (from memory); brackish seas are lower (Baltic ~7, from memory);
    # below 2 the water is practically fresh (common practice, no source).
    Limit("legs.*.practical_salinity", "PSS-78", (0.0, 42.0), (2.0, 41.0),
          "practical salinity of seawater; below 2 the water is fresh"),
    # Half the Earth's equatorial circumference is 20,038 km (WGS-84 a = 6378.137 km);
    # a leg longer than the circumference, 40,075 km, cannot be sailed; the longest glider
    # missions are ~7,500 km (from memory).
    Limit("legs.*.length_km", "km", (0.0, 40075.0), (0.0, 8000.0),
          "one leg cannot exceed the Earth's circumference (40,075 km)"),
    # Deepest ocean ~10,935 m (Challenger Deep, from memory).
    Limit("legs.*.seabed_m", "m", (0.0, 11000.0), (1.0, 11000.0),
          "the deepest ocean is about 11,000 m (leave it out for no seabed limit)"),
    # Sea-ice keels rarely exceed ~50 m; ice-shelf drafts reach several hundred metres
    # (from memory).
    Limit("legs.*.ice_ceiling_m", "m", (0.0, 11000.0), (0.0, 600.0),
          "sea-ice keels are tens of metres, ice-shelf drafts a few hundred"),
    # A clock rate of fouling: 0 (no growth) to a few times the reference water's rate
    # (common practice, no source).
    Limit("legs.*.fouling_growth_factor", "-", (0.0, 100.0), (0.0, 10.0),
          "fouling grows at most a few times faster than in the reference water"),
    # Heavy calcareous fouling roughly doubles to triples ship frictional drag (from memory);
    # an eleven-fold drag is not fouling (common practice, no source).
    Limit("fouling.drag_increase", "-", (0.0, 10.0), (0.0, 2.0),
          "heavy fouling at most about triples drag"),
    Limit("fouling.time_constant_days", "days", (0.0, _INF), (1.0, _INF),
          "fouling develops over days to months (inf = never)"),
    Limit("fouling.onset_days", "days", (0.0, 3650.0), (0.0, 365.0),
          "fouling starts within days to months of deployment"),
    # Battery policy fractions (common practice, no source).
    Limit("battery.cold_derating", "-", (0.0, 1.0), (0.5, 1.0),
          "cold water costs lithium packs a few to a few tens of percent"),
    Limit("battery.usable_fraction", "-", (0.0, 1.0), (0.5, 1.0),
          "packs are run to a depth of discharge above one half"),
    Limit("battery.reserve_fraction", "-", (0.0, 1.0), (0.0, 0.5),
          "reserve policies keep a tenth to a third of usable energy"),
    # Months-long glider missions last up to about a year (from memory).
    Limit("limits.max_duration_days", "days", (0.0, _INF), (0.0, 400.0),
          "the longest missions last about a year (inf = no limit)"),
)

PROPELLER: tuple[Limit, ...] = (
    # Survey AUVs cruise at 1-2.5 m/s, fast ones reach ~5 m/s (from memory); 20 m/s is
    # beyond any battery-powered vehicle of the trade (common practice, no source).
    Limit("setpoint.speed_m_s", "m/s", (0.0, 20.0), (0.3, 4.0),
          "battery AUVs cruise at 1-2.5 m/s and never reach 20 m/s"),
    Limit("setpoint.depth_m", "m", (0.0, 11000.0), (0.0, 6000.0),
          "AUV depth ratings go to 6,000 m; the ocean ends near 11,000 m"),
    Limit("legs.*.speed_m_s", "m/s", (0.0, 20.0), (0.3, 4.0),
          "battery AUVs cruise at 1-2.5 m/s and never reach 20 m/s"),
    Limit("legs.*.depth_m", "m", (0.0, 11000.0), (0.0, 6000.0),
          "AUV depth ratings go to 6,000 m; the ocean ends near 11,000 m"),
    # Hotel loads of survey AUVs are tens to a few hundred watts (from memory).
    Limit("vehicle.hotel_load_W", "W", (0.0, 100000.0), (0.0, 2000.0),
          "AUV hotel loads are tens to hundreds of watts"),
    Limit("legs.*.hotel_load_W", "W", (0.0, 100000.0), (0.0, 2000.0),
          "AUV hotel loads are tens to hundreds of watts"),
    # Overall propulsive efficiency of small thrusters 0.2-0.5 (common practice, no source).
    Limit("vehicle.propulsive_efficiency", "-", (0.0, 1.0), (0.1, 0.7),
          "small-thruster propulsive efficiency is 0.2-0.5"),
    # Man-portable AUVs ~1 m, the largest uncrewed vehicles ~25 m (from memory).
    Limit("vehicle.hull.length_m", "m", (0.05, 200.0), (0.5, 30.0),
          "AUV hulls are 0.5-30 m long"),
    Limit("vehicle.hull.diameter_m", "m", (0.01, 20.0), (0.05, 3.0),
          "AUV hulls are 0.05-3 m in diameter"),
    # Appendages add 5-50 % to bare-hull drag (common practice, no source).
    Limit("vehicle.hull.appendage_factor", "-", (1.0, 5.0), (1.0, 2.0),
          "appendages add up to about the bare hull's drag again"),
    Limit("vehicle.hull.wetted_area_m2", "m^2", (0.0, 20000.0), (0.05, 500.0),
          "AUV wetted areas are 0.05-500 m^2"),
    # Bluff bodies stay below C_D ~2 on their frontal area (flat plate ~1.2, from memory).
    Limit("vehicle.drag.coefficient", "-", (0.0, 10.0), (0.001, 2.0),
          "drag coefficients of vehicles stay below about 2"),
    Limit("vehicle.drag.reference_area_m2", "m^2", (0.0, 20000.0), (0.001, 500.0),
          "reference areas of AUVs are 0.001-500 m^2"),
    # Lithium-ion AUV packs 0.1-600 kWh (from memory).
    Limit("battery.nominal_energy_Wh", "Wh", (0.0, 1.0e8), (100.0, 1.0e6),
          "AUV batteries hold 0.1-1000 kWh"),
)

GLIDER: tuple[Limit, ...] = (
    # Gliders fly at 15-45 degrees (from memory); near 90 degrees the polar model (lift
    # balancing the weight's normal component) no longer describes a glide.
    Limit("setpoint.glide_angle_deg", "deg", (0.0, 85.0), (10.0, 60.0),
          "gliders fly at 15-45 degrees; steeper than 85 is a sink, not a glide"),
    # Net buoyancy of gliders is 1-10 N, of large ones up to ~50 N (from memory).
    Limit("setpoint.net_buoyancy_N", "N", (0.0, 5000.0), (0.1, 100.0),
          "glider net buoyancy is a few newtons"),
    Limit("setpoint.top_depth_m", "m", (0.0, 11000.0), (0.0, 1000.0),
          "gliders turn within their depth rating"),
    # Glider depth ratings 200 m, 1,000 m, 6,000 m (from memory).
    Limit("setpoint.bottom_depth_m", "m", (0.0, 11000.0), (1.0, 6000.0),
          "glider depth ratings are 200-6,000 m"),
    # Glider hotel loads are tenths of a watt to a few watts (from memory).
    Limit("vehicle.hotel_load_W", "W", (0.0, 10000.0), (0.0, 50.0),
          "glider hotel loads are below a few watts"),
    Limit("legs.*.hotel_load_W", "W", (0.0, 10000.0), (0.0, 50.0),
          "glider hotel loads are below a few watts"),
    # Buoyancy pumps 0.1-0.6 overall (common practice, no source).
    Limit("vehicle.pump_efficiency", "-", (0.0, 1.0), (0.05, 0.9),
          "buoyancy pump efficiencies are 0.1-0.6"),
    Limit("vehicle.inflection_energy_J", "J", (0.0, 1.0e8), (0.0, 1.0e5),
          "an inflection costs joules to kilojoules"),
    Limit("vehicle.inflection_time_s", "s", (0.0, 86400.0), (0.0, 3600.0),
          "an inflection takes seconds to minutes"),
    # Glider wings 0.1-1 m^2 (from memory).
    Limit("vehicle.polar.reference_area_m2", "m^2", (0.0, 1000.0), (0.01, 5.0),
          "glider reference areas are 0.1-1 m^2"),
    Limit("vehicle.polar.zero_lift_drag", "-", (0.0, 10.0), (0.001, 1.5),
          "zero-lift drag coefficients stay below about 1"),
    # Maximum lift coefficients of wings stay below ~3 even with high-lift devices (from memory).
    Limit("vehicle.polar.max_lift_coefficient", "-", (0.0, 5.0), (0.1, 2.0),
          "wing maximum lift coefficients are below about 2"),
    Limit("vehicle.polar.induced_drag_factor", "-", (0.0, 100.0), (0.001, 10.0),
          "induced-drag factors K = 1/(pi e AR) are 0.01-1"),
    Limit("vehicle.polar.aspect_ratio", "-", (0.0, 100.0), (0.5, 30.0),
          "glider wing aspect ratios are 2-20"),
    # Glider packs 0.1-20 kWh (from memory).
    Limit("battery.nominal_energy_Wh", "Wh", (0.0, 1.0e7), (50.0, 50000.0),
          "glider batteries hold 0.1-20 kWh"),
)

#: The envelope of each vehicle kind: the kind's own rows first, then the common rows.
ENVELOPE: dict[str, dict[str, Limit]] = {
    kind: {row.field: row for row in (*COMMON, *own)}
    for kind, own in (("propeller", PROPELLER), ("glider", GLIDER))
}

#: Lithium packs store at most ~700 Wh per litre of cells (from memory); a propeller hull's
#: cylinder volume pi/4 d^2 L bounds the pack, so more than this per litre of hull is
#: impossible, and less than the lower figure suggests kWh typed as Wh.
HULL_ENERGY_DENSITY_WH_PER_L = (1.0, 1000.0)


def limit_for(kind: str, path: str) -> Limit | None:
    """The envelope row of the field ``path`` (``legs.<name>.key`` matches ``legs.*.key``)."""
    parts = path.split(".")
    if len(parts) == 3 and parts[0] == "legs":
        path = f"legs.*.{parts[2]}"
    return ENVELOPE.get(kind, {}).get(path)


def _num(x: float) -> str:
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    return f"{x:,.6g}"


def markdown_table() -> str:
    """The envelope as a Markdown table (for the README)."""
    lines = ["| vehicle | field | unit | possible | plausible | basis |", "|---|---|---|---|---|---|"]
    for label, rows in (("both", COMMON), ("propeller", PROPELLER), ("glider", GLIDER)):
        for r in rows:
            lines.append(f"| {label} | `{r.field}` | {r.unit} | {_num(r.possible[0])} to "
                         f"{_num(r.possible[1])} | {_num(r.plausible[0])} to "
                         f"{_num(r.plausible[1])} | {r.why} |")
    return "\n".join(lines)


if __name__ == "__main__":  # pragma: no cover - prints the README table
    print(markdown_table())
