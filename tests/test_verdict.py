"""The verdict: is the forecast worth using at all, judged on seasons its cutoff was not chosen on?

Real histories (``tests/realdata.py``: datasets the ``arch`` and ``vega-datasets`` packages ship,
each with an honest logistic forecast fitted on earlier years only) carry the claims about skill:
pure-noise forecasts on a real outcome series must be called not worth using, a skilled forecast
worth using, and a stock-index forecast with no skill not worth using. The cost tables set for them
are invented (cost-loss form, Thompson 1952, Murphy 1977; break-even probability C/L); the demo and
the gritting and pump scenarios are invented too.
"""

from __future__ import annotations

import json
import re

import numpy as np
import pytest
from scipy import stats

from realdata import seattle_rain, sp500_up, wti_big_move, with_noise_forecast
from simulator.inputs.history import history_from_frame
from simulator.rules.simpy_model import SimpyPricer
from simulator.replay.resample import season_calendar
from simulator.run import run, run_history
from simulator.inputs.scenario import read_scenario, scenario_from_text
from simulator.analysis.selection import _seasons_on_calendar
from simulator.analysis.verdict import RULES, SeasonCosts, judge, season_costs

REPLICATES = 20  # the verdict does not use the replicates; only the named best rule does


def cost_loss(ratio: float) -> str:
    """An invented cost-loss table with C/L = ``ratio``: act costs C whatever happens, a miss L
    (Thompson 1952; Murphy 1977): the break-even probability is ``ratio``."""
    return f'name = "cost-loss {ratio}"\n[costs]\nhit = {ratio * 1000}\nfalse_alarm = {ratio * 1000}\nmiss = 1000\n'


def verdict_of(frame, text: str):
    scenario = scenario_from_text(text)
    return run_history(scenario, history_from_frame(frame, scenario), replicates=REPLICATES).verdict


@pytest.fixture(scope="module")
def seattle():
    return seattle_rain()


@pytest.fixture(scope="module")
def oil():
    return wti_big_move()


# ---- the claims on real data -------------------------------------------------------------------

def test_noise_forecasts_on_real_rain_are_almost_never_worth_using(seattle):
    # twenty forecasts of pure noise (uniform probabilities) on the real Seattle rain series: the
    # best of 101 cutoffs in hindsight always shows some saving, priced out of sample it must not;
    # a 5% one-sided error rate lets one in twenty through at most (the bar)
    worth = [verdict_of(with_noise_forecast(seattle, seed), cost_loss(0.3)).use_forecast for seed in range(20)]
    assert sum(worth) <= 1


def test_noise_forecasts_on_real_oil_moves_are_almost_never_worth_using(oil):
    worth = [verdict_of(with_noise_forecast(oil, seed), cost_loss(0.4)).use_forecast for seed in range(20)]
    assert sum(worth) <= 1


def test_skilled_rain_forecast_is_worth_using(seattle):
    # the logistic forecast of rain (ROC area about 0.76) at C/L = 0.3 beats persistence and the
    # calendar month on each held-out year
    v = verdict_of(seattle, cost_loss(0.3))
    assert v.use_forecast
    assert v.p05 > 0 and v.prob_saving > 0.95
    assert v.reason("EUR").startswith("Priced on each of the 3 past seasons at the cutoff chosen on the others, acting on the forecast saved")


def test_skilled_oil_move_forecast_is_worth_using(oil):
    # yesterday's moves forecast big moves of crude oil (volatility clusters); at C/L = 0.4 never
    # acting is the best rule without the forecast, and the forecast beats it out of sample
    v = verdict_of(oil, cost_loss(0.4))
    assert v.use_forecast
    assert v.best_rule == "never_act"


def test_stock_index_forecast_without_skill_is_not_worth_using():
    # "up tomorrow" for the S&P 500 (ROC area about 0.51) with symmetric costs: the index rose on
    # most days, so always acting is the best rule, and the forecast adds nothing to it
    frame = sp500_up()
    v = verdict_of(frame, 'name = "index"\n[costs]\nhit = 0\nfalse_alarm = 100\nmiss = 100\n')
    assert not v.use_forecast
    assert v.best_rule == "always_act"
    assert "the best rule without it (always acting)" in v.reason("USD")


