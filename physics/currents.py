"""Making a track good through a current: crabbing, drifting, and currents over depth."""

from typing import NamedTuple

import numpy as np

__all__ = [
    "CRAB",
    "CRAB_OR_DRIFT",
    "CURRENT_POLICIES",
    "DRIFT",
    "GroundTrack",
    "TrackComponents",
    "TrackMadeGood",
    "drift_track",
    "ground_track",
    "layered_current",
    "track_components",
    "track_made_good",
]

#: Current policy codes (how the vehicle deals with the current across its track on a leg).
CRAB = 0  #: turn into the cross current to hold the track line
DRIFT = 1  #: head along the track, drift across, make the offset good later
CRAB_OR_DRIFT = 2  #: whichever of the two makes good the track faster at that moment
#: policy names as written in a scenario, by code
CURRENT_POLICIES = {CRAB: "crab", DRIFT: "drift", CRAB_OR_DRIFT: "crab_or_drift"}


class GroundTrack(NamedTuple):
    """Ground-track kinematics; fields have the broadcast shape of the inputs.

    Attributes
    ----------
    ground_speed : ndarray
        Speed made good along the track u_g [m/s] (0.0 without headway).
    crab_angle : ndarray
        Magnitude of the heading offset into the cross current psi [rad], in [0, pi/2]
        (pi/2 without headway).
    headway : ndarray of bool
        True where the vehicle makes positive progress along the track.
    """

    ground_speed: np.ndarray
    crab_angle: np.ndarray
    headway: np.ndarray


def ground_track(speed_through_water, current_along, current_across):
    """Ground speed and crab angle of a vehicle holding its track line.

    Parameters
    ----------
    speed_through_water : array_like
        Horizontal speed through water u [m/s] (for a glider, the cycle-mean speed).
    current_along : array_like
        Current component along the track c_a [m/s], positive when following.
    current_across : array_like
        Current component across the track c_x [m/s] (either sign).

    Returns
    -------
    GroundTrack
        No headway (u <= |c_x|, or u_g <= 0 against a head current) is a failure state with
        ground_speed 0.0 and crab_angle pi/2, never NaN.

    Notes
    -----
    The heading is turned by psi = arcsin(|c_x| / u) so the cross component of the velocity
    through water cancels the cross current; what remains along the track is
    u_g = sqrt(u^2 - c_x^2) + c_a (velocity triangle, common practice in navigation).
    """
    u, c_along, c_across = np.broadcast_arrays(
        *(np.asarray(x, dtype=float) for x in (speed_through_water, current_along,
                                                current_across))
    )
    ground_speed, headway, can_hold = _crab_speed(u, c_along, c_across)
    cross = np.abs(c_across)
    u_safe = np.where(can_hold, u, 1.0)
    crab = np.where(headway, np.arcsin(np.where(can_hold, cross / u_safe, 0.0)), np.pi / 2.0)
    return GroundTrack(ground_speed=ground_speed, crab_angle=crab, headway=headway)


def _crab_speed(u, c_along, c_across):
    """Ground speed made good holding the track line (0.0 without headway), the headway, and
    where the vehicle can hold the line at all (u > |c_x|): :func:`ground_track` without the
    crab angle."""
    cross = np.abs(c_across)
    can_hold = u > cross
    speed = np.sqrt(np.where(can_hold, u * u - cross * cross, 0.0)) + c_along
    headway = can_hold & (speed > 0.0)
    return np.where(headway, speed, 0.0), headway, can_hold


def drift_track(speed_through_water, current_along, current_across):
    """Speed made good when drifting across the track and making the offset good later.

    Parameters
    ----------
    speed_through_water : array_like
        Horizontal speed through water u [m/s].
    current_along : array_like
        Current along the track c_a [m/s], positive when following.
    current_across : array_like
        Current across the track c_x [m/s] (either sign).

    Returns
    -------
    GroundTrack
        crab_angle is 0; no headway only where u + c_a <= 0 (ground_speed 0.0, never NaN).

    Notes
    -----
    Heading along the track the vehicle progresses at u + c_a while the cross current
    carries it off at |c_x|: per metre of track it spends 1/(u + c_a) and collects
    |c_x|/(u + c_a) metres of offset. The offset is made good later in slack water at the
    vehicle's own speed u, taking |c_x|/((u + c_a) u) more; the mean speed made good is

        u_g = (u + c_a) u / (u + |c_x|)

    (derived from the velocity triangle, MODEL notes sec. 8). The make-good is booked on the
    leg where the offset arose (same time and energy, at that leg's fouling state).
    """
    u, c_along, c_across = np.broadcast_arrays(
        *(np.asarray(x, dtype=float) for x in (speed_through_water, current_along,
                                                current_across)))
    progress = u + c_along
    headway = (progress > 0.0) & (u > 0.0)
    denominator = np.where(headway, u + np.abs(c_across), 1.0)
    return GroundTrack(
        ground_speed=np.where(headway, progress * u / denominator, 0.0),
        crab_angle=np.zeros(u.shape),
        headway=headway,
    )


