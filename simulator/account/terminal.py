"""A run's findings as text for a terminal: the headline table and the tables that follow it.

Each function returns rich tables, texts or plain strings; ``cli`` prints them (it is the only
module that prints). Every string from a scenario or a history passes through :func:`_plain`,
which writes its control characters as escapes, before it reaches the terminal.
"""

from __future__ import annotations

from rich.table import Table
from rich.text import Text

from ..inputs.errors import printable
from ..notation.prose import money, share, signed_money
from ..results import RunResult
from .findings import account, season_name, seasons_text, strategy_label
from .outputs import summary


def _plain(value):
    """A user's string (or every string in a dict or list of them, such as the summary) with its
    control characters written as escapes, so that it cannot move the cursor, clear the screen or
    retitle the window. The one gate for user strings on their way to the terminal."""
    if isinstance(value, str):
        return printable(value)
    if isinstance(value, dict):  # keys too: a forecast's name is a key of "forecasts"
        return {_plain(k): _plain(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return type(value)(_plain(v) for v in value)
    return value


def _headline(result: RunResult) -> Table:
    """The run's account (:func:`simulator.account.findings.account`) as a two-column table."""
    told = account(_plain(summary(result)))
    table = Table(title=told.title, show_header=False, title_justify="left")
    table.add_column(style="bold")
    table.add_column()
    for finding in told.first:
        table.add_row(finding.label, finding.text)
    return table


def _fitted_table(title: str, headers: list[tuple[str, str]], rows: list[list[str]]) -> Text:
    """A plain table: two-line headers, the first column left-aligned, the others right-aligned,
    each column as wide as its widest entry (rich tables squeeze numbers on an 80-column screen)."""
    widths = [max(len(h[0]), len(h[1]), *(len(row[i]) for row in rows)) for i, h in enumerate(headers)]

    def line(cells) -> str:
        return "  ".join(c.ljust(w) if i == 0 else c.rjust(w)
                         for i, (c, w) in enumerate(zip(cells, widths))).rstrip()

    rule = "  ".join("-" * w for w in widths)
    body = [line([h[0] for h in headers]), line([h[1] for h in headers]), rule, *map(line, rows)]
    text = Text(_plain(title) + "\n", style="italic", no_wrap=True)  # printed with soft_wrap: lines kept whole
    text.append("\n".join(_plain(body)))
    return text


def _labels(result: RunResult) -> tuple[str, str, list[int]]:
    """The reference rule in plain words, the unit of an occasion, and the season's months."""
    s = result.scenario
    unit = "day" if result.history.frequency.is_daily else "occasion"
    return (_plain(strategy_label(result.reference, s.decision.action, s.event.name, unit)), unit,
            list(s.season.months))


def _stress_tables(result: RunResult) -> list:
    """The stress cases as one table, then each case's headline sentence."""
    if not result.stress:
        return []
    cur = _plain(result.scenario.currency)
    base_cutoff = result.decision.recommended_cutoff
    ref, _, _ = _labels(result)
    base = result.strategies["model"]
    savings = result.baseline_cost[result.reference] - result.model_cost[:, result.decision.recommended_index]
    rows = [["base case", f"{result.quality['event_rate']:.3f}", money(base.mean, ""), "",
             f"{base_cutoff:.2f}", "", f"{money(savings.mean(), '')} ({share((savings > 0).mean())})"]]
    sentences = []
    for case in result.stress:
        rate = case.event_rate
        for v in case.views:
            shown = ""
            if rate is not None:
                shown = f"{rate.achieved:.3f}" + ("" if rate.reached else f" (aim {rate.target:.3f})")
            label = case.name if v.probabilities == "as_forecast" else "  adapted"
            rows.append([label, shown, money(v.strategies["model"].mean, ""), signed_money(v.extra_cost, ""),
                         f"{v.best_cutoff:.2f}", money(v.saved_by_moving, ""),
                         f"{money(v.savings.mean, '')} ({share(v.prob_saving)})"])
            sentences.append(_plain(f"- {v.headline}"))
    table = _fitted_table(f"Stress tests, {cur} a season (means over simulated seasons)",
                          [("", "Case"), ("Event", "rate"), ("Cost at", f"{base_cutoff:.2f}"), ("", "Change"),
                           ("Best", "cutoff"), ("Saved by", "moving"), ("Saving", "(share)")], rows)
    note = (f"Saving: against {ref} at {base_cutoff:.2f}, mean and the share of seasons that save. "
            "\"Adapted\": probabilities moved to the new event rate by Bayes' rule. Ranges: stress.csv.")
    return [table, note, *sentences]


def _selection_tables(result: RunResult) -> list:
    """The validation check and the walk-forward, when run: each at the cutoff chosen on the
    period before it (the report shows the same tables)."""
    sel = result.selection
    if sel is None:
        return []
    cur = _plain(result.scenario.currency)
    ref, unit, months = _labels(result)
    rules = result.scenario.operations is not None
    per = f"{unit} played" if rules else unit
    out: list = []
    if sel.validation is not None:
        v = sel.validation
        t, val = v.training, v.validation
        played = (" (each past season played under the operating rules on this season's calendar)"
                  if rules else "")
        table = Table(title=f"Cutoff chosen on the training period, {v.chosen_cutoff:.2f}, priced on both "
                            f"periods{played}", title_justify="left")
        table.add_column("")
        table.add_column(f"training {seasons_text(t.start, t.end, months)}", justify="right")
        table.add_column(f"validation {seasons_text(val.start, val.end, months)}", justify="right")
        for key, label in (("hits", "hits"), ("false_alarms", "false alarms"), ("misses", "misses"),
                           ("correct_negatives", "correct negatives")):
            table.add_row(label, str(getattr(t, key)), str(getattr(val, key)))
        for key, label in (("hit_rate", "hit rate"), ("specificity", "specificity"),
                           ("miss_rate", "miss rate (events)"),
                           ("false_alarm_rate", "false alarm rate (non-events)")):
            table.add_row(label, f"{getattr(t, key):.3f}", f"{getattr(val, key):.3f}")
        table.add_row(f"cost per {per}", money(t.cost_per_occasion, cur), money(val.cost_per_occasion, cur))
        out.append(table)
        lo, hi = v.expected_range
        verdict = ((f"worse than the training range ({money(lo, cur)} to {money(hi, cur)} per "
                    f"{per}): overfitted, or the world changed", "bold") if v.flag else
                   f"within what training leads one to expect (up to {money(hi, cur)} per {per})")
        out.append(Text.assemble(f"Validation period at {v.chosen_cutoff:.2f}: {money(val.cost, cur)} in all, ",
                                 verdict, f". With hindsight the validation period's best cutoff, "
                                 f"{v.validation_best_cutoff:.2f}, costs {money(v.validation_best_cost, cur)}: the "
                                 f"optimism of choosing on the past is {money(v.optimism, cur)} over the validation "
                                 "period."))
    if sel.walk_forward is not None:
        w = sel.walk_forward
        rows = [[season_name(s.season, months), f"{s.priced.cutoff:.2f}", money(s.priced.cost, ""),
                 f"{s.best_cutoff:.2f}", money(s.best_cost, ""), money(s.reference_cost, ""),
                 "worse" if s.flag else ""] for s in w.steps]
        table = _fitted_table(f"Walk-forward: each season priced at the cutoff chosen on the seasons "
                              f"before it ({cur} a season)",
                              [("", "Season"), ("Chosen", "before it"), ("", "Cost"), ("Hindsight", "cutoff"),
                               ("", "Its cost"), ("Reference", "rule"), ("", "Flag")], rows)
        out.append(table)
        flagged = ", ".join(season_name(x, months) for x in w.flagged_seasons) or "none"
        out.append(f"Reference rule: {ref}. Walk-forward total {money(w.total_cost, cur)} over "
                   f"{len(w.steps)} seasons, against {money(w.in_sample_cost, cur)} with one cutoff chosen in "
                   f"hindsight ({w.in_sample_cutoff:.2f}): optimism {money(w.optimism, cur)}; saving against the "
                   f"reference rule {money(w.savings, cur)}. Seasons dearer per {per} than their training "
                   f"range: {flagged}.")
    return out


SITES_SHOWN = 12  # sites listed in the terminal; sites.csv has them all


def _sites_tables(result: RunResult) -> list:
    """With many sites: each site at its own cutoff, ranked by the value of the forecast, and, when
    they ran, each site's checks on later seasons and its stress headline (from sites.csv)."""
    if result.portfolio is None:
        return []
    cur = _plain(result.scenario.currency)
    frame = result.portfolio.table.sort_values("value_rank", kind="stable")
    shown = frame.head(SITES_SHOWN)
    more = (f"... and {len(frame) - len(shown)} more sites: sites.csv" if len(frame) > len(shown)
            else "Per site, with every figure: sites.csv")
    rows = [[r.site, f"{r.recommended_cutoff:.2f}", f"{r.recommended_cutoff_low:.2f}-{r.recommended_cutoff_high:.2f}",
             money(r.mean_cost, ""), f"{money(r.mean_savings, '')} ({share(r.prob_saving)})", money(r.forecast_value, ""),
             "yes" if r.use_forecast else f"no: {r.best_rule_without_forecast}"]
            for r in shown.itertuples()]
    out: list = [_fitted_table(f"Each site at its own cutoff ({cur} a season; by the value of the forecast)",
                               [("", "Site"), ("Own", "cutoff"), ("90%", "interval"), ("Mean", "cost"),
                                ("Saving against", "reference (share)"), ("Value of", "forecast"),
                                ("Worth", "using")], rows),
                 f"Reference rule: {_labels(result)[0]}. {more}; worth using: whether the forecast beats the best "
                 "rule without it on seasons its cutoff was not chosen on (else the rule to keep to)"]
    validation, forward = "validation_chosen_cutoff" in frame.columns, "walk_forward_cost" in frame.columns
    if validation or forward:
        headers = [("", "Site")]
        headers += [("Validation", "cutoff"), ("Validation", "optimism"), ("", "Flag")] if validation else []
        headers += [("Walk-forward", "optimism"), ("Seasons", "flagged")] if forward else []
        rows, notes = [], []
        for r in shown.itertuples():
            row = [r.site]
            if validation:
                row += [f"{r.validation_chosen_cutoff:.2f}", money(r.validation_optimism, ""),
                        "worse" if r.validation_flag else ""]
            if forward:
                flagged = r.walk_forward_flagged_seasons
                row += [money(r.walk_forward_optimism, ""), flagged if isinstance(flagged, str) else ""]
            rows.append(row)
        out.append(_fitted_table(f"Each site's cutoff chosen on the past, priced on later seasons ({cur})", headers,
                                 rows))
        if validation:
            notes.append(f"validation cost worse than the training range at {int(frame['validation_flag'].sum())} "
                         f"of {len(frame)} sites")
        if forward:
            some = frame["walk_forward_flagged_seasons"].fillna("").astype(str).str.len() > 0
            notes.append(f"seasons dearer than their training range at {int(some.sum())} of {len(frame)} sites")
        out.append("Optimism: how much more choosing on the past cost than the best cutoff in hindsight; "
                   + "; ".join(notes) + ".")
    stressed = [site for site in result.portfolio.ranking[:SITES_SHOWN] if site.stress]
    if stressed:
        out.append("Stress cases of each site (all of them: stress.csv):")
        out += [_plain(f"- {site.name}: {case.views[0].headline}") for site in stressed for case in site.stress]
    return out


def _calibration_lines(result: RunResult) -> list:
    c = result.calibration
    if c is None:
        return []
    line = (f"Calibrated mode: outcomes drawn afresh from the probabilities recalibrated (isotonic "
            f"regression) on {c.training_rows} training occasions, {c.training_start} to {c.training_end}. "
            f"Brier score on training {c.brier_training:.4f} -> {c.brier_training_recalibrated:.4f} (in-sample)")
    if c.brier_validation == c.brier_validation:  # not NaN
        line += f", on validation {c.brier_validation:.4f} -> {c.brier_validation_recalibrated:.4f}"
    return [line + "."]
