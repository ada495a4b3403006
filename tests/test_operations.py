"""Operating rules: the simpy model, its vectorised twin, and the run's operations block.

Reference values: the fixed-cost reduction is checked against the core engine (SeasonPricer), the
per-occasion cost-loss model of Thompson (1952), "On the operational deficiencies in categorical
weather forecasts", BAMS 33, 223-226, and Murphy (1977), "The value of climatological,
categorical and probabilistic forecasts in the cost-loss ratio situation", Mon. Wea. Rev. 105,
803-816, in its general 2x2 form. The small seasons are worked out by hand in the comments
(common practice, no source). The fast twin is checked against the simpy model, its slow oracle.
"""

from __future__ import annotations

import re
import tomllib
from datetime import date
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from simulator import read_history, read_scenario
from simulator.pricing.costs import SeasonPricer
from simulator.inputs.errors import InputError
from simulator.rules.operating_rules import COMPONENTS, REGULAR, make_rules
from simulator.rules.simpy_model import SimpyPricer, play_season
from simulator.rules.vectorised_model import OperationsPricer, play_seasons
from simulator.account.outputs import summary
from simulator.replay.resample import Resampler, season_calendar
from simulator.run import run_history
from simulator.inputs.history import history_from_frame
from simulator.inputs.scenario_tables import OperationsSection
from simulator.inputs.scenario_types import BASELINES

REPO = Path(__file__).resolve().parent.parent
RULES_DEMO = REPO / "scenarios" / "line_marking_rules.toml"
MONDAY = np.datetime64("2027-06-07")  # a Monday


def weekdays_from(start: np.datetime64, n: int, weekdays=(0, 1, 2, 3, 4)) -> np.ndarray:
    """The first ``n`` dates from ``start`` whose weekday (Monday = 0) is in ``weekdays``."""
    days = start + np.arange(4 * n + 7)
    keep = np.isin((days.astype(np.int64) + 3) % 7, weekdays)
    return days[keep][:n]


def section(**keys) -> OperationsSection:
    keys.setdefault("crews_out_on", "acting")
    keys.setdefault("spoiled_on", "no_event")
    keys.setdefault("day_rate", 100)
    return OperationsSection(**keys)


def play(sec: OperationsSection, dates, wish, spoiled=None, stopped=None, season_weekdays=None):
    """Play one season with the simpy model, check the fast twin gives the same, return it."""
    n = len(dates)
    wish = np.asarray(wish, bool)
    spoiled = np.zeros(n, bool) if spoiled is None else np.asarray(spoiled, bool)
    stopped = np.zeros(n, bool) if stopped is None else np.asarray(stopped, bool)
    kwargs = {} if season_weekdays is None else {"season_weekdays": season_weekdays}
    rules = make_rules(sec, dates, **kwargs)
    slow = play_season(rules, wish, spoiled, stopped)
    fast = play_seasons(rules, lambda t: wish[None, t : t + 1], spoiled[None], stopped[None], 1)
    for key, value in fast.items():
        assert value[0, 0] == slow[key], key
    return slow


# ------------------------------------------------------------------------------------------------
# hand-computable seasons, one rule at a time


def test_day_out_standby_and_spoiled_day_are_priced_per_crew():
    # 2 crews, day_rate 100, standby_rate 40, spoilage_cost 30, no backlog limit, Mon-Fri:
    #   Mon out, dry   -> productive 2 x 100 = 200
    #   Tue out, wet   -> spoiled labour 2 x 100 = 200, spoilage 2 x 30 = 60
    #   Wed standby    -> 2 x 40 = 80
    #   Thu out, dry   -> productive 200
    #   Fri standby (wet, nothing spoiled) -> 80
    # total 400 + 200 + 60 + 160 = 820
    out = play(section(crews=2, standby_rate=40, spoilage_cost=30), weekdays_from(MONDAY, 5),
               wish=[1, 1, 0, 1, 0], spoiled=[0, 1, 0, 0, 1])
    assert (out["productive_labour_cost"], out["spoiled_labour_cost"], out["spoilage_cost"],
            out["standby_cost"]) == (400, 200, 60, 160)
    assert out["total_cost"] == 820
    assert (out["days_out"], out["spoiled_days"], out["standby_days"]) == (3, 1, 2)


