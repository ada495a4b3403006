"""One account of each run: every finding stated once, with its number, unit and basis.

The terminal headline (``cli.py``), the report's first screen (``report.py``) and the ``account``
block of ``summary.json`` all render from :func:`account`, which reads nothing but the summary
(``outputs.summary``), so the three cannot disagree. Each :class:`Finding` says what it is
(``label``), the finding itself with its units (``text`` for a table row, ``sentence`` for prose)
and its basis: per season or per occasion, over the simulated seasons or over the history, and at
which cutoff.

Numbers become text in one place, ``notation/prose.py``; this module adds the wording of seasons
and strategies.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from ..pricing.decision import OBJECTIVE_NAMES
from .finding import Finding
from .forecast_choice import SECTION_KEYS, forecast_findings
from .cost_doubt import cost_doubt
from ..inputs.history_calendar import season_start_month
from .portfolio_sensitivity_view import is_portfolio, portfolio_sentence
from .sensitivity_view import sensitivity_sentence
from ..notation.prose import cutoff_decimals, cutoff_text, format_value, money, money_range, ranges_text, share

__all__ = ["Finding", "Account", "account", "season_name", "seasons_text", "strategy_label",
           "short_label", "bad_season", "OBJECTIVE_WORDS"]


# each [decision] objective in words (what it minimises is decision.OBJECTIVE_NAMES): the basis of
# "costs less than the reference rule", and its name on the report's risk chart
OBJECTIVE_WORDS = {
    "mean": {"basis": "on average", "name": "Lowest expected cost"},
    "p95": {"basis": "in its 95th-percentile season", "name": "Lowest 95th percentile"},
    "shortfall10": {"basis": "over the worst 10% of seasons", "name": "Lowest mean of the worst 10%"},
}


# ------------------------------------------------------------------------------------------------
# wording of seasons and strategies

def season_name(year: int, months: Sequence[int] | None = None) -> str:
    """A season by the year it starts in; one across the new year as ``2023/24``."""
    months = tuple(months or range(1, 13))
    start = season_start_month(months)
    wraps = any(m < start for m in months)
    return f"{year}/{(int(year) + 1) % 100:02d}" if wraps else str(year)


def seasons_text(start: str, end: str, months: Sequence[int] | None = None) -> str:
    """The seasons a period from ``start`` to ``end`` (ISO dates) spans: ``2014/15 to 2022/23``."""
    months = tuple(months or range(1, 13))
    first = season_start_month(months)

    def season(iso: str) -> int:
        year, month = int(iso[:4]), int(iso[5:7])
        return year if month >= first else year - 1

    a, b = season(start), season(end)
    return season_name(a, months) if a == b else f"{season_name(a, months)} to {season_name(b, months)}"


def strategy_label(name: str, action: str, event: str, occasion: str = "day") -> str:
    """A strategy in plain words, in the scenario's terms (lower case, for mid-sentence use)."""
    occasion = occasion.removeprefix("site-")
    return {
        "model": f"{action} when the probability of \u201c{event}\u201d reaches the cutoff",
        "never_act": f"never {action}",
        "always_act": f"always {action}",
        "persistence": f"{action} if \u201c{event}\u201d happened on the previous {occasion}",
        "seasonal_rate": f"{action} in the months when \u201c{event}\u201d was common enough to pay",
        "perfect": "act exactly when it pays: the lowest cost possible",
    }.get(name, name.replace("_", " "))


SHORT_LABELS = {"model": "Follow the forecast", "never_act": "Never {a}", "always_act": "Always {a}",
                "persistence": "Persistence (act as the previous {o} needed)",
                "seasonal_rate": "By calendar month", "perfect": "Perfect foresight"}


def short_label(name: str, action: str, occasion: str = "day") -> str:
    """A strategy's short name for a table row or a legend: ``Always send the crews out``."""
    return SHORT_LABELS.get(name, name.replace("_", " ")).format(a=action, o=occasion.removeprefix("site-"))


def _capital(text: str) -> str:
    return text[:1].upper() + text[1:]


# ------------------------------------------------------------------------------------------------
# the account

@dataclass(frozen=True)
class Account:
    title: str
    findings: tuple[Finding, ...]

    @property
    def first(self) -> tuple[Finding, ...]:
        """The recommendation's findings, in order (the verdict, when there is one, first)."""
        return tuple(f for f in self.findings if f.first)

    @property
    def sentences(self) -> list[str]:
        """The recommendation in prose; the comparison of forecasts' details are said in the
        report's own section on them (``forecast_choice.SECTION_KEYS``), not here."""
        return [f.sentence for f in self.first if f.sentence and f.key not in SECTION_KEYS]

    def get(self, key: str) -> Finding | None:
        return next((f for f in self.findings if f.key == key), None)


