"""The tornado chart: how far the saving moves when each cost estimate moves alone.

Drawn as the other figures are (:mod:`simulator.account.figure_style`: matplotlib's Agg canvas, the
Okabe and Ito colours, a wide and a narrow layout, no metadata, user text plain). One bar per cost,
the widest at the top: from the change of the mean saving per season at the cost's low end to its
change at the high end, against today's saving (the line at 0). One-way sensitivity shown as a
tornado diagram is common practice in decision analysis (see :mod:`simulator.analysis.sensitivity`).
"""

from __future__ import annotations

from collections.abc import Sequence

import matplotlib as mpl
import numpy as np

from .figure_style import _STYLE, OKABE_ITO, Chart, Words, _figure, _layout, _money_axis, _png, _title, _wrap, user_text

__all__ = ["tornado_chart"]


def tornado_chart(labels: Sequence[str], change_low: Sequence[float], change_high: Sequence[float],
                  words: Words, narrow: bool = False, noun: str = "cost") -> Chart:
    """Bars of the change of the mean saving per season at each cost's low and high end, in the
    order given (the widest first, drawn at the top); ``labels`` are plain text; ``noun``: what was
    moved, ``"cost"`` or (under ``[operations]``) ``"price"``."""
    _, _, ncol, _ = _layout(narrow)
    low, high = np.asarray(change_low, dtype=float), np.asarray(change_high, dtype=float)
    with mpl.rc_context(_STYLE):
        fig = _figure(1.9 + 0.5 * len(labels), narrow, 2.8 + 0.8 * len(labels))
        ax = fig.add_subplot()
        y = np.arange(len(labels))[::-1].astype(float)
        ax.barh(y, low, height=0.6, color=OKABE_ITO["sky_blue"], label=f"{noun.capitalize()} at its low end")
        ax.barh(y, high, height=0.6, color=OKABE_ITO["vermillion"], hatch="///", edgecolor="white",
                label=f"{noun.capitalize()} at its high end")
        ax.axvline(0, color="#000000", lw=1.2)
        ax.set_yticks(y, [_wrap(user_text(name), 22 if narrow else 30) for name in labels])
        ax.grid(axis="y", visible=False)
        ax.set_ylim(-0.6, len(labels) - 0.4)
        ax.set_xlabel(f"Change of the saving ({words.currency} per season)")
        _money_axis(ax.xaxis, few=narrow)
        _title(ax, f"Each {noun} moved alone: the saving's change", narrow)
        fig.legend(loc="outside lower center", ncol=ncol)
        return Chart(_png(fig))
