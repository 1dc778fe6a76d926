"""When to change again: how much colder or warmer the forecast may turn before the main jet
chosen for a run of sessions should change.

For a run of sessions that share a main jet, the binding hour is the densest one (the largest
required factor). Shifting that hour's temperature (its station pressure and relative humidity
held) gives the shift ``colder`` at which the fitted size turns leaner than the lean guard (fit
the next larger size), and the shift ``warmer`` at which the next smaller size becomes the
better choice (safe, and closer to the proven mixture by the lean-weighted measure). The thresholds are told against the run's own forecast: below its coldest hour
minus ``colder``, above its warmest hour plus ``warmer``, so they always lie outside the
forecast range of the sessions the setting covers.
"""

from __future__ import annotations

import warnings

import numpy as np

from tuning import air, metering
from tuning.constants import ZERO_CELSIUS
from tuning.plan.document import jet_number
from tuning.plan.window import LEAN_GUARD

__all__ = ["SHIFT_RANGE_K", "rejet_thresholds"]

SHIFT_RANGE_K = 40.0  #: largest temperature shift searched each way [K]
_ITERATIONS = 20  # 40 K / 2**20: far below the printed 0.1 K
#: Half the printed step (0.1 K): ``below`` is rounded after taking this off, ``above`` after
#: adding it, so each threshold prints at or beyond its computed value on the side away from the
#: run's forecast (about a floor and a ceiling to 0.1 K).
PRINT_HALF_STEP_K = 0.05


def rejet_thresholds(fleet, rows, hours, refs, meter, main, multiplier=None):
    """Thresholds per row; a dict of lists (°C, jet numbers; None where none applies).

    ``multiplier`` (R,): a calibration's richest main-circuit factor against the law's in each row's
    session; where above 1 it scales the law's factor (kept over the shift), where below 1 the law's
    own factor is used (err rich: the guard holds under the law too).

    ``below``/``below_jet``: under ``below`` °C (the coldest hour of the run), fit ``below_jet``;
    ``above``/``above_jet``: over ``above`` °C (the warmest hour of the run), ``above_jet`` is safe.
    """
    n = len(rows.bike)
    out = {k: [None] * n for k in ("below", "below_jet", "above", "above_jet")}
    group, run = _run_groups(rows, hours, main)
    sizes_up, sizes_dn = _neighbour_sizes(fleet, main, run["first_row"])
    colder, warmer = _shifts(rows, hours, refs, meter, main, run, sizes_dn, multiplier)
    below = np.round(run["t_min"] + np.minimum(colder, 0.0) - ZERO_CELSIUS - PRINT_HALF_STEP_K, 1)
    above = np.round(run["t_max"] + np.maximum(warmer, 0.0) - ZERO_CELSIUS + PRINT_HALF_STEP_K, 1)
    has_up = np.isfinite(colder) & np.isfinite(sizes_up)
    has_dn = np.isfinite(warmer) & (warmer > 0.0) & np.isfinite(sizes_dn)
    for r in range(n):
        g = group[r]
        if has_up[g]:
            out["below"][r], out["below_jet"][r] = float(below[g]), jet_number(sizes_up[g])
        if has_dn[g]:
            out["above"][r], out["above_jet"][r] = float(above[g]), jet_number(sizes_dn[g])
    return out


def _run_groups(rows, hours, main):
    """The runs of sessions sharing a main jet: the run of each row, and per run its densest hour
    (``hour``), its temperature range (``t_min``, ``t_max`` [K]) and its first row (``first_row``)."""
    n, s_count = len(rows.bike), rows.n_sessions
    run = _runs(main.recommended.reshape(-1, s_count)).ravel()  # run id per row (within its bike)
    key = rows.bike * s_count + run
    # the densest hour of each run, and the run's temperature range
    air_t = np.asarray(hours.air.air_temperature, float)
    dens = np.where(rows.valid, rows.required, -np.inf)
    hour_of_row = rows.index[np.arange(n), np.argmax(dens, axis=1)]
    largest = dens.max(axis=1)
    t_row_min = np.where(rows.valid, air_t[rows.index], np.inf).min(axis=1)
    t_row_max = np.where(rows.valid, air_t[rows.index], -np.inf).max(axis=1)
    uniq, group = np.unique(key, return_inverse=True)
    run_largest = np.full(len(uniq), -np.inf)
    np.maximum.at(run_largest, group, largest)
    run_hour = np.zeros(len(uniq), np.int64)
    is_max = largest >= run_largest[group]
    run_hour[group[is_max]] = hour_of_row[is_max]
    run_tmin = np.full(len(uniq), np.inf)
    np.minimum.at(run_tmin, group, t_row_min)
    run_tmax = np.full(len(uniq), -np.inf)
    np.maximum.at(run_tmax, group, t_row_max)
    first_row = np.zeros(len(uniq), np.int64)
    first_row[group[::-1]] = np.arange(n)[::-1]
    return group, {"hour": run_hour, "t_min": run_tmin, "t_max": run_tmax, "first_row": first_row}


