"""Several forecasts in one history, priced on the same replicate seasons and compared (issue 13).

Reference values come from identities of the cost-loss model (Thompson 1952; Murphy 1977, "The
value of climatological, categorical and probabilistic forecasts in the cost-loss ratio
situation", Monthly Weather Review 105, 803-816) and of relative economic value (Richardson 2000,
"Skill and relative economic value of the ECMWF ensemble prediction system", QJRMS 126, 649-667),
and from numerical integration with scipy. The histories are invented (seeded) or the real ones of
tests/realdata.py.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from scipy import integrate, stats

from realdata import seattle_rain, with_noise_forecast
from simulator.inputs.errors import InputError
from simulator.inputs.history import history_from_frame
from simulator.account.outputs import render_files, summary
from simulator.run import run_history
from simulator.inputs.scenario import scenario_from_text

from conftest import EXAMPLE_COSTS, scenario_toml


def _scenario(forecasts: dict[str, str] | None, replicates: int = 200, **sections):
    text = scenario_toml(simulation={"replicates": replicates, **sections.pop("simulation", {})}, **sections)
    if forecasts:
        text += "\n[forecasts]\n" + "".join(f'"{name}" = "{column}"\n' for name, column in forecasts.items())
    return scenario_from_text(text, label="scenario.toml")


def _run(frame: pd.DataFrame, forecasts: dict[str, str] | None, **sections):
    scenario = _scenario(forecasts, **sections)
    return run_history(scenario, history_from_frame(frame, scenario, label="history.csv"))


def _degraded(p: np.ndarray, sd: float, seed: int) -> np.ndarray:
    """``p`` with normal noise of standard deviation ``sd`` added on the logit scale, 2 decimals."""
    q = np.clip(p, 0.005, 0.995)
    logit = np.log(q / (1 - q)) + np.random.default_rng(seed).normal(0.0, sd, q.size)
    return np.round(1 / (1 + np.exp(-logit)), 2)


@pytest.fixture(scope="module")
def rain() -> pd.DataFrame:
    """Seattle wet days 2013-2015 with the honest forecast and a copy degraded on the logit scale."""
    frame = seattle_rain()
    return frame.assign(p_degraded=_degraded(frame["probability"].to_numpy(), 2.0, seed=13))


# ------------------------------------------------------------------------------------------------
# reading [forecasts]

def test_one_forecast_under_forecasts_runs_as_probability_column(history_frame):
    # a run with one forecast is unchanged: [forecasts] with one entry is probability_column
    plain = _run(history_frame, None, simulation={"replicates": 50})
    listed = _run(history_frame.rename(columns={"probability": "p_national"}), {"national": "p_national"},
                  simulation={"replicates": 50})
    assert listed.comparison is None
    assert summary(plain) == summary(listed)


def test_forecasts_and_probability_column_together_are_refused():
    with pytest.raises(InputError, match=r"scenario.toml .*\[forecasts\] replaces \[history\] probability_column"):
        _scenario({"a": "p_a", "b": "p_b"}, history={"probability_column": "p_a"})


def test_a_forecast_column_the_file_lacks_is_named_with_its_forecast(history_frame):
    scenario = _scenario({"ours": "probability", "theirs": "p_theirs"})
    with pytest.raises(InputError, match=r'history.csv: no column "p_theirs" \(the forecast "theirs"\).*\[forecasts\]'):
        history_from_frame(history_frame, scenario, label="history.csv")


def test_a_missing_forecast_is_refused_with_file_row_and_column(history_frame):
    frame = history_frame.assign(p_other=history_frame["probability"].astype(object))
    frame.loc[9, "p_other"] = ""
    scenario = _scenario({"ours": "probability", "other": "p_other"})
    with pytest.raises(InputError, match=r'history.csv row 11, column "p_other": the probability is missing.*'
                                         r'missing_forecast = "drop_row"'):
        history_from_frame(frame, scenario, label="history.csv")


def test_drop_row_evaluates_every_forecast_on_the_rows_all_have_and_says_how_many(history_frame):
    frame = history_frame.assign(p_other=history_frame["probability"].astype(object))
    frame.loc[[9, 20, 30], "p_other"] = ""
    frame.loc[40, "probability"] = np.nan
    scenario = _scenario({"ours": "probability", "other": "p_other"}, history={"missing_forecast": "drop_row"})
    history = history_from_frame(frame, scenario, label="history.csv")
    assert history.n_evaluated == len(frame) - 4
    assert not history.evaluated[[9, 20, 30, 40]].any()
    assert any("4 rows left out because a forecast has no probability" in w for w in history.warnings)
    # an unreadable probability is still an error, named by its row in the file
    frame.loc[50, "p_other"] = "wet"
    with pytest.raises(InputError, match=r'history.csv row 52, column "p_other": \'wet\' is not a number'):
        history_from_frame(frame, scenario, label="history.csv")


def test_the_calibrated_mode_with_several_forecasts_is_refused_in_one_line(history_frame):
    # it draws the outcomes from one forecast's recalibrated probabilities, which would favour that
    # forecast over the others (README, "Which forecast to pay for")
    scenario = _scenario({"ours": "probability", "other": "probability"}, simulation={"mode": "calibrated"})
    history = history_from_frame(history_frame, scenario, label="history.csv")
    with pytest.raises(InputError, match=r'mode: "calibrated" draws the outcomes from one forecast'):
        run_history(scenario, history)


# ------------------------------------------------------------------------------------------------
# the comparison

def test_the_same_column_under_two_names_saves_exactly_nothing(rain):
    # identity: one forecast against itself, at the same cutoff on the same replicates
    result = _run(rain, {"supplier": "probability", "same supplier": "probability"})
    pair = result.comparison.pairs[0]
    assert (pair.saving == 0).all()
    entry = pair.as_dict()
    assert entry["saving"]["prob_saving"] == 0
    assert entry["worth_up_to"] == 0 and entry["worth_up_to_confident"] == 0


def test_a_forecast_beats_its_degraded_copy_whatever_the_order_listed(rain):
    # noise on the logit scale loses information, so the original forecast's expected expense is
    # lower at every cost-loss ratio (a garbled forecast is worth less: Murphy 1977, section 4;
    # the degree of noise that makes it "near 1" here is our choice, common practice)
    first = _run(rain, {"original": "probability", "degraded": "p_degraded"}, replicates=400)
    second = _run(rain, {"degraded": "p_degraded", "original": "probability"}, replicates=400)
    pair = first.comparison.pair("original", "degraded").as_dict()
    assert pair["better"] == "original"
    assert pair["saving"]["prob_saving"] >= 0.95
    assert pair["worth_up_to"] > 0
    # the order of listing changes no figure of the comparison
    a, b = summary(first), summary(second)
    assert a["forecasts"] == {name: b["forecasts"][name] for name in a["forecasts"]}
    assert a["forecast_pairs"] == b["forecast_pairs"]
    assert first.comparison.forecast("original").scores["roc_auc"] > first.comparison.forecast("degraded").scores["roc_auc"]


def test_a_perfect_forecast_has_value_one_and_is_worth_the_whole_climate_expense(rng):
    # Richardson (2000), eq. for V: a perfect forecast has E_forecast = E_perfect, so V = 1 at
    # every cost-loss ratio; against a climatological forecast (a constant: it acts always or
    # never) its worth is the climate rule's cost minus the perfect rule's on every replicate.
    dates = pd.date_range("2016-01-01", "2021-12-31", freq="D")
    event = rng.random(dates.size) < 0.3
    frame = pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "outcome": event.astype(int),
                          "p_perfect": event.astype(float), "p_climate": 0.3})
    result = _run(frame, {"perfect": "p_perfect", "climate": "p_climate"})
    perfect = result.comparison.forecast("perfect")
    assert perfect.value_curve["potential_value"].to_numpy() == pytest.approx(1.0, abs=1e-12)
    pair = result.comparison.pair("perfect", "climate")
    assert pair.better == "perfect"
    climate = min((result.baseline_cost[name] for name in ("never_act", "always_act")), key=np.mean)
    # integer costs: every sum is exact, so the two ways of pricing agree to the last bit
    assert pair.as_dict()["worth_up_to"] == (climate - result.baseline_cost["perfect"]).mean()
    assert (pair.saving == climate - result.baseline_cost["perfect"]).all()


def _expense(lo: float, hi: float, act: bool, density) -> float:
    """Expected expense per occasion of the occasions whose calibrated probability q is in
    [lo, hi), acting or not: the integral of q*hit + (1-q)*false_alarm (acting) or
    q*miss + (1-q)*correct_negative (not acting) against the density of q (cost-loss model,
    Murphy 1977; ../shared/METHODS.md 6.1)."""
    c = EXAMPLE_COSTS
    when_event, when_not = (c["hit"], c["false_alarm"]) if act else (c["miss"], c["correct_negative"])
    return integrate.quad(lambda q: (q * when_event + (1 - q) * when_not) * density(q), lo, hi)[0]


def test_saving_between_two_calibrated_forecasts_matches_the_integral(rng):
    # derived from the cost-loss model (Murphy 1977): a calibrated forecast acted on at the
    # break-even probability p* costs E = integral of min-cost over its distribution. Forecast
    # "sharp" is the probability q itself, q ~ Beta(0.8, 1.2); forecast "binned" says only which
    # of three ranges q lies in, as the mean of q there (calibrated by construction; the middle
    # range straddles p* = 0.45, so the two act differently there). Outcomes are drawn from q, so
    # both are calibrated on the same occasions.
    a, b = 0.8, 1.2
    density = stats.beta(a, b).pdf
    edges = np.array([0.0, 0.2, 0.7, 1.0])
    c = EXAMPLE_COSTS
    p_star = (c["false_alarm"] - c["correct_negative"]) / (c["false_alarm"] - c["correct_negative"] + c["miss"] - c["hit"])
    sharp = _expense(0, p_star, False, density) + _expense(p_star, 1, True, density)
    means = [integrate.quad(lambda q: q * density(q), lo, hi)[0] / integrate.quad(density, lo, hi)[0]
             for lo, hi in zip(edges[:-1], edges[1:])]
    binned = sum(_expense(lo, hi, m >= p_star, density) for lo, hi, m in zip(edges[:-1], edges[1:], means))
    expected = binned - sharp  # per occasion, in the currency

    dates = pd.date_range("1950-01-01", "2029-12-31", freq="D")
    q = rng.beta(a, b, dates.size)
    event = rng.random(dates.size) < q
    bin_of = np.clip(np.searchsorted(edges, q, side="right") - 1, 0, edges.size - 2)
    frame = pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "outcome": event.astype(int),
                          "p_sharp": np.round(q, 6), "p_binned": np.round(np.asarray(means)[bin_of], 6)})
    result = _run(frame, {"sharp": "p_sharp", "binned": "p_binned"}, replicates=400)
    pair = result.comparison.pair("sharp", "binned")
    assert pair.better == "sharp"
    per_occasion = pair.saving.mean() / result.calendar.n_occasions
    # Monte Carlo error: the history is one sample of occasions (standard error of the mean
    # difference of occasion costs at p*), and the replicates resample it once more
    acts_sharp, acts_binned = q >= p_star, np.asarray(means)[bin_of] >= p_star
    def cost(act):
        return np.where(act, np.where(event, c["hit"], c["false_alarm"]), np.where(event, c["miss"], c["correct_negative"]))
    diff = cost(acts_binned) - cost(acts_sharp)
    n_draws = result.replicates * result.calendar.n_occasions
    se = diff.std() * np.sqrt(1 / diff.size + 1 / n_draws)
    assert expected > 10 * se  # the check can tell a wrong difference from the right one
    assert per_occasion == pytest.approx(expected, abs=4 * se)


def test_each_forecast_gets_its_own_cutoff_and_honest_check(rain):
    result = _run(rain, {"original": "probability", "degraded": "p_degraded"},
                  history={"validation_from": "2015-01-01"})
    main = result.comparison.forecast("original")
    assert main.decision == result.decision  # the main forecast fills the run's own numbers
    assert main.validation == result.selection.validation
    other = result.comparison.forecast("degraded")
    assert other.validation is not None
    assert other.validation.validation.n_occasions == main.validation.validation.n_occasions
    entry = summary(result)["forecasts"]["degraded"]
    assert entry["validation"]["chosen_on"] == "training period"
    assert set(entry) >= {"recommended_cutoff", "recommended_cutoff_interval", "season_cost", "savings",
                          "brier_score", "brier_skill_score", "roc_auc"}


def test_forecasts_csv_has_a_row_per_forecast_and_cutoff(rain):
    result = _run(rain, {"original": "probability", "degraded": "p_degraded"}, replicates=50)
    files = render_files(result)
    table = pd.read_csv(pd.io.common.BytesIO(files["forecasts.csv"]))
    assert len(table) == 2 * result.cutoffs.size
    assert list(table["forecast"].unique()) == ["original", "degraded"]
    assert table.groupby("forecast")["recommended"].sum().tolist() == [1, 1]
    mine = table[table["forecast"] == "original"]["mean_cost"].to_numpy()
    assert mine == pytest.approx(result.table["mean_cost"].to_numpy())


@pytest.mark.parametrize("rules", [False, True], ids=["costs", "operating rules"])
def test_a_later_forecast_is_priced_as_its_own_run_on_the_same_replicates(rain, rules):
    # common random numbers: with the run length fixed, the replicate rows do not depend on the
    # forecasts, so a later forecast's costs are those of a run of it alone (common practice)
    sections = {"simulation": {"block_days": 3}, "season": {"months": [4, 5, 6]}}
    if rules:
        sections["operations"] = {"crews": 2, "crews_out_on": "not_acting", "spoiled_on": "event",
                                  "day_rate": 1000, "work": 30, "deadline": "2016-06-30",
                                  "damages_per_day_late": 900}
    both = _run(rain, {"original": "probability", "degraded": "p_degraded"}, replicates=40, **sections)
    alone = _run(rain.assign(probability=rain["p_degraded"]), None, replicates=40, **sections)
    degraded = both.comparison.forecast("degraded")
    assert (degraded.model_cost == alone.model_cost).all()
    assert degraded.decision == alone.decision
    assert degraded.verdict == alone.verdict  # its verdict too, under the rules as under [costs]
    assert (both.baseline_cost["perfect"] == alone.baseline_cost["perfect"]).all()


def test_flip_applies_to_every_forecast(history_frame):
    # [event] flip turns each forecast into the complementary class's, exactly (decimals.complement)
    frame = history_frame.assign(p_other=np.round(history_frame["probability"] * 0.9, 2))
    scenario = _scenario({"ours": "probability", "other": "p_other"}, event={"flip": True})
    history = history_from_frame(frame, scenario, label="history.csv")
    assert history.forecast_names == ("ours", "other")
    assert (history.with_forecast(1).p == np.round(1 - frame["p_other"].to_numpy(), 2)).all()
    assert (history.p == np.round(1 - frame["probability"].to_numpy(), 2)).all()


# ------------------------------------------------------------------------------------------------
# the command line

def test_the_command_line_writes_the_comparison(write_history, write_scenario, history_frame, tmp_path):
    from test_cli import gonogo

    write_history(history_frame.assign(p_free=_degraded(history_frame["probability"].to_numpy(), 1.0, seed=5)))
    scenario = write_scenario(history={"validation_from": "2022-01-01"})
    scenario.write_text(scenario.read_text() + '\n[forecasts]\n"paid" = "probability"\n"free" = "p_free"\n')
    out = tmp_path / "out"
    result = gonogo("run", scenario, "--out", out, "--quiet")
    assert result.exit_code == 0, result.output
    assert (out / "forecasts.csv").exists()
    import json
    contents = json.loads((out / "summary.json").read_text())
    assert list(contents["forecasts"]) == ["paid", "free"]
    assert len(contents["forecast_pairs"]) == 1


def test_the_command_line_refuses_a_missing_forecast_in_one_line(write_history, write_scenario, history_frame,
                                                                 tmp_path):
    from test_cli import assert_refused, gonogo

    frame = history_frame.assign(p_free=history_frame["probability"].astype(object))
    frame.loc[3, "p_free"] = ""
    write_history(frame)
    scenario = write_scenario()
    scenario.write_text(scenario.read_text() + '\n[forecasts]\n"paid" = "probability"\n"free" = "p_free"\n')
    out = tmp_path / "out"
    assert_refused(gonogo("run", scenario, "--out", out), out,
                   'history.csv row 5, column "p_free": the probability is missing',
                   'missing_forecast = "drop_row"')


# ------------------------------------------------------------------------------------------------
# each forecast's own verdict (simulator.analysis.verdict: held-out seasons)

def _cost_loss_run(frame: pd.DataFrame, forecasts: dict[str, str], replicates: int = 20):
    """A run with the invented cost-loss table C/L = 0.3 (act costs 300 whatever happens, a miss
    1000; Thompson 1952, Murphy 1977) and ``forecasts``; the verdict does not use the replicates."""
    text = ('name = "cost-loss 0.3"\n[costs]\nhit = 300\nfalse_alarm = 300\nmiss = 1000\n'
            f"[simulation]\nreplicates = {replicates}\n[forecasts]\n"
            + "".join(f'"{name}" = "{column}"\n' for name, column in forecasts.items()))
    scenario = scenario_from_text(text, label="scenario.toml")
    return run_history(scenario, history_from_frame(frame, scenario, label="history.csv"))


@pytest.fixture(scope="module")
def rain_and_noise() -> pd.DataFrame:
    """Seattle wet days 2013-2015 with the honest logistic forecast and one of pure noise beside it."""
    frame = seattle_rain()
    return frame.assign(p_noise=with_noise_forecast(frame, seed=7)["probability"])


def test_the_main_forecasts_verdict_is_the_runs_verdict(rain_and_noise):
    s = summary(_cost_loss_run(rain_and_noise, {"skilled": "probability", "noise": "p_noise"}))
    assert s["forecasts"]["skilled"]["verdict"] == s["verdict"]
    assert set(s["forecasts"]["noise"]["verdict"]) == set(s["verdict"])


def test_noise_beside_a_skilled_forecast_is_not_worth_using_and_the_skilled_one_is(rain_and_noise):
    # on real Seattle rain at C/L = 0.3 the logistic forecast (ROC area about 0.76) beats the best
    # rule without it on each held-out year (as in tests/test_verdict.py); uniform noise cannot,
    # whatever its best cutoff in hindsight (Richardson 2000, actual against potential value)
    result = _cost_loss_run(rain_and_noise, {"noise": "p_noise", "skilled": "probability"})
    s = summary(result)
    assert s["forecasts"]["skilled"]["verdict"]["use_forecast"] is True
    assert s["forecasts"]["noise"]["verdict"]["use_forecast"] is False
    assert s["forecasts"]["noise"]["verdict"] == s["verdict"]  # listed first: the main forecast
    table = pd.read_csv(pd.io.common.BytesIO(render_files(result)["forecasts.csv"]))
    assert table.groupby("forecast", sort=False)["use_forecast"].agg(["min", "max"]).to_dict("index") == {
        "noise": {"min": False, "max": False}, "skilled": {"min": True, "max": True}}


def test_the_same_column_under_two_names_gets_two_equal_verdicts(rain_and_noise):
    # identity: the same probabilities on the same held-out seasons give the same verdict
    s = summary(_cost_loss_run(rain_and_noise, {"supplier": "probability", "same supplier": "probability"}))
    assert s["forecasts"]["supplier"]["verdict"] == s["forecasts"]["same supplier"]["verdict"]


def test_datapackage_describes_forecasts_csv_and_its_verdict_column(rain_and_noise, tmp_path):
    # the open Data Package / Table Schema standard, checked by its reference validator
    frictionless = pytest.importorskip("frictionless")
    files = render_files(_cost_loss_run(rain_and_noise, {"skilled": "probability", "noise": "p_noise"}))
    for name in ("forecasts.csv", "datapackage.json"):
        (tmp_path / name).write_bytes(files[name])
    package = json.loads(files["datapackage.json"])
    package["resources"] = [r for r in package["resources"] if r["path"] == "forecasts.csv"]
    (tmp_path / "datapackage.json").write_text(json.dumps(package))
    report = frictionless.validate(tmp_path / "datapackage.json")
    assert report.valid, report.flatten(["rowNumber", "fieldName", "type", "note"])[:5]
    fields = {f["name"]: f for f in package["resources"][0]["schema"]["fields"]}
    assert fields["use_forecast"]["type"] == "boolean"
    assert "forecasts.csv" in fields["use_forecast"]["description"]
    for field in fields.values():  # every column has its own words, not its name echoed
        assert field["description"].replace(" ", "_") != field["name"], field["name"]