def account(summary: Mapping[str, Any]) -> Account:
    """Every finding of a run, from its ``summary.json`` contents alone (the ``account`` block aside)."""
    s = summary
    cur = s["currency"]
    sc = s["scenario"]
    action, event = sc["action"], sc["event"]
    grid = sc.get("cutoffs") or [0.0, 1.0, 0.01]
    decimals = cutoff_decimals(grid[2])
    cut = lambda v: cutoff_text(v, decimals)  # noqa: E731
    unit = s.get("occasion_unit", "day")
    months = sc.get("season_months")
    ref = s["reference"]
    ref_label = strategy_label(ref, action, event, unit)
    ops = s.get("operations")
    at = cut(s["recommended_cutoff"])
    n_rep = f"{s['replicates']:,}"
    season = season_name(s["season_year"], months)
    objective = s.get("objective", "mean")
    out: list[Finding] = []

    verdict = s.get("verdict")
    advise = True
    if verdict:
        advise = bool(verdict.get("use_forecast", True))
        best = strategy_label(verdict.get("best_rule_without_forecast") or ref, action, event, unit)
        text = ("use the forecast" if advise else f"keep to the rule that ignores it: {best}")
        reason = str(verdict.get("reason") or "").strip()  # why (simulator.analysis.verdict)
        said = f"{text}, because {reason[:1].lower()}{reason[1:]}" if reason else text + "."
        out.append(Finding("verdict", "Verdict", said, _capital(said),
                           "per season, each past season priced at the cutoff and rule chosen on the others"))

    lo, hi = s["recommended_cutoff_interval"]
    p_star = s.get("theoretical_cutoff")
    if p_star is None:
        star = "different at each site (sites.csv)" if s.get("portfolio") else "undefined"
    else:
        star = cut(p_star) + (", which the operating rules override" if ops else "")
    label = "Recommended cutoff" if advise else "Cheapest cutoff (not advised)"
    out.append(Finding(
        "cutoff", label, f"{at}  (90% interval {cut(lo)} to {cut(hi)}; break-even probability of the costs {star})",
        (f"{_capital(action)} when the forecast probability of \u201c{event}\u201d is {at} or more"
         if advise else f"The cheapest cutoff on this history is {at}, but it is not advised")
        + f" (90% interval of the best cutoff over histories as long as ours: {cut(lo)} to {cut(hi)}).",
        f"the lowest {OBJECTIVE_NAMES[objective]} over the simulated seasons"))
    if s.get("objectives"):
        out.append(_objective(s, objective, cut))

    m = s["strategies"]["model"]
    rules = " under the operating rules" if ops else ""
    out.append(Finding(
        "season_cost", f"Season cost at {at}",
        f"{money(m['mean'], cur)} on average  (90% of seasons {money_range(m['p05'], m['p95'], cur)})",
        f"A {season} season then costs {money(m['mean'], cur)} on average{rules}, and between "
        f"{money(m['p05'], cur)} and {money(m['p95'], cur)} in 90% of {n_rep} simulated seasons.",
        f"per season, at cutoff {at}, over {n_rep} simulated seasons"))

    sv = s["savings"]
    less = "less" if sv["mean"] >= 0 else "more"
    out.append(Finding(
        "saving", f"Saving at {at}",
        f"{money(sv['mean'], cur)} a season against {ref_label}  (90% range {money_range(sv['p05'], sv['p95'], cur)}; saves money in "
        f"{share(sv['prob_saving'])} of seasons)",
        f"That is {money(abs(sv['mean']), cur)} a season {less} than the reference rule ({ref_label}); "
        f"following the forecast saves money in {share(sv['prob_saving'])} of simulated seasons.",
        f"per season, at cutoff {at}, against the reference rule on the same simulated seasons"))

    beats = _beats(s, grid, decimals)
    if beats is not None:
        out.append(beats)

    doubt = cost_doubt(s, cut, unit, Finding)  # costs given as ranges
    if doubt is not None:
        out.append(doubt)

    missed = s.get("events_without_action")
    if missed:  # a hazard: the event occasions the cutoff leaves without action
        where = f", all {s['portfolio']['sites']} sites together" if s.get("portfolio") else ""
        mean = format_value("days", missed["mean"], "")
        p05, p95 = (format_value("count", missed[k], "") for k in ("p05", "p95"))  # observed counts
        out.append(Finding(
            "events_without_action", f"\u201c{event}\u201d without action",
            f"{mean} {unit}s a season at {cut(missed['cutoff'])}{where}  (90% of seasons {p05} to {p95})",
            "",  # a tile of the report's first screen says it; the prose stays short
            f"per season, at cutoff {cut(missed['cutoff'])}, over the simulated seasons"))

    if ops:
        out += _operations(ops, at, ref)
    out += forecast_findings(s, cut, lambda name: strategy_label(name, action, event, unit))

    portfolio = s.get("portfolio")
    if portfolio:
        own = portfolio["total_cost"]["own_cutoffs"]
        best = portfolio["ranking"][0]
        out.append(Finding(
            "sites", f"{portfolio['sites']} sites",
            f"totals above at one cutoff for all; each site at its own cutoff {money(own['mean'], cur)} a season "
            f"(90% of seasons {money_range(own['p05'], own['p95'], cur)}); forecast worth most at "
            f"\u201c{best['site']}\u201d ({money(best['forecast_value'], cur)} a season); per site: sites.csv",
            f"The costs above are totals over {portfolio['sites']} sites at one cutoff for all; each site at its "
            f"own cutoff, the total is {money(own['mean'], cur)} a season on average.",
            "per season, totals over the sites"))

    run_days = s["mean_block_days"]
    n_sites = portfolio["sites"] if portfolio else 1
    per = f" at each of {n_sites} sites" if n_sites > 1 else ""
    out.append(Finding(
        "season", "Season", f"{season}: {s['season_occasions']:,} {unit}s{per}; {n_rep} simulated seasons, each "
        f"made of runs of the history {run_days:.1f} days long on average",
        "", "the season priced", first=True))
    out.append(Finding("baselines", "Rules that ignore the forecast", "cost a season on average  (90% of seasons)",
                       "", "per season, over the simulated seasons", first=True))

    for name, d in s["strategies"].items():
        if name == "model":
            continue
        out.append(Finding(
            f"baseline:{name}", f"  {short_label(name, action, unit)}",
            f"{money(d['mean'], cur)}  ({money_range(d['p05'], d['p95'], cur)})",
            "", "per season, over the simulated seasons", first=True))

    rec = s.get("recommended") or {}
    if "historical_cost" in rec and not ops:
        n = s["history"]["evaluated_rows"]
        seasons = s["history"]["seasons"]
        unit = f"site-{unit}" if n_sites > 1 else unit
        out.append(Finding(
            "history", "Over the history",
            f"{money(rec['historical_cost'], cur)} over the history's {n:,} in-season {unit}s ({seasons} seasons) at {at}",
            f"Played on the history itself ({n:,} in-season {unit}s over {seasons} seasons), cutoff {at} would "
            f"have cost {money(rec['historical_cost'], cur)} in all: {money(rec['historical_cost'] / n, cur)} a {unit}.",
            f"total over the history at cutoff {at} (recommended.historical_cost)", first=False))
    sensitivity = s.get("sensitivity")
    if sensitivity:  # which cost estimate matters (analysis/sensitivity.py), or why a run has none
        said = (portfolio_sentence(sensitivity, cur, unit) if is_portfolio(sensitivity)
                else sensitivity_sentence(sensitivity, cur, decimals, unit))
        out.append(Finding("sensitivity", "Which cost estimate matters", said, said,
                           "per season against the reference, each cost moved alone (sensitivity.csv)", first=False))
    title = (f"{sc['name']}: {action} when the probability of \u201c{event}\u201d is at least the cutoff")
    return Account(title=title, findings=tuple(out))


