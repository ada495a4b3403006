"""The figure of the stress cases: season cost if next season is different.

Drawn in the common style and layouts of :mod:`figure_style` (see its docstring); user strings
reach it as plain text, through :class:`~.figure_style.Words` and :func:`~.figure_style.user_text`.
"""

from __future__ import annotations

from collections.abc import Sequence

import matplotlib as mpl
import numpy as np

from .figure_style import (_GREY, _STYLE, BASELINE_STYLE, OKABE_ITO, Chart, Words, _figure, _layout,
                           _money_bars_done, _wrap, user_text)

__all__ = ["stress_chart"]


def stress_chart(names: Sequence[str], mean: Sequence[float], p05: Sequence[float], p95: Sequence[float],
                 best: Sequence[float], reference: Sequence[float], words: Words, narrow: bool = False) -> Chart:
    """Season cost at the recommended cutoff per stress case (mean and 5-95% range), the expected
    cost at each case's own best cutoff, and the reference rule's expected cost in the case."""
    _, _, ncol, wrap = _layout(narrow)
    with mpl.rc_context(_STYLE):
        fig = _figure(1.9 + 0.45 * len(names), narrow, 2.6 + 0.75 * len(names))
        ax = fig.add_subplot()
        y = np.arange(len(names))[::-1]
        mean, p05, p95, best, reference = (np.asarray(v, dtype=float) for v in (mean, p05, p95, best, reference))
        ax.hlines(y, p05, p95, color=OKABE_ITO["sky_blue"], lw=7, label=f"90% of seasons at the {words.best} cutoff")
        ax.plot(mean, y, "o", color=OKABE_ITO["blue"], ms=8, label=f"Expected, at the {words.best} cutoff")
        ax.plot(best, y, "D", color=OKABE_ITO["vermillion"], mfc="white", mew=1.6, ms=7,
                label="Expected, at the case's own best cutoff")
        style = BASELINE_STYLE.get(words.reference, {"color": _GREY})
        reference_name = words.labels.get(words.reference, words.reference)
        ax.plot(reference, y, "|", color=style["color"], ms=18, mew=3, zorder=4,
                label=f"Expected, {reference_name[:1].lower() + reference_name[1:]} (the reference rule)")
        ax.set_yticks(y, [_wrap(user_text(n), 22 if narrow else 34) for n in names])
        ax.grid(axis="y", visible=False)
        ax.set_ylim(-0.6, len(names) - 0.4)
        return _money_bars_done(fig, ax, words, "Season cost", "What if next season is different?", narrow, ncol)
