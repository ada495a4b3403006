"""The scenario file: the break-even probability, the cutoff grid, and errors worded for users."""

from __future__ import annotations

import math

import numpy as np
import pytest

from simulator.inputs.errors import InputError
from simulator.inputs.scenario import cutoff_grid, read_scenario, scenario_from_text
from simulator.inputs.scenario_costs import Costs, break_even_probability, cost_warnings

# ------------------------------------------------------------------------------------------------
# break-even probability (theoretical_cutoff)


def test_break_even_of_the_example_costs_is_0_45_exactly(make_scenario):
    # Elkan, C. (2001), "The foundations of cost-sensitive learning", IJCAI-01: act iff
    # p >= (c_fa - c_cn) / ((c_fa - c_cn) + (c_m - c_h)) = 1800 / (1800 + 2200) = 0.45
    costs = make_scenario().costs
    assert (costs.hit, costs.false_alarm, costs.miss, costs.correct_negative) == (300, 1800, 2500, 0)
    assert break_even_probability(costs) == 0.45


def test_break_even_reduces_to_the_cost_loss_ratio():
    # Thompson (1952), Murphy (1977) "The value of climatological, categorical and probabilistic
    # forecasts in the cost-loss ratio situation", Mon. Wea. Rev. 105:803-816: protecting costs C
    # whatever happens, an unprotected event loses L; protect iff p >= C/L
    c, loss = 20.0, 100.0
    assert break_even_probability(Costs(hit=c, false_alarm=c, miss=loss, correct_negative=0)) == 0.2


def test_break_even_ignores_a_constant_added_to_one_class_and_a_common_scale():
    # Elkan (2001), section 2: adding a constant to the costs of one actual class, or scaling all
    # costs by a positive factor, changes no decision (restated in METHODS.md 1.1, derived there)
    base = Costs(hit=300, false_alarm=1800, miss=2500, correct_negative=0)
    shifted = Costs(hit=300 + 700, false_alarm=1800 - 50, miss=2500 + 700, correct_negative=0 - 50)
    scaled = Costs(hit=3, false_alarm=18, miss=25, correct_negative=0)
    assert break_even_probability(shifted) == pytest.approx(0.45, abs=1e-15)
    assert break_even_probability(scaled) == pytest.approx(0.45, abs=1e-15)
    assert break_even_probability(base) == 0.45


def test_river_pump_break_even_matches_its_scenario_comment():
    # scenarios/river_pumps.toml works it by hand: 6000 / (6000 + 105000) = 0.054
    costs = Costs(hit=15000, false_alarm=6000, miss=120000, correct_negative=0)
    assert break_even_probability(costs) == pytest.approx(6000 / 111000)
    assert round(break_even_probability(costs), 3) == 0.054


@pytest.mark.parametrize("costs, fragment", [
    (Costs(hit=300, false_alarm=0, miss=2500, correct_negative=10), "is always at least as cheap"),
    (Costs(hit=2600, false_alarm=1800, miss=2500, correct_negative=0), "the best rule never acts"),
    (Costs(hit=2600, false_alarm=0, miss=2500, correct_negative=10), "check the signs of the costs"),
])
def test_dominated_cost_matrix_has_no_break_even_and_warns(costs, fragment):
    # Elkan (2001): a matrix in which one row dominates makes one action best whatever happens
    assert math.isnan(break_even_probability(costs))
    warnings = cost_warnings(costs, "act")
    assert len(warnings) == 1 and fragment in warnings[0] and warnings[0].startswith("[costs]")


def test_reasonable_cost_matrix_warns_nothing(make_scenario):
    assert cost_warnings(make_scenario().costs, "act") == []


# ------------------------------------------------------------------------------------------------
# the cutoff grid


def test_cutoff_grid_includes_both_ends_without_float_step_drift():
    # np.arange(0, 1.0001, 0.1)[3] is 0.30000000000000004 (IEEE 754 binary rounding; common
    # practice, no single source): the grid must hold the decimal values themselves
    grid = cutoff_grid(0.0, 1.0, 0.01)
    assert grid.size == 101 and grid[0] == 0.0 and grid[-1] == 1.0
    assert grid[30] == 0.3 and grid[45] == 0.45 and grid[7] == 0.07
    np.testing.assert_array_equal(grid, [float(f"{k / 100:.2f}") for k in range(101)])
    assert list(cutoff_grid(0.05, 0.95, 0.05)) == [round(0.05 * k, 2) for k in range(1, 20)]
    assert list(cutoff_grid(0.2, 0.8, 0.3)) == [0.2, 0.5, 0.8]