def bad_season(objective: str) -> tuple[str, str]:
    """The bad-season measure shown beside the mean for ``objective``, and its cutoffs.csv column:
    the 95th percentile under ``"p95"``, else the mean of the worst 10% of seasons."""
    return ("p95", "p95_cost") if objective == "p95" else ("shortfall10", "shortfall10_cost")


def _objective(s: Mapping[str, Any], objective: str, cut) -> Finding:
    """What the objective chose against the other view: the mean's choice under a risk objective,
    the bad-season measure's under the mean (``summary["objectives"]``). A finding of the
    recommendation only when the objective is not the mean."""
    cur = s["currency"]
    tail, column = bad_season(objective)
    tail_what = OBJECTIVE_NAMES[tail]
    other = tail if objective == "mean" else "mean"
    chosen, alternative = s["objectives"][objective], s["objectives"][other]
    here, there = cut(chosen["cutoff"]), cut(alternative["cutoff"])
    if here == there:
        core = (f"the lowest expected season cost and the lowest {tail_what} come at the same cutoff, {here}: "
                "the average season and the bad season ask for the same choice.")
    else:
        mean_gap = alternative["mean_cost"] - chosen["mean_cost"]
        tail_gap = alternative[column] - chosen[column]
        core = (f"choosing for the lowest {OBJECTIVE_NAMES[other]} instead would move the cutoff from {here} to "
                f"{there}: a season would cost {money(abs(mean_gap), cur)} {'more' if mean_gap > 0 else 'less'} "
                f"on average, and the {tail_what} would be {money(abs(tail_gap), cur)} "
                f"{'higher' if tail_gap > 0 else 'lower'}.")
    what = OBJECTIVE_NAMES[objective]
    sentence = _capital(core) if objective == "mean" else f"This cutoff has the lowest {what}; {core}"
    at = f"cutoff {here}" if here == there else f"cutoffs {here} and {there}"
    return Finding("objective", "Chosen by", f"the lowest {what}. {_capital(core)}", sentence,
                   f"per season, over {s['replicates']:,} simulated seasons, at {at}",
                   first=objective != "mean")


