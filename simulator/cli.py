"""The ``gonogo`` command line: the only module that prints or exits.

Each command's docstring is its ``--help`` text. A user's mistake (an :class:`InputError`) is
printed as one line on standard error with exit status 2, and nothing is written. A run stopped by
Ctrl-C (SIGINT) or SIGTERM ends within a few seconds with one line and exit status 130 or 143
(128 + the signal's number, as shells report it): the stop passes through the run as an exception,
so the worker processes are ended and no staging folder is left (:func:`_stops`).

Every string from a scenario or a history is untrusted: the consoles interpret no markup (square
brackets print as they are), and each such string passes through :func:`_plain`, which writes its
control characters as escapes, before it reaches the terminal.
"""

from __future__ import annotations

import json
import signal
import sys
import threading
import warnings
from contextlib import contextmanager
from pathlib import Path
from typing import Annotated

import typer
from rich.console import Console
from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn
from rich.table import Table
from rich.text import Text

from gonogo_command import raise_stopped, stop_name

from . import __version__
from .account.terminal import (_calibration_lines, _headline, _plain, _selection_tables, _sites_tables,
                                _stress_tables)
from .inputs.dates import human_format
from .inputs.errors import InputError
from .inputs.history import read_history
from .account.outputs import render_files, summary
from .account.out_folder import check_out_folder
from .account.result_set import write_files
from .execution.dask_cluster import CLUSTER_ENV
from .results import RunResult
from .run import run
from .inputs.scenario import Scenario, read_scenario
from .inputs.scenario_costs import Costs

app = typer.Typer(add_completion=False, no_args_is_help=True, pretty_exceptions_enable=False,
                  rich_markup_mode=None,
                  help="gonogo: choose the probability cutoff at which to act on a yes/no forecast, "
                       "and price what a season will cost at it.")
# no console markup, highlighting or emoji codes: user strings print as they are written
out_console = Console(markup=False, highlight=False, emoji=False)
err_console = Console(stderr=True, markup=False, highlight=False, emoji=False)


def _warn(message: str) -> None:
    err_console.print(f"warning: {_plain(message)}", soft_wrap=True)


def _fail(error: InputError) -> None:
    err_console.print(f"error: {_plain(str(error))}", soft_wrap=True)
    raise typer.Exit(code=2)


def _show_warning(message, category, filename, lineno, file=None, line=None) -> None:
    """Python's warnings (numpy's among them) as one line without a source path."""
    _warn(str(message))


@contextmanager
def _user_errors():
    with warnings.catch_warnings():
        warnings.showwarning = _show_warning
        try:
            yield
        except InputError as error:
            _fail(error)


@contextmanager
def _stops(unfinished: str = "the run did not finish and the output folder is as it was"):
    """Ctrl-C or SIGTERM during a command: one line, exit status 128 + the signal's number.

    Both arrive as an exception in the main thread (SIGTERM as ``gonogo_command.Stopped``), so every
    ``finally`` on the way out runs: the executor kills its workers and frees its shared memory
    (:func:`simulator.execution.choose.open_executor`), and a result set being written is taken away whole
    (:func:`simulator.account.result_set.write_files`). Click would otherwise print "Aborted!" with status 1.
    """
    # only in the main thread, and never where SIGTERM was ignored from the start (nohup and the like)
    own = (threading.current_thread() is threading.main_thread()
           and signal.getsignal(signal.SIGTERM) is not signal.SIG_IGN)
    previous = signal.signal(signal.SIGTERM, raise_stopped) if own else None
    try:
        yield
    except KeyboardInterrupt as stop:
        signum, how = stop_name(stop)
        where = getattr(stop, "after_writing", None)
        state = f"the results were already written to {where}" if where is not None else unfinished
        err_console.print(f"stopped by {how}: {_plain(state)}", soft_wrap=True)
        raise typer.Exit(code=128 + signum) from None
    finally:
        if own:
            signal.signal(signal.SIGTERM, previous)


@contextmanager
def _progress_bar(enabled: bool):
    if not enabled or not err_console.is_terminal:  # a pipe would get the bar's blank line only
        yield None
        return
    columns = (TextColumn("{task.description}", markup=False), BarColumn(), MofNCompleteColumn(),
               TimeRemainingColumn())
    with Progress(*columns, console=err_console, transient=True) as bar:
        tasks: dict[str, int] = {}

        def update(step: str, done: int, total: int) -> None:
            if step not in tasks:
                tasks[step] = bar.add_task(_plain(step), total=total)
            bar.update(tasks[step], completed=done, total=total)

        yield update


