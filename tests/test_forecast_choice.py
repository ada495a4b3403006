"""Which forecast to use and whether it pays at its price: the comparison told once (issue 13).

The arithmetic of a price is the definition of the issue (mean saving minus the price; the share of
seasons in which the saving exceeds it), checked against plain numpy on the pair's own replicate
savings. The runs are on the real Seattle wet days of tests/realdata.py (vega-datasets' Seattle
weather, 2013-2015) with the honest logistic forecast and a copy degraded on the logit scale,
which loses information and so is worth less at every cost-loss ratio (Murphy 1977, "The value of
climatological, categorical and probabilistic forecasts in the cost-loss ratio situation", Monthly
Weather Review 105, 803-816, section 4). The wording's rules are ours
(simulator/account/forecast_choice.py), checked for consistency with summary.json.
"""

from __future__ import annotations

import copy
import json
import re
from html import unescape

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from realdata import seattle_rain
from simulator.account.findings import account
from simulator.account.outputs import render_files, summary
from simulator.analysis.forecasts import ForecastPair
from simulator.cli import app
from simulator.inputs.errors import InputError
from simulator.inputs.history import history_from_frame
from simulator.inputs.scenario import scenario_from_text
from simulator.run import run_history

from conftest import scenario_toml


def _degraded(p: np.ndarray, sd: float, seed: int) -> np.ndarray:
    """``p`` with normal noise of standard deviation ``sd`` added on the logit scale, 2 decimals."""
    q = np.clip(p, 0.005, 0.995)
    logit = np.log(q / (1 - q)) + np.random.default_rng(seed).normal(0.0, sd, q.size)
    return np.round(1 / (1 + np.exp(-logit)), 2)


# the cost-loss table C/L = 0.3 (acting costs 300 whatever happens, a miss 1000; Thompson 1952,
# Murphy 1977), at which the honest Seattle forecast beats the best rule without it on held-out
# years (tests/test_forecasts.py)
COST_LOSS = {"hit": 300, "false_alarm": 300, "miss": 1000, "correct_negative": 0}


def _text(forecasts: dict[str, str], prices: dict[str, float] | None = None, replicates: int = 200) -> str:
    text = scenario_toml(simulation={"replicates": replicates}, costs=COST_LOSS)
    text += "\n[forecasts]\n" + "".join(f'"{n}" = "{c}"\n' for n, c in forecasts.items())
    if prices:
        text += "\n[forecast_prices]\n" + "".join(f'"{n}" = {v}\n' for n, v in prices.items())
    return text


def _run(frame: pd.DataFrame, forecasts: dict[str, str], prices: dict[str, float] | None = None):
    scenario = scenario_from_text(_text(forecasts, prices), label="scenario.toml")
    return run_history(scenario, history_from_frame(frame, scenario, label="history.csv"))


@pytest.fixture(scope="module")
def rain() -> pd.DataFrame:
    frame = seattle_rain()
    return frame.assign(p_garbled=_degraded(frame["probability"].to_numpy(), 2.0, seed=13))


@pytest.fixture(scope="module")
def free_first(rain):
    """The garbled copy listed first (the one in use), the honest forecast second, no prices."""
    return _run(rain, {"free": "p_garbled", "paid": "probability"})


@pytest.fixture(scope="module")
def close(rain):
    """A copy garbled less (sd 0.8 on the logit scale), listed first: both forecasts are worth
    using on held-out years, and the honest one is cheaper on average but not in 95% of seasons."""
    frame = rain.assign(p_blurred=_degraded(rain["probability"].to_numpy(), 0.8, seed=13))
    return frame, _run(frame, {"free": "p_blurred", "paid": "probability"})


# ------------------------------------------------------------------------------------------------
# the price of a forecast: arithmetic

SAVINGS = np.array([-1500.0, 200.0, 900.0, 2600.0, 3100.0, 4000.0, 4000.0, 5200.0, 7000.0, 9800.0])  # invented