def test_demo_forecast_is_worth_using_and_says_so_everywhere(tmp_path):
    from typer.testing import CliRunner

    from simulator.cli import app

    result = CliRunner().invoke(app, ["demo", "--out", str(tmp_path / "demo"), "--replicates", "100"])
    assert result.exit_code == 0, result.output
    s = json.loads((tmp_path / "demo" / "summary.json").read_text())
    v = s["verdict"]
    assert v["use_forecast"] is True
    assert set(v) == {"use_forecast", "best_rule_without_forecast", "saving_against_best_rule", "reason"}
    assert set(v["saving_against_best_rule"]) == {"mean", "p05", "p95", "prob_saving"}
    assert v["best_rule_without_forecast"] in RULES
    assert "Recommended cutoff" in result.stdout and "use the forecast, because" in result.stdout
    from simulator.account.cautions import GENERAL

    assert s["cautions"] == [GENERAL]  # the demo is no hazard: the general caution only
    assert "events_without_action" not in s
    assert " ".join(v["reason"].split()[1:6]) in " ".join(result.stdout.replace("│", " ").split())


# ---- when the forecast is not worth using, no cutoff is given as advice -----------------------

@pytest.fixture(scope="module")
def useless_run(tmp_path_factory, seattle):
    from typer.testing import CliRunner

    from simulator.cli import app

    folder = tmp_path_factory.mktemp("noise")
    with_noise_forecast(seattle, 3).to_csv(folder / "history.csv", index=False)
    (folder / "noise.toml").write_text(cost_loss(0.3) + '[history]\npath = "history.csv"\n'
                                       '[decision]\naction = "take the umbrella"\n[event]\nname = "rain"\n')
    result = CliRunner().invoke(app, ["run", str(folder / "noise.toml"), "--out", str(folder / "out"),
                                      "--replicates", "40"])
    assert result.exit_code == 0, result.output
    return result, folder / "out"


def test_useless_forecast_headline_says_which_rule_to_keep_and_gives_no_recommended_cutoff(useless_run):
    result, out = useless_run
    s = json.loads((out / "summary.json").read_text())
    assert s["verdict"]["use_forecast"] is False
    flat = " ".join(result.stdout.replace("│", " ").split())
    assert "keep to the rule that ignores it:" in flat
    assert "Recommended cutoff" not in result.stdout
    assert "Cheapest cutoff (not advised)" in flat


def test_useless_forecast_report_opens_with_the_rule_to_keep(useless_run):
    _, out = useless_run
    s = json.loads((out / "summary.json").read_text())
    html = (out / "report.html").read_text(encoding="utf-8")
    advice = html[html.index('id="recommendation"'):html.index('id="verdict-tile"')]
    first = advice.split("<p>")[1]
    assert first.startswith("Keep to the rule that ignores it")
    assert "because priced on each of the 3 past seasons at the cutoff chosen on the others" in first
    assert "when the forecast probability of" not in advice  # no cutoff given as advice
    assert "Keep to the rule" in html


def test_useless_forecast_page_and_figures_call_the_cutoff_cheapest_not_recommended(useless_run):
    _, out = useless_run
    html = (out / "report.html").read_text(encoding="utf-8")
    assert 'id="is-recommended">cheapest<' in html
    assert "At the cheapest cutoff" in html
    shown = re.sub(r"<script.*?</script>", "", html, flags=re.S)  # what a reader sees
    assert "recommended cutoff" not in shown.lower()


# ---- the computation, against references outside the project -----------------------------------