def _report_run(result: RunResult, out: Path, written: list[Path], quiet: bool, as_json: bool) -> None:
    for warning in result.warnings:
        _warn(warning)
    contents = summary(result)
    hazard = result.scenario.event.hazard
    cautions = [Text.assemble(("Caution: ", "bold"), (_plain(text), "bold" if i == 0 and hazard else ""))
                for i, text in enumerate(contents["cautions"])]
    if hazard and (quiet or as_json):  # a hazard's cautions are never silenced: standard error
        for caution in cautions:
            err_console.print(caution, soft_wrap=True)
    if as_json:
        sys.stdout.write(json.dumps(contents, indent=2) + "\n")
        return
    if quiet:
        return
    if hazard:  # said first, and again at the end
        out_console.print(cautions[0], soft_wrap=True)
    out_console.print(_headline(result))
    for part in (_sites_tables(result) + _stress_tables(result) + _selection_tables(result)
                 + _calibration_lines(result)):
        if isinstance(part, str):
            part = _plain(part)
        out_console.print(part, soft_wrap=isinstance(part, Text) and bool(part.no_wrap))  # tables keep their lines
    for caution in cautions:
        out_console.print(caution, soft_wrap=True)
    out_console.print(_plain(f"Wrote {len(written)} files to {out}/; open {out / 'report.html'} to read the report"),
                      soft_wrap=True)  # the last line says where, whole


def _execute(scenario: Scenario, history: Path | None, out: Path | None, replicates: int | None,
             seed: int | None, force: bool, quiet: bool, as_json: bool,
             walk_forward: bool | None = None, workers: int | None = None, cluster: str | None = None) -> None:
    if out is None:  # outputs/<the scenario file's name without .toml>/
        out = Path("outputs") / (scenario.source.stem if scenario.source is not None else scenario.slug)
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
    try:
        _report_run(result, out, written, quiet, as_json)
    except KeyboardInterrupt as stop:
        stop.after_writing = out
        raise


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
    history: Annotated[Path | None, typer.Option(help="The history file (CSV, Excel .xlsx or Parquet), instead of "
                                                 "the scenario's [history] path.")] = None,
    out: Annotated[Path | None, typer.Option(help="Folder for the results (default: outputs/<the "
                                             "scenario file's name without .toml>).")] = None,
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
    with _stops(), _user_errors():
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
    from .demo.generator import write_demo_files

    with _stops("the demo did not finish; the results in the output folder are as they were"), _user_errors():
        check_out_folder(out, force)
        scenario_path = write_demo_files(out)
        scenario = read_scenario(scenario_path)
        # the demo's own inputs are in the folder, so the results may join them there
        _execute(scenario, None, out, replicates, None, True, quiet, as_json)


@app.command("check")
def check_command(
    history: Annotated[Path, typer.Argument(help="The history file (CSV, Excel .xlsx or Parquet) to check.")],
    scenario: Annotated[Path | None, typer.Option(help="A scenario whose [history], [event] and "
                                                  "[season] say how to read the history.")] = None,
) -> None:
    """Check a history and describe it (rows, period, event rate, forecast quality) without simulating."""
    from .pricing import scoring

    with _stops("the check did not finish"), _user_errors():
        spec = (read_scenario(scenario) if scenario is not None
                else Scenario(name=history.stem, costs=Costs(hit=0, false_alarm=1, miss=1)))
        h = read_history(spec, history)
    for warning in h.warnings:
        _warn(warning)
    p, event = h.p[h.evaluated], h.event[h.evaluated]
    table = Table(title=_plain(f"{history}: ok"), show_header=False, title_justify="left")
    table.add_column(style="bold")
    table.add_column()
    table.add_row("File", Text(h.read_as))
    table.add_row("Rows", f"{h.n_rows} ({h.n_evaluated} in the season, {len(h.seasons)} seasons)")
    table.add_row("Period", f"{h.start} to {h.end}")
    table.add_row("Calendar", f"{h.frequency.describe()} (the priced season is laid on it)")
    if h.has_sites:
        names = ", ".join(h.site_names[:5]) + (", ..." if h.n_sites > 5 else "")
        table.add_row("Sites", _plain(f"{h.n_sites} (column \"{spec.history.site_column}\"): {names}"))
    if h.has_validation:
        table.add_row("Training / validation", f"{int(h.training.sum())} / {int(h.validation.sum())} occasions")
    table.add_row(_plain(f"Event rate (\"{spec.event.name}\")"), f"{event.mean():.3f} ({int(event.sum())} occasions)")
    table.add_row("Mean forecast probability", f"{p.mean():.3f}")
    table.add_row("Brier score", f"{scoring.brier_score(p, event):.4f} (skill against the base rate "
                                 f"{scoring.brier_skill_score(p, event):.3f})")
    table.add_row("ROC area", f"{scoring.roc_auc(p, event):.3f}")
    out_console.print(table)