def test_at_a_price_the_net_saving_is_the_saving_less_the_price_in_every_season():
    # issue 13's definition: mean saving minus the price, and the share of seasons whose saving
    # exceeds the price (a tie is no gain), here against plain numpy on the same savings
    pair = ForecastPair(better="paid", other="free", saving=SAVINGS, prob_saving=0.9)
    at = pair.as_dict({"paid": 4000.0})["at_prices"]
    net = SAVINGS - 4000.0
    assert at["better_price"] == 4000.0 and at["other_price"] == 0.0
    assert at["net_saving"]["mean"] == pytest.approx(SAVINGS.mean() - 4000.0)
    assert [at["net_saving"]["p05"], at["net_saving"]["p95"]] == pytest.approx(list(np.quantile(net, [0.05, 0.95])))
    assert at["prob_pays"] == pytest.approx(np.mean(SAVINGS > 4000.0))  # the two seasons of exactly 4000 do not pay
    assert at["pays_on_average"] == bool(SAVINGS.mean() > 4000.0)


def test_a_price_on_the_other_forecast_adds_to_the_saving_and_two_prices_count_their_difference():
    pair = ForecastPair(better="paid", other="free", saving=SAVINGS, prob_saving=0.9)
    assert pair.at_prices({"free": 1000.0})["net_saving"]["mean"] == pytest.approx(SAVINGS.mean() + 1000.0)
    both = pair.at_prices({"free": 1000.0, "paid": 2500.0})
    assert both["net_saving"]["mean"] == pytest.approx(SAVINGS.mean() - 1500.0)
    assert both["prob_pays"] == pytest.approx(np.mean(SAVINGS > 1500.0))


def test_without_prices_the_pair_has_no_price_block():
    pair = ForecastPair(better="paid", other="free", saving=SAVINGS, prob_saving=0.9)
    assert "at_prices" not in pair.as_dict()
    assert "at_prices" not in pair.as_dict({"someone else": 10.0})


# ------------------------------------------------------------------------------------------------
# which forecast to use

def _finding(s: dict, key: str) -> dict:
    return next(f for f in s["account"] if f["key"] == key)


def test_the_better_forecast_is_chosen_and_the_switch_priced_as_summary_json_says(free_first):
    s = summary(free_first)
    pair = s["forecast_pairs"][0]
    assert pair["better"] == "paid" and pair["saving"]["prob_saving"] >= 0.95  # as in test_forecasts.py
    assert s["forecasts"]["paid"]["verdict"]["use_forecast"] is True
    assert s["forecasts"]["free"]["verdict"]["use_forecast"] is False  # garbled too much
    choice = _finding(s, "forecast_choice")
    assert choice["text"].startswith("\u201cpaid\u201d at its own cutoff")
    assert choice["text"].endswith("(\u201cfree\u201d is not worth using)")
    assert choice["first"] is True
    switch = _finding(s, "forecast_switch")
    assert switch["label"] == "Switching to \u201cpaid\u201d"
    assert "saves " in switch["text"] and "against \u201cfree\u201d" in switch["text"]
    assert not any(f["key"] == "forecast_price" for f in s["account"])  # no prices given
    # one row per forecast, beside the recommendation, not in it
    rows = [f for f in s["account"] if f["key"].startswith("forecast:")]
    assert [f["key"] for f in rows] == ["forecast:free", "forecast:paid"] and not any(f["first"] for f in rows)


def test_a_switch_that_gains_in_fewer_than_95_percent_of_seasons_is_called_unsure(close):
    s = summary(close[1])
    assert all(e["verdict"]["use_forecast"] for e in s["forecasts"].values())
    pair = s["forecast_pairs"][0]
    assert pair["better"] == "paid" and pair["saving"]["mean"] > 0 and pair["saving"]["p05"] < 0
    choice = _finding(s, "forecast_choice")
    assert choice["text"].startswith("\u201cfree\u201d, the one in use: no clear case for switching")
    assert "does not beat \u201cfree\u201d with confidence" in choice["sentence"]
    assert "no price pays in 95% of" in _finding(s, "forecast_switch")["sentence"]


