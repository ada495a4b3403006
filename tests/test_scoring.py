"""Counts, rates, scores and values of simulator.pricing (contingency, rates, scoring, value), checked
against published tables, identities and reference libraries (scikit-learn, scipy) on random data and
on an open daily weather record."""

import numpy as np
import pytest
from scipy.stats import rankdata
from sklearn.calibration import calibration_curve
from sklearn.linear_model import LogisticRegression
from sklearn.metrics import brier_score_loss, confusion_matrix, roc_auc_score, roc_curve

from simulator.pricing.contingency import Contingency, count_at_cutoffs
from simulator.pricing.rates import false_alarm_rate, hit_rate, peirce_score, rates
from simulator.pricing.scoring import (
    brier_decomposition,
    brier_score,
    brier_skill_score,
    mid_ranks,
    reliability_table,
    roc_auc,
    roc_points,
)
from simulator.pricing.value import (
    net_benefit,
    net_benefit_treat_all,
    relative_value,
    relative_value_from_costs,
    value_curve,
)

# Finley (1884) tornado forecasts, as tabulated in Murphy, A. H. (1996), "The Finley affair: a
# signal event in the history of forecast verification", Wea. Forecasting 11:3-20 (table also on
# the CAWCR verification page "Finley tornado forecasts").
FINLEY = Contingency(hits=28, false_alarms=72, misses=23, correct_negatives=2680)
FINLEY_BASE_RATE = 51 / 2803


@pytest.fixture
def rng():
    return np.random.default_rng(20240611)


def _random_history(rng, n=400, decimals=None):
    """Synthetic scores with some skill: event ~ Bernoulli(p), p ~ Beta(1, 2) (test data only)."""
    p = rng.beta(1.0, 2.0, size=n)
    if decimals is not None:
        p = np.round(p, decimals)  # ties in p
    event = rng.random(n) < p
    return p, event


def _auc_by_pairs(p, event):
    """Slow oracle: share of (event, non-event) pairs ordered correctly, ties 1/2."""
    pos, neg = p[event], p[~event]
    diff = pos[:, None] - neg[None, :]
    return (np.sum(diff > 0) + 0.5 * np.sum(diff == 0)) / diff.size


# --------------------------------------------------------------------------------------------------
# Rates


def test_finley_rates_and_never_forecasting_scores_higher():
    # Murphy (1996), "The Finley affair", Wea. Forecasting 11:3-20, via the CAWCR Finley page:
    # POD 0.549, F 0.026, Hanssen-Kuipers (Peirce) 0.523, PC 0.966 against 0.982 for never
    # forecasting a tornado, FAR 0.720 (exact fractions in METHODS.md 2.1).
    r = rates(FINLEY)
    assert r.hit_rate == pytest.approx(0.549, abs=5e-4)
    assert r.false_alarm_rate == pytest.approx(0.026, abs=5e-4)
    assert r.peirce_score == pytest.approx(0.523, abs=5e-4)
    assert r.proportion_correct == pytest.approx(0.966, abs=5e-4)
    assert r.false_alarm_ratio == pytest.approx(0.720, abs=5e-4)
    never = rates(Contingency(hits=0, false_alarms=0, misses=51, correct_negatives=2752))
    assert never.proportion_correct == pytest.approx(0.982, abs=5e-4)
    assert never.proportion_correct > r.proportion_correct
    # definitions: 1 - F, 1 - H, events / n (common practice, no single source)
    assert r.specificity == pytest.approx(2680 / 2752, rel=1e-12)
    assert r.miss_rate == pytest.approx(1 - r.hit_rate, rel=1e-12)
    assert r.base_rate == pytest.approx(FINLEY_BASE_RATE, rel=1e-12)


@pytest.mark.filterwarnings("error")
def test_rates_are_nan_where_a_class_is_absent_without_warnings():
    # no event and no action: H, miss rate, FAR undefined (common practice, no source)
    c = Contingency(hits=np.array([0, 3]), false_alarms=np.array([0, 1]),
                    misses=np.array([0, 1]), correct_negatives=np.array([5, 0]))
    r = rates(c)
    assert np.isnan(r.hit_rate[0]) and np.isnan(r.miss_rate[0]) and np.isnan(r.peirce_score[0])
    assert np.isnan(r.false_alarm_ratio[0])
    assert r.false_alarm_rate[0] == 0.0 and r.base_rate[0] == 0.0
    assert r.hit_rate[1] == 0.75 and r.false_alarm_rate[1] == 1.0
    assert r.hit_rate.dtype == np.float64


