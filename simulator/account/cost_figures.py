"""Figures of costs and cutoffs: season cost at each cutoff, savings against the reference, risk.

Drawn in the common style and layouts of :mod:`figure_style` (see its docstring); user strings
reach it as plain text, through :class:`~.figure_style.Words` and :func:`~.figure_style.user_text`.
"""

from __future__ import annotations

from collections.abc import Sequence

import matplotlib as mpl
import numpy as np

from .figure_style import (_GREY, _STYLE, BASELINE_STYLE, OKABE_ITO, Chart, Words, _figure, _geometry, _label_above,
                           _layout, _money_axis, _png, _title, _wrap)

__all__ = ["focus_range", "cost_chart", "savings_chart", "risk_chart"]


def focus_range(cutoffs: np.ndarray, points: Sequence[float], share: float = 0.4) -> tuple[float, float]:
    """The part of the cutoff axis where the decision lies.

    The span from the lowest to the highest of ``points`` (the recommended cutoff, its interval, the
    break-even probability of the costs, the break-even crossings), widened on each side by half that
    span or a tenth of the grid, whichever is more, and kept inside the grid. When that is more than
    ``share`` of the grid, the whole grid: zooming would hide more than it shows. Common practice, no
    single source.
    """
    first, last = float(cutoffs[0]), float(cutoffs[-1])
    marks = [float(x) for x in points if x is not None and np.isfinite(x) and first <= x <= last]
    if not marks or last <= first:
        return first, last
    lo, hi = min(marks), max(marks)
    pad = max(0.5 * (hi - lo), 0.1 * (last - first))
    lo, hi = max(first, lo - pad), min(last, hi + pad)
    if hi - lo > share * (last - first):
        return first, last
    return lo, hi


def cost_chart(cutoffs: np.ndarray, mean_cost: np.ndarray, p05_cost: np.ndarray, p95_cost: np.ndarray,
               baselines: dict[str, float], recommended: float, theoretical: float,
               crossings: Sequence[float], words: Words, focus: Sequence[float] = (),
               narrow: bool = False) -> Chart:
    """Mean season cost against the cutoff with its 5-95% band, the baselines as horizontal lines,
    the recommended cutoff, the break-even probability of the costs and the break-even points.

    The cutoff axis shows :func:`focus_range` of the recommended cutoff, the break-even probability,
    the crossings and the cutoffs in ``focus``; the axis label says so when that is not the whole grid.
    """
    _, _, ncol, wrap = _layout(narrow)
    lo, hi = focus_range(cutoffs, [recommended, theoretical, *crossings, *focus])
    zoomed = (lo, hi) != (float(cutoffs[0]), float(cutoffs[-1]))
    with mpl.rc_context(_STYLE):
        fig = _figure(4.5, narrow, 6.6)
        ax = fig.add_subplot()
        blue = OKABE_ITO["blue"]
        ax.fill_between(cutoffs, p05_cost, p95_cost, color=OKABE_ITO["sky_blue"], alpha=0.35, lw=0,
                        label="Forecast: 90% of seasons (5th to 95th percentile)")
        ax.plot(cutoffs, mean_cost, color=blue, lw=2.2, label="Forecast: expected season cost")
        for name, value in baselines.items():
            style = BASELINE_STYLE.get(name, {"color": _GREY, "linestyle": "--"})
            is_ref = name == words.reference
            label = words.labels.get(name, name) + (" (reference)" if is_ref else "")
            ax.axhline(value, lw=2.2 if is_ref else 1.4, label=label, **style)
        ref_cost = baselines.get(words.reference)
        if ref_cost is not None and len(crossings):
            ax.plot(crossings, [ref_cost] * len(crossings), "D", color=OKABE_ITO["black"], ms=6,
                    mfc="white", mew=1.5, zorder=5, label="Where the forecast stops beating the reference")
        ax.axvline(recommended, color=OKABE_ITO["black"], lw=1.6, zorder=4,
                   label=f"{words.best.capitalize()} cutoff {recommended:.{words.decimals}f}")
        marks = [(recommended, f"{recommended:.{words.decimals}f}", {"fontweight": "bold"})]
        if np.isfinite(theoretical):
            ax.axvline(theoretical, color=_GREY, lw=1.2, linestyle=(0, (1, 2)), zorder=3,
                       label=f"Break-even probability of the costs {theoretical:.{words.decimals}f}")
            marks.append((theoretical, f"{theoretical:.{words.decimals}f}", {"color": "#444444"}))
        _label_above(ax, marks, (hi - lo) * (2 if narrow else 1))
        ax.set_xlim(lo, hi)
        if zoomed:  # the costs seen in the window and every baseline set the height
            seen = (cutoffs >= lo) & (cutoffs <= hi)
            values = np.concatenate([p05_cost[seen], p95_cost[seen], mean_cost[seen], list(baselines.values())])
            values = values[np.isfinite(values)]
            if values.size:
                margin = 0.05 * max(float(values.max() - values.min()), 1.0)
                ax.set_ylim(float(values.min()) - margin, float(values.max()) + margin)
        label = (f"Cutoff (probability, 0 to 1): {words.action} when the forecast probability "
                 f"of \u201c{words.event}\u201d is at least this")
        if zoomed:
            label += (f" (shown: {lo:.{words.decimals}f} to {hi:.{words.decimals}f}, where the decision lies, "
                      f"of {cutoffs[0]:.{words.decimals}f} to {cutoffs[-1]:.{words.decimals}f})")
        ax.set_xlabel(_wrap(label, wrap))
        ax.set_ylabel(f"Season cost ({words.currency})")
        _money_axis(ax.yaxis)
        title = f"Season cost at each cutoff ({words.currency} per season; lower is better)"
        _title(ax, title, narrow, pad=30)
        fig.legend(loc="outside lower center", ncol=ncol)
        png = _png(fig)  # the last draw fixes the layout; read the geometry after it
        return Chart(png, _geometry(ax))