def test_work_is_done_crew_by_crew_and_crews_are_released_when_done():
    # 2 crews, 5 crew-days of work, half a day's work lost on a spoiled day, out every day:
    #   Mon dry: 2 x 1 -> 3 left;  Tue wet: 2 x 0.5 -> 2 left;  Wed dry: 2 -> 0 left, done Wednesday
    #   Thu, Fri: released, no cost.  productive 2 days x 2 x 100 = 400, spoiled labour 200,
    #   spoilage 1 day x 2 x 30 = 60; total 660
    out = play(section(crews=2, work=5, work_lost_when_spoiled=0.5, spoilage_cost=30),
               weekdays_from(MONDAY, 5), wish=[1] * 5, spoiled=[0, 1, 0, 0, 0])
    assert out["completion_index"] == 2
    assert out["work_done"] == 5 and out["work_left"] == 0
    assert out["days_out"] == 3 and out["standby_days"] == 0
    assert out["total_cost"] == 660


def test_days_late_are_calendar_days_across_the_weekend():
    # 1 crew, 6 crew-days, deadline Friday 11 June, out every weekday, dry: done on the 6th
    # working day, Monday 14 June: 3 calendar days late x 500 = 1500; labour 6 x 100 = 600
    dates = weekdays_from(MONDAY, 8)
    out = play(section(work=6, deadline="2027-06-11", damages_per_day_late=500), dates, wish=[1] * 8)
    assert str(dates[out["completion_index"]]) == "2027-06-14"
    assert out["days_late"] == 3
    assert out["late_damages_cost"] == 1500 and out["total_cost"] == 2100


def test_unfinished_work_is_priced_and_late_to_the_day_after_the_season():
    # 1 crew, 10 crew-days, 5 dry weekdays out: 5 done, 5 left x unfinished_cost 70 = 350.
    # deadline Thursday 10 June; the season's last occasion is Friday 11 June, so the work is late
    # to Saturday 12 June: 2 days x 500 = 1000. labour 500; total 1850
    out = play(section(work=10, deadline="2027-06-10", damages_per_day_late=500, unfinished_cost=70),
               weekdays_from(MONDAY, 5), wish=[1] * 5)
    assert out["completion_index"] == -1 and out["work_left"] == 5
    assert out["unfinished_work_cost"] == 350 and out["days_late"] == 2
    assert out["total_cost"] == 1850


def test_saturday_overtime_catches_up_when_behind():
    # Mon-Sat season, Mon-Fri working week, Saturday overtime at 1.5 x 100; 1 crew, 9 crew-days,
    # no deadline (target: the last occasion, Saturday 19 June). Standby Tue and Wed (40 each).
    #   week 1: Mon out (8 left), Tue, Wed standby, Thu (7), Fri (6)
    #   Sat 12: regular days still to come = 5 (14-18 June) < 6 left -> overtime (5 left)
    #   week 2: Mon-Fri out -> done Friday 18 June; Saturday 19 not needed
    # productive 8 x 100 = 800, standby 80, overtime 150; total 1030
    dates = weekdays_from(MONDAY, 12, weekdays=(0, 1, 2, 3, 4, 5))
    out = play(section(work=9, standby_rate=40, overtime_weekdays=["sat"]), dates,
               wish=[1, 0, 0, 1, 1, 1, 1, 1, 1, 1, 1, 1], season_weekdays=("mon", "tue", "wed", "thu",
                                                                       "fri", "sat"))
    assert out["overtime_days"] == 1 and out["overtime_cost"] == 150
    assert str(dates[out["completion_index"]]) == "2027-06-18"
    assert out["total_cost"] == 1030


