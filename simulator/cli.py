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

from . import __version__
from .errors import InputError
from .history import read_history
from .outputs import check_out_folder, render_files, summary, write_files
from .run import RunResult, run
from .scenario import Costs, Scenario, read_scenario

app = typer.Typer(add_completion=False, no_args_is_help=True, pretty_exceptions_enable=False,
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
    table.add_row("Recommended cutoff", f"{s['recommended_cutoff']:.2f}  (90% interval {lo:.2f} to {hi:.2f}; "
                                        f"break-even probability of the costs {s['theoretical_cutoff']:.2f})")
    table.add_row("Expected season cost", f"{_money(model['mean'], cur)}  (90% of seasons "
                                          f"{_money(model['p05'], cur)} to {_money(model['p95'], cur)})")
    sv = s["savings"]
    table.add_row(f"Saving against {ref}", f"{_money(sv['mean'], cur)}  (90% range {_money(sv['p05'], cur)} to "
                                           f"{_money(sv['p95'], cur)}; saves money in "
                                           f"{sv['prob_saving']:.0%} of seasons)")
    table.add_row(f"Cutoffs that beat {ref}", _ranges(s["break_even"]) + "  (on average); "
                  + _ranges(s["confident_break_even"]) + " (in 95% of seasons)")
    table.add_row("Season", f"{s['season_occasions']} occasions, {s['replicates']} replicate seasons, "
                            f"mean run {s['mean_block_days']:.1f} days")
    for name, d in s["strategies"].items():
        if name != "model":
            table.add_row(f"  {name}", f"{_money(d['mean'], cur)}  ({_money(d['p05'], cur)} to "
                                       f"{_money(d['p95'], cur)})")
    return table


def _report_run(result: RunResult, out: Path, written: list[Path], quiet: bool, as_json: bool) -> None:
    for warning in result.warnings:
        err_console.print(f"warning: {warning}", markup=False, highlight=False, soft_wrap=True)
    if as_json:
        sys.stdout.write(json.dumps(summary(result), indent=2) + "\n")
        return
    if quiet:
        return
    out_console.print(_headline(result))
    caution = CAUTION
    if result.scenario.event.hazard:
        caution = f"\"{result.scenario.event.name}\" is a hazard to people. " + CAUTION
    out_console.print(f"[bold]Caution:[/bold] {caution}")
    out_console.print(f"Wrote {len(written)} files to {out}/")


def _execute(scenario: Scenario, history: Path | None, out: Path | None, replicates: int | None,
             seed: int | None, force: bool, quiet: bool, as_json: bool) -> None:
    out = out if out is not None else Path("outputs") / scenario.slug
    check_out_folder(out, force)  # before any work, so a refusal costs nothing
    with _progress_bar(not (quiet or as_json)) as progress:
        result = run(scenario, history, replicates=replicates, seed=seed, progress=progress)
    written = write_files(render_files(result), out, force)
    _report_run(result, out, written, quiet, as_json)


Replicates = Annotated[int | None, typer.Option(min=20, help="How many replicate seasons to simulate "
                                                "(default: the scenario's [simulation] replicates).")]
Seed = Annotated[int | None, typer.Option(min=0, help="Random seed; the same seed gives identical files "
                                          "(default: the scenario's [simulation] seed).")]
Force = Annotated[bool, typer.Option("--force", help="Replace results already in the output folder.")]
Quiet = Annotated[bool, typer.Option("--quiet", help="Print nothing but warnings and errors (for scripts).")]
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
) -> None:
    """Replay the history under every cutoff, price each replicate season, and recommend a cutoff.

    Writes summary.json and cutoffs.csv (one row per cutoff) with the tables beside them into the
    output folder, and prints a short headline.
    """
    with _user_errors():
        _execute(read_scenario(scenario), history, out, replicates, seed, force, quiet, as_json)


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
