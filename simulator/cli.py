"""The ``gonogo`` command line: the only module that prints or exits.

Each command's docstring is its ``--help`` text. A user's mistake (an :class:`InputError`) is
printed as one line on standard error with exit status 2, and nothing is written.
"""

from __future__ import annotations

import json
import sys
from contextlib import contextmanager
from pathlib import Path
from typing import Annotated

import typer
from rich.console import Console
from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn
from rich.table import Table
from rich.text import Text

from . import __version__
from .errors import InputError
from .history import read_history
from .outputs import check_out_folder, render_files, summary, write_files
from .parallel import CLUSTER_ENV
from .decision import OBJECTIVE_NAMES
from .report import OBJECTIVE_WORDS, risk_view, share
from .run import RunResult, run
from .scenario import Costs, Scenario, read_scenario

app = typer.Typer(add_completion=False, no_args_is_help=True, pretty_exceptions_enable=False,
                  rich_markup_mode=None,
                  help="gonogo: choose the probability cutoff at which to act on a yes/no forecast, "
                       "and price what a season will cost at it.")
out_console = Console()
err_console = Console(stderr=True)

CAUTION = ("A cost-optimal cutoff never overrides safety rules, site risk assessments, local "
           "regulations or licensed professional judgement.")


def _fail(error: InputError) -> None:
    err_console.print(f"error: {error}", markup=False, highlight=False, soft_wrap=True)
    raise typer.Exit(code=2)


@contextmanager
def _user_errors():
    try:
        yield
    except InputError as error:
        _fail(error)


@contextmanager
def _progress_bar(enabled: bool):
    if not enabled:
        yield None
        return
    columns = (TextColumn("{task.description}"), BarColumn(), MofNCompleteColumn(),
               TimeRemainingColumn())
    with Progress(*columns, console=err_console, transient=True) as bar:
        tasks: dict[str, int] = {}

        def update(step: str, done: int, total: int) -> None:
            if step not in tasks:
                tasks[step] = bar.add_task(step, total=total)
            bar.update(tasks[step], completed=done, total=total)

        yield update


def _money(value: float, currency: str) -> str:
    return f"{value:,.0f} {currency}"


def _ranges(ranges: list) -> str:
    return ", ".join(f"{lo:.2f} to {hi:.2f}" for lo, hi in ranges) or "none"


def _headline(result: RunResult) -> Table:
    s = summary(result)
    cur = s["currency"]
    model = s["strategies"]["model"]
    ref = s["reference"]
    lo, hi = s["recommended_cutoff_interval"]
    table = Table(title=f"{s['scenario']['name']}: act (\"{s['scenario']['action']}\") when the "
                        f"probability of \"{s['scenario']['event']}\" is at least the cutoff",
                  show_header=False, title_justify="left")
    table.add_column(style="bold")
    table.add_column()
    p_star = s["theoretical_cutoff"]
    if p_star is not None:
        p_star = f"{p_star:.2f}"
    else:
        p_star = "different at each site (sites.csv)" if s.get("portfolio") else "undefined"
    table.add_row("Recommended cutoff", f"{s['recommended_cutoff']:.2f}  (90% interval {lo:.2f} to {hi:.2f}; "
                                        f"break-even probability of the costs {p_star})")
    if s["objective"] != "mean":  # chosen for the bad seasons: say so, and what it costs on average
        table.add_row("Chosen by", f"the lowest {OBJECTIVE_NAMES[s['objective']]}. "
                                   + risk_view(s)["paragraph"])
    table.add_row("Expected season cost", f"{_money(model['mean'], cur)}  (90% of seasons "
                                          f"{_money(model['p05'], cur)} to {_money(model['p95'], cur)})")
    sv = s["savings"]
    table.add_row(f"Saving against {ref}", f"{_money(sv['mean'], cur)}  (90% range {_money(sv['p05'], cur)} to "
                                           f"{_money(sv['p95'], cur)}; saves money in "
                                           f"{share(sv['prob_saving'])} of seasons)")
    table.add_row(f"Cutoffs that beat {ref}", _ranges(s["break_even"])
                  + f"  ({OBJECTIVE_WORDS[s['objective']]['basis']}); "
                  + _ranges(s["confident_break_even"]) + " (in 95% of seasons)")
    table.add_row("Season", f"{s['season_occasions']} occasions, {s['replicates']} replicate seasons, "
                            f"mean run {s['mean_block_days']:.1f} days")
    portfolio = s.get("portfolio")
    if portfolio:  # the rows above are all sites together at one common cutoff
        own = portfolio["total_cost"]["own_cutoffs"]
        best = portfolio["ranking"][0]
        table.add_row(f"{portfolio['sites']} sites", f"totals at one cutoff for all; each site at its own cutoff "
                      f"{_money(own['mean'], cur)} (90% of seasons {_money(own['p05'], cur)} to "
                      f"{_money(own['p95'], cur)}); forecast worth most at \"{best['site']}\" "
                      f"({_money(best['forecast_value'], cur)} a season); per site: sites.csv")
    operations = s.get("operations")
    if operations:
        at = operations["at_recommended_cutoff"]
        done = at.get("completion_date") or {}
        finish = (f"work done by {done['p50']} in half the seasons (90%: {done['p05']} to {done['p95']}); "
                  if done.get("p50") else "")
        table.add_row("Under the operating rules",
                      f"{finish}late in {share(at['share_late'])} of seasons "
                      f"(mean {at['days_late']['mean']:.1f} days late); safety stop decided "
                      f"{at['safety_stop_days']['mean']:.1f} days a season")
    for name, d in s["strategies"].items():
        if name != "model":
            table.add_row(f"  {name}", f"{_money(d['mean'], cur)}  ({_money(d['p05'], cur)} to "
                                       f"{_money(d['p95'], cur)})")
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
    text = Text(title + "\n", style="italic")
    text.append("\n".join(body))
    return text


