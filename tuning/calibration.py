"""Calibration from recorded outcomes: how each bike really runs, pooled with its model and the law.

A plan predicts the mixture of every bike from the metering law (:func:`tuning.metering.area_factor`):
at throttle opening :math:`\\theta` and hour :math:`t` the predicted air–fuel ratio is
:math:`\\mathrm{AFR}_\\mathrm{ref}\\, f(t) / D(\\theta)`, with :math:`f` the required area factor
(density exponent :math:`n_0`, the bike's as the fleet states it, 0.5 by default) and :math:`D` the
area factor the fitted settings deliver against the proven ones (blended over the circuits by
:func:`tuning.circuits.circuit_weights`). The metering law's factor holds the density ratio to the power
:math:`n`, :math:`f \\propto (\\rho/\\rho_\\mathrm{ref})^{n}` (moist air; see
:func:`tuning.metering.area_factor`), and a bike whose circuit *c* delivers :math:`e^{-o_c}` of the fuel
the law expects runs :math:`e^{o_c}` leaner. Hence, for a reading on circuit *c*,

.. math::

    y = \\ln\\frac{\\mathrm{AFR}_\\mathrm{measured}}{\\mathrm{AFR}_\\mathrm{law}}
      = o_c + (n - n_0)\\,\\ln\\frac{\\rho}{\\rho_\\mathrm{ref}} + \\varepsilon

with :math:`o_c > 0` lean. This module estimates, per bike, :math:`\\beta = (o_\\mathrm{pilot},
o_\\mathrm{needle}, o_\\mathrm{main}, n - n_0)` in a two-level Gaussian model with known variances:
each bike's :math:`\\beta` scatters about its model's (:data:`PRIORS`: 3 % per circuit, 0.1 in the
exponent), each model's about the law (0: 6 %, 0.2). The posterior is exact (conjugate normal; the
bikes are integrated out per model through their 4 × 4 sufficient statistics, so a fleet of
thousands costs milliseconds). A bike without readings gets its model's estimate with the bike
scatter added; a model without readings is the law exactly.

Readings and their weights (standard deviations in :math:`\\ln` AFR; all *our choice* and *from
memory*, not from a published table, except where a source is named):

- a wideband reading on a four-stroke: 2 % (the sensor's own error is well under 1 % of AFR near
  12–15; the rest is a steady throttle that is never quite steady);
- a wideband reading on a two-stroke: 5 % (2.5 × less weight squared ≈ 1/6): in a two-stroke part
  of the fresh charge short-circuits to the exhaust during scavenging (Heywood 1988, section 6.6,
  trapping and scavenging efficiencies), so the exhaust's oxygen overstates the trapped mixture's
  AFR, and premix oil fouls the sensor. The error has a lean bias too: it errs rich;
- a plug reading: a coarse class (common practice: tan/grey is right, white is lean, black and
  sooty is rich), used as a pseudo-reading of ±8 % (lean/rich) or 0 (ok) with 6 %;
- readings of one bike, session and circuit share a session effect of 1.5 % (fuel batch, carb and
  plug state that day), so a long wideband log weighs at most like a few sessions.

The plan (:func:`tuning.plan.make_plan` with ``calibration=``) uses the lean-side bound
:math:`\\mu + z\\,\\sigma` (:data:`LEAN_SIDE_SD`) of a circuit's calibrated log factor, never its mean,
and only on circuits on which the bike's model has readings; :mod:`tuning.plan.calibrate` keeps
every setting within the lean guard under the law as well.

This module sits below the plan (``plan -> calibration -> metering, circuits``): it imports numpy and the
physics only, reads the plan document as plain data and takes the fleet as a duck-typed object
(``bikes`` with ``id``, ``model``, ``density_exponent``; ``models`` with ``strokes``).

References
----------
.. [1] J. B. Heywood, *Internal Combustion Engine Fundamentals*, McGraw-Hill, 1988, section 7.2
   (the elementary carburetor) and section 6.6 (two-stroke scavenging).
.. [2] A. Gelman et al., *Bayesian Data Analysis*, 3rd ed., CRC Press, 2013, section 5.4 and
   chapter 14 (normal hierarchical and regression models with known variances).
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass, field
from datetime import datetime

import numpy as np

from tuning import circuits, metering
from tuning.errors import UserError

__all__ = [
    "CIRCUITS",
    "CIRCUIT_BANDS",
    "PLUG_CLASSES",
    "PLUG_VALUE",
    "LEAN_SIDE_SD",
    "Noise",
    "Priors",
    "NOISE",
    "PRIORS",
    "Reading",
    "Estimate",
    "Calibration",
    "NOT_USED",
    "circuit_of",
    "readings_from",
    "estimate",
]

CIRCUITS = ("pilot", "needle", "main")
#: Throttle ranges [1] of the circuits as the sheet's verdicts name them (common practice):
#: pilot closed–¼, needle ¼–¾, main ¾–full (a reading at ¼ or ¾ belongs to the wider opening).
CIRCUIT_BANDS = ((0.0, 0.25), (0.25, 0.75), (0.75, 1.0))
PLUG_CLASSES = ("rich", "ok", "lean")
#: The pseudo-reading of a plug class [ln AFR against the proven mixture] (our choice, from memory:
#: a plug tells the side, not the amount).
PLUG_VALUE = {"rich": -0.08, "ok": 0.0, "lean": 0.08}
#: Circuit used for a plug reading given without a throttle opening: the plug is read after a run
#: at full throttle, cut clean (common practice).
PLUG_DEFAULT_CIRCUIT = "main"
#: Standard deviations on the lean side used by the plan (our choice: one standard deviation).
LEAN_SIDE_SD = 1.0


@dataclass(frozen=True)
class Noise:
    """Standard deviations of the readings [ln AFR] (see the module docstring for their origin)."""

    wideband: float = 0.02
    wideband_two_stroke: float = 0.05
    plug: float = 0.06
    session: float = 0.015


@dataclass(frozen=True)
class Priors:
    """Standard deviations of the two levels: bike about model, model about law [ln AFR; exponent].

    ``math.inf`` leaves a level free (no pooling).
    """

    bike_offset: float = 0.03
    bike_exponent: float = 0.10
    model_offset: float = 0.06
    model_exponent: float = 0.20


NOISE = Noise()
PRIORS = Priors()


@dataclass(frozen=True)
class Reading:
    """One recorded reading, ready for the estimate.

    ``log_ratio`` is :math:`\\ln(\\mathrm{AFR}_\\mathrm{measured}/\\mathrm{AFR}_\\mathrm{law})`
    (wideband; None for a plug); ``plug`` its class (plug; None for a wideband);
    ``predicted_log_deviation`` :math:`\\ln(\\mathrm{AFR}_\\mathrm{law}/\\mathrm{AFR}_\\mathrm{ref})`
    where it was read (for a plug: the pseudo-reading is taken against the proven mixture);
    ``log_density_ratio`` :math:`\\ln(\\rho/\\rho_\\mathrm{ref})` of the moist air [1].
    """

    bike: str
    model: str
    circuit: str
    kind: str
    log_ratio: float | None
    plug: str | None
    predicted_log_deviation: float
    log_density_ratio: float
    two_stroke: bool
    event: str
    session: str
    time: str | None = None
    throttle: float | None = None

    @property
    def y(self) -> float:
        """The reading as :math:`\\ln(\\mathrm{AFR}_\\mathrm{measured}/\\mathrm{AFR}_\\mathrm{law})`."""
        if self.kind == "wideband":
            return float(self.log_ratio)
        return PLUG_VALUE[self.plug] - self.predicted_log_deviation

    def sd(self, noise: Noise = NOISE) -> float:
        """Its standard deviation [ln AFR], before the session effect."""
        if self.kind == "plug":
            return noise.plug
        return noise.wideband_two_stroke if self.two_stroke else noise.wideband


def circuit_of(throttle: float) -> str:
    """The circuit of a throttle opening [1] by :data:`CIRCUIT_BANDS`."""
    t = float(throttle)
    if not 0.0 <= t <= 1.0:
        raise ValueError(f"throttle opening must lie in 0..1, got {throttle!r}")
    return "pilot" if t < 0.25 else "needle" if t < 0.75 else "main"


# --- readings from a plan document and its outcomes ----------------------------------------------------


def _seconds(value) -> float:
    moment = value if isinstance(value, datetime) else datetime.fromisoformat(str(value))
    if moment.tzinfo is None:
        raise ValueError("no time zone")
    return moment.timestamp()


def _delivered(entry: dict, outcome: dict, throttle: float) -> float:
    """Area factor [1] the settings fitted in this session deliver at ``throttle``, against the proven."""
    if outcome.get("returned_to_proven"):
        base = {"pilot": 1.0, "needle": 1.0, "main": 1.0}
        planned = {k: entry["settings"][k]["current"] for k in ("main_jet", "pilot_jet")}
        planned["clip"] = entry["settings"]["clip"]["current"]
        planned["turns"] = entry["settings"]["mixture_screw"]["current_turns"]
    else:
        d = entry["mixture_curve"]["delivered_area_factor"]
        needle = float(np.interp(throttle, entry["mixture_curve"]["throttle"], d["needle"]))
        base = {"pilot": float(d["pilot"]), "needle": needle, "main": float(d["main"])}
        planned = {k: entry["settings"][k]["recommended"] for k in ("main_jet", "pilot_jet")}
        planned["clip"] = entry["settings"]["clip"]["recommended"]
        planned["turns"] = entry["settings"]["mixture_screw"]["recommended_turns"]
    s = entry["settings"]
    if outcome.get("main_jet") is not None and planned["main_jet"]:
        ratio = float(
            metering.area_factor_between_jets(planned["main_jet"], outcome["main_jet"], s["main_jet"]["coding"])
        )
        base["main"] *= ratio
        base["needle"] *= math.sqrt(ratio)  # the needle meters in series with the main (as the plan assumes)
    if outcome.get("pilot_jet") is not None and planned["pilot_jet"]:
        base["pilot"] *= float(
            metering.area_factor_between_jets(planned["pilot_jet"], outcome["pilot_jet"], s["pilot_jet"]["coding"])
        )
    if outcome.get("mixture_screw_turns") is not None:
        base["pilot"] *= float(
            circuits.mixture_screw_area_factor(
                float(outcome["mixture_screw_turns"]) - planned["turns"], s["mixture_screw"]["kind"]
            )
        )
    if outcome.get("clip") is not None and planned["clip"] is not None:
        # the assumed step per groove, as the plan uses where the needle's geometry is unknown
        base["needle"] *= (1.0 + circuits.ASSUMED_GROOVE_AREA_STEP) ** (
            0.5 * (int(outcome["clip"]) - int(planned["clip"]))
        )
    w = circuits.circuit_weights(np.array([throttle]))[0]
    return float(w[0] * base["pilot"] + w[1] * base["needle"] + w[2] * base["main"])


def _air_at(entry: dict, when) -> tuple[float, float]:
    """(required area factor [1], moist-air density [kg/m³]) at ``when`` (None: the session's mean)."""
    hours = entry["hours"]
    f = np.array([h["area_factor"] for h in hours], float)
    rho = np.array([h["moist_air_density_kg_m3"] for h in hours], float)
    if when is None:
        return float(f.mean()), float(rho.mean())
    times = np.array([_seconds(h["time"]) for h in hours])
    t = _seconds(when)
    return float(np.interp(t, times, f)), float(np.interp(t, times, rho))


def readings_from(plan_document: dict, outcomes: Iterable[dict]) -> list[Reading]:
    """The readings of ``outcomes`` against what ``plan_document`` predicted.

    Parameters
    ----------
    plan_document : dict
        The plan (``carbfleet-plan/3``) the bikes were set up from.
    outcomes : iterable of dict
        Keys ``event``, ``bike``, ``session``, ``time`` (ISO 8601 with offset, or None: the
        session's mean air), ``throttle`` (0..1 or None), ``wideband_afr``, ``plug`` (``lean``,
        ``ok``, ``rich``), ``remark``, ``main_jet``, ``pilot_jet``, ``clip``,
        ``mixture_screw_turns`` (what was fitted where it differs from the plan; None otherwise)
        and ``returned_to_proven``. An outcome with both a wideband value and a plug gives two
        readings; one with neither gives none.

    Returns
    -------
    list of Reading

    Raises
    ------
    tuning.errors.UserError
        For an outcome that names a bike and session the plan does not hold, a wideband value
        without throttle opening, a plug class not known, or a bad time.
    """
    entries = {(e["bike"], e["session"]): e for e in plan_document["entries"]}
    out = []
    for i, o in enumerate(outcomes):
        where = f"outcome {i + 1} (bike {o.get('bike')}, session {o.get('session')})"
        entry = entries.get((o.get("bike"), o.get("session")))
        if entry is None:
            raise UserError(f"{where}: not in the plan of {plan_document.get('event')!r}; check the bike and session")
        throttle = o.get("throttle")
        if throttle is not None and not 0.0 <= float(throttle) <= 1.0:
            raise UserError(f"{where}: throttle: {throttle!r} is not an opening between 0 and 1")
        try:
            required, rho = _air_at(entry, o.get("time"))
        except (TypeError, ValueError):
            raise UserError(f"{where}: time: {o.get('time')!r} is not a date and time with its offset") from None
        ref_rho = float(entry["reference"]["moist_air_density_kg_m3"])
        common = {
            "bike": entry["bike"],
            "model": entry["model"],
            "two_stroke": int(entry["strokes"]) == 2,
            "event": str(o.get("event") or plan_document.get("event")),
            "session": entry["session"],
            "time": None if o.get("time") is None else str(o.get("time")),
            "log_density_ratio": math.log(rho / ref_rho),
        }
        ref_afr = float(entry["mixture_curve"]["reference_afr"])
        if o.get("wideband_afr") is not None:
            if throttle is None:
                raise UserError(f"{where}: wideband_afr needs the throttle opening it was read at")
            t = float(throttle)
            predicted = ref_afr * required / _delivered(entry, o, t)
            out.append(
                Reading(
                    circuit=circuit_of(t),
                    kind="wideband",
                    plug=None,
                    throttle=t,
                    log_ratio=math.log(float(o["wideband_afr"]) / predicted),
                    predicted_log_deviation=math.log(predicted / ref_afr),
                    **common,
                )
            )
        if o.get("plug") is not None:
            if o["plug"] not in PLUG_CLASSES:
                raise UserError(f"{where}: plug: {o['plug']!r} is not one of {', '.join(PLUG_CLASSES)}")
            t = 1.0 if throttle is None else float(throttle)
            predicted = ref_afr * required / _delivered(entry, o, t)
            out.append(
                Reading(
                    circuit=PLUG_DEFAULT_CIRCUIT if throttle is None else circuit_of(t),
                    kind="plug",
                    log_ratio=None,
                    plug=o["plug"],
                    throttle=None if throttle is None else t,
                    predicted_log_deviation=math.log(predicted / ref_afr),
                    **common,
                )
            )
    return out


# --- the estimate ---------------------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class Estimate:
    """A bike's (or a model's) calibration: :math:`\\beta = (o_\\mathrm{pilot}, o_\\mathrm{needle},
    o_\\mathrm{main}, n - n_0)` [ln AFR; 1] with its posterior covariance, and what it rests on.

    ``kind``: ``law`` (its model has no readings: the plan keeps the law), ``model`` (no readings
    of its own: its model's estimate with a bike's scatter), ``calibrated`` (readings of its own).
    ``circuits`` tells on which circuits its model has readings (the plan calibrates only those);
    ``readings``, ``sessions`` and ``events`` count what it rests on (the model's for ``model``).
    """

    mean: np.ndarray
    covariance: np.ndarray
    kind: str = "law"
    circuits: tuple = (False, False, False)
    law_exponent: float = 0.5
    readings: int = 0
    sessions: int = 0
    events: int = 0

    def offset(self, circuit: str) -> float:
        """Mean offset of ``circuit`` at the reference [ln AFR, positive = lean]."""
        return float(self.mean[CIRCUITS.index(circuit)])

    def offset_sd(self, circuit: str) -> float:
        i = CIRCUITS.index(circuit)
        return float(math.sqrt(self.covariance[i, i]))

    @property
    def exponent(self) -> float:
        """The bike's density exponent [1]: the law's plus the estimated shift."""
        return self.law_exponent + float(self.mean[3])

    @property
    def exponent_sd(self) -> float:
        return float(math.sqrt(self.covariance[3, 3]))

    def log_factor(self, circuit: str, log_density_ratio, lean_side_sd: float = LEAN_SIDE_SD) -> np.ndarray:
        """:math:`\\mu + z\\sigma` of :math:`o_c + (n - n_0)\\ln(\\rho/\\rho_\\mathrm{ref})` [ln of the
        required area factor against the law's]; exactly 0 where the plan keeps the law."""
        x = np.asarray(log_density_ratio, float)
        i = CIRCUITS.index(circuit)
        if self.kind == "law" or not self.circuits[i]:
            return np.zeros_like(x)
        mean = self.mean[i] + self.mean[3] * x
        c = self.covariance
        var = c[i, i] + 2.0 * c[i, 3] * x + c[3, 3] * x * x
        return mean + lean_side_sd * np.sqrt(np.maximum(var, 0.0))

    def log_sd(self, circuit: str, log_density_ratio) -> np.ndarray:
        """Standard deviation [ln] of the circuit's calibrated log factor at the density ratio."""
        x = np.asarray(log_density_ratio, float)
        i = CIRCUITS.index(circuit)
        c = self.covariance
        return np.sqrt(np.maximum(c[i, i] + 2.0 * c[i, 3] * x + c[3, 3] * x * x, 0.0))


@dataclass(frozen=True)
class Calibration:
    """Estimates per bike and per model (:func:`estimate`); a bike or model not named is the law.
    ``used`` False (:data:`NOT_USED`): readings exist but the plan is asked to rest on the law alone
    (``--no-calibration``), and its sheets say so."""

    bikes: dict = field(default_factory=dict)
    models: dict = field(default_factory=dict)
    lean_side_sd: float = LEAN_SIDE_SD
    used: bool = True

    def of(self, bike: str) -> Estimate:
        return self.bikes.get(bike) or _law_estimate(0.5)


#: The plan on the law alone although a calibration could be had: ``make_plan(..., calibration=NOT_USED)``.
NOT_USED = Calibration(used=False)


def _law_estimate(exponent: float, covariance=None) -> Estimate:
    return Estimate(
        np.zeros(4),
        np.zeros((4, 4)) if covariance is None else covariance,
        "law",
        (False, False, False),
        float(exponent),
    )


def _precision(sds) -> np.ndarray:
    return np.diag([0.0 if math.isinf(s) else 1.0 / (s * s) for s in sds])


def _inverse(m):
    """Inverse of a (stack of) symmetric matrices; the pseudo-inverse where singular (a free level
    without readings: its parameter stays undetermined, reported as 0)."""
    try:
        return np.linalg.inv(m)
    except np.linalg.LinAlgError:
        return np.linalg.pinv(m, hermitian=True)


def _statistics(readings: list, noise: Noise):
    """Per bike :math:`X^\\top V^{-1} X` (4 × 4) and :math:`X^\\top V^{-1} y` (4,), with the readings
    of one bike, event, session and circuit sharing a session effect (Woodbury per group)."""
    groups: dict = {}
    for r in readings:
        groups.setdefault((r.bike, r.event, r.session, r.circuit), []).append(r)
    stats: dict = {}
    s2 = noise.session**2
    for (bike, *_rest), members in groups.items():
        X = np.zeros((len(members), 4))
        X[np.arange(len(members)), [CIRCUITS.index(r.circuit) for r in members]] = 1.0
        X[:, 3] = [r.log_density_ratio for r in members]
        y = np.array([r.y for r in members])
        w = 1.0 / np.array([r.sd(noise) for r in members]) ** 2
        wx, wy = X.T @ w, float(w @ y)
        A = (X.T * w) @ X
        a = (X.T * w) @ y
        if s2 > 0:  # V = D + s² 11ᵀ:  V⁻¹ = D⁻¹ - D⁻¹1 1ᵀD⁻¹ / (1/s² + Σw)
            denom = 1.0 / s2 + w.sum()
            A = A - np.outer(wx, wx) / denom
            a = a - wx * wy / denom
        A0, a0 = stats.get(bike, (np.zeros((4, 4)), np.zeros(4)))
        stats[bike] = (A0 + A, a0 + a)
    return stats


def _counts(readings) -> tuple[int, int, int]:
    return len(readings), len({(r.event, r.session) for r in readings}), len({r.event for r in readings})


def estimate(readings: Iterable[Reading], fleet, *, noise: Noise = NOISE, priors: Priors = PRIORS) -> Calibration:
    """The pooled calibration of every bike of ``fleet`` from ``readings``.

    Parameters
    ----------
    readings : iterable of Reading
        From :func:`readings_from` (over any number of events). Identical readings count once, so
        recording the same file twice changes nothing.
    fleet : tuning.config.model.Fleet
        Its bikes (``id``, ``model``, ``density_exponent``: the law's exponent :math:`n_0` of each)
        and models. Readings of bikes no longer in the fleet still inform their model.
    noise, priors : Noise, Priors
        Standard deviations of the readings and of the two levels (defaults :data:`NOISE`,
        :data:`PRIORS`).

    Returns
    -------
    Calibration
        Per bike of the fleet an :class:`Estimate` (posterior mean and covariance of
        :math:`\\beta`), per model the model's.

    Notes
    -----
    Bike :math:`b` of model :math:`m`: :math:`\\beta_b \\sim N(\\mu_m, T)`, :math:`\\mu_m \\sim
    N(0, T_m)`, :math:`y_b \\sim N(X_b\\beta_b, V_b)`. With :math:`A_b = X_b^\\top V_b^{-1}X_b`,
    :math:`a_b = X_b^\\top V_b^{-1}y_b` and :math:`Q_b = T^{-1} + A_b`, integrating the bikes out
    gives the model's posterior precision :math:`P_m = T_m^{-1} + \\sum_b (T^{-1} - T^{-1}Q_b^{-1}
    T^{-1})` and mean :math:`P_m^{-1}\\sum_b T^{-1}Q_b^{-1}a_b`; then :math:`E[\\beta_b] =
    Q_b^{-1}(T^{-1}E[\\mu_m] + a_b)` and :math:`\\mathrm{Cov}[\\beta_b] = Q_b^{-1} + K C_m K^\\top`,
    :math:`K = Q_b^{-1}T^{-1}` (Gelman et al. 2013, ch. 5 and 14; the Woodbury identity). It is the
    generalised least-squares solution of the data stacked with the priors as pseudo-observations,
    which the tests check against statsmodels.
    """
    readings = list(dict.fromkeys(readings))
    model_of = {b.id: b.model for b in fleet.bikes}
    law_n = {b.id: float(b.density_exponent) for b in fleet.bikes}
    by_model: dict = {}
    for r in readings:
        by_model.setdefault(model_of.get(r.bike, r.model), []).append(r)
    stats = _statistics(readings, noise)
    t_inv = _precision([priors.bike_offset] * 3 + [priors.bike_exponent])
    p0 = _precision([priors.model_offset] * 3 + [priors.model_exponent])
    t_cov = np.diag([s * s for s in [priors.bike_offset] * 3 + [priors.bike_exponent]])
    models, bikes = {}, {}
    for model in sorted(set(model_of.values()) | set(by_model)):
        rs = by_model.get(model, [])
        names = sorted({r.bike for r in rs})
        members = [b.id for b in fleet.bikes if b.model == model]
        if not rs:
            prior = _inverse(p0) + t_cov
            for b in members:
                bikes[b] = _law_estimate(law_n[b], prior)
            models[model] = _law_estimate(float("nan"), _inverse(p0))
            continue
        A = np.array([stats[b][0] for b in names])  # (k, 4, 4)
        a = np.array([stats[b][1] for b in names])  # (k, 4)
        q_inv = _inverse(t_inv[None] + A)
        precision = p0 + (t_inv[None] - t_inv[None] @ q_inv @ t_inv[None]).sum(axis=0)
        c_m = _inverse(precision)
        mu = c_m @ (t_inv[None] @ q_inv @ a[:, :, None]).sum(axis=0)[:, 0]
        seen = tuple(any(r.circuit == c for r in rs) for c in CIRCUITS)
        n_r, n_s, n_e = _counts(rs)
        models[model] = Estimate(mu, c_m, "calibrated", seen, float("nan"), n_r, n_s, n_e)
        own: dict = {}
        for r in rs:
            own.setdefault(r.bike, []).append(r)
        for i, b in enumerate(names):
            k = q_inv[i] @ t_inv
            mean = q_inv[i] @ (t_inv @ mu + a[i])
            cov = q_inv[i] + k @ c_m @ k.T
            bikes[b] = Estimate(mean, cov, "calibrated", seen, law_n.get(b, 0.5), *_counts(own[b]))
        for b in members:
            if b not in bikes:
                bikes[b] = Estimate(mu.copy(), c_m + t_cov, "model", seen, law_n[b], n_r, n_s, n_e)
    return Calibration(bikes, models)