def test_equal_seasons_give_students_t_interval_of_the_mean_saving():
    # with equal seasons the ratio estimate is the plain mean of the held-out savings, and its
    # interval and confidence are Student's (1908) one-sample t, as scipy.stats.ttest_1samp gives
    rng = np.random.default_rng(5)
    k, n_cut = 7, 4
    model = rng.uniform(50, 100, (k, n_cut))
    rules = np.broadcast_to(rng.uniform(60, 110, (k, len(RULES))), (k, k, len(RULES))).copy()
    costs = SeasonCosts(model=model, rules=rules, occasions=np.full(k, 10), seasons=np.arange(2000, 2000 + k),
                        cutoffs=np.linspace(0.2, 0.8, n_cut))
    v = judge(costs, season_occasions=10, rule="never_act")
    savings = np.array([d for *_, d in v.held_out])
    test = stats.ttest_1samp(savings, 0.0)
    lo, hi = test.confidence_interval(0.90)
    assert v.mean == pytest.approx(savings.mean())
    assert (v.p05, v.p95) == pytest.approx((lo, hi))
    assert v.prob_saving == pytest.approx(1 - stats.ttest_1samp(savings, 0.0, alternative="greater").pvalue)
    assert v.use_forecast == (lo > 0)


def test_each_season_is_priced_at_the_cutoff_and_rule_chosen_on_the_others():
    # a slow, obvious oracle: loop over held-out seasons, choose by total cost over the rest
    rng = np.random.default_rng(6)
    k, n_cut = 5, 6
    model = rng.uniform(0, 100, (k, n_cut))
    rules = rng.uniform(0, 100, (k, k, len(RULES)))
    occasions = rng.integers(20, 40, k)
    costs = SeasonCosts(model=model, rules=rules, occasions=occasions, seasons=np.arange(k),
                        cutoffs=np.linspace(0, 1, n_cut))
    v = judge(costs, season_occasions=30, rule="persistence")
    for f, (season, cutoff, rule, saving) in enumerate(v.held_out):
        others = [s for s in range(k) if s != f]
        c = min(range(n_cut), key=lambda j: sum(model[s, j] for s in others))
        r = min(range(len(RULES)), key=lambda j: sum(rules[f, s, j] for s in others))
        assert (season, cutoff, rule) == (f, costs.cutoffs[c], RULES[r])
        assert saving == pytest.approx((rules[f, f, r] - model[f, c]) * 30 / occasions[f])
    # the ratio estimate: total saving over total occasions, per season of 30 occasions
    total = sum(s * m / 30 for (*_, s), m in zip(v.held_out, occasions))
    assert v.mean == pytest.approx(total / occasions.sum() * 30)


def test_one_season_is_too_few_to_judge():
    costs = SeasonCosts(model=np.ones((1, 3)), rules=np.ones((1, 1, 4)), occasions=np.array([9]),
                        seasons=np.array([2020]), cutoffs=np.array([0.2, 0.5, 0.8]))
    v = judge(costs, season_occasions=9, rule="always_act")
    assert not v.use_forecast and v.n_seasons == 1
    assert "always acting is the cheapest rule" in v.reason("EUR")


def test_season_costs_price_each_season_as_scikit_learn_counts_it(seattle):
    # each season's cost at a cutoff from scikit-learn's confusion matrix and the cost table
    from sklearn.metrics import confusion_matrix

    scenario = scenario_from_text(cost_loss(0.3))
    history = history_from_frame(seattle, scenario)
    costs = season_costs(history, season_calendar(history, scenario.season), scenario.cutoffs, scenario)
    c = scenario.costs
    for i, season in enumerate(costs.seasons):
        rows = history.evaluated & (history.season == season)
        for j in (0, 30, 55, 100):
            act = history.p[rows] >= scenario.cutoffs[j] - 1e-12  # two-decimal probabilities, as written
            tn, fp, fn, tp = confusion_matrix(history.event[rows], act, labels=[False, True]).ravel()
            expected = tp * c.hit + fp * c.false_alarm + fn * c.miss + tn * c.correct_negative
            assert costs.model[i, j] == pytest.approx(expected)
        assert costs.occasions[i] == rows.sum()