def test_rates_work_elementwise_on_replicates_like_sklearn(rng):
    # reference: scikit-learn confusion_matrix per replicate and cutoff
    n_rep, cutoffs = 3, np.round(np.linspace(0.1, 0.9, 9), 3)
    p = rng.random((n_rep, 200))
    event = rng.random((n_rep, 200)) < p
    c = count_at_cutoffs(p, event, cutoffs)
    r = rates(c)
    assert r.hit_rate.shape == (n_rep, cutoffs.size)
    for i in range(n_rep):
        for k, cut in enumerate(cutoffs):
            tn, fp, fn, tp = confusion_matrix(event[i], p[i] >= cut, labels=[False, True]).ravel()
            assert r.hit_rate[i, k] == pytest.approx(tp / (tp + fn), rel=1e-12)
            assert r.false_alarm_rate[i, k] == pytest.approx(fp / (fp + tn), rel=1e-12)
            assert r.proportion_correct[i, k] == pytest.approx((tp + tn) / 200, rel=1e-12)


# --------------------------------------------------------------------------------------------------
# Relative value (Richardson 2000)


def test_finley_value_at_base_rate_equals_peirce_and_is_the_maximum():
    # Richardson (2000), QJRMS 126:649-667 (via the CAWCR relative-value page): the maximum of V
    # over the cost-loss ratio is at alpha = base rate, where V = H - F (Peirce / Hanssen-Kuipers).
    h, f = hit_rate(FINLEY), false_alarm_rate(FINLEY)
    v_at_s = relative_value(h, f, FINLEY_BASE_RATE, FINLEY_BASE_RATE)
    assert v_at_s == pytest.approx(peirce_score(FINLEY), rel=1e-12)
    alphas = np.round(np.linspace(0.001, 0.999, 999), 3)
    assert np.all(relative_value(h, f, FINLEY_BASE_RATE, alphas) <= v_at_s + 1e-12)
    # values derived in METHODS.md 2.1 [D] by the closed form (regression check)
    got = relative_value(h, f, FINLEY_BASE_RATE, np.array([0.01, 0.05, 0.10, 0.20, 0.50]))
    np.testing.assert_allclose(got, [0.1464, 0.4747, 0.3922, 0.1961, -0.8627], atol=5e-5)


def test_finley_value_is_positive_exactly_between_the_conditional_frequencies():
    # Derived (METHODS.md 1.1, 2.1): acting on a yes/no forecast beats climatology iff
    # P(event | "no") = 23/2703 < alpha < P(event | "yes") = 28/100 (principle: Murphy 1977).
    h, f = hit_rate(FINLEY), false_alarm_rate(FINLEY)
    lo, hi = 23 / 2703, 28 / 100
    assert relative_value(h, f, FINLEY_BASE_RATE, lo) == pytest.approx(0.0, abs=1e-12)
    assert relative_value(h, f, FINLEY_BASE_RATE, hi) == pytest.approx(0.0, abs=1e-12)
    alphas = np.round(np.linspace(0.0005, 0.9995, 2000), 4)
    v = relative_value(h, f, FINLEY_BASE_RATE, alphas)
    inside = (alphas > lo + 1e-9) & (alphas < hi - 1e-9)
    outside = (alphas < lo - 1e-9) | (alphas > hi + 1e-9)
    assert np.all(v[inside] > 0) and np.all(v[outside] < 0)


def _expenses(c, c_h, c_fa, c_m, c_cn):
    """Mean expense per occasion of the model, never, always and perfect, computed from counts."""
    hits, fa = np.asarray(c.hits, float), np.asarray(c.false_alarms, float)
    misses, cn = np.asarray(c.misses, float), np.asarray(c.correct_negatives, float)
    n = hits + fa + misses + cn
    ev, non = hits + misses, fa + cn
    model = (hits * c_h + fa * c_fa + misses * c_m + cn * c_cn) / n
    never = (ev * c_m + non * c_cn) / n
    always = (ev * c_h + non * c_fa) / n
    perfect = (ev * c_h + non * c_cn) / n
    return model, never, always, perfect


# cost matrices (c_h, c_fa, c_m, c_cn); the first is the cost-loss form C = 2, L = 10;
# the others are invented for the test (common practice: any matrix with c_fa > c_cn, c_m > c_h)
COST_MATRICES = [(2.0, 2.0, 10.0, 0.0), (300.0, 1800.0, 2500.0, 0.0), (5.0, 40.0, 90.0, 12.0),
                 (-20.0, 7.0, 3.0, -1.0)]


