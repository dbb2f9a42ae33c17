"""Holding a straight track through a current by crabbing."""

from typing import NamedTuple

import numpy as np

__all__ = ["GroundTrack", "ground_track", "TrackComponents", "track_components"]


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
    cross = np.abs(c_across)
    can_hold = u > cross
    through_water_along = np.sqrt(np.where(can_hold, u**2 - cross**2, 0.0))
    speed = through_water_along + c_along
    headway = can_hold & (speed > 0.0)
    u_safe = np.where(can_hold, u, 1.0)
    crab = np.where(headway, np.arcsin(np.where(can_hold, cross / u_safe, 0.0)), np.pi / 2.0)
    return GroundTrack(
        ground_speed=np.where(headway, speed, 0.0),
        crab_angle=crab,
        headway=headway,
    )


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