def _bin_edges(values: np.ndarray) -> np.ndarray:
    """Histogram edges that include 0 as an edge, so no bar straddles gain and loss."""
    lo, hi = float(values.min()), float(values.max())
    width = np.diff(np.histogram_bin_edges(values, bins="auto"))[0] if hi > lo else 0.0
    width = max(width, (hi - lo) / 60, 1e-9)
    if hi == lo:
        return np.array([lo - 0.5, lo + 0.5]) if lo != 0 else np.array([-0.5, 0.5])
    first, last = int(np.floor(lo / width)), int(np.ceil(hi / width))
    last = max(last, first + 1)
    return width * np.arange(first, last + 1)


def savings_chart(savings: np.ndarray, reference_label: str, words: Words, narrow: bool = False) -> Chart:
    """Histogram of season savings against the reference; losing seasons in vermillion, the zero
    line and the expected saving drawn over the bars, the legend below the axes."""
    _, _, ncol, wrap = _layout(narrow)
    with mpl.rc_context(_STYLE):
        fig = _figure(4.2, narrow, 5.0)
        ax = fig.add_subplot()
        edges = _bin_edges(savings)
        counts, _ = np.histogram(savings, bins=edges)
        left, widths = edges[:-1], np.diff(edges)
        losing = edges[1:] <= 0
        ax.bar(left[~losing], counts[~losing], widths[~losing], align="edge", color=OKABE_ITO["blue"],
               edgecolor="white", lw=0.4, label="Seasons that save money")
        if losing.any():
            ax.bar(left[losing], counts[losing], widths[losing], align="edge", color=OKABE_ITO["vermillion"],
                   edgecolor="white", lw=0.4, hatch="///", label="Seasons that lose money")
        ax.axvline(0, color=OKABE_ITO["black"], lw=1.4, zorder=3, label="No saving (0)")
        mean = float(savings.mean())
        ax.axvline(mean, color="white", lw=3.2, zorder=3)  # a halo that parts the line from the bars
        ax.axvline(mean, color=OKABE_ITO["black"], lw=1.2, linestyle=(0, (4, 2)), zorder=4,
                   label="Expected saving")
        ax.set_xlabel(_wrap(f"Saving in a season against the reference rule, {reference_label} "
                            f"({words.currency}; below 0: the forecast costs more)", wrap))
        ax.set_ylabel("Simulated seasons (count)")
        _money_axis(ax.xaxis, few=narrow)
        _title(ax, f"Savings at the {words.best} cutoff ({words.currency} per season)", narrow)
        fig.legend(loc="outside lower center", ncol=2 if narrow else 4)
        return Chart(_png(fig))