@pytest.mark.parametrize("costs", COST_MATRICES)
def test_value_from_costs_agrees_with_cost_loss_form_and_ignores_class_shifts(rng, costs):
    # Richardson (2000) V; invariance to per-class constant shifts and scaling derived in
    # METHODS.md 1.1-1.2 (Elkan 2001 for the general matrix).
    c_h, c_fa, c_m, c_cn = costs
    p, event = _random_history(rng)
    c = count_at_cutoffs(p, event, np.round(np.linspace(0.0, 1.0, 21), 2))
    r = rates(c)
    alpha = (c_fa - c_cn) / ((c_fa - c_cn) + (c_m - c_h))
    expected = relative_value(r.hit_rate, r.false_alarm_rate, r.base_rate, alpha)
    got = relative_value_from_costs(*_expenses(c, c_h, c_fa, c_m, c_cn))
    np.testing.assert_allclose(got, expected, rtol=1e-10, atol=1e-12)
    # add 17 to both costs of events, -4 to both costs of non-events, then scale by 3
    shifted = relative_value_from_costs(
        *_expenses(c, 3 * (c_h + 17), 3 * (c_fa - 4), 3 * (c_m + 17), 3 * (c_cn - 4)))
    np.testing.assert_allclose(shifted, got, rtol=1e-10, atol=1e-12)


@pytest.mark.filterwarnings("error")
def test_relative_value_is_nan_when_climate_is_perfect():
    # a = 0 or s = 0: E_climate = E_perfect, V undefined (follows from Richardson's definition)
    v = relative_value(0.5, 0.1, np.array([0.2, 0.0]), np.array([[0.0], [0.3]]))
    assert v.shape == (2, 2)
    assert np.isnan(v[0]).all() and np.isnan(v[1, 1]) and np.isfinite(v[1, 0])


# --------------------------------------------------------------------------------------------------
# Net benefit (Vickers & Elkin 2006)


def test_treat_all_net_benefit_matches_published_table():
    # PMC6993280, Table 4 (decision curve of an HCC diagnosis model), "treat all" column; the
    # column is reproduced by prevalence 0.30 in NB_all = s - (1 - s) pt/(1 - pt)
    # (Vickers & Elkin 2006, Med. Decis. Making 26:565-574; METHODS.md 2.2).
    thresholds = np.array([0.03, 0.20, 0.30, 0.50, 0.90])
    got = net_benefit_treat_all(0.30, thresholds)
    np.testing.assert_allclose(got, [0.278, 0.125, 0.000, -0.400, -6.000], atol=5e-4)


def test_net_benefit_of_acting_on_everything_is_treat_all(rng):
    # Vickers & Elkin (2006): treat-all is the model that acts on every occasion
    p, event = _random_history(rng)
    pt = np.array([0.05, 0.2, 0.5])
    nb = net_benefit(event.sum(), (~event).sum(), event.size, pt)
    np.testing.assert_allclose(nb, net_benefit_treat_all(event.mean(), pt), rtol=1e-12)


@pytest.mark.parametrize("costs", COST_MATRICES)
def test_net_benefit_savings_and_relative_value_are_one_quantity(rng, costs):
    # Derived identities (METHODS.md 1.3), with pt = alpha = C'/(C'+D'):
    #   NB = (E_never - E_model)/D';  V = NB/s if alpha >= s;
    #   V = (NB - NB_all)(1 - alpha)/(alpha (1 - s)) if alpha < s.
    c_h, c_fa, c_m, c_cn = costs
    d_prime, c_prime = c_m - c_h, c_fa - c_cn
    alpha = c_prime / (c_prime + d_prime)
    for base in (1.0, 2.0, 0.4):  # Beta(base, 2): base rates either side of alpha
        p = rng.beta(base, 2.0, size=300)
        event = rng.random(300) < p
        c = count_at_cutoffs(p, event, np.round(np.linspace(0.0, 1.0, 41), 3))
        model, never, always, perfect = _expenses(c, c_h, c_fa, c_m, c_cn)
        nb = net_benefit(c.hits, c.false_alarms, c.n_occasions, alpha)
        np.testing.assert_allclose(nb, (never - model) / d_prime, rtol=1e-10, atol=1e-12)
        s = event.mean()
        v = relative_value_from_costs(model, never, always, perfect)
        if alpha >= s:
            np.testing.assert_allclose(v, nb / s, rtol=1e-10, atol=1e-12)
        else:
            nb_all = net_benefit_treat_all(s, alpha)
            np.testing.assert_allclose(
                v, (nb - nb_all) * (1 - alpha) / (alpha * (1 - s)), rtol=1e-10, atol=1e-12)