def test_scenario_cutoffs_come_from_the_decision_section(make_scenario):
    scenario = make_scenario(decision={"cutoffs": [0.1, 0.9, 0.2]})
    assert list(scenario.cutoffs) == [0.1, 0.3, 0.5, 0.7, 0.9]


# ------------------------------------------------------------------------------------------------
# errors worded for users


def _error(text):
    with pytest.raises(InputError) as info:
        scenario_from_text(text, label="my.toml")
    message = str(info.value)
    assert "\n" not in message
    return message


def test_unknown_cost_key_suggests_the_closest(toml_text):
    # STYLE.md section 4 gives this message as the model
    text = toml_text(costs={"hit": 300, "false_alarms": 1800, "miss": 2500})
    assert _error(text) == 'my.toml [costs]: unknown key "false_alarms"; did you mean "false_alarm"?'


@pytest.mark.parametrize("section, key, closest", [
    ("history", "probabilty_column", "probability_column"),
    ("history", "validation_form", "validation_from"),
    ("event", "flipp", "flip"),
    ("decision", "cutoff", "cutoffs"),
    ("season", "month", "months"),
    ("simulation", "replicate", "replicates"),
    ("simulation", "seeds", "seed"),
])
def test_unknown_key_in_each_section_suggests_the_closest(section, key, closest, toml_text):
    value = [1] if key == "month" else 1
    message = _error(toml_text(**{section: {key: value}}))
    assert message == f'my.toml [{section}]: unknown key "{key}"; did you mean "{closest}"?'


def test_unknown_key_with_nothing_close_lists_the_valid_keys(toml_text):
    message = _error(toml_text(event={"zzz": 1}))
    assert message.startswith('my.toml [event]: unknown key "zzz"; expected one of "name", "flip"')


def test_missing_name_is_required(toml_text):
    text = toml_text().split("\n", 1)[1]  # drop the name line
    assert _error(text) == 'my.toml "name": this key is required; add it'


def test_misspelt_weekday_suggests_the_closest(toml_text):
    message = _error(toml_text(season={"weekdays": ["mon", "frd"]}))
    assert '"frd" is not a weekday; did you mean "fri"?' in message and "[season] weekdays" in message


@pytest.mark.parametrize("section", ["season", "operations"])
@pytest.mark.parametrize("holidays, expected", [
    (["2027-05-03", "2027-13-01"], "item 2, '2027-13-01', is not a date; write dates as YYYY-MM-DD"),
    (["next monday"], "item 1, 'next monday', is not a date; write dates as YYYY-MM-DD"),
    ([20270503], "item 1, 20270503, is not a date; write dates as YYYY-MM-DD"),
    ("2027-05-03", "list the dates in brackets, e.g. holidays = [2027-05-03, 2027-08-30]"),
])
def test_a_holiday_that_is_not_a_date_is_refused_naming_the_item(section, holidays, expected, toml_text):
    keys = {"holidays": holidays}
    if section == "operations":
        keys.update(crews_out_on="acting", spoiled_on="event", day_rate=100)
    message = _error(toml_text(**{section: keys}))
    assert message.startswith(f"my.toml [{section}] holidays: ") and expected in message


def test_season_holidays_read_as_toml_dates_or_text(make_scenario):
    season = make_scenario(season={"holidays": ["2027-05-03", " 2027-08-30"]}).season
    assert [str(d) for d in season.holidays] == ["2027-05-03", "2027-08-30"]
    toml = scenario_from_text('name = "x"\n[costs]\nhit = 1\nfalse_alarm = 2\nmiss = 3\n'
                              "[season]\nholidays = [2027-05-03]\n")
    assert [str(d) for d in toml.season.holidays] == ["2027-05-03"]


def test_month_out_of_range_is_refused(toml_text):
    assert "[season] months" in _error(toml_text(season={"months": [4, 13]}))


