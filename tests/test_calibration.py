"""The calibration's estimate against an independent statistics library (statsmodels, a test-only
dependency), its recovery of known parameters from generated readings, and its limits (no readings:
the model's estimate; no model readings: the law exactly).

Reference: statsmodels 0.15 (Seabold & Perktold, "statsmodels: Econometric and statistical modeling
with Python", Proc. 9th Python in Science Conf., 2010): ``WLS``/``GLS`` (generalised least squares)
and ``MixedLM`` (linear mixed model, REML). The two-level normal model with known variances is
generalised least squares on the data stacked with the priors as pseudo-observations (Gelman et al.,
Bayesian Data Analysis, 3rd ed., 2013, section 14.8), which is what the statsmodels checks fit.
"""

from __future__ import annotations

import math
from types import SimpleNamespace

import numpy as np
import pytest

from tuning.calibration import CIRCUITS, NOISE, Noise, Priors, Reading, estimate

sm = pytest.importorskip("statsmodels.api")

INF = math.inf


def fleet_of(models: dict[str, int], exponent=0.5, strokes=4):
    """A fleet-like object: ``models`` {name: number of bikes}; bike ids ``name-i``."""
    bikes = [
        SimpleNamespace(id=f"{m}-{i}", model=m, density_exponent=exponent) for m, k in models.items() for i in range(k)
    ]
    return SimpleNamespace(bikes=bikes, models={m: SimpleNamespace(strokes=strokes) for m in models})


def reading(
    bike, model, circuit, y, x, session="s1", event="e1", kind="wideband", two_stroke=False, plug=None, time=None
):
    return Reading(
        bike=bike,
        model=model,
        circuit=circuit,
        kind=kind,
        log_ratio=y if kind == "wideband" else None,
        plug=plug,
        predicted_log_deviation=0.0 if kind == "wideband" else -y,
        log_density_ratio=x,
        two_stroke=two_stroke,
        event=event,
        session=session,
        time=time,
    )


def generated(rng, bikes, truth, sessions=10, per_circuit=3, noise=NOISE, x_range=(-0.30, 0.08), two_stroke=False):
    """Wideband readings of ``bikes`` (ids, model from the id) drawn from ``truth[bike] = (o_p, o_n, o_m, dn)``
    over sessions at densities spread over ``x_range`` (sea level .. about 3000 m), with a session effect."""
    out = []
    sd = noise.wideband_two_stroke if two_stroke else noise.wideband
    for bike in bikes:
        beta = np.asarray(truth[bike], float)
        for s in range(sessions):
            x = rng.uniform(*x_range)
            for c, circuit in enumerate(CIRCUITS):
                effect = rng.normal(0.0, noise.session)
                for k in range(per_circuit):
                    y = beta[c] + beta[3] * x + effect + rng.normal(0.0, sd)
                    out.append(
                        reading(
                            bike,
                            bike.rsplit("-", 1)[0],
                            circuit,
                            y,
                            x,
                            session=f"s{s}",
                            event=f"e{s // 3}",
                            two_stroke=two_stroke,
                            time=f"{s}-{k}",
                        )
                    )
    return out


def design(readings):
    X = np.zeros((len(readings), 4))
    for i, r in enumerate(readings):
        X[i, CIRCUITS.index(r.circuit)] = 1.0
        X[i, 3] = r.log_density_ratio
    return X, np.array([r.y for r in readings])


# --- (a) against statsmodels --------------------------------------------------------------------------