# --------------------------------------------------------------------------------------------------
# Agreement with scikit-learn


@pytest.mark.parametrize("decimals", [None, 1])
def test_counts_match_sklearn_confusion_matrix_at_several_cutoffs(rng, decimals):
    # reference: sklearn.metrics.confusion_matrix of (p >= cutoff); decimals=1 puts ties in p
    # and cutoffs exactly on them
    p, event = _random_history(rng, decimals=decimals)
    cutoffs = np.round(np.linspace(0.0, 1.0, 11), 1)
    c = count_at_cutoffs(p, event, cutoffs)
    for k, cut in enumerate(cutoffs):
        tn, fp, fn, tp = confusion_matrix(event, p >= cut, labels=[False, True]).ravel()
        got = (c.hits[k], c.false_alarms[k], c.misses[k], c.correct_negatives[k])
        assert got == (tp, fp, fn, tn)


@pytest.mark.parametrize("decimals", [None, 1])
def test_roc_auc_matches_sklearn_and_pair_count(rng, decimals):
    # reference: sklearn.metrics.roc_auc_score; slow oracle: pair count with ties 1/2
    p, event = _random_history(rng, decimals=decimals)
    assert roc_auc(p, event) == pytest.approx(roc_auc_score(event, p), rel=1e-12)
    assert roc_auc(p, event) == pytest.approx(_auc_by_pairs(p, event), rel=1e-12)


@pytest.mark.parametrize("shape", [(1,), (7,), (500,), (3, 200)])
def test_mid_ranks_match_scipy_rankdata(rng, shape):
    # reference: scipy.stats.rankdata, method "average" (its default), along the last axis
    x = np.round(rng.random(shape), 1)  # many ties
    assert np.array_equal(mid_ranks(x), rankdata(x, axis=-1))
    assert np.array_equal(mid_ranks(np.full(5, 0.3)), rankdata(np.full(5, 0.3)))


def test_roc_auc_of_sklearn_docs_example():
    # scikit-learn docs, roc_auc_score example: y = [0, 0, 1, 1], scores [0.1, 0.4, 0.35, 0.8]
    # -> 0.75 (3 of 4 pairs ordered correctly)
    assert roc_auc(np.array([0.1, 0.4, 0.35, 0.8]), np.array([0, 0, 1, 1])) == 0.75


@pytest.mark.filterwarnings("error")
def test_roc_auc_works_per_replicate_and_is_nan_without_both_classes(rng):
    # reference: sklearn.metrics.roc_auc_score per row
    p = np.round(rng.random((4, 150)), 1)
    event = rng.random((4, 150)) < p
    event[3] = False
    got = roc_auc(p, event)
    assert got.shape == (4,)
    for i in range(3):
        assert got[i] == pytest.approx(roc_auc_score(event[i], p[i]), rel=1e-12)
    assert np.isnan(got[3])


def test_roc_points_match_sklearn_roc_curve_and_enclose_the_auc(rng):
    # reference: sklearn.metrics.roc_curve(drop_intermediate=False), whose thresholds are the
    # distinct scores, highest first, after a first point (0, 0); the trapezoidal area under the
    # points equals the Mann-Whitney AUC (standard, from memory: Bamber 1975)
    p, event = _random_history(rng, decimals=2)
    cutoffs = np.unique(p)
    f, h = roc_points(count_at_cutoffs(p, event, cutoffs))
    fpr, tpr, _ = roc_curve(event, p, drop_intermediate=False)
    # our extra (1, 1) end repeats the point of the lowest cutoff
    np.testing.assert_allclose(f[:-1], fpr, rtol=1e-12)
    np.testing.assert_allclose(h[:-1], tpr, rtol=1e-12)
    assert (f[0], h[0], f[-1], h[-1]) == (0.0, 0.0, 1.0, 1.0)
    assert np.all(np.diff(f) >= 0) and np.all(np.diff(h) >= 0)
    assert np.trapezoid(h, f) == pytest.approx(roc_auc(p, event), rel=1e-12)


@pytest.mark.parametrize("decimals", [None, 1])
def test_brier_score_matches_sklearn(rng, decimals):
    # reference: sklearn.metrics.brier_score_loss (1-D probabilities, the [0, 1] form; Brier 1950)
    p, event = _random_history(rng, decimals=decimals)
    assert brier_score(p, event) == pytest.approx(brier_score_loss(event, p), rel=1e-12)
    assert brier_score(p, event.astype(int)) == pytest.approx(brier_score_loss(event, p), rel=1e-12)