def _stress_tables(result: RunResult) -> list:
    """The stress cases as one table, then each case's headline sentence."""
    if not result.stress:
        return []
    cur = result.scenario.currency
    base_cutoff = result.decision.recommended_cutoff
    ref = result.reference
    base = result.strategies["model"]
    savings = result.baseline_cost[ref] - result.model_cost[:, result.decision.recommended_index]
    rows = [["base case", f"{result.quality['event_rate']:.3f}", f"{base.mean:,.0f}", "",
             f"{base_cutoff:.2f}", "", f"{savings.mean():,.0f} ({share((savings > 0).mean())})"]]
    sentences = []
    for case in result.stress:
        rate = case.event_rate
        for v in case.views:
            shown = ""
            if rate is not None:
                shown = f"{rate.achieved:.3f}" + ("" if rate.reached else f" (aim {rate.target:.3f})")
            label = case.name if v.probabilities == "as_forecast" else "  adapted"
            rows.append([label, shown, f"{v.strategies['model'].mean:,.0f}", f"{v.extra_cost:+,.0f}",
                         f"{v.best_cutoff:.2f}", f"{v.saved_by_moving:,.0f}",
                         f"{v.savings.mean:,.0f} ({share(v.prob_saving)})"])
            sentences.append(f"- {v.headline}")
    table = _fitted_table(f"Stress tests, {cur} a season (means over replicate seasons)",
                          [("", "Case"), ("Event", "rate"), ("Cost at", f"{base_cutoff:.2f}"), ("", "Change"),
                           ("Best", "cutoff"), ("Saved by", "moving"), ("Saving", "(share)")], rows)
    note = (f"Saving: against {ref} at {base_cutoff:.2f}, mean and the share of seasons that save. "
            "\"Adapted\": probabilities moved to the new event rate by Bayes' rule. Ranges: stress.csv.")
    return [table, note, *sentences]


