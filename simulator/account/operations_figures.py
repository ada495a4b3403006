"""Figures of the operating rules: where the money goes, and when the work gets done.

Drawn in the common style and layouts of :mod:`figure_style` (see its docstring); user strings
reach it as plain text, through :class:`~.figure_style.Words` and :func:`~.figure_style.user_text`.
"""

from __future__ import annotations

from collections.abc import Sequence

import matplotlib as mpl
import numpy as np
from matplotlib import dates as mdates

from .figure_style import _STYLE, OKABE_ITO, Chart, Words, _figure, _layout, _money_bars_done, _png, _title, user_text

__all__ = ["components_chart", "completion_chart"]


def components_chart(names: Sequence[str], values: Sequence[float], reference: Sequence[float] | None,
                     words: Words, narrow: bool = False) -> Chart:
    """Expected season cost split into its parts under the operating rules, at the recommended
    cutoff and (when given) under the reference rule."""
    _, _, ncol, wrap = _layout(narrow)
    with mpl.rc_context(_STYLE):
        fig = _figure(1.6 + 0.5 * len(names), narrow, 2.4 + 0.6 * len(names))
        ax = fig.add_subplot()
        y = np.arange(len(names))[::-1].astype(float)
        height = 0.38 if reference is not None else 0.6
        ax.barh(y + (height / 2 if reference is not None else 0), values, height=height,
                color=OKABE_ITO["blue"], label=f"Following the forecast at the {words.best} cutoff")
        if reference is not None:
            ax.barh(y - height / 2, reference, height=height, color=OKABE_ITO["vermillion"], hatch="///",
                    edgecolor="white", label="The reference rule")
        ax.set_yticks(y, [user_text(n) for n in names])
        ax.grid(axis="y", visible=False)
        return _money_bars_done(fig, ax, words, "Expected cost in a season", "Where the money goes under the operating rules", narrow, ncol)


def completion_chart(dates: Sequence[str], shares: Sequence[float], reference: Sequence[float] | None,
                     deadline: str | None, words: Words, reference_label: str = "Reference rule",
                     narrow: bool = False) -> Chart:
    """Share of simulated seasons with the work finished by the end of each day (a daily step curve:
    its height at the deadline is the share finished on time), at the cutoff and, when given, under
    the reference rule."""
    with mpl.rc_context(_STYLE):
        fig = _figure(3.6, narrow, 4.4)
        ax = fig.add_subplot()
        day = np.array(dates, dtype="datetime64[D]")
        done = 100 * np.asarray(shares, dtype=float)
        # finished during a day: counted from the end of it
        ax.step(np.concatenate([[day[0]], day + 1]), np.concatenate([[0.0], done]), where="post",
                color=OKABE_ITO["blue"], lw=2, label=f"Following the forecast at the {words.best} cutoff")
        if reference is not None:
            ax.step(np.concatenate([[day[0]], day + 1]), np.concatenate([[0.0], 100 * np.asarray(reference)]),
                    where="post", color="#555555", lw=1.5, linestyle=(0, (1, 1.5)),
                    label=f"{reference_label} (reference)")
        if deadline:
            ax.axvline(np.datetime64(deadline, "D") + 1, color=OKABE_ITO["vermillion"], lw=1.5,
                       linestyle=(0, (4, 2)), label=f"Deadline {deadline} (end of the day)")
        ax.set_ylim(0, 102)
        started = (done > 0) | (100 * np.asarray(reference if reference is not None else done) > 0)
        first = int(np.argmax(started)) if started.any() else 0
        ax.set_xlim(day[max(first - 7, 0)], day[-1] + 1)  # from a week before the first season finishes
        ax.set_ylabel("Seasons finished (% of\nsimulated seasons)")
        ax.set_xlabel("Date (end of the day the work was finished)")
        _title(ax, "When the work gets done at the recommended cutoff", narrow)
        if narrow:
            ax.xaxis.set_major_locator(mdates.MonthLocator())
            ax.xaxis.set_major_formatter(mdates.DateFormatter("%b"))
        fig.legend(loc="outside lower center", ncol=1)
        if not narrow:
            fig.autofmt_xdate()
        return Chart(_png(fig))