def test_overtime_stops_at_the_weekly_limit_and_waits_for_a_go_forecast():
    # 1 crew, 7 crew-days, Sat and Sun overtime, at most 1 a week. Mon-Fri out: 2 left.
    # Sat: 0 regular days to come, behind, but the forecast says no -> not worked, costs nothing;
    # Sun: behind, forecast go -> worked (1 left). One week only: 1 crew-day unfinished.
    # With the Saturday forecast a go instead, Saturday is worked and Sunday is over the limit.
    dates = weekdays_from(MONDAY, 7, weekdays=range(7))
    week = ("mon", "tue", "wed", "thu", "fri", "sat", "sun")
    sec = section(work=7, overtime_weekdays=["sat", "sun"], max_overtime_days_per_week=1)
    out = play(sec, dates, wish=[1, 1, 1, 1, 1, 0, 1], season_weekdays=week)
    assert out["overtime_days"] == 1 and out["work_left"] == 1 and out["standby_days"] == 0
    out = play(sec, dates, wish=[1] * 7, season_weekdays=week)
    assert out["overtime_days"] == 1 and out["work_left"] == 1


def test_retention_sends_the_crews_out_after_the_standby_limit():
    # max 2 standby days in a row, forecast never says go, 1 crew, Mon-Fri:
    #   Mon standby, Tue standby, Wed out (retention), Thu standby, Fri standby
    # labour 100 + standby 4 x 40 = 260
    out = play(section(standby_rate=40, max_standby_days=2), weekdays_from(MONDAY, 5), wish=[0] * 5)
    assert (out["days_out"], out["retention_days"], out["standby_days"]) == (1, 1, 4)
    assert out["total_cost"] == 260


def test_safety_stop_overrules_the_forecast_and_the_retention_rule():
    # as above, with the safety stop on Wednesday: Mon, Tue standby, Wed kept in by the stop
    # (counted: retention would have sent them out), Thu out by retention, Fri standby.
    out = play(section(standby_rate=40, max_standby_days=2), weekdays_from(MONDAY, 5), wish=[0] * 5,
               stopped=[0, 0, 1, 0, 0])
    assert (out["days_out"], out["safety_stop_days"], out["standby_days"]) == (1, 1, 4)
    # a stop on a day the forecast already keeps the crews in decides nothing
    out = play(section(), weekdays_from(MONDAY, 5), wish=[1, 0, 1, 1, 1], stopped=[0, 1, 1, 0, 0])
    assert out["safety_stop_days"] == 1 and out["days_out"] == 3


def test_holidays_are_neither_worked_nor_paid():
    dates = weekdays_from(MONDAY, 5)
    out = play(section(holidays=["2027-06-09"]), dates, wish=[1] * 5)
    assert out["days_out"] == 4 and out["total_cost"] == 400


# ------------------------------------------------------------------------------------------------
# the fast twin against the simpy model, and conservation


@st.composite
def seasons(draw):
    """Small random seasons: Mon-Fri, Mon-Sat or Mon-Sun occasions, every rule on or off."""
    n = draw(st.integers(5, 21))
    n_weekdays = draw(st.sampled_from([5, 6, 7]))
    start = MONDAY + draw(st.integers(0, 6))
    dates = weekdays_from(start, n, tuple(range(n_weekdays)))
    work = draw(st.one_of(st.none(), st.sampled_from([1.0, 2.5, 4.0, 7.0, 11.0, 20.0, 35.0])))
    keys = {"crews": draw(st.integers(1, 3)), "work": work,
            "work_lost_when_spoiled": draw(st.sampled_from([0.0, 0.3, 0.5, 1.0])),
            "standby_rate": 40, "spoilage_cost": 25,
            "max_standby_days": draw(st.one_of(st.none(), st.integers(1, 3)))}
    if draw(st.booleans()):
        keys["holidays"] = [str(dates[draw(st.integers(0, n - 1))])]
    if work is not None:
        keys["unfinished_cost"] = 70
        if draw(st.booleans()):
            keys["deadline"] = str(dates[draw(st.integers(0, n - 1))])
            keys["damages_per_day_late"] = 300
        if n_weekdays > 5:
            keys["overtime_weekdays"] = ["sat", "sun"][: n_weekdays - 5]
            keys["max_overtime_days_per_week"] = draw(st.integers(1, 2))
    n_rep, n_lanes = 2, 3
    flags = st.lists(st.booleans(), min_size=n, max_size=n)
    wish = np.array([[draw(flags) for _ in range(n_lanes)] for _ in range(n_rep)])
    spoiled = np.array([draw(flags) for _ in range(n_rep)])
    stopped = np.array([draw(st.lists(st.sampled_from([False, False, False, True]), min_size=n,
                                      max_size=n)) for _ in range(n_rep)])
    names = ("mon", "tue", "wed", "thu", "fri", "sat", "sun")[:n_weekdays]
    return section(**keys), dates, names, wish, spoiled, stopped


