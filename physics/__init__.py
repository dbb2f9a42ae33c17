"""Physics of an AUV or glider transit: pure, vectorized functions in SI units.

One module per physical topic. Functions take array_like inputs, broadcast them, and return
ndarrays or NamedTuples of ndarrays; nothing here reads files, samples or prints.
Temperature (degC) and pressure (dbar) in :mod:`physics.seawater` follow TEOS-10 and are the
only non-SI quantities.
"""

from . import (
    battery,
    buoyancy_engine,
    currents,
    drag,
    fouling,
    glide,
    lift,
    mission,
    propulsion,
    reliability,
    seawater,
    states,
    turnback,
)

__all__ = [
    "battery",
    "buoyancy_engine",
    "currents",
    "drag",
    "fouling",
    "glide",
    "lift",
    "mission",
    "propulsion",
    "reliability",
    "seawater",
    "states",
    "turnback",
]