def test_a_price_above_what_the_forecast_is_worth_keeps_the_free_one(close):
    frame, result = close
    worth = result.comparison.pair("free", "paid").as_dict()["worth_up_to"]
    price = round(1.5 * worth)  # above what it saves against "free", below what it saves against the rules
    s = summary(_run(frame, {"free": "p_blurred", "paid": "probability"}, prices={"paid": price}))
    at = s["forecast_pairs"][0]["at_prices"]
    assert at["net_saving"]["mean"] == pytest.approx(worth - price)
    assert at["pays_on_average"] is False
    assert s["forecasts"]["paid"]["price"] == price and "price" not in s["forecasts"]["free"]
    choice = _finding(s, "forecast_choice")
    assert choice["text"].startswith("\u201cfree\u201d") and choice["text"].endswith("does not pay at its price")
    assert "loses " in _finding(s, "forecast_price")["text"]


def test_a_price_well_below_what_the_forecast_is_worth_in_95_percent_of_seasons_still_switches(rain, free_first):
    confident = free_first.comparison.pair("free", "paid").as_dict()["worth_up_to_confident"]
    assert confident > 0
    s = summary(_run(rain, {"free": "p_garbled", "paid": "probability"}, prices={"paid": round(confident / 2)}))
    assert s["forecast_pairs"][0]["at_prices"]["prob_pays"] >= 0.95
    assert _finding(s, "forecast_choice")["text"].startswith("\u201cpaid\u201d")
    assert "saving exceeds the price in" in _finding(s, "forecast_price")["text"]


def test_the_same_column_under_two_names_keeps_the_first_and_saves_nothing(rain):
    s = summary(_run(rain, {"supplier": "probability", "same supplier": "probability"}))
    assert _finding(s, "forecast_choice")["text"].endswith("saves nothing against it at these costs")


def _swap(s: dict, key: str, a: str, b: str) -> dict:
    out = copy.deepcopy(s)
    out["forecasts"][a][key], out["forecasts"][b][key] = s["forecasts"][b][key], s["forecasts"][a][key]
    return out


def test_a_better_skill_score_that_saves_less_is_said_once(free_first):
    s = summary(free_first)
    assert s["forecasts"]["paid"]["brier_skill_score"] > s["forecasts"]["free"]["brier_skill_score"]
    assert account(s).get("forecast_skill") is None  # skill and money agree on the real run
    swapped = account(_swap(s, "brier_skill_score", "free", "paid"))  # the cheaper one now scores worse
    said = swapped.get("forecast_skill")
    assert said is not None and said.sentence.startswith("\u201cfree\u201d has the better Brier skill score")
    assert sum("Brier skill score" in f.sentence for f in swapped.findings) == 1


def test_no_forecast_worth_using_recommends_none(free_first):
    s = copy.deepcopy(summary(free_first))
    for entry in s["forecasts"].values():
        entry["verdict"]["use_forecast"] = False
    assert account(s).get("forecast_choice").text.startswith("none of the 2")


def test_a_price_above_the_verdicts_saving_against_the_best_rule_is_not_worth_using(rain, free_first):
    # the verdict's 90% interval of the saving against the best rule without a forecast must clear
    # the price: here it does not, and the other forecast is not worth using either
    p05 = summary(free_first)["forecasts"]["paid"]["verdict"]["saving_against_best_rule"]["p05"]
    assert p05 > 0
    s = summary(_run(rain, {"free": "p_garbled", "paid": "probability"}, prices={"paid": round(p05) + 1}))
    told = account(s)
    assert "worth using: not at its price" in told.get("forecast:paid").text
    assert told.get("forecast_choice").text.startswith("none of the 2")
    assert "after its price" in told.get("forecast_choice").text