def test_brier_skill_score_uses_sample_climatology_by_default(rng):
    # BSS = 1 - BS/BS_ref, BS_ref of the constant forecast s is s(1 - s) (METHODS.md 1.6);
    # reference Brier scores from sklearn.metrics.brier_score_loss
    p, event = _random_history(rng)
    s = event.mean()
    bs = brier_score_loss(event, p)
    bs_clim = brier_score_loss(event, np.full(p.size, s))
    assert bs_clim == pytest.approx(s * (1 - s), rel=1e-12)
    assert brier_skill_score(p, event) == pytest.approx(1 - bs / bs_clim, rel=1e-10)
    ref = np.clip(p + 0.1, 0, 1)
    assert brier_skill_score(p, event, reference=ref) == pytest.approx(
        1 - bs / brier_score_loss(event, ref), rel=1e-10)
    assert brier_skill_score(p, event, reference=0.3) == pytest.approx(
        1 - bs / brier_score_loss(event, np.full(p.size, 0.3)), rel=1e-10)


def test_brier_decomposition_sums_exactly_for_discrete_probabilities(rng):
    # Murphy (1973), "A new vector partition of the probability score", J. Appl. Meteor.
    # 12:595-600: BS = REL - RES + UNC, exact when p takes few distinct values
    p, event = _random_history(rng, n=1000, decimals=1)
    rel, res, unc = brier_decomposition(p, event)
    assert rel - res + unc == pytest.approx(brier_score_loss(event, p), rel=1e-12)
    assert unc == pytest.approx(event.mean() * (1 - event.mean()), rel=1e-12)
    assert rel >= 0 and res >= 0
    # p on bin centres: binning by 10 uniform bins gives the same groups, so the same partition
    p2 = np.round(np.floor(rng.random(500) * 10) / 10 + 0.05, 2)
    e2 = rng.random(500) < p2
    assert brier_decomposition(p2, e2, n_bins=10) == pytest.approx(brier_decomposition(p2, e2))


def test_reliability_table_keeps_empty_bins_and_matches_sklearn_elsewhere(rng):
    # reference: sklearn.calibration.calibration_curve(strategy="uniform"), which drops empty
    # bins; continuous p never lies on an edge, where the two conventions differ
    p = rng.random(300) * 0.6  # bins above 0.6 stay empty
    event = rng.random(300) < p
    t = reliability_table(p, event, n_bins=10)
    assert t.n.sum() == 300 and t.n.dtype == np.int64
    np.testing.assert_allclose(t.bin_lower, np.linspace(0, 0.9, 10), atol=1e-12)
    assert (t.n[6:] == 0).all() and np.isnan(t.observed_frequency[6:]).all()
    assert np.isnan(t.forecast_mean[6:]).all()
    prob_true, prob_pred = calibration_curve(event, p, n_bins=10, strategy="uniform")
    np.testing.assert_allclose(t.observed_frequency[:6], prob_true, rtol=1e-12)
    np.testing.assert_allclose(t.forecast_mean[:6], prob_pred, rtol=1e-12)


def test_reliability_table_puts_edges_in_the_bin_above_and_one_in_the_last():
    # our convention, matching "act when p >= cutoff" (common practice, no source)
    t = reliability_table(np.array([0.3, 0.0, 1.0, 0.999]), np.array([1, 0, 1, 1]), n_bins=10)
    assert t.n.tolist() == [1, 0, 0, 1, 0, 0, 0, 0, 0, 2]
    assert t.forecast_mean[9] == pytest.approx(0.9995)


def test_value_curve_is_the_upper_envelope_of_the_cutoff_curves(rng):
    # Richardson (2000): potential value = max over probability thresholds of V; oracle: a loop
    p, event = _random_history(rng)
    cutoffs = np.round(np.linspace(0.0, 1.0, 21), 2)
    c = count_at_cutoffs(p, event, cutoffs)
    ratios = np.round(np.linspace(0.05, 0.95, 19), 2)
    got = value_curve(c, ratios)
    r = rates(c)
    for j, a in enumerate(ratios):
        v = [relative_value(r.hit_rate[k], r.false_alarm_rate[k], r.base_rate[k], a)
             for k in range(cutoffs.size)]
        assert got[j] == pytest.approx(np.nanmax(v), rel=1e-12)
    # replicates first: (n_replicates, n_ratios)
    c2 = count_at_cutoffs(np.stack([p, p[::-1]]), np.stack([event, event[::-1]]), cutoffs)
    np.testing.assert_allclose(value_curve(c2, ratios)[0], got, rtol=1e-12)
    # Finley, one yes/no "cutoff": envelope at alpha = s is the Peirce score (Richardson 2000)
    finley = Contingency(*(np.array([x]) for x in (28, 72, 23, 2680)))
    assert value_curve(finley, np.array([FINLEY_BASE_RATE]))[0] == pytest.approx(0.52286, abs=1e-5)


