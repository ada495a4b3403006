"""Figures of the forecast's quality: reliability, ROC and relative value; with several
``[forecasts]``, every forecast's value curve on one chart.

Drawn in the common style and layouts of :mod:`figure_style` (see its docstring); user strings
reach it as plain text, through :class:`~.figure_style.Words` and :func:`~.figure_style.user_text`.
"""

from __future__ import annotations

from collections.abc import Sequence

import matplotlib as mpl
import numpy as np

from .figure_style import (_GREY, _STYLE, OKABE_ITO, Chart, Words, _figure, _layout, _png, _title, _wrap,
                           user_text)

__all__ = ["reliability_chart", "roc_chart", "value_chart", "forecasts_value_chart", "FORECAST_STYLE"]


def reliability_chart(forecast_mean: np.ndarray, observed: np.ndarray, n: np.ndarray,
                      bin_lower: np.ndarray, bin_upper: np.ndarray, event_rate: float,
                      words: Words, narrow: bool = False) -> Chart:
    """Observed frequency against forecast probability per bin, with the count of each bin below."""
    with mpl.rc_context(_STYLE):
        fig = _figure(5.2, narrow, 5.0, width=5.2)
        top, bottom = fig.subplots(2, 1, sharex=True, height_ratios=[3, 1.2])
        seen = n > 0
        top.plot([0, 1], [0, 1], color=_GREY, lw=1, linestyle=(0, (4, 2)), label="Perfectly reliable")
        top.axhline(event_rate, color=OKABE_ITO["green"], lw=1, linestyle=(0, (1, 1.5)),
                    label=f"Event rate {event_rate:.2f}")
        top.plot(forecast_mean[seen], observed[seen], "o-", color=OKABE_ITO["blue"], lw=1.8, ms=5,
                 label="This forecast")
        top.set_xlim(0, 1)
        top.set_ylim(0, 1)
        top.set_ylabel(_wrap(f"Observed share of \u201c{words.event}\u201d (0 to 1)", 30 if narrow else 40))
        top.set_title("Reliability: does 70% mean 70%?")
        top.legend(loc="upper left")
        centres = (bin_lower + bin_upper) / 2
        bottom.bar(centres, n, bin_upper - bin_lower, color=OKABE_ITO["sky_blue"], edgecolor="white")
        for x, count in zip(centres, n):
            bottom.annotate(f"{int(count)}", (x, count), xytext=(0, 1), textcoords="offset points",
                            ha="center", va="bottom", fontsize=7)
        bottom.set_ylim(0, max(1, int(n.max())) * 1.35)
        bottom.set_ylabel(f"{words.occasion.capitalize()}s\n(count)")
        bottom.set_xlabel(_wrap(f"Forecast probability of \u201c{words.event}\u201d (0 to 1)", 44 if narrow else 80))
        return Chart(_png(fig))


def roc_chart(false_alarm_rate: np.ndarray, hit_rate: np.ndarray, point: tuple[float, float],
              cutoff: float, auc: float, words: Words, narrow: bool = False) -> Chart:
    """ROC curve over the cutoff grid with the recommended cutoff's point."""
    with mpl.rc_context(_STYLE):
        fig = _figure(5.2, narrow, 4.6, width=5.2)
        ax = fig.add_subplot()
        ok = np.isfinite(false_alarm_rate) & np.isfinite(hit_rate)
        order = np.argsort(false_alarm_rate[ok], kind="stable")
        x = np.concatenate([[0.0], false_alarm_rate[ok][order], [1.0]])
        y = np.concatenate([[0.0], hit_rate[ok][order], [1.0]])
        ax.plot([0, 1], [0, 1], color=_GREY, lw=1, linestyle=(0, (4, 2)), label="No skill")
        ax.plot(x, y, color=OKABE_ITO["blue"], lw=2, label=f"This forecast (area {auc:.2f})")
        ax.plot(*point, "o", color=OKABE_ITO["vermillion"], ms=8, mec="black", zorder=5,
                label=f"{words.best.capitalize()} cutoff {cutoff:.{words.decimals}f}")
        ax.set_xlim(0, 1)
        ax.set_ylim(0, 1.01)
        ax.set_aspect("equal")
        ax.set_xlabel(_wrap(f"False alarm rate (share of {words.occasion}s without \u201c{words.event}\u201d "
                            "on which we act, 0 to 1)", 44))
        ax.set_ylabel(_wrap(f"Hit rate (share of \u201c{words.event}\u201d {words.occasion}s on which we act, "
                            "0 to 1)", 34 if narrow else 44))
        ax.set_title("ROC: hits against false alarms")
        ax.legend(loc="lower right")
        return Chart(_png(fig))