class TrackMadeGood(NamedTuple):
    """Ground-track kinematics under a current policy (broadcast shape of the inputs).

    Attributes
    ----------
    ground_speed : ndarray
        Mean speed made good along the track [m/s] (0.0 without headway).
    headway : ndarray of bool
        Positive progress along the track.
    drifting : ndarray of bool
        The vehicle drifts across the track (and makes the offset good later).
    """

    ground_speed: np.ndarray
    headway: np.ndarray
    drifting: np.ndarray


def track_made_good(speed_through_water, current_along, current_across, policy=CRAB):
    """Speed made good along the track under a current policy.

    Parameters
    ----------
    speed_through_water, current_along, current_across : array_like
        As in :func:`ground_track` [m/s].
    policy : array_like of int, optional
        CRAB (hold the track line, :func:`ground_track`), DRIFT (:func:`drift_track`) or
        CRAB_OR_DRIFT (the faster of the two where each has headway: a pilot's choice).

    Returns
    -------
    TrackMadeGood
    """
    u, c_along, c_across = np.broadcast_arrays(
        *(np.asarray(x, dtype=float) for x in (speed_through_water, current_along,
                                                current_across)))
    crab_speed, crab_headway, _ = _crab_speed(u, c_along, c_across)
    code = np.broadcast_to(np.asarray(policy), crab_speed.shape)
    if not np.any(code != CRAB):  # every leg crabs: no drift to weigh
        return TrackMadeGood(crab_speed, crab_headway, np.zeros(crab_speed.shape, dtype=bool))
    drift = drift_track(u, c_along, c_across)
    choose_drift = (code == DRIFT) | ((code == CRAB_OR_DRIFT) & (drift.ground_speed > crab_speed))
    return TrackMadeGood(
        ground_speed=np.where(choose_drift, drift.ground_speed, crab_speed),
        headway=np.where(choose_drift, drift.headway, crab_headway),
        drifting=choose_drift & drift.headway,
    )


def layered_current(surface_current, deep_current, layer_depth, top_depth, bottom_depth):
    """Mean of a two-layer current profile over a depth band (a point when top == bottom).

    Parameters
    ----------
    surface_current : array_like
        Current component in the surface layer, from 0 to ``layer_depth`` [m/s].
    deep_current : array_like
        Current component below ``layer_depth`` [m/s].
    layer_depth : array_like
        Thickness of the surface layer h [m] (0: the deep value everywhere).
    top_depth, bottom_depth : array_like
        Depth band [m], top <= bottom; a glider's dive band, or a propeller vehicle's running
        depth given as both.

    Returns
    -------
    ndarray
        (c_s overlap([z_t, z_b], [0, h]) + c_d overlap([z_t, z_b], [h, inf))) / (z_b - z_t)
        [m/s]; at a single depth z, c_s if z < h else c_d (derived).
    """
    c_s, c_d, h, z_t, z_b = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in (
        surface_current, deep_current, layer_depth, top_depth, bottom_depth)))
    band = z_b - z_t
    has_band = band > 0.0
    in_layer = np.clip(np.minimum(z_b, h) - z_t, 0.0, None)
    share = np.where(has_band, in_layer / np.where(has_band, band, 1.0),
                     (z_t < h).astype(float))
    return share * c_s + (1.0 - share) * c_d


class TrackComponents(NamedTuple):
    """A horizontal current resolved on a track line.

    Attributes
    ----------
    along : ndarray
        Component along the track c_a [m/s], positive when following.
    across : ndarray
        Component across the track c_x [m/s], positive to starboard of the track direction.
    """

    along: np.ndarray
    across: np.ndarray


def track_components(eastward, northward, bearing_deg):
    """Along- and across-track components of a current on a track of a given bearing.

    Parameters
    ----------
    eastward : array_like
        Eastward current v_E [m/s].
    northward : array_like
        Northward current v_N [m/s].
    bearing_deg : array_like
        Track bearing beta [deg], clockwise from true north (a geodesic's forward azimuth).

    Returns
    -------
    TrackComponents
        Arrays of the broadcast shape of the inputs.

    Notes
    -----
    c_a = v_N cos(beta) + v_E sin(beta) and c_x = -v_N sin(beta) + v_E cos(beta): the
    projection on the unit vector along the track (sin beta, cos beta) in (east, north) and
    on the unit vector to its starboard (cos beta, -sin beta) (derived: a rotation of axes).
    """
    v_e, v_n, beta = np.broadcast_arrays(
        *(np.asarray(x, dtype=float) for x in (eastward, northward, bearing_deg)))
    b = np.deg2rad(beta)
    return TrackComponents(v_n * np.cos(b) + v_e * np.sin(b), -v_n * np.sin(b) + v_e * np.cos(b))