def test_one_forecast_has_no_comparison_findings_and_no_section(rain):
    scenario = scenario_from_text(scenario_toml(simulation={"replicates": 50}), label="scenario.toml")
    result = run_history(scenario, history_from_frame(rain, scenario, label="history.csv"))
    s = summary(result)
    assert not any(f["key"].startswith("forecast") for f in s["account"])
    assert 'id="forecasts"' not in render_files(result)["report.html"].decode()


# ------------------------------------------------------------------------------------------------
# the report's section and the terminal

def _text_of(html: str) -> str:
    return " ".join(unescape(re.sub(r"<[^>]+>", " ", html)).split())


def test_the_report_has_the_section_with_table_chart_and_the_accounts_sentences(free_first):
    files = render_files(free_first)
    html = files["report.html"].decode()
    section = html.split('<section id="forecasts">', 1)[1].split("</section>", 1)[0]
    s = json.loads(files["summary.json"])
    switch = " ".join(_finding(s, "forecast_switch")["sentence"].split())
    assert switch in _text_of(section)
    assert section.count("<tr") == 1 + 2  # the header and one row per forecast
    assert section.count("<img") == 2  # the value curves, in the wide and the narrow layout
    # said once: the switch is said in the section, the choice in the recommendation
    advice = _text_of(html.split('<section id="advice">', 1)[1].split("</section>", 1)[0])
    assert switch not in advice
    assert " ".join(_finding(s, "forecast_choice")["sentence"].split()) in advice


def test_hostile_forecast_names_are_plain_text_in_the_report(rain):
    result = _run(rain.assign(p_other=rain["probability"]), {"<b>ours</b>\\u001b[31m": "probability",
                                                           "their's & co": "p_other"})
    html = render_files(result)["report.html"].decode()
    assert "<b>ours</b>" not in html and "&lt;b&gt;ours&lt;/b&gt;" in html
    assert "their&#39;s &amp; co" in html


def test_the_command_line_prints_the_choice_and_the_price(rain, tmp_path):
    rain.to_csv(tmp_path / "history.csv", index=False)
    (tmp_path / "s.toml").write_text(_text({"free": "p_garbled", "paid": "probability"}, {"paid": 1000}, replicates=60))
    result = CliRunner().invoke(app, ["run", str(tmp_path / "s.toml"), "--history", str(tmp_path / "history.csv"),
                                      "--out", str(tmp_path / "out")])
    assert result.exit_code == 0, result.output
    flat = " ".join(result.output.split())
    assert "Forecast to use" in flat and "Switching to" in flat and "After the prices" in flat


# ------------------------------------------------------------------------------------------------
# the scenario key

@pytest.mark.parametrize("prices, message", [
    ('"paid" = -5', '[forecast_prices] "paid": must be money per season, a number from 0 to 1e12 (got -5)'),
    ('"paid" = "a lot"', '[forecast_prices] "paid": must be money per season'),
    ('"paid" = nan', '[forecast_prices] "paid": must be money per season'),
    ('"payd" = 10', '[forecast_prices]: "payd" is not a forecast of [forecasts]; did you mean "paid"?'),
])
def test_a_wrong_price_is_refused_in_one_line_naming_the_key(prices, message):
    text = _text({"free": "a", "paid": "b"}) + f"\n[forecast_prices]\n{prices}\n"
    with pytest.raises(InputError) as caught:
        scenario_from_text(text, label="s.toml")
    assert str(caught.value).startswith("s.toml " + message) and "\n" not in str(caught.value)


def test_a_price_without_forecasts_is_refused():
    text = scenario_toml() + '\n[forecast_prices]\n"paid" = 10\n'
    with pytest.raises(InputError, match=r'\[forecast_prices\]: "paid": a price compares several forecasts'):
        scenario_from_text(text, label="s.toml")
