"""The predicted mixture across throttle openings, and the expected power.

Per circuit the delivered area factor of the recommended settings against the proven ones;
blended over the openings by :func:`tuning.circuits.circuit_weights` (linear in fuel flow). The
predicted mixture at an opening and hour is reference AFR × required / delivered. The curve
drawn is the session's leanest hour (largest required factor); the lean check takes the largest
required factor of the session against every opening.
"""

from __future__ import annotations

import numpy as np

from tuning import circuits
from tuning.plan.clip import THROTTLE

__all__ = ["mixture_curves"]


def mixture_curves(rows, refs, hours, main, idle, clip, reference_afr, multiplier=None) -> dict:
    """Arrays per row: the curves (R, T), the leanest deviation per opening (R, T), the
    worst hour's index, the factor's range and the power against the reference [%].

    ``multiplier`` (a calibration, :mod:`tuning.plan.calibrate`): per circuit (R,) the richest
    calibrated required factor of the session against the law's largest; a circuit whose fuel the
    calibration says falls short delivers that much less. The lean check takes the leaner of the
    law's and the calibrated curve."""
    weights = circuits.circuit_weights(THROTTLE)  # (T, 3)
    delivered = (
        weights[None, :, 0] * idle.delivered[:, None]
        + weights[None, :, 1] * clip.curve
        + weights[None, :, 2] * main.delivered[:, None]
    )
    proven = np.ones_like(delivered)
    if multiplier is not None:
        m = [np.asarray(multiplier[c], float)[:, None] for c in ("pilot", "needle", "main")]
        calibrated = (
            weights[None, :, 0] * idle.delivered[:, None] / m[0]
            + weights[None, :, 1] * clip.curve / m[1]
            + weights[None, :, 2] * main.delivered[:, None] / m[2]
        )
        law = (m[0] == 1.0) & (m[1] == 1.0) & (m[2] == 1.0)  # rows on the law: exactly as without a calibration
        proven = np.where(
            law, 1.0, weights[None, :, 0] / m[0] + weights[None, :, 1] / m[1] + weights[None, :, 2] / m[2]
        )
        calibrated = np.where(law, delivered, calibrated)
    else:
        calibrated = delivered
    worst_hour = np.argmax(np.where(rows.valid, rows.required, -np.inf), axis=1)
    worst = rows.required[np.arange(len(rows.bike)), worst_hour]
    cf_event = np.where(rows.valid, np.asarray(hours.air.sae_j1349_cf, float)[rows.index], np.nan)
    ratio = refs.sae_cf[refs.of_bike[rows.bike]][:, None] / cf_event
    if rows.weight is None:
        power = 100.0 * np.nanmean(ratio, axis=1)
    else:  # sessions ridden over several heights: each sample by its share of the hour
        power = 100.0 * np.nansum(ratio * rows.weight, axis=1) / np.maximum(rows.weight.sum(axis=1), 1e-300)
    return {
        "current_afr": reference_afr * worst[:, None] / proven,
        "recommended_afr": reference_afr * worst[:, None] / calibrated,
        "leanest_by_throttle": worst[:, None] / np.minimum(delivered, calibrated) - 1.0,
        "worst_hour": worst_hour,
        "factor_min": np.nanmin(rows.required, axis=1),
        "factor_max": np.nanmax(rows.required, axis=1),
        "power": power,
    }