@settings(max_examples=150, deadline=None)
@given(seasons())
def test_fast_twin_equals_simpy_model_and_conserves_work_and_days(case):
    sec, dates, names, wish, spoiled, stopped = case
    rules = make_rules(sec, dates, names)
    fast = play_seasons(rules, lambda t: wish[:, :, t], spoiled, stopped, wish.shape[1])
    for r in range(wish.shape[0]):
        for lane in range(wish.shape[1]):
            slow = play_season(rules, wish[r, lane], spoiled[r], stopped[r])
            for key, value in fast.items():
                assert value[r, lane] == slow[key], key
            # conservation: crew-days done + left = work; days out + standby = working days engaged
            if sec.work is not None:  # exact: work is counted in whole thousandths of a crew-day
                assert slow["done_units"] + slow["left_units"] == rules.work
                assert slow["work_done"] + slow["work_left"] == pytest.approx(sec.work, rel=1e-12)
            end = slow["completion_index"] if slow["completion_index"] >= 0 else len(dates) - 1
            engaged = int((rules.kind[: end + 1] == REGULAR).sum())
            assert slow["days_out"] + slow["standby_days"] == engaged
            parts = sum(slow[f"{name}_cost"] for name in COMPONENTS)
            assert parts == pytest.approx(slow["total_cost"], rel=1e-12)


# ------------------------------------------------------------------------------------------------
# pricers on replicate seasons


@pytest.fixture(scope="module")
def small_history() -> pd.DataFrame:
    """Four invented years of daily forecasts, outcomes drawn from them (calibrated by construction)."""
    rng = np.random.default_rng(20270415)
    dates = pd.date_range("2021-01-01", "2024-12-31", freq="D")
    p = np.round(rng.random(dates.size), 2)
    return pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "probability": p,
                         "outcome": (rng.random(dates.size) < p).astype(int)})


def _history_and_rows(frame, scenario, n_rep=12):
    history = history_from_frame(frame, scenario, label="history.csv")
    calendar = season_calendar(history, scenario.season)
    rows = Resampler(history, calendar, 3.0, 10).draw(np.random.default_rng(5), n_rep)
    return scenario, history, calendar, rows


@pytest.mark.parametrize("out_on", ["acting", "not_acting"])
def test_fixed_cost_rules_reproduce_the_core_costs_exactly(small_history, make_scenario, out_on):
    # No work limit, deadline, overtime, retention or safety stop: every occasion costs a fixed
    # amount (Thompson 1952; Murphy 1977). 3 crews, day 800, standby 400, spoilage 500 a crew:
    #   out and fine 2400; out and spoiled 2400 + 1500 = 3900; standby 1200 whatever happens.
    # Crews out on acting, spoiled on no event: hit 2400, false alarm 3900, miss = correct neg. 1200.
    # Crews out on not acting, spoiled on the event: hit = false alarm 1200, miss 3900, c.n. 2400.
    acting = out_on == "acting"
    costs = ({"hit": 2400, "false_alarm": 3900, "miss": 1200, "correct_negative": 1200} if acting
             else {"hit": 1200, "false_alarm": 1200, "miss": 3900, "correct_negative": 2400})
    ops = {"crews": 3, "crews_out_on": out_on, "spoiled_on": "no_event" if acting else "event",
           "day_rate": 800, "standby_rate": 400, "spoilage_cost": 500}
    scenario = make_scenario(costs=costs, season={"months": [5, 6, 7]}, operations=ops)
    scenario, history, calendar, rows = _history_and_rows(small_history, scenario)
    core = SeasonPricer(history, scenario.cutoffs, scenario.costs)(rows)
    rules = OperationsPricer(history, calendar, scenario.cutoffs, scenario)(rows)
    np.testing.assert_array_equal(rules.model, core.model)
    np.testing.assert_array_equal(rules.baselines, core.baselines)
    np.testing.assert_array_equal(rules.n_events, core.n_events)