def test_unpooled_fit_is_statsmodels_wls():
    """No pooling (free levels) and no session effect: each bike's estimate is the weighted least-squares
    fit, mixed plug and wideband, two-stroke readings down-weighted (statsmodels WLS, scale fixed at 1)."""
    rng = np.random.default_rng(7)
    fleet = fleet_of({"m": 1})
    rs = generated(rng, ["m-0"], {"m-0": (0.02, -0.03, 0.05, 0.2)}, sessions=6, two_stroke=True)
    rs += [
        reading("m-0", "m", "main", 0.08, -0.1, kind="plug", plug="lean", session="p1"),
        reading("m-0", "m", "pilot", -0.08, 0.02, kind="plug", plug="rich", session="p2"),
    ]
    noise = Noise(session=0.0)
    cal = estimate(rs, fleet, noise=noise, priors=Priors(INF, INF, INF, INF))
    X, y = design(rs)
    w = 1.0 / np.array([r.sd(noise) for r in rs]) ** 2
    ref = sm.WLS(y, X, weights=w).fit(cov_type="fixed scale", cov_kwds={"scale": 1.0})
    est = cal.bikes["m-0"]
    np.testing.assert_allclose(est.mean, ref.params, rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(np.sqrt(np.diag(est.covariance)), ref.bse, rtol=1e-9)


def test_session_effect_is_statsmodels_gls():
    """Readings of one session and circuit share a session effect: the estimate is generalised least squares
    with that block covariance (statsmodels GLS with the full covariance matrix)."""
    rng = np.random.default_rng(11)
    fleet = fleet_of({"m": 1})
    rs = generated(rng, ["m-0"], {"m-0": (0.0, 0.01, 0.05, 0.2)}, sessions=5, per_circuit=4)
    cal = estimate(rs, fleet, priors=Priors(INF, INF, INF, INF))
    X, y = design(rs)
    sd = np.array([r.sd() for r in rs])
    same = np.array([[(a.event, a.session, a.circuit) == (b.event, b.session, b.circuit) for b in rs] for a in rs])
    V = np.diag(sd**2) + NOISE.session**2 * same
    ref = sm.GLS(y, X, sigma=V).fit(cov_type="fixed scale", cov_kwds={"scale": 1.0})
    np.testing.assert_allclose(cal.bikes["m-0"].mean, ref.params, rtol=1e-8, atol=1e-12)
    np.testing.assert_allclose(np.sqrt(np.diag(cal.bikes["m-0"].covariance)), ref.bse, rtol=1e-8)


def test_pooled_estimate_is_gls_with_the_priors_as_observations():
    """The two-level estimate (bikes of two models, one bike without readings, one model without readings)
    equals statsmodels GLS on the readings stacked with each prior as a pseudo-observation 0 = β_b − μ_m
    (and 0 = μ_m), which is the conjugate normal posterior (Gelman et al. 2013, section 14.8)."""
    rng = np.random.default_rng(3)
    fleet = fleet_of({"a": 4, "b": 2, "c": 1})
    truth = {
        "a-0": (0.0, 0.02, 0.06, 0.2),
        "a-1": (0.01, 0.0, 0.04, 0.1),
        "a-2": (-0.02, 0.01, 0.05, 0.25),
        "b-0": (0.0, -0.03, -0.04, -0.1),
        "b-1": (0.02, -0.02, -0.02, 0.0),
    }
    rs = generated(rng, sorted(truth), truth, sessions=3, per_circuit=2)
    rs = [r for r in rs if not (r.bike == "b-1" and r.circuit == "pilot")]
    priors = Priors()
    cal = estimate(rs, fleet, priors=priors)

    params = [("model", "a"), ("model", "b")] + [("bike", b.id) for b in fleet.bikes if b.model in "ab"]
    col = {p: 4 * i for i, p in enumerate(params)}
    rows, ys, variances = [], [], []
    for r in rs:
        row = np.zeros(4 * len(params))
        row[col[("bike", r.bike)] + CIRCUITS.index(r.circuit)] = 1.0
        row[col[("bike", r.bike)] + 3] = r.log_density_ratio
        rows.append(row)
        ys.append(r.y)
    block = np.zeros((len(rs), len(rs)))
    for i, a in enumerate(rs):
        for j, b in enumerate(rs):
            if (a.bike, a.event, a.session, a.circuit) == (b.bike, b.event, b.session, b.circuit):
                block[i, j] = NOISE.session**2 + (a.sd() ** 2 if i == j else 0.0)
    bike_sd = [priors.bike_offset] * 3 + [priors.bike_exponent]
    model_sd = [priors.model_offset] * 3 + [priors.model_exponent]
    for kind, name in params:
        for k in range(4):
            row = np.zeros(4 * len(params))
            row[col[(kind, name)] + k] = 1.0
            if kind == "bike":
                row[col[("model", name.split("-")[0])] + k] = -1.0
            rows.append(row)
            ys.append(0.0)
            variances.append((bike_sd if kind == "bike" else model_sd)[k] ** 2)
    n = len(rs)
    V = np.zeros((len(ys), len(ys)))
    V[:n, :n] = block
    V[n:, n:] = np.diag(variances)
    ref = sm.GLS(np.array(ys), np.array(rows), sigma=V).fit(cov_type="fixed scale", cov_kwds={"scale": 1.0})
    for (kind, name), c in col.items():
        est = (cal.models if kind == "model" else cal.bikes)[name]
        np.testing.assert_allclose(est.mean, ref.params[c : c + 4], rtol=1e-7, atol=1e-10, err_msg=name)
        np.testing.assert_allclose(np.sqrt(np.diag(est.covariance)), ref.bse[c : c + 4], rtol=1e-7, err_msg=name)
    assert cal.bikes["a-3"].kind == "model" and cal.bikes["a-0"].kind == "calibrated"
    assert cal.bikes["c-0"].kind == "law"


def test_pooled_offsets_match_statsmodels_mixedlm():
    """Random intercepts per bike (main circuit only, at the reference density): with the variance components
    statsmodels MixedLM estimates by REML, the estimate's model offset is MixedLM's fixed effect and each bike's
    deviation from it MixedLM's predicted random effect (BLUP); the model level left free."""
    rng = np.random.default_rng(5)
    fleet = fleet_of({"m": 8})
    rs = []
    for b in range(8):
        u = rng.normal(0.0, 0.04)
        for s in range(2 + b):  # unbalanced: 2..9 readings per bike
            rs.append(reading(f"m-{b}", "m", "main", 0.04 + u + rng.normal(0.0, 0.02), 0.0, session=f"s{s}"))
    y = np.array([r.y for r in rs])
    groups = np.array([r.bike for r in rs])
    fit = sm.MixedLM(y, np.ones((len(y), 1)), groups=groups).fit(reml=True)
    assert fit.converged and float(np.asarray(fit.cov_re)[0, 0]) > 1e-5  # an interior REML fit to compare with
    sigma, tau = math.sqrt(fit.scale), math.sqrt(float(np.asarray(fit.cov_re)[0, 0]))
    cal = estimate(
        rs,
        fleet,
        noise=Noise(wideband=sigma, session=0.0),
        priors=Priors(bike_offset=tau, bike_exponent=0.1, model_offset=INF, model_exponent=0.2),
    )
    assert cal.models["m"].offset("main") == pytest.approx(float(fit.fe_params[0]), rel=1e-6)
    for bike, effect in fit.random_effects.items():
        deviation = cal.bikes[bike].offset("main") - cal.models["m"].offset("main")
        assert deviation == pytest.approx(float(np.asarray(effect).ravel()[0]), abs=1e-8), bike


def test_one_bike_shrinks_as_computed_by_hand():
    """One bike, main circuit at the reference, no session effect: the posterior mean of its offset is the
    precision-weighted mean of the data and the prior 0 with variance τ² + τ_m² (normal-normal conjugacy,
    Gelman et al. 2013, eq. 2.12), computed here by hand."""
    ys = [0.06, 0.09, 0.03]
    rs = [reading("m-0", "m", "main", v, 0.0, session=f"s{i}") for i, v in enumerate(ys)]
    noise, priors = Noise(wideband=0.02, session=0.0), Priors()
    cal = estimate(rs, fleet_of({"m": 1}), noise=noise, priors=priors)
    data_precision = len(ys) / 0.02**2
    prior_precision = 1.0 / (priors.bike_offset**2 + priors.model_offset**2)
    expected = (sum(ys) / 0.02**2) / (data_precision + prior_precision)
    assert cal.bikes["m-0"].offset("main") == pytest.approx(expected, rel=1e-10)
    assert cal.bikes["m-0"].offset_sd("main") == pytest.approx((data_precision + prior_precision) ** -0.5, rel=1e-10)
    assert 0.0 < expected < np.mean(ys)  # shrunk toward the law, not past it


# --- (b) recovery of known parameters ---------------------------------------------------------------------

SEEDS = range(40)


def recovered(seed):
    """A model of four bikes; bike 0 truly responds with exponent 0.7 (law 0.5) and its main runs 5 % lean."""
    rng = np.random.default_rng(seed)
    truth = {
        "m-0": (0.0, 0.0, 0.05, 0.2),
        "m-1": (0.01, -0.01, 0.02, 0.1),
        "m-2": (-0.01, 0.0, 0.03, 0.15),
        "m-3": (0.0, 0.01, 0.01, 0.05),
    }
    cal = estimate(generated(rng, sorted(truth), truth), fleet_of({"m": 4}))
    est = cal.bikes["m-0"]
    return (est.offset("main"), est.offset_sd("main"), est.exponent, est.exponent_sd)


@pytest.mark.parametrize("seed", SEEDS)
def test_recovers_exponent_and_lean_main_within_reported_uncertainty(seed):
    """Every seed: the true values (exponent 0.7, main ln(1.05)… taken as 0.05) lie within three reported
    standard deviations, and the reported uncertainty is small enough to tell 0.7 from the law's 0.5."""
    offset, offset_sd, exponent, exponent_sd = recovered(seed)
    assert abs(offset - 0.05) <= 3.0 * offset_sd
    assert abs(exponent - 0.7) <= 3.0 * exponent_sd
    assert exponent_sd < 0.08 and offset_sd < 0.02


def test_reported_uncertainty_covers_about_as_often_as_it_says():
    """Over 40 seeds the truth lies within one reported standard deviation about 68 % of the time (normal
    coverage); fewer would mean the uncertainty is understated, many more that it is padded."""
    results = np.array([recovered(s) for s in SEEDS])
    cover_offset = np.mean(np.abs(results[:, 0] - 0.05) <= results[:, 1])
    cover_exponent = np.mean(np.abs(results[:, 2] - 0.7) <= results[:, 3])
    assert 0.5 <= cover_offset <= 0.9
    assert 0.5 <= cover_exponent <= 0.9


def test_lean_main_is_seen_as_lean_and_richens_the_required_factor():
    """The plan's lean-side bound: a 5 % lean main asks for more fuel than the law, the other circuits of
    that bike (truly at the law) for about the law."""
    rng = np.random.default_rng(1)
    truth = {"m-0": (0.0, 0.0, 0.05, 0.0)}
    est = estimate(generated(rng, ["m-0"], truth), fleet_of({"m": 1})).bikes["m-0"]
    assert float(est.log_factor("main", -0.15)) > 0.04
    assert abs(float(est.log_factor("pilot", -0.15)) - est.offset_sd("pilot")) < 0.03


def test_two_stroke_wideband_weighs_less():
    """The same readings on a two-stroke leave a wider uncertainty (scavenging short-circuit, Heywood 1988, 6.6)."""
    rs4 = generated(np.random.default_rng(2), ["m-0"], {"m-0": (0, 0, 0.05, 0.2)})
    rs2 = [Reading(**{**r.__dict__, "two_stroke": True}) for r in rs4]
    sd4 = estimate(rs4, fleet_of({"m": 1})).bikes["m-0"].offset_sd("main")
    sd2 = estimate(rs2, fleet_of({"m": 1})).bikes["m-0"].offset_sd("main")
    assert sd2 > 1.3 * sd4


# --- (c) no readings ----------------------------------------------------------------------------------------


def test_bike_without_readings_gets_its_models_estimate():
    rng = np.random.default_rng(4)
    truth = {"m-0": (0.0, 0.0, 0.06, 0.2), "m-1": (0.0, 0.0, 0.04, 0.2)}
    cal = estimate(generated(rng, sorted(truth), truth), fleet_of({"m": 3}))
    model, lonely = cal.models["m"], cal.bikes["m-2"]
    assert lonely.kind == "model"
    np.testing.assert_array_equal(lonely.mean, model.mean)
    diag = np.diag(model.covariance) + np.array([0.03, 0.03, 0.03, 0.1]) ** 2
    np.testing.assert_allclose(np.diag(lonely.covariance), diag, rtol=1e-12)
    assert lonely.sessions == model.sessions == 10 and lonely.events == 4


def test_model_without_readings_is_the_law_exactly():
    rng = np.random.default_rng(6)
    truth = {"a-0": (0.05, 0.05, 0.05, 0.3)}
    cal = estimate(generated(rng, ["a-0"], truth), fleet_of({"a": 1, "b": 2}))
    for bike in ("b-0", "b-1"):
        est = cal.bikes[bike]
        assert est.kind == "law" and est.exponent == 0.5 and not any(est.circuits)
        for circuit in CIRCUITS:
            assert np.all(est.log_factor(circuit, np.array([-0.3, 0.0, 0.1])) == 0.0)


def test_duplicate_readings_count_once():
    """Recording the same outcomes twice gives the same calibration as once."""
    rs = generated(np.random.default_rng(8), ["m-0"], {"m-0": (0, 0, 0.05, 0.2)}, sessions=3)
    once, twice = estimate(rs, fleet_of({"m": 1})), estimate(rs + rs, fleet_of({"m": 1}))
    np.testing.assert_array_equal(once.bikes["m-0"].mean, twice.bikes["m-0"].mean)
    np.testing.assert_array_equal(once.bikes["m-0"].covariance, twice.bikes["m-0"].covariance)