def _beats(s: Mapping[str, Any], grid: Sequence[float], decimals: int) -> Finding | None:
    """One range of cutoffs cheaper than the reference: in 95% of seasons when there is one, else by
    the run's objective (on average, for the mean); none when the range is every cutoff tried (it
    would say nothing)."""
    confident, average = s.get("confident_break_even") or [], s.get("break_even") or []
    everything = [[float(grid[0]), float(grid[1])]]
    by = OBJECTIVE_WORDS[s.get("objective", "mean")]["basis"]
    if confident:
        ranges, basis = confident, "in at least 95% of simulated seasons"
    elif average:
        ranges, basis = average, f"{by}; none in 95% of simulated seasons"
    else:
        return Finding("beats_reference", "Cutoffs that beat the reference", f"none, {by}",
                       f"No cutoff costs less than the reference rule {by}: keep to the reference rule.",
                       "per season, mean over the simulated seasons" if by == "on average"
                       else f"per season, {by}, over the simulated seasons")
    if [[round(lo, 9), round(hi, 9)] for lo, hi in ranges] == [[round(x, 9) for x in r] for r in everything]:
        return None
    text = ranges_text(ranges, decimals)
    return Finding("beats_reference", "Cutoffs that beat the reference", f"{text}  ({basis})",
                   f"Any cutoff from {text} costs less than the reference rule {basis.split(';')[0]}.",
                   f"per season, {basis.split(';')[0]}")


def _operations(ops: Mapping[str, Any], at: str, ref: str) -> list[Finding]:
    """Under ``[operations]``: lateness at the cutoff beside the reference rule's, completion, the
    safety stop (from ``summary["operations"]``)."""
    out = []
    here = ops["at_recommended_cutoff"]
    there = (ops.get("baselines") or {}).get(ref) or {}
    deadline = ops.get("deadline")
    if deadline:
        late = here.get("days_late") or {}
        versus = f" (reference rule: {share(there['share_late'])})" if "share_late" in there else ""
        against = f" against {share(there['share_late'])} under the reference rule" if "share_late" in there else ""
        out.append(Finding(
            "deadline", f"Late (deadline {deadline})",
            f"in {share(here['share_late'])} of seasons at {at}{versus}; {format_value('days', late.get('mean'), '')} "
            f"days late on average over all seasons",
            f"The work is finished after the deadline ({deadline}) in {share(here['share_late'])} of simulated "
            f"seasons at {at}{against}, {format_value('days', late.get('mean'), '')} days late on average over all seasons.",
            f"share of simulated seasons, at cutoff {at} and under the reference rule"))
    done = here.get("completion_date") or {}
    if done.get("p50"):
        out.append(Finding(
            "completion", "Work finished",
            f"by {done['p50']} in half the seasons at {at} (90%: {done['p05'] or 'not finished'} to "
            f"{done['p95'] or 'not finished'})", "", f"over the simulated seasons, at cutoff {at}"))
    if ops.get("safety_stop_at") is not None:
        stop = here.get("safety_stop_days") or {}
        out.append(Finding(
            "safety_stop", "Safety stop", f"decided {format_value('days', stop.get('mean'), '')} days a season at {at}",
            "", f"per season, mean over the simulated seasons, at cutoff {at}"))
    return out