@app.command("init")
def init_command(
    history: Annotated[Path, typer.Argument(help="The history file: CSV (any common separator, decimal "
                                            "mark and encoding), Excel .xlsx or Parquet.")],
    scenario: Annotated[Path, typer.Argument(help="Where to write the starter scenario (.toml).")],
    force: Annotated[bool, typer.Option("--force", help="Replace SCENARIO if it exists.")] = False,
) -> None:
    """Write a starter scenario for a history file: finds the date, probability and outcome columns,
    the file's separator, decimal mark, encoding and date format, and the months and weekdays present.

    The scenario says what was found and marks each choice made. The costs are left for you to fill
    in: check and run refuse the scenario until they are numbers.
    """
    from .inputs.starter import find_layout, starter_scenario, write_scenario

    with _user_errors():
        if scenario.suffix.lower() != ".toml":
            raise InputError(f"{scenario}: a scenario file's name ends in .toml; give for example "
                             f"{scenario.with_suffix('.toml')}")
        if scenario.exists() and not force:
            raise InputError(f"{scenario}: already exists; give --force to replace it, or another name")
        if not scenario.parent.is_dir():
            raise InputError(f"{scenario.parent}: no such folder for the scenario; create it or give another path")
        layout = find_layout(history)
        text = starter_scenario(layout, scenario)
        write_scenario(scenario, text)
    d = layout.dialect
    table = Table(title=Text(f"{history}: what init found"), show_header=False, title_justify="left")
    table.add_column(style="bold")
    table.add_column()

    def add(label: str, text: str) -> None:  # names from the file are plain text, never markup
        table.add_row(label, Text(text))

    add("File", f"{d.describe()}; {layout.n_rows:,} rows")
    date_how = ("left in doubt: " + layout.date_doubt if layout.date_format is None else
                human_format(layout.date_format))
    add("Dates", f'column "{layout.date_column}", {date_how}'
                  + (f"; {layout.start} to {layout.end}" if layout.start else ""))
    add("Probability", ", ".join(f'"{c}"' for c in layout.probability_columns)
                  + (" (the first is used)" if len(layout.probability_columns) > 1 else ""))
    if layout.outcome_column is not None:
        add("Outcome", f'"{layout.outcome_column}", event on {layout.event_rate:.1%} of rows')
    else:
        add("Outcome", f'from "{layout.value_column}" at or above {layout.value_median:.6g} '
                                 "(its median: set the threshold you mean)")
    if layout.site_column is not None:
        add("Sites", f'column "{layout.site_column}"')
    if layout.months:
        days = f"weekdays {', '.join(layout.weekdays)}" if layout.weekdays else f"a row {layout.frequency}"
        add("Season", f"months {', '.join(str(m) for m in layout.months)}; {days}")

    out_console.print(table)
    for note in layout.notes:
        err_console.print(f"note: {note}", markup=False, highlight=False, soft_wrap=True)
    prog = _program()
    out_console.print(Text(f"Wrote {scenario}. Next: fill in the four costs in its [costs] (and any line "
                           f"marked CHOSEN that is not right), then run:\n  {prog} check {history} "
                           f"--scenario {scenario}\n  {prog} run {scenario}"), soft_wrap=True)


def _program() -> str:
    """How the user called gonogo, for commands to copy: "gonogo" when that is on the PATH,
    else the path they typed (such as .venv/bin/gonogo)."""
    import os
    import shutil

    called = sys.argv[0] if sys.argv and Path(sys.argv[0]).name == "gonogo" else "gonogo"
    found = shutil.which("gonogo")
    if called == "gonogo" or (found and os.path.realpath(found) == os.path.realpath(called)):
        return "gonogo"
    return called


@app.callback(invoke_without_command=True)
def main(version: Annotated[bool, typer.Option("--version", help="Print the version and stop.")] = False) -> None:
    """gonogo: choose the probability cutoff at which to act on a yes/no forecast, and price a season."""
    if version:
        out_console.print(f"gonogo {__version__}")
        raise typer.Exit()


if __name__ == "__main__":
    app()
