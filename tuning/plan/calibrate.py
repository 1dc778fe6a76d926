"""The required area factor per circuit when a calibration is given, never past the lean guard.

A :class:`tuning.calibration.Calibration` says, per bike, by how much each circuit needs more
(lean offset) or less (rich offset) fuel than the metering law, and how much harder or softer the
bike responds to air density. Per circuit ``c`` the required factor of every hour becomes

    f_c = f_law · exp(μ_c + z σ_c),   μ_c = o_c + (n − n₀) ln(ρ/ρ_ref)

with σ_c the standard deviation of μ_c at that hour's air and z = :data:`tuning.calibration.LEAN_SIDE_SD`:
the lean-side bound, never the mean (err rich when unsure). Circuits on which the bike's model has
no readings keep the law (f_c = f_law exactly), and so does every bike without a calibration.

The safety rule: a calibration may move a setting either way, but every candidate must pass the
lean guard (:data:`tuning.plan.window.LEAN_GUARD`) under the calibrated factor *and* under the
law's own factor. So a calibration that says "runs rich" can lean a setting only as far as the
guard already lets the law's plan go, never further; one that says "runs lean" richens it. The
guard's factor of a row is therefore the larger of the two (its ``window.largest``); the choice
among safe candidates follows the calibrated factor. The circuits interact (the needle meters in
series with the main jet, so a smaller main leans the mid-range too): :func:`guarded` checks the
finished settings of every circuit by the law once more, and a bike whose calibrated settings leave
any circuit leaner than both the guard and the law's own plan keeps the law's settings (``law_kept``).
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from tuning.calibration import CIRCUITS
from tuning.plan.clip import MID_RANGE_OPENINGS, THROTTLE
from tuning.plan.window import LEAN_GUARD, WindowLoss

__all__ = ["CircuitRows", "LAW_BASIS", "circuit_rows", "law_leanness", "guarded"]

#: What the settings of a bike planned on the metering law alone rest on (no readings used).
LAW_BASIS = {
    "kind": "law",
    "readings": 0,
    "sessions": 0,
    "events": 0,
    "uncertainty_pct": None,
    "density_exponent": None,
    "density_exponent_sd": None,
    "offsets_pct": None,
    "law_kept": False,
}


@dataclass(frozen=True)
class CircuitRows:
    """The rows each circuit is planned on (``pilot``, ``needle``, ``main``: :class:`~tuning.plan.factor.Rows`,
    the law's own rows where nothing is calibrated), the richest calibrated multiplier of each row's
    session per circuit (R,) (None without a calibration), and per bike its ``basis``."""

    pilot: object
    needle: object
    main: object
    multiplier: dict
    basis: list
    calibrated: bool

    def of(self, circuit: str):
        return getattr(self, circuit)


def _bike_arrays(fleet, calibration):
    """Per bike (B,): means (B, 4), covariances (B, 4, 4), applied circuits (B, 3), the estimates."""
    estimates = [calibration.of(b.id) for b in fleet.bikes]
    mean = np.array([e.mean for e in estimates]).reshape(-1, 4)
    cov = np.array([e.covariance for e in estimates]).reshape(-1, 4, 4)
    applies = np.array([[e.kind != "law" and e.circuits[c] for c in range(3)] for e in estimates], bool).reshape(-1, 3)
    return mean, np.nan_to_num(cov, nan=0.0, posinf=0.0), applies, estimates


def circuit_rows(fleet, rows, hours, refs, calibration) -> CircuitRows:
    """The rows of each circuit with the calibrated required factor (``calibration`` None: the law's rows)."""
    n = len(rows.bike)
    if calibration is None or n == 0 or not calibration.used:
        basis = [_basis(None, None) for _ in fleet.bikes]
        if calibration is not None and not calibration.used:
            basis = [dict(b, not_used=True) for b in basis]
        return CircuitRows(rows, rows, rows, None, basis, False)
    mean, cov, applies, estimates = _bike_arrays(fleet, calibration)
    moist = np.asarray(hours.air.moist_air_density, float)[rows.index]
    x = np.log(moist / refs.moist[refs.of_bike[rows.bike]][:, None])  # (R, H)
    z = calibration.lean_side_sd
    b = rows.bike
    out, multiplier, spread = {}, {}, {}
    for i, circuit in enumerate(CIRCUITS):
        if not applies[:, i].any():
            out[circuit], multiplier[circuit] = rows, np.ones(n)
            spread[circuit] = np.zeros(n)
            continue
        var = cov[b, i, i][:, None] + 2.0 * cov[b, i, 3][:, None] * x + cov[b, 3, 3][:, None] * x * x
        sd = np.sqrt(np.maximum(var, 0.0))
        log_f = mean[b, i][:, None] + mean[b, 3][:, None] * x + z * sd
        log_f = np.where(applies[b, i][:, None] & rows.valid, log_f, 0.0)
        required = np.where(rows.valid, rows.required * np.exp(log_f), np.nan)
        window = WindowLoss(np.where(rows.valid, required, 1.0), rows.valid, rows.weight)
        calibrated_largest = window.largest.copy()
        window.largest = np.maximum(window.largest, rows.window.largest)  # the law's guard holds too
        out[circuit] = dataclasses.replace(rows, required=required, window=window)
        multiplier[circuit] = calibrated_largest / rows.window.largest
        spread[circuit] = np.where(applies[b, i], np.where(rows.valid, sd, 0.0).max(axis=1), 0.0)
    basis = [
        _basis(est, max(float(spread[c][rows.bike == k].max(initial=0.0)) for c in CIRCUITS))
        for k, est in enumerate(estimates)
    ]
    return CircuitRows(out["pilot"], out["needle"], out["main"], multiplier, basis, True)


def _basis(est, sd) -> dict:
    """What a bike's settings rest on: ``kind`` (law, model, calibrated), counts, the uncertainty of
    its calibrated circuits at the event's air [%, one standard deviation], the exponent."""
    if est is None or est.kind == "law":
        return dict(LAW_BASIS)
    seen = dict(zip(CIRCUITS, est.circuits))
    return {
        "kind": est.kind,
        "readings": est.readings,
        "sessions": est.sessions,
        "events": est.events,
        "uncertainty_pct": round(100.0 * float(np.expm1(sd)), 1),
        "density_exponent": round(est.exponent, 3),
        "density_exponent_sd": round(est.exponent_sd, 3),
        "offsets_pct": {c: (round(100.0 * float(np.expm1(est.offset(c))), 1) if seen[c] else None) for c in CIRCUITS},
        "law_kept": False,
    }


def law_leanness(rows, main, idle, clip) -> np.ndarray:
    """(R, 3) the leanest deviation by the LAW [1] of the planned pilot (with screw), needle (at the
    mid-range openings where the clip is judged) and main circuit over each row's hours."""
    mid = np.isin(np.round(THROTTLE, 3), np.round(MID_RANGE_OPENINGS, 3))
    largest = rows.window.largest
    needle = clip.curve[:, mid].min(axis=1) if len(clip.curve) else np.ones(0)
    return np.stack([largest / idle.delivered, largest / needle, largest / main.delivered], axis=1) - 1.0


def _merged(keep, cal, law):
    """A stage's record with the rows of ``keep`` from ``law`` and the others from ``cal``."""
    out = dataclasses.replace(cal)
    for f in dataclasses.fields(cal):
        a, b = getattr(cal, f.name), getattr(law, f.name)
        if dataclasses.is_dataclass(a):
            setattr(out, f.name, _merged(keep, a, b))
        elif isinstance(a, np.ndarray) and a.ndim and len(a) == len(keep):
            mask = keep.reshape((-1,) + (1,) * (a.ndim - 1))
            setattr(out, f.name, np.where(mask, b, a))
    return out


def guarded(rows, circuits, calibrated, law):
    """The calibrated settings ``(main, idle, clip)``, except for bikes where any row leaves a circuit
    leaner by the law than the guard and than the law's own plan ``law`` (a smaller main also leans
    the needle, which meters in series with it): those bikes keep the law's settings, and their
    basis says so. Returns the merged ``(main, idle, clip)``."""
    lean_cal = law_leanness(rows, *calibrated)
    lean_law = law_leanness(rows, *law)
    worse = (lean_cal > np.maximum(lean_law, LEAN_GUARD) + 1e-9).any(axis=1)
    bikes = np.unique(rows.bike[worse])
    keep = np.isin(rows.bike, bikes)
    for b in bikes.tolist():
        circuits.basis[b]["law_kept"] = True
    return tuple(_merged(keep, c, w) for c, w in zip(calibrated, law))