def _selection_tables(result: RunResult) -> list:
    """The validation check and the walk-forward, when run."""
    sel = result.selection
    if sel is None:
        return []
    cur = result.scenario.currency
    out: list = []
    if sel.validation is not None:
        v = sel.validation
        t, val = v.training, v.validation
        fixed = (" (each past season played under the operating rules on this season's calendar)"
                 if result.scenario.operations is not None else "")
        table = Table(title=f"Chosen on the training period, priced on the validation period: cutoff "
                            f"{v.chosen_cutoff:.2f}{fixed}", title_justify="left")
        table.add_column("")
        table.add_column(f"training {t.start[:4]}-{t.end[:4]}", justify="right")
        table.add_column(f"validation {val.start[:4]}-{val.end[:4]}", justify="right")
        for key, label in (("hits", "hits"), ("false_alarms", "false alarms"), ("misses", "misses"),
                           ("correct_negatives", "correct negatives")):
            table.add_row(label, str(getattr(t, key)), str(getattr(val, key)))
        for key, label in (("hit_rate", "hit rate"), ("specificity", "specificity"),
                           ("miss_rate", "miss rate (events)"),
                           ("false_alarm_rate", "false alarm rate (non-events)")):
            table.add_row(label, f"{getattr(t, key):.3f}", f"{getattr(val, key):.3f}")
        table.add_row("cost per occasion", _money(t.cost_per_occasion, cur), _money(val.cost_per_occasion, cur))
        out.append(table)
        lo, hi = v.expected_range
        verdict = (f"[bold]worse than the training range ({_money(lo, cur)} to {_money(hi, cur)} per "
                   "occasion): overfitted, or the world changed[/bold]" if v.flag else
                   f"within what training leads one to expect (up to {_money(hi, cur)} per occasion)")
        out.append(f"Validation cost at {v.chosen_cutoff:.2f}: {_money(val.cost, cur)}, {verdict}. With "
                   f"hindsight the validation period's best cutoff, {v.validation_best_cutoff:.2f}, costs "
                   f"{_money(v.validation_best_cost, cur)}: the optimism of choosing on the past is "
                   f"{_money(v.optimism, cur)}.")
    if sel.walk_forward is not None:
        w = sel.walk_forward
        rows = []
        for s in w.steps:
            lo, hi = s.expected_range
            rows.append([str(s.season), f"{s.priced.cutoff:.2f}", f"{s.priced.cost_per_occasion:,.0f}",
                         f"{s.training.cost_per_occasion:,.0f}", f"{lo:,.0f}-{hi:,.0f}",
                         "worse" if s.flag else "", f"{s.best_cutoff:.2f}",
                         f"{s.reference_cost / s.priced.n_occasions:,.0f}"])
        table = _fitted_table(f"Walk-forward: each season priced at the cutoff chosen on the seasons "
                              f"before it ({cur} per occasion)",
                              [("", "Season"), ("", "Cutoff"), ("", "Cost"), ("", "Training"),
                               ("Training", "90% range"), ("", "Flag"), ("Hindsight", "cutoff"),
                               ("", result.reference)], rows)
        out.append(table)
        flagged = ", ".join(str(x) for x in w.flagged_seasons) or "none"
        out.append(f"Walk-forward total {_money(w.total_cost, cur)} against {_money(w.in_sample_cost, cur)} "
                   f"with one cutoff chosen in hindsight ({w.in_sample_cutoff:.2f}): optimism "
                   f"{_money(w.optimism, cur)}; saving against {result.reference} "
                   f"{_money(w.savings, cur)}. Seasons dearer than their training range: {flagged}.")
    return out


SITES_SHOWN = 12  # sites listed in the terminal; sites.csv has them all


def _sites_tables(result: RunResult) -> list:
    """With many sites: each site at its own cutoff, ranked by the value of the forecast, and, when
    they ran, each site's checks on later seasons and its stress headline (from sites.csv)."""
    if result.portfolio is None:
        return []
    cur = result.scenario.currency
    frame = result.portfolio.table.sort_values("value_rank", kind="stable")
    shown = frame.head(SITES_SHOWN)
    more = (f"... and {len(frame) - len(shown)} more sites: sites.csv" if len(frame) > len(shown)
            else "Per site, with every figure: sites.csv")
    rows = [[r.site, f"{r.recommended_cutoff:.2f}", f"{r.recommended_cutoff_low:.2f}-{r.recommended_cutoff_high:.2f}",
             f"{r.mean_cost:,.0f}", f"{r.mean_savings:,.0f} ({share(r.prob_saving)})", f"{r.forecast_value:,.0f}"]
            for r in shown.itertuples()]
    out: list = [_fitted_table(f"Each site at its own cutoff ({cur} a season; by the value of the forecast)",
                               [("", "Site"), ("Own", "cutoff"), ("90%", "interval"), ("Mean", "cost"),
                                ("Saving against", f"{result.reference} (share)"), ("Value of", "forecast")],
                               rows), more]
    validation, forward = "validation_chosen_cutoff" in frame.columns, "walk_forward_cost" in frame.columns
    if validation or forward:
        headers = [("", "Site")]
        headers += [("Validation", "cutoff"), ("Validation", "optimism"), ("", "Flag")] if validation else []
        headers += [("Walk-forward", "optimism"), ("Seasons", "flagged")] if forward else []
        rows, notes = [], []
        for r in shown.itertuples():
            row = [r.site]
            if validation:
                row += [f"{r.validation_chosen_cutoff:.2f}", f"{r.validation_optimism:,.0f}",
                        "worse" if r.validation_flag else ""]
            if forward:
                flagged = r.walk_forward_flagged_seasons
                row += [f"{r.walk_forward_optimism:,.0f}", flagged if isinstance(flagged, str) else ""]
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
        out += [f"- {site.name}: {case.views[0].headline}" for site in stressed for case in site.stress]
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