def _neighbour_sizes(fleet, main, first_row):
    """Per run: the next larger and the next smaller size of the family than the fitted one (NaN: none)."""
    sizes_up, sizes_dn = np.full(len(first_row), np.nan), np.full(len(first_row), np.nan)
    for g, r in enumerate(first_row):
        sizes = np.asarray(fleet.jet_families[main.family[r]].sizes, float)
        i = int(main.index[r])
        if i + 1 < len(sizes):
            sizes_up[g] = sizes[i + 1]
        if i - 1 >= 0:
            sizes_dn[g] = sizes[i - 1]
    return sizes_up, sizes_dn


def _shifts(rows, hours, refs, meter, main, run, sizes_dn, multiplier):
    """Per run: the temperature shifts [K] of its densest hour, ``colder`` (negative) where the fitted
    size reaches the lean guard and ``warmer`` where the next smaller size becomes the better one."""
    first_row, run_hour = run["first_row"], run["hour"]
    coding = main.coding[first_row]
    current = main.current[first_row]
    fitted = main.recommended[first_row]

    def ratio(size):
        q = size / current
        return np.where(coding == "diameter", q * q, q)

    bike = rows.bike[first_row]
    ref = refs.of_bike[bike]
    p = np.asarray(hours.air.station_pressure, float)[run_hour]
    rh = np.asarray(hours.air.relative_humidity, float)[run_hour]
    t0 = np.asarray(hours.air.air_temperature, float)[run_hour]

    scale = 1.0 if multiplier is None else np.maximum(np.asarray(multiplier, float)[first_row], 1.0)

    def factor(shift):
        state = air.air_state(t0 + shift, p, relative_humidity=rh)
        return scale * metering.area_factor(
            state.dry_air_density,
            refs.dry[ref],
            state.moist_air_density,
            refs.moist[ref],
            meter.rho_event[bike],
            meter.rho_reference[bike],
            meter.afr_event[bike],
            meter.afr_reference[bike],
            meter.exponent[bike],
        )

    # colder: the fitted size reaches the lean guard (it must change); warmer: the next smaller
    # size becomes the better one, where the lean-weighted deviations of the two sizes are equal,
    # 2 (f/D_small - 1) = 1 - f/D_fitted, i.e. f = 3 / (2/D_small + 1/D_fitted), which lies
    # within the guard for steps below about 6 %
    d_fit, d_dn = ratio(fitted), ratio(sizes_dn)
    with warnings.catch_warnings():  # hypothetical temperatures: J1349 range notes are noise here
        warnings.simplefilter("ignore", air.OutOfRangeWarning)
        colder = _solve(factor, d_fit * (1.0 + LEAN_GUARD), -SHIFT_RANGE_K, 0.0)
        switch = np.minimum(3.0 / (2.0 / d_dn + 1.0 / d_fit), d_dn * (1.0 + LEAN_GUARD))
        warmer = _solve(factor, switch, 0.0, SHIFT_RANGE_K)
    return colder, warmer


def _runs(sizes):
    """Run id per (bike, session): a new run wherever the size changes from the session before."""
    change = np.concatenate([np.zeros((sizes.shape[0], 1), bool), sizes[:, 1:] != sizes[:, :-1]], axis=1)
    return np.cumsum(change, axis=1)


def _solve(factor, target, lo_shift, hi_shift):
    """The temperature shift [K] in [lo, hi] where ``factor`` (falling with temperature) meets
    ``target``; NaN where it does not within the range."""
    target = np.asarray(target, float)
    lo = np.full(target.shape, lo_shift)
    hi = np.full(target.shape, hi_shift)
    f_lo, f_hi = factor(lo), factor(hi)
    ok = np.isfinite(target) & (f_lo >= target) & (f_hi <= target)
    for _ in range(_ITERATIONS):
        mid = 0.5 * (lo + hi)
        above = factor(mid) > target
        lo = np.where(above, mid, lo)
        hi = np.where(above, hi, mid)
    return np.where(ok, 0.5 * (lo + hi), np.nan)