def _value_axes(fig, ax, curves: list[np.ndarray], title: str, narrow: bool) -> Chart:
    """The relative-value chart's axes, limits, labels, title and legend (one place for both value
    charts): value from a little below the lowest finite value of ``curves`` (not below -0.5) to 1."""
    _, _, ncol, wrap = _layout(narrow)
    finite = np.concatenate([c[np.isfinite(c)] for c in curves] + [np.zeros(1)])
    ax.set_ylim(max(-0.5, float(finite.min()) - 0.05), 1.02)
    ax.set_xlim(0, 1)
    ax.set_xlabel(_wrap("Cost-loss ratio: what acting costs / what it saves when the event comes (0 to 1)", wrap))
    ax.set_ylabel("Relative value\n(1 = perfect, 0 = best fixed rule)")
    _title(ax, title, narrow)
    fig.legend(loc="outside lower center", ncol=ncol if narrow else 3)
    return Chart(_png(fig))


def value_chart(ratios: np.ndarray, potential: np.ndarray, at_ratio: np.ndarray, scenario_ratio: float,
                scenario_value: float, words: Words, narrow: bool = False) -> Chart:
    """Relative value across cost-loss ratios (Richardson 2000), the scenario's ratio marked."""
    with mpl.rc_context(_STYLE):
        fig = _figure(4.4, narrow, 5.4)
        ax = fig.add_subplot()
        ax.axhline(0, color=OKABE_ITO["black"], lw=0.8)
        ax.plot(ratios, potential, color=OKABE_ITO["blue"], lw=2, label="Best cutoff for each ratio")
        ax.plot(ratios, at_ratio, color=OKABE_ITO["orange"], lw=1.5, linestyle=(0, (4, 2)),
                label="Cutoff equal to the ratio")
        if np.isfinite(scenario_ratio):
            ax.axvline(scenario_ratio, color=_GREY, lw=1.2, linestyle=(0, (1, 2)))
            ax.plot([scenario_ratio], [scenario_value], "o", color=OKABE_ITO["vermillion"], mec="black",
                    ms=8, zorder=5, label=f"This scenario ({scenario_ratio:.{words.decimals}f}) at the {words.best} cutoff")
        return _value_axes(fig, ax, [potential, at_ratio], "Relative value: what the forecast is worth at other costs",
                           narrow)


# one look per forecast of [forecasts], in the order listed: colour, dash and marker differ, so the
# curves part in grey print too (a seventh forecast reuses the first look)
FORECAST_STYLE = [
    {"color": OKABE_ITO["blue"], "linestyle": "-", "marker": "o"},
    {"color": OKABE_ITO["vermillion"], "linestyle": (0, (6, 2)), "marker": "s"},
    {"color": OKABE_ITO["green"], "linestyle": (0, (5, 2, 1, 2)), "marker": "^"},
    {"color": OKABE_ITO["purple"], "linestyle": (0, (1, 1.4)), "marker": "D"},
    {"color": OKABE_ITO["orange"], "linestyle": (0, (4, 1.5, 1, 1.5, 1, 1.5)), "marker": "v"},
    {"color": OKABE_ITO["sky_blue"], "linestyle": (0, (2.5, 2)), "marker": "P"},
]


def forecasts_value_chart(ratios: np.ndarray, curves: Sequence[tuple[str, np.ndarray]], scenario_ratio: float,
                          words: Words, narrow: bool = False) -> Chart:
    """Each forecast's potential relative value (its best cutoff for each cost-loss ratio; Richardson
    2000) on one chart, the scenario's ratio marked with each forecast's value there (issue 13).

    Parameters
    ----------
    ratios : (n_ratios,) cost-loss ratios, 0 to 1.
    curves : (name, value) per forecast in the order listed, each value (n_ratios,); names are
        drawn as plain text.
    scenario_ratio : the break-even probability of the scenario's costs (NaN when undefined).
    """
    with mpl.rc_context(_STYLE):
        fig = _figure(4.6, narrow, 5.8)
        ax = fig.add_subplot()
        ax.axhline(0, color=OKABE_ITO["black"], lw=0.8)
        for j, (name, value) in enumerate(curves):
            style = FORECAST_STYLE[j % len(FORECAST_STYLE)]
            ax.plot(ratios, value, color=style["color"], linestyle=style["linestyle"], lw=2, label=user_text(name))
            if np.isfinite(scenario_ratio):
                ax.plot([scenario_ratio], [float(np.interp(scenario_ratio, ratios, value))], style["marker"],
                        color=style["color"], mec="black", ms=7, zorder=5)
        if np.isfinite(scenario_ratio):
            ax.axvline(scenario_ratio, color=_GREY, lw=1.2, linestyle=(0, (1, 2)),
                       label=f"Your costs: ratio {scenario_ratio:.{words.decimals}f}")
        return _value_axes(fig, ax, [value for _, value in curves], "Relative value of each forecast at other costs",
                           narrow)