RULES = {"crews": 2, "crews_out_on": "acting", "spoiled_on": "no_event", "day_rate": 500,
         "standby_rate": 200, "spoilage_cost": 300, "work_lost_when_spoiled": 0.5, "work": 70,
         "deadline": "2025-06-20", "damages_per_day_late": 1000, "unfinished_cost": 900,
         "workdays": ["mon", "tue", "wed", "thu", "fri"], "holidays": ["2025-05-26"],
         "overtime_weekdays": ["sat"], "max_standby_days": 2, "safety_stop_at": 0.9}
SEASON = {"months": [5, 6, 7], "weekdays": ["mon", "tue", "wed", "thu", "fri", "sat"]}


def test_fast_pricer_equals_simpy_pricer_on_replicate_seasons(small_history, make_scenario):
    scenario = make_scenario(season=SEASON, decision={"cutoffs": [0.0, 1.0, 0.1]}, operations=RULES)
    scenario, history, calendar, rows = _history_and_rows(small_history, scenario, n_rep=3)
    fast = OperationsPricer(history, calendar, scenario.cutoffs, scenario)(rows)
    slow = SimpyPricer(history, calendar, scenario.cutoffs, scenario)(rows)
    np.testing.assert_array_equal(fast.model, slow.model)
    np.testing.assert_array_equal(fast.baselines, slow.baselines)
    for key, value in fast.extras.items():
        np.testing.assert_array_equal(value, slow.extras[key], err_msg=key)


def test_user_process_charges_and_closes_days(small_history, make_scenario):
    """A user-written simpy process sees each working day and may charge money or close a day."""

    def machine_hire(env, site):
        while True:
            report = yield site.day_done
            if report.out:
                site.charge(150.0)

    def closed_first_week(env, site):
        site.closed.update(range(6))
        yield env.timeout(0)

    scenario = make_scenario(season=SEASON, decision={"cutoffs": [0.0, 1.0, 0.5]}, operations=RULES)
    scenario, history, calendar, rows = _history_and_rows(small_history, scenario, n_rep=2)
    plain = SimpyPricer(history, calendar, scenario.cutoffs, scenario)(rows)
    block = OperationsPricer(history, calendar, scenario.cutoffs, scenario, [machine_hire])(rows)
    worked = block.extras["days_out"] + block.extras["overtime_days"]
    np.testing.assert_array_equal(block.extras["other_cost"], 150.0 * worked)
    np.testing.assert_array_equal(block.model, plain.model + 150.0 * worked[:, :3])
    closed = SimpyPricer(history, calendar, scenario.cutoffs, scenario, [closed_first_week])(rows)
    assert (closed.extras["closed_days"][:, 0] > 0).all()  # cutoff 0: the crews wanted out every day


def test_rules_that_need_missing_forecasts_or_dates_are_input_errors(small_history, make_scenario):
    for rules, message in [({**RULES, "overtime_weekdays": ["sun"]}, '"sun" is not among the [season]'),
                           ({**RULES, "deadline": "2025-09-01"}, "outside the priced season")]:
        scenario = make_scenario(season=SEASON, operations=rules)
        scenario, history, calendar, _ = _history_and_rows(small_history, scenario, n_rep=1)
        with pytest.raises(InputError, match=re.escape(message)):
            OperationsPricer(history, calendar, scenario.cutoffs, scenario)