def _report_run(result: RunResult, out: Path, written: list[Path], quiet: bool, as_json: bool) -> None:
    for warning in result.warnings:
        err_console.print(f"warning: {warning}", markup=False, highlight=False, soft_wrap=True)
    if as_json:
        sys.stdout.write(json.dumps(summary(result), indent=2) + "\n")
        return
    if quiet:
        return
    hazard = result.scenario.event.hazard
    caution = Text.assemble(("Caution: ", "bold"), (f'"{result.scenario.event.name}" is a hazard to people. '
                                                    if hazard else "", "bold"), CAUTION)
    if hazard:  # said first, and again at the end
        out_console.print(caution)
    out_console.print(_headline(result))
    for part in (_sites_tables(result) + _stress_tables(result) + _selection_tables(result)
                 + _calibration_lines(result)):
        out_console.print(part, soft_wrap=isinstance(part, Text))  # tables keep their lines whole
    out_console.print(caution)
    out_console.print(f"Wrote {len(written)} files to {out}/; open {out / 'report.html'} to read the report")


def _execute(scenario: Scenario, history: Path | None, out: Path | None, replicates: int | None,
             seed: int | None, force: bool, quiet: bool, as_json: bool,
             walk_forward: bool | None = None, workers: int | None = None, cluster: str | None = None) -> None:
    out = out if out is not None else Path("outputs") / scenario.slug
    check_out_folder(out, force)  # before any work, so a refusal costs nothing
    with _progress_bar(not (quiet or as_json)) as progress:
        result = run(scenario, history, replicates=replicates, seed=seed, progress=progress,
                     walk_forward=walk_forward, workers=workers, cluster=cluster or None)
    if quiet or as_json:
        files = render_files(result)
    else:
        with err_console.status("drawing the figures and writing the report"):
            files = render_files(result)
    written = write_files(files, out, force)
    _report_run(result, out, written, quiet, as_json)


Replicates = Annotated[int | None, typer.Option(min=20, help="How many replicate seasons to simulate "
                                                "(default: the scenario's [simulation] replicates).")]
Seed = Annotated[int | None, typer.Option(min=0, help="Random seed; the same seed gives identical files "
                                          "(default: the scenario's [simulation] seed).")]
Force = Annotated[bool, typer.Option("--force", help="Replace results already in the output folder.")]
Quiet = Annotated[bool, typer.Option("--quiet", help="Print nothing but warnings and errors (for scripts).")]
Workers = Annotated[int | None, typer.Option(min=1, help="Local worker processes for the replicate seasons "
                                             "(default: every core). The results are the same whatever "
                                             "the number.")]
Cluster = Annotated[str | None, typer.Option(envvar=CLUSTER_ENV, show_envvar=True,
                                             help="Address of a running Dask scheduler (tcp://host:8786) "
                                             "to price the replicate seasons on, instead of this machine; "
                                             "needs pip install \"dask[distributed]\".")]
AsJson = Annotated[bool, typer.Option("--json", help="Print summary.json to standard output instead of "
                                      "the headline table.")]