def test_outcome_two_ways_at_once_is_refused(toml_text):
    message = _error(toml_text(history={"outcome_column": "wet", "value_column": "rain_mm",
                                        "threshold": 1.0, "side": "above"}))
    assert "give either outcome_column or value_column, not both" in message


def test_threshold_without_side_is_refused(toml_text):
    message = _error(toml_text(history={"value_column": "level", "threshold": 3.2}))
    assert "needs both threshold and side" in message


def test_too_few_replicates_is_refused(toml_text):
    assert "[simulation] replicates" in _error(toml_text(simulation={"replicates": 5}))


def test_binary_scenario_file_is_refused(tmp_path):
    path = tmp_path / "scenario.toml"
    path.write_bytes(b"\xff\xfe\x00garbage")
    with pytest.raises(InputError, match="is not a text file; give a TOML scenario file"):
        read_scenario(path)


def test_read_scenario_keeps_the_file_hash_and_place(write_scenario):
    import hashlib

    path = write_scenario()
    scenario = read_scenario(path)
    assert scenario.sha256 == hashlib.sha256(path.read_bytes()).hexdigest()
    assert scenario.history_path() == path.parent.resolve() / "history.csv"


def test_slug_is_file_safe(make_scenario):
    assert make_scenario(name="Flood pumps at Pellisford!").slug == "flood-pumps-at-pellisford"
    assert make_scenario(name="***").slug == "scenario"


# ------------------------------------------------------------------------------------------------
# ranges and limits (issue 16 items 3 and 5; the limits are the project's own, README key table)


@pytest.mark.parametrize("value", [float("nan"), float("inf"), -float("inf"), 1e308])
def test_a_cost_that_is_not_finite_or_absurd_is_refused_saying_what_is_allowed(value, toml_text):
    text = toml_text().replace("miss = 2500", f"miss = {value!r}".replace("'", ""))
    message = _error(text)
    assert message.startswith("my.toml [costs] miss: must be a number from -1e12 to 1e12 (got ")


def test_every_number_key_of_the_schema_has_a_range():
    # a number key without bounds would let NaN's cousins (1e308) through: walk the whole schema
    from simulator.inputs import allowed_values as schema
    from simulator.inputs.scenario import Scenario

    unbounded = []

    def walk(model, prefix):
        for key, info in model.model_fields.items():
            if key in ("source", "sha256", "ranges"):  # not user keys (ranges are checked as read: test_cost_draws)
                continue
            described = schema._allowed(info) or ""
            sub = schema._submodel(info.annotation)
            if sub is not None:
                walk(sub, f"{prefix}{key}.")
            elif ("number" in described and " to " not in described and "at most" not in described
                  and "three numbers" not in described):
                unbounded.append(f"{prefix}{key}: {described}")

    walk(Scenario, "")
    assert unbounded == []


@pytest.mark.parametrize("names, read", [
    (["Monday", "TUESDAY", "wed"], ("mon", "tue", "wed")),
    (["tues", "thurs", "sun"], ("tue", "thu", "sun")),
])
def test_weekdays_are_read_in_full_or_as_the_start_of_the_name(names, read, make_scenario):
    assert make_scenario(season={"weekdays": names}).season.weekdays == read


@pytest.mark.parametrize("word", ["monkey", "mo", "friends", "satellite"])
def test_a_word_that_only_starts_like_a_weekday_is_not_one(word, toml_text):
    # before, names were cut to three letters, so "monkey" was read as Monday
    assert f'"{word}" is not a weekday' in _error(toml_text(season={"weekdays": [word]}))


def test_a_scenario_file_over_the_size_limit_is_refused_before_it_is_read(tmp_path):
    from simulator.inputs.scenario_types import MAX_SCENARIO_BYTES

    path = tmp_path / "big.toml"
    path.write_text('name = "x"\n' + "#" * MAX_SCENARIO_BYTES)
    with pytest.raises(InputError, match="more than the 1,000,000 bytes a scenario file may have"):
        read_scenario(path)


def test_a_long_name_is_refused_naming_the_limit_and_quoting_only_its_start(toml_text):
    message = _error(toml_text(name="x" * 500_000))
    assert message.startswith('my.toml "name": must be text of at most 200 characters')
    assert "(500,000 characters)" in message and len(message) < 200