def test_under_operating_rules_seasons_are_played_by_the_rules_as_the_simpy_model_plays_them():
    # the rules demo's first three seasons, each laid on the priced calendar and played under the
    # contract's rules: the vectorised twin against the event-level simpy model (the oracle)
    scenario = read_scenario("scenarios/line_marking_rules.toml")
    from simulator.inputs.history import read_history

    history = read_history(scenario)
    first = history.seasons[:3]
    keep = np.isin(history.season, first)
    import dataclasses

    history = dataclasses.replace(history, evaluated=history.evaluated & keep,
                                  validation=np.zeros_like(keep))
    calendar = season_calendar(history, scenario.season)
    cutoffs = np.array([0.2, 0.5, 0.8])
    costs = season_costs(history, calendar, cutoffs, scenario)
    rows = _seasons_on_calendar(history, history.evaluated, calendar)
    slow = SimpyPricer(history, calendar, cutoffs, scenario)(rows)
    np.testing.assert_allclose(costs.model, slow.model)
    # the fixed rules of fold 0 learnt without season 0: never, always and persistence learn nothing
    np.testing.assert_allclose(costs.rules[0][:, :3], slow.baselines[:, :3])



@pytest.mark.parametrize("rules", [False, True], ids=["costs", "operating rules"])
def test_another_forecast_shares_the_rules_costs_and_prices_only_its_own(seattle, rules):
    # the rules without the forecast ignore it, so a second forecast of the same history may take
    # their season costs from the first: the result is the same bytes as pricing it from scratch
    # (an identity of the method, no source needed)
    import dataclasses

    text = cost_loss(0.3)
    if rules:
        text += ("[operations]\ncrews_out_on = \"not_acting\"\nspoiled_on = \"event\"\nday_rate = 100\n"
                 "standby_rate = 40\nspoilage_cost = 300\n[season]\nmonths = [5, 6, 7]\n")
    scenario = scenario_from_text(text)
    history = history_from_frame(with_noise_forecast(seattle, 3), scenario)
    other = dataclasses.replace(history, p=history_from_frame(seattle, scenario).p)
    calendar = season_calendar(history, scenario.season)
    first = season_costs(history, calendar, scenario.cutoffs, scenario)
    shared = season_costs(other, calendar, scenario.cutoffs, scenario, rules_of=first)
    alone = season_costs(other, calendar, scenario.cutoffs, scenario)
    for field in ("model", "rules", "occasions", "seasons", "cutoffs"):
        np.testing.assert_array_equal(getattr(shared, field), getattr(alone, field))
    assert not np.array_equal(shared.model, first.model)

# ---- hazards: cautions everywhere, and the event occasions left without action -----------------

def test_hazard_caution_is_printed_to_standard_error_under_quiet(tmp_path):
    from typer.testing import CliRunner

    from simulator.cli import app

    result = CliRunner().invoke(app, ["run", "scenarios/river_pumps.toml", "--out", str(tmp_path / "out"),
                                      "--replicates", "40", "--quiet"])
    assert result.exit_code == 0, result.output
    assert result.stdout == ""
    assert "is a hazard to people" in result.stderr
    s = json.loads((tmp_path / "out" / "summary.json").read_text())
    for text in s["cautions"]:
        assert text in " ".join(result.stderr.split())


def test_summary_carries_every_caution_of_the_run(tmp_path):
    from simulator.account.cautions import GENERAL, RULES_CAUTION
    from simulator.account.outputs import summary

    pumps = summary(run("scenarios/river_pumps.toml", replicates=40))
    assert len(pumps["cautions"]) == 2
    assert "hazard to people" in pumps["cautions"][0] and pumps["cautions"][1] == GENERAL
    demo = summary(run("scenarios/line_marking.toml", replicates=40))
    assert demo["cautions"] == [GENERAL]  # no hazard: the general caution only
    assert "events_without_action" not in demo
    rules = summary(run("scenarios/line_marking_rules.toml", replicates=20))
    assert rules["cautions"] == [GENERAL, RULES_CAUTION]


def test_flood_days_without_pumps_are_counted_per_season_at_the_recommended_cutoff():
    result = run("scenarios/river_pumps.toml", replicates=300)
    from simulator.account.outputs import summary

    s = summary(result)
    missed = s["events_without_action"]
    assert missed["cutoff"] == s["recommended_cutoff"]
    assert missed["p05"] <= missed["mean"] <= missed["p95"]
    # the replicates replay the history, so their mean is close to the history's own rate: misses
    # per evaluated day at that cutoff times the days of a season (counted here independently)
    h = result.history
    p, event = h.p[h.evaluated], h.event[h.evaluated]
    per_day = np.sum(event & (p < missed["cutoff"] - 1e-12)) / p.size
    assert missed["mean"] == pytest.approx(per_day * s["season_occasions"], rel=0.35)