# --------------------------------------------------------------------------------------------------
# A real history


@pytest.fixture(scope="module")
def seattle():
    """Daily Seattle weather 2012-2015, from NOAA records (public domain), shipped in the PyPI
    package vega-datasets (MIT licence per its metadata) as "seattle-weather"."""
    local_data = pytest.importorskip("vega_datasets").local_data
    df = local_data.seattle_weather()
    assert len(df) == 1461 and (df["date"].diff().dt.days.iloc[1:] == 1).all()  # whole days
    wet = (df["precipitation"].to_numpy() > 0)
    month = df["date"].dt.month.to_numpy()
    year = df["date"].dt.year.to_numpy()
    # predict "any precipitation tomorrow" from today's wet/dry and the calendar month
    return {"wet_today": wet[:-1], "month": month[:-1], "year": year[1:], "event": wet[1:]}


def test_seattle_logistic_forecast_scores_match_sklearn(seattle):
    # a logistic regression fitted on 2012-2014 and scored on 2015; references: sklearn
    # confusion_matrix, roc_auc_score, brier_score_loss
    x = np.column_stack([seattle["wet_today"], np.eye(12)[seattle["month"] - 1]])
    train, test = seattle["year"] <= 2014, seattle["year"] == 2015
    model = LogisticRegression(max_iter=1000).fit(x[train], seattle["event"][train])
    p = model.predict_proba(x[test])[:, 1]
    event = seattle["event"][test]
    assert event.size == 365 and 0.3 < event.mean() < 0.7  # 2015 tomorrows; plenty of both
    cutoffs = np.round(np.linspace(0.1, 0.9, 9), 1)
    c = count_at_cutoffs(p, event, cutoffs)
    for k, cut in enumerate(cutoffs):
        tn, fp, fn, tp = confusion_matrix(event, p >= cut, labels=[False, True]).ravel()
        got = (c.hits[k], c.false_alarms[k], c.misses[k], c.correct_negatives[k])
        assert got == (tp, fp, fn, tn)
    assert roc_auc(p, event) == pytest.approx(roc_auc_score(event, p), rel=1e-12)
    assert brier_score(p, event) == pytest.approx(brier_score_loss(event, p), rel=1e-12)
    assert roc_auc(p, event) > 0.6  # today's weather and the season carry some skill


def test_seattle_conditional_frequencies_are_reliable_in_sample(seattle):
    # forecast = observed frequency of a wet tomorrow given (month, wet today) over all years;
    # in sample each group's forecast equals its frequency, so Murphy's (1973) reliability term
    # is 0 and BS = UNC - RES exactly (METHODS.md 1.6); BS reference: sklearn brier_score_loss
    event = seattle["event"]
    group = 2 * (seattle["month"] - 1) + seattle["wet_today"]
    p = np.bincount(group, weights=event)[group] / np.bincount(group)[group]
    rel, res, unc = brier_decomposition(p, event)
    assert rel == pytest.approx(0.0, abs=1e-15)
    assert unc - res == pytest.approx(brier_score_loss(event, p), rel=1e-12)
    assert brier_skill_score(p, event) == pytest.approx(res / unc, rel=1e-10)
    assert roc_auc(p, event) == pytest.approx(roc_auc_score(event, p), rel=1e-12)


@pytest.mark.filterwarnings("error")
def test_scores_emit_no_warnings_on_degenerate_input():
    # one outcome only: AUC, skill score undefined, returned as NaN quietly
    p, event = np.array([0.2, 0.7, 0.7]), np.zeros(3, dtype=bool)
    assert np.isnan(roc_auc(p, event))
    assert np.isnan(brier_skill_score(p, event))
    assert brier_score(p, event) == pytest.approx((0.04 + 0.49 + 0.49) / 3)
    with pytest.raises(ValueError, match="outside"):
        brier_score(np.array([0.2, 17.0]), np.array([0, 1]))