def test_scenario_keys_are_checked(make_scenario):
    with pytest.raises(InputError, match='unknown key "dedline"; did you mean "deadline"'):
        make_scenario(operations={**RULES, "dedline": "2025-06-20"})
    without_work = {k: v for k, v in RULES.items() if k != "work"}
    with pytest.raises(InputError, match="needs the amount of work"):
        make_scenario(operations=without_work)


# ------------------------------------------------------------------------------------------------
# a run with operating rules, and the demo


def test_run_reports_operations_components_that_add_up(small_history, make_scenario):
    scenario = make_scenario(season=SEASON, decision={"cutoffs": [0.0, 1.0, 0.05]}, operations=RULES,
                             simulation={"replicates": 40, "seed": 3})
    history = history_from_frame(small_history, scenario, label="history.csv")
    result = run_history(scenario, history)
    ops = result.operations
    parts = sum(ops.extras[f"{name}_cost"] for name in COMPONENTS)
    np.testing.assert_allclose(parts[:, : result.cutoffs.size], result.model_cost, rtol=1e-12)
    block = summary(result)["operations"]
    at = block["at_recommended_cutoff"]
    assert at["mean_components"]["total_cost"] == pytest.approx(result.strategies["model"].mean)
    assert sum(share for _, share in at["completion_by_week"]) == pytest.approx(1.0)
    assert set(block["baselines"]) == {"never_act", "always_act", "persistence", "seasonal_rate", "perfect"}
    assert "mean_late_damages_cost" in result.table.columns
    # without [operations] the summary has no operations block
    plain = make_scenario(season=SEASON, simulation={"replicates": 20})
    assert "operations" not in summary(run_history(plain, history_from_frame(small_history, plain)))


def test_played_seasons_priced_again_equal_a_run_at_those_prices(small_history, make_scenario):
    """How the crews work does not depend on the prices, so the kept day counts priced again at
    other prices give bit for bit what a run at those prices gives (a property of the model as
    stated in rules/operating_rules.py: no rule reads a price)."""
    keys = dict(season=SEASON, decision={"cutoffs": [0.0, 1.0, 0.05]}, simulation={"replicates": 30, "seed": 5})
    base = run_history(*_run_inputs(small_history, make_scenario(operations=RULES, **keys)))
    np.testing.assert_array_equal(base.operations.season_cost_at()[:, : base.cutoffs.size], base.model_cost)
    moved = {"day_rate": 650, "standby_rate": 90, "spoilage_cost": 0, "damages_per_day_late": 2500,
             "unfinished_cost": 1200.5}
    other = run_history(*_run_inputs(small_history, make_scenario(operations={**RULES, **moved}, **keys)))
    priced = base.operations.season_cost_at(base.operations.rules.prices.moved(**moved))
    np.testing.assert_array_equal(priced[:, : base.cutoffs.size], other.model_cost)
    for i, name in enumerate(BASELINES):
        np.testing.assert_array_equal(priced[:, base.cutoffs.size + i], other.baseline_cost[name])


def _run_inputs(frame, scenario):
    return scenario, history_from_frame(frame, scenario, label="history.csv")


def test_rules_demo_documents_every_key_and_runs():
    text = RULES_DEMO.read_text()
    written = tomllib.loads(text)["operations"]
    assert set(written) == set(OperationsSection.model_fields)  # every key shown in the demo
    scenario = read_scenario(RULES_DEMO)
    result = run_history(scenario, read_history(scenario), replicates=30)
    block = summary(result)["operations"]
    assert block["working_days"] == 150  # 152 weekdays April-October 2027, less 2 holidays
    assert block["deadline"] == "2027-09-24"


def test_a_season_holiday_is_no_working_day():
    # 2027-06-15 is a Tuesday inside the rules demo's season and not one of its [operations] holidays
    scenario = read_scenario(RULES_DEMO)
    season = scenario.season.model_copy(update={"holidays": (date(2027, 6, 15),)})
    scenario = scenario.model_copy(update={"season": season})
    result = run_history(scenario, read_history(scenario), replicates=30)
    assert np.datetime64("2027-06-15") not in result.calendar.dates
    assert summary(result)["operations"]["working_days"] == 149  # the demo's 150, less that day