def test_hazard_headline_and_report_tiles_give_the_occasions_without_action(tmp_path):
    from typer.testing import CliRunner

    from simulator.cli import app

    result = CliRunner().invoke(app, ["run", "scenarios/river_pumps.toml", "--out", str(tmp_path / "out"),
                                      "--replicates", "60"])
    assert result.exit_code == 0, result.output
    s = json.loads((tmp_path / "out" / "summary.json").read_text())
    missed = s["events_without_action"]
    flat = " ".join(result.stdout.replace("│", " ").split())
    assert f"{missed['mean']:.1f} days a season at {missed['cutoff']:.2f}" in flat
    html = (tmp_path / "out" / "report.html").read_text(encoding="utf-8")
    assert 'id="missed-tile"' in html
    assert f"{missed['mean']:.1f} a season" in html


# ---- many sites: each site's own verdict in sites.csv -----------------------------------------

def test_each_site_gets_the_verdict_a_run_of_its_rows_alone_gives(tmp_path):
    # the verdict reads only the site's own past seasons, so a run of one depot's rows alone
    # (the same costs, no site column) must give that depot's verdict in sites.csv
    import pandas as pd

    result = run("scenarios/gritting_depots.toml", replicates=40)
    table = result.portfolio.table.set_index("site")
    assert table["use_forecast"].dtype == bool
    rows = pd.read_csv("scenarios/gritting_depots_history.csv")
    rows[rows["depot"] == "Pellisford"].drop(columns="depot").to_csv(tmp_path / "history.csv", index=False)
    text = open("scenarios/gritting_depots.toml").read().split('\n[sites."Scarth Top".costs]')[0]
    text = text.replace('path = "gritting_depots_history.csv"', 'path = "history.csv"')
    text = "\n".join(line for line in text.splitlines() if not line.startswith("site_column"))
    (tmp_path / "alone.toml").write_text(text + '\n[season]\nmonths = [11, 12, 1, 2, 3]\n')
    alone = run(tmp_path / "alone.toml", replicates=40).verdict
    site = table.loc["Pellisford"]
    assert site["use_forecast"] == alone.use_forecast
    assert site["saving_against_best_rule_mean"] == pytest.approx(alone.mean)
    assert (site["saving_against_best_rule_p05"], site["saving_against_best_rule_p95"]) == pytest.approx(
        (alone.p05, alone.p95))


def test_portfolio_of_two_identical_sites_saves_twice_what_one_does(tmp_path):
    # derived (no published source): two copies of one depot double every season cost at every
    # cutoff and under every rule, so the same cutoffs and rules are chosen, the saving per season
    # and its interval double, and the confidence and the verdict stay as they are
    import pandas as pd

    rows = pd.read_csv("scenarios/gritting_depots_history.csv")
    one = rows[rows["depot"] == "Pellisford"]
    pd.concat([one.assign(depot="East"), one.assign(depot="West")]).sort_values(
        ["date", "depot"], kind="stable").to_csv(tmp_path / "two.csv", index=False)
    one.drop(columns="depot").to_csv(tmp_path / "one.csv", index=False)
    text = open("scenarios/gritting_depots.toml").read().split('\n[sites."Scarth Top".costs]')[0]
    season = '\n[season]\nmonths = [11, 12, 1, 2, 3]\n'
    (tmp_path / "two.toml").write_text(text.replace("gritting_depots_history.csv", "two.csv") + season)
    alone = "\n".join(line for line in text.splitlines() if not line.startswith("site_column"))
    (tmp_path / "one.toml").write_text(alone.replace("gritting_depots_history.csv", "one.csv") + season)
    both = run(tmp_path / "two.toml", replicates=40).verdict
    single = run(tmp_path / "one.toml", replicates=40).verdict
    assert both.use_forecast == single.use_forecast
    assert (both.mean, both.p05, both.p95) == pytest.approx((2 * single.mean, 2 * single.p05, 2 * single.p95))
    assert both.prob_saving == pytest.approx(single.prob_saving)