# marker of each objective's choice on the risk chart: colour, marker, size (sizes differ so that
# choices at the same cutoff stay visible one inside the other)
_OBJECTIVE_STYLE = {
    "mean": {"color": OKABE_ITO["blue"], "marker": "o", "ms": 13},
    "p95": {"color": OKABE_ITO["orange"], "marker": "s", "ms": 9.5},
    "shortfall10": {"color": OKABE_ITO["vermillion"], "marker": "D", "ms": 6.5},
}
_RISK_WINDOW = 0.03  # the chart shows cutoffs whose expected cost is within 3% of the lowest


def risk_chart(cutoffs: np.ndarray, mean_cost: np.ndarray, tail_cost: np.ndarray, tail_label: str,
               choices: dict[str, int], labels: dict[str, str], recommended: str, words: Words,
               narrow: bool = False) -> Chart:
    """The trade-off between the expected season cost and the cost of a bad season, across cutoffs.

    Each cutoff is a point (x: mean season cost, y: ``tail_cost``, the 95th percentile or the mean
    of the worst 10% of seasons, named by ``tail_label``), joined in cutoff order; the cutoff each
    objective chooses (``choices``: objective -> cutoff index, ``labels``: objective -> legend text)
    is marked, the ``recommended`` objective's in bold. Lower-left is better on both counts. The
    view is limited to cutoffs within :data:`_RISK_WINDOW` of the lowest expected cost (and every
    marked choice), where the choice is made; cutoffs.csv holds them all.
    """
    mean_cost, tail_cost = np.asarray(mean_cost, dtype=float), np.asarray(tail_cost, dtype=float)
    lowest = float(mean_cost.min())
    shown = mean_cost <= lowest + max(_RISK_WINDOW * abs(lowest), 1e-9)
    shown[list(choices.values())] = True
    _, _, _, wrap = _layout(narrow)
    with mpl.rc_context(_STYLE):
        fig = _figure(4.8, narrow, 6.2)
        ax = fig.add_subplot()
        ax.plot(mean_cost, tail_cost, color=_GREY, lw=1.0, zorder=2)
        ax.plot(mean_cost[shown], tail_cost[shown], "o", color=OKABE_ITO["sky_blue"], ms=3.5, zorder=3,
                label="A cutoff (joined in order of the cutoff)")
        span = float(cutoffs[-1] - cutoffs[0])
        step = 0.05 if span >= 0.3 else span / 6
        for i in np.flatnonzero(shown):  # label round cutoffs, so the reader can find the way along
            if abs(cutoffs[i] / step - round(cutoffs[i] / step)) < 1e-9:
                ax.annotate(f"{cutoffs[i]:.{words.decimals}f}", (mean_cost[i], tail_cost[i]), xytext=(5, 5),
                            textcoords="offset points", fontsize=7, color="#444444")
        for name, index in choices.items():
            style = dict(_OBJECTIVE_STYLE.get(name, {"color": _GREY, "marker": "o", "ms": 8}))
            colour = style.pop("color")
            bold = name == recommended
            ax.plot([mean_cost[index]], [tail_cost[index]], linestyle="none", mfc="none" if name == "mean" else colour,
                    mec=colour if name == "mean" else "black", mew=2.4 if bold else 1.2, zorder=5,
                    label=f"{labels.get(name, name)}: {cutoffs[index]:.{words.decimals}f}"
                          + (" (recommended)" if bold else ""), **style)
        xs, ys = mean_cost[shown], tail_cost[shown]
        for axis_set, values in ((ax.set_xlim, xs), (ax.set_ylim, ys)):
            lo, hi = float(values.min()), float(values.max())
            pad = 0.06 * (hi - lo) if hi > lo else max(1.0, 0.01 * abs(hi))
            axis_set(lo - pad, hi + pad)
        ax.set_xlabel(_wrap(f"Expected season cost ({words.currency}; lower is better)", wrap))
        ax.set_ylabel(_wrap(f"{tail_label} ({words.currency})", 40))
        _money_axis(ax.xaxis, few=narrow)
        _money_axis(ax.yaxis)
        _title(ax, f"Average season against bad season, at each cutoff ({words.currency} per season)", narrow)
        fig.legend(loc="outside lower center", ncol=1 if narrow else 2)
        return Chart(_png(fig))
