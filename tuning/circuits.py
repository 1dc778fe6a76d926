"""The carburetor's circuits: needle annulus, orifices in series, the throttle bands in which
the pilot, needle and main circuits meter, and the mixture screw (numpy and constants only).

The metering law that says how much fuel area the air asks for is :mod:`tuning.metering`.
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "needle_diameter_at_jet",
    "needle_annulus_area",
    "series_orifice_area",
    "circuit_weights",
    "mixture_screw_area_factor",
    "ASSUMED_GROOVE_AREA_STEP",
    "ASSUMED_SCREW_EFFECT_PER_TURN",
    "CIRCUIT_BAND_EDGES",
]

#: Relative change of the needle-annulus area per clip groove where the needle geometry is
#: unknown [1]: one groove lower (higher number) about +10 % annulus area at mid-range.
#: From memory (order of magnitude of common practice), not from a published table.
ASSUMED_GROOVE_AREA_STEP = 0.10

#: Relative change of the idle-circuit fuel flow per full turn of the mixture screw [1]:
#: about 10 % per turn, i.e. one turn is worth roughly one pilot-jet size.
#: From memory (common practice), not from a published table.
ASSUMED_SCREW_EFFECT_PER_TURN = 0.10

#: Throttle openings [1] bounding the circuit bands used by :func:`circuit_weights`
#: (common practice): pilot full to 1/8 and fading out by 3/8 (to a floor), needle fading in
#: 1/8..1/4 and out 3/4..7/8, main fading in 1/2..3/4 and full above.
CIRCUIT_BAND_EDGES = {
    "pilot": (0.125, 0.375),
    "needle_in": (0.125, 0.25),
    "needle_out": (0.75, 0.875),
    "main_in": (0.5, 0.75),
}

#: Share of the pilot circuit kept at large openings before normalisation [1] (the pilot
#: keeps flowing; its share of the total falls as the other circuits open). Our choice.
PILOT_FLOOR = 0.1


def needle_diameter_at_jet(slide_lift, straight_diameter, taper_start, taper_angle, groove_pitch, clip):
    r"""Diameter of the jet needle where it passes the top of the needle jet [m].

    Parameters
    ----------
    slide_lift : array_like
        Lift of the slide (and needle) above closed [m].
    straight_diameter : array_like
        Diameter of the straight (upper) part of the needle [m].
    taper_start : array_like
        Slide lift at which the taper reaches the needle jet with the clip in groove 1 [m].
    taper_angle : array_like
        Included angle of the taper [rad].
    groove_pitch : array_like
        Distance between clip grooves [m].
    clip : array_like
        Clip groove, 1 = top groove (needle lowest, leanest) [1].

    Returns
    -------
    numpy.ndarray
        Needle diameter at the jet [m], never below zero (past the needle's tip the
        needle no longer obstructs the jet).

    Notes
    -----
    Moving the clip one groove down raises the needle by one pitch, so the taper reaches the
    jet earlier:

    .. math::

        d = d_s - 2 \tan(\theta/2)\,\max\bigl(0,\; h - (h_t - (c-1)p)\bigr)

    Valid for a straight-cone taper (single taper); multi-taper needles are approximated by
    their first taper.
    """
    slide_lift = np.asarray(slide_lift, float)
    start = np.asarray(taper_start, float) - (np.asarray(clip, float) - 1.0) * np.asarray(groove_pitch, float)
    along_taper = np.maximum(slide_lift - start, 0.0)
    diameter = np.asarray(straight_diameter, float) - 2.0 * np.tan(np.asarray(taper_angle, float) / 2.0) * along_taper
    return np.maximum(diameter, 0.0)


def needle_annulus_area(slide_lift, needle_jet, straight_diameter, taper_start, taper_angle, groove_pitch, clip):
    r"""Open area of the annulus between the jet needle and the needle jet [m²].

    Parameters
    ----------
    slide_lift : array_like
        Lift of the slide above closed [m].
    needle_jet : array_like
        Bore of the needle jet [m]; must exceed the needle's straight diameter.
    straight_diameter, taper_start, taper_angle, groove_pitch, clip : array_like
        Needle geometry and clip groove, as in :func:`needle_diameter_at_jet`.

    Returns
    -------
    numpy.ndarray
        :math:`\frac{\pi}{4}(D^2 - d^2)` [m²].

    Raises
    ------
    ValueError
        Where the straight diameter is not smaller than the needle-jet bore (the needle
        would not fit: impossible input).

    Notes
    -----
    The geometric annulus; the discharge coefficient is taken equal for all grooves and
    cancels in the ratios the plan uses.
    """
    needle_jet = np.asarray(needle_jet, float)
    if np.any(np.asarray(straight_diameter, float) >= needle_jet):
        raise ValueError("needle straight diameter must be smaller than the needle-jet bore")
    diameter = needle_diameter_at_jet(slide_lift, straight_diameter, taper_start, taper_angle, groove_pitch, clip)
    return np.pi / 4.0 * (needle_jet**2 - diameter**2)


def series_orifice_area(area_1, area_2):
    r"""Effective area of two orifices in series [m²] (same discharge coefficient).

    Parameters
    ----------
    area_1, area_2 : array_like
        Orifice areas [m²], non-negative.

    Returns
    -------
    numpy.ndarray
        :math:`A = (A_1^{-2} + A_2^{-2})^{-1/2}`; zero where either area is zero.

    Notes
    -----
    The same mass flow passes both orifices and the pressure drops add:
    :math:`\Delta p \propto \dot m^2 / A^2` for each, hence the inverse squares add
    (incompressible flow, equal discharge coefficients).

    References
    ----------
    .. [1] J. B. Heywood, *Internal Combustion Engine Fundamentals*, McGraw-Hill, 1988,
       section 7.3 (the needle and the main jet metering in series).
    """
    a1 = np.asarray(area_1, float)
    a2 = np.asarray(area_2, float)
    with np.errstate(divide="ignore", invalid="ignore"):
        inverse = np.sqrt(1.0 / a1**2 + 1.0 / a2**2)
        area = np.where((a1 > 0) & (a2 > 0), 1.0 / inverse, 0.0)
    return area


def _ramp(x, lo, hi):
    """0 below ``lo``, 1 above ``hi``, linear between."""
    return np.clip((np.asarray(x, float) - lo) / (hi - lo), 0.0, 1.0)


def circuit_weights(throttle):
    r"""Share of the fuel metered by each circuit against throttle opening [1].

    Parameters
    ----------
    throttle : array_like
        Throttle (slide) opening, 0 closed .. 1 full [1].

    Returns
    -------
    numpy.ndarray
        Array of shape ``throttle.shape + (3,)``: weights of the pilot, needle and main
        circuits, each row summing to 1.

    Notes
    -----
    Trapezoidal bands (common practice, edges in :data:`CIRCUIT_BAND_EDGES`), overlapping:
    pilot 1 up to 1/8, falling to a floor of 0.1 at 3/8 and kept there (the pilot keeps
    flowing at larger openings); needle rising 1/8..1/4, 1 to 3/4, falling to 0 at 7/8;
    main rising 1/2..3/4, 1 above. The raw bands are normalised to sum to 1. The band
    edges are rules of the trade, not measurements; the shares are our modelling choice.
    """
    t = np.asarray(throttle, float)
    lo, hi = CIRCUIT_BAND_EDGES["pilot"]
    pilot = PILOT_FLOOR + (1.0 - PILOT_FLOOR) * (1.0 - _ramp(t, lo, hi))
    needle = _ramp(t, *CIRCUIT_BAND_EDGES["needle_in"]) * (1.0 - _ramp(t, *CIRCUIT_BAND_EDGES["needle_out"]))
    main = _ramp(t, *CIRCUIT_BAND_EDGES["main_in"])
    raw = np.stack([pilot, needle, main], axis=-1)
    return raw / raw.sum(axis=-1, keepdims=True)


def mixture_screw_area_factor(change_turns, kind, effect_per_turn=ASSUMED_SCREW_EFFECT_PER_TURN):
    r"""Idle-circuit fuel factor delivered by turning the mixture screw [1].

    Parameters
    ----------
    change_turns : array_like
        Change of the screw position [turns], positive = turned out.
    kind : {"air", "fuel"} or array_like of these
        ``air``: the screw meters air, turning out leans; ``fuel``: the screw meters fuel,
        turning out richens.
    effect_per_turn : float
        Relative change of the idle fuel flow per turn [1]
        (default :data:`ASSUMED_SCREW_EFFECT_PER_TURN`, from memory).

    Returns
    -------
    numpy.ndarray
        :math:`(1+e)^{\pm\Delta}` with + for a fuel screw and − for an air screw.

    Notes
    -----
    A log-linear model of the screw's effect, usable only within the screw's usable range
    (about 1..3 turns out, common practice); outside it the pilot jet is changed instead.
    """
    change_turns = np.asarray(change_turns, float)
    kind = np.asarray(kind)
    if not np.all(np.isin(kind, ["air", "fuel"])):
        raise ValueError(f"mixture screw kind must be 'air' or 'fuel', got {kind!r}")
    sign = np.where(kind == "fuel", 1.0, -1.0)
    return (1.0 + effect_per_turn) ** (sign * change_turns)