@app.command("run")
def run_command(
    scenario: Annotated[Path, typer.Argument(help="The scenario file (.toml): costs, season, cutoffs, "
                                             "and where the history is.")],
    history: Annotated[Path | None, typer.Option(help="The history file (CSV or Parquet), instead of "
                                                 "the scenario's [history] path.")] = None,
    out: Annotated[Path | None, typer.Option(help="Folder for the results (default: "
                                             "outputs/<scenario name>).")] = None,
    replicates: Replicates = None,
    seed: Seed = None,
    force: Force = False,
    quiet: Quiet = False,
    as_json: AsJson = False,
    walk_forward: Annotated[bool, typer.Option("--walk-forward", help="Also check the choice season by "
                                               "season: choose the cutoff on all earlier seasons, price "
                                               "the next (as [simulation] walk_forward = true).")] = False,
    workers: Workers = None,
    cluster: Cluster = None,
) -> None:
    """Replay the history under every cutoff, price each replicate season, and recommend a cutoff.

    Writes report.html (one self-contained page to read and print, its figures also under
    figures/), summary.json and cutoffs.csv (one row per cutoff) with the tables beside them into
    the output folder, and prints a short headline. [[stress]] cases in the scenario are priced too
    (stress.csv), and a validation period or walk-forward checks the cutoff on seasons it was not
    chosen on (selection.csv). With a site column ([history] site_column) every site is priced on
    the same simulated seasons and sites.csv gives each site's own cutoff; the headline is then for
    all sites at one common cutoff.
    """
    with _user_errors():
        _execute(read_scenario(scenario), history, out, replicates, seed, force, quiet, as_json,
                 walk_forward=True if walk_forward else None, workers=workers, cluster=cluster)


@app.command("demo")
def demo_command(
    out: Annotated[Path, typer.Option(help="Folder for the demo's files and results.")] = Path("outputs/demo"),
    replicates: Replicates = None,
    force: Force = False,
    quiet: Quiet = False,
    as_json: AsJson = False,
) -> None:
    """Run the invented example: a line-marking contractor deciding each day whether to send its
    crews out, on a supplier's forecast of rain.

    Writes the demo's history and scenario into the output folder, runs them, and prints the headline.
    """
    from .demo import write_demo_files

    with _user_errors():
        check_out_folder(out, force)
        scenario_path = write_demo_files(out)
        scenario = read_scenario(scenario_path)
        # the demo's own inputs are in the folder, so the results may join them there
        _execute(scenario, None, out, replicates, None, True, quiet, as_json)


@app.command("check")
def check_command(
    history: Annotated[Path, typer.Argument(help="The history file (CSV or Parquet) to check.")],
    scenario: Annotated[Path | None, typer.Option(help="A scenario whose [history], [event] and "
                                                  "[season] say how to read the history.")] = None,
) -> None:
    """Check a history and describe it (rows, period, event rate, forecast quality) without simulating."""
    from . import scoring

    with _user_errors():
        spec = (read_scenario(scenario) if scenario is not None
                else Scenario(name=history.stem, costs=Costs(hit=0, false_alarm=1, miss=1)))
        h = read_history(spec, history)
    for warning in h.warnings:
        err_console.print(f"warning: {warning}", markup=False, highlight=False, soft_wrap=True)
    p, event = h.p[h.evaluated], h.event[h.evaluated]
    table = Table(title=f"{history}: ok", show_header=False, title_justify="left")
    table.add_column(style="bold")
    table.add_column()
    table.add_row("Rows", f"{h.n_rows} ({h.n_evaluated} in the season, {len(h.seasons)} seasons)")
    table.add_row("Period", f"{h.start} to {h.end}")
    table.add_row("Calendar", f"{h.frequency.describe()} (the priced season is laid on it)")
    if h.has_sites:
        names = ", ".join(h.site_names[:5]) + (", ..." if h.n_sites > 5 else "")
        table.add_row("Sites", f"{h.n_sites} (column \"{spec.history.site_column}\"): {names}")
    if h.has_validation:
        table.add_row("Training / validation", f"{int(h.training.sum())} / {int(h.validation.sum())} occasions")
    table.add_row(f"Event rate (\"{spec.event.name}\")", f"{event.mean():.3f} ({int(event.sum())} occasions)")
    table.add_row("Mean forecast probability", f"{p.mean():.3f}")
    table.add_row("Brier score", f"{scoring.brier_score(p, event):.4f} (skill against the base rate "
                                 f"{scoring.brier_skill_score(p, event):.3f})")
    table.add_row("ROC area", f"{scoring.roc_auc(p, event):.3f}")
    out_console.print(table)


@app.callback(invoke_without_command=True)
def main(version: Annotated[bool, typer.Option("--version", help="Print the version and stop.")] = False) -> None:
    """gonogo: choose the probability cutoff at which to act on a yes/no forecast, and price a season."""
    if version:
        out_console.print(f"gonogo {__version__}")
        raise typer.Exit()


if __name__ == "__main__":
    app()
