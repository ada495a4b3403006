"""The comparison's figure: each forecast's value curve on one chart (issue 13).

Relative economic value against the cost-loss ratio (Richardson 2000, "Skill and relative
economic value of the ECMWF ensemble prediction system", QJRMS 126, 649-667), one curve per
forecast at its best cutoff for each ratio, with the user's own ratio (the break-even probability
of the scenario's costs) marked and each forecast's value there. Drawn in the manner of
:mod:`simulator.account.figures`: its own Figure on the Agg canvas, Okabe and Ito colours with a
dash and a marker each, user strings as plain text.
"""

from __future__ import annotations

from collections.abc import Sequence

import matplotlib as mpl
import numpy as np

from .figures import _GREY, _STYLE, OKABE_ITO, Chart, Words, _figure, _layout, _png, _title, _wrap, user_text

__all__ = ["FORECAST_STYLE", "forecasts_value_chart"]

# one look per forecast, in the order listed: colour, dash and marker differ, so the curves part in
# grey print too (a 21st forecast would reuse the first look; at most 20 are allowed)
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
    """Each forecast's potential relative value (best cutoff for each cost-loss ratio) on one
    chart, the scenario's ratio marked with each forecast's value there.

    Parameters
    ----------
    ratios : (n_ratios,) cost-loss ratios, 0 to 1.
    curves : (name, value) per forecast in the order listed, each value (n_ratios,).
    scenario_ratio : the break-even probability of the scenario's costs (NaN when undefined).
    """
    _, _, ncol, wrap = _layout(narrow)
    with mpl.rc_context(_STYLE):
        fig = _figure(4.6, narrow, 5.8)
        ax = fig.add_subplot()
        ax.axhline(0, color=OKABE_ITO["black"], lw=0.8)
        lows = [0.0]
        for j, (name, value) in enumerate(curves):
            style = FORECAST_STYLE[j % len(FORECAST_STYLE)]
            finite = np.isfinite(value)
            lows.append(float(value[finite].min()) if finite.any() else 0.0)
            ax.plot(ratios, value, color=style["color"], linestyle=style["linestyle"], lw=2,
                    label=user_text(name))
            if np.isfinite(scenario_ratio):
                at = float(np.interp(scenario_ratio, ratios, value))
                ax.plot([scenario_ratio], [at], style["marker"], color=style["color"], mec="black", ms=7, zorder=5)
        if np.isfinite(scenario_ratio):
            ax.axvline(scenario_ratio, color=_GREY, lw=1.2, linestyle=(0, (1, 2)),
                       label=f"Your costs: ratio {scenario_ratio:.{words.decimals}f}")
        ax.set_ylim(max(-0.5, min(lows) - 0.05), 1.02)
        ax.set_xlim(0, 1)
        ax.set_xlabel(_wrap("Cost-loss ratio: what acting costs / what it saves when the event comes (0 to 1)", wrap))
        ax.set_ylabel("Relative value\n(1 = perfect, 0 = best fixed rule)")
        _title(ax, "Relative value of each forecast at other costs", narrow)
        fig.legend(loc="outside lower center", ncol=ncol if narrow else 3)
        return Chart(_png(fig))
