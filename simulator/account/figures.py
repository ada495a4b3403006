"""Figures for the report: pure functions from a run's numbers to PNG bytes.

Each function draws on its own :class:`~matplotlib.figure.Figure` with the Agg canvas (no pyplot,
no global figure state) and returns a :class:`Chart`. Colours are the Okabe and Ito (2008)
colour-blind-safe set ("Color Universal Design", J*Fly), and every line also differs in dash or
marker, so the charts survive colour-blind eyes and grey printers. Money axes carry the scenario's
currency; probabilities and rates are labelled as such. PNG metadata is left empty, so the same
run gives byte-identical files.

Every function draws in one of two layouts: ``narrow=False`` for a desktop page and for print
(8 inches wide at 150 dpi), ``narrow=True`` for a phone (4.2 inches wide at 170 dpi, legends in one
column): shown 350 CSS pixels wide, a 9-point label of the narrow layout is about 10 pixels high,
where the wide one would shrink to about 5. Legends sit outside the axes, so they never cover data.

Strings from a scenario or a history are plain text here: no text is parsed as mathematical markup
(``text.parse_math`` is off in every figure), and each user string passes through
:func:`user_text`, which writes control characters as escapes (no font has glyphs for them).
"""

from __future__ import annotations

import io
import textwrap
from collections.abc import Sequence
from dataclasses import dataclass, field

import matplotlib as mpl
import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib import dates as mdates
from matplotlib.ticker import FuncFormatter, MaxNLocator

from ..inputs.errors import printable

__all__ = ["Chart", "Words", "OKABE_ITO", "BASELINE_STYLE", "focus_range", "cost_chart", "savings_chart", "reliability_chart",
           "roc_chart", "value_chart", "stress_chart", "components_chart", "completion_chart",
           "risk_chart"]

OKABE_ITO = {"black": "#000000", "orange": "#E69F00", "sky_blue": "#56B4E9", "green": "#009E73",
             "yellow": "#F0E442", "blue": "#0072B2", "vermillion": "#D55E00", "purple": "#CC79A7"}
_GREY = "#6b6b6b"
_DPI = 150
_STYLE = {"font.size": 10, "axes.titlesize": 11, "axes.titleweight": "bold", "axes.titlelocation": "left",
          "axes.spines.top": False, "axes.spines.right": False, "axes.grid": True, "grid.color": "#dddddd",
          "grid.linewidth": 0.6, "axes.edgecolor": "#444444", "legend.frameon": False,
          "legend.fontsize": 9,
          "text.parse_math": False}  # "$" in a user's name is a dollar sign, never mathematical markup


def user_text(text: str) -> str:
    """A user's string as it is drawn: plain text (see the module's docstring), control characters
    written as escapes."""
    return printable(str(text))

# colour and dash of each baseline line, each pair its own (the model is always solid blue, the
# recommended cutoff solid black, the page's slider marker yellow): long dashes, dash-dot, dots,
# dash-dot-dot and short dashes, so the lines part even in grey
BASELINE_STYLE = {
    "never_act": {"color": OKABE_ITO["vermillion"], "linestyle": (0, (7, 3))},
    "always_act": {"color": OKABE_ITO["green"], "linestyle": (0, (5, 2, 1, 2))},
    "persistence": {"color": OKABE_ITO["purple"], "linestyle": (0, (1, 1.4))},
    "seasonal_rate": {"color": OKABE_ITO["orange"], "linestyle": (0, (4, 1.5, 1, 1.5, 1, 1.5))},
    "perfect": {"color": _GREY, "linestyle": (0, (2.5, 2))},
}

# the two layouts: (width in inches, dots per inch, legend columns, characters per wrapped line)
_WIDE = (8.0, _DPI, 2, 100)
_NARROW = (4.2, 170, 1, 46)


@dataclass(frozen=True)
class Words:
    """The scenario's own words, used on every axis and legend."""

    event: str  # "dry day"
    action: str  # "send the crews out"
    currency: str  # "EUR"
    occasion: str = "day"  # "day", or "occasion" when the history is not daily
    labels: dict[str, str] = field(default_factory=dict)  # strategy name -> short legend label
    reference: str = "never_act"
    decimals: int = 2  # decimals of a cutoff on this grid
    best: str = "recommended"  # the lowest-cost cutoff: "cheapest" when the verdict advises against the forecast

    def __post_init__(self) -> None:
        for name in ("event", "action", "currency", "occasion"):
            object.__setattr__(self, name, user_text(getattr(self, name)))
        object.__setattr__(self, "labels", {k: user_text(v) for k, v in self.labels.items()})


@dataclass(frozen=True)
class Chart:
    """A figure as PNG bytes; ``geometry`` places data on the image (cost chart only).

    geometry: the axes' left, right, top and bottom edges as fractions of the image width and height
    (top-left origin, as a web page lays it out) and the data limits ``xmin, xmax, ymin, ymax``.
    """

    png: bytes
    geometry: dict[str, float] | None = None


def _wrap(text: str, width: int = 100) -> str:
    return "\n".join(textwrap.wrap(text, width))


def _layout(narrow: bool) -> tuple[float, int, int, int]:
    return _NARROW if narrow else _WIDE


def _title(ax, text: str, narrow: bool, **kw) -> None:
    """A bold title from the axes' left edge; in the narrow layout from the figure's left edge (the
    axes start far in behind the money labels), wrapped to stay inside the figure."""
    if not narrow:
        ax.set_title(_wrap(text, 100), **kw)
        return
    ax.figure.suptitle(_wrap(text, 40), x=0.02, ha="left", fontweight="bold", fontsize=_STYLE["axes.titlesize"])
    if kw.get("pad"):
        ax.set_title(" ", **kw)  # keeps room above the axes for the labels of the vertical lines


def _money_axis(axis, few: bool = False) -> None:
    """Money ticks with thousands separators; ``few`` (the narrow layout) keeps about four of them."""
    axis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:,.0f}"))
    if few:
        axis.set_major_locator(MaxNLocator(4))


def _figure(height: float, narrow: bool, narrow_height: float | None = None,
            width: float | None = None) -> Figure:
    """A figure of the layout's width (or ``width``, wide layout only) and dpi; height in inches."""
    layout_width, dpi, _, _ = _layout(narrow)
    size = (layout_width, narrow_height or height) if narrow else (width or layout_width, height)
    fig = Figure(figsize=size, dpi=dpi, layout="constrained")
    FigureCanvasAgg(fig)
    return fig


def _png(fig: Figure) -> bytes:
    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", dpi=fig.dpi, metadata={"Software": None}, facecolor="white")
    return buffer.getvalue()


def _label_above(ax, marks: list[tuple[float, str, dict]], span: float) -> None:
    """Short labels just above the axes at vertical lines; a label too close to the one before it
    moves up a row. Labels stay out of the layout, which is fixed by the axes."""
    row, last = 0, None
    for x, text, style in sorted(marks, key=lambda m: m[0]):
        row = row + 1 if last is not None and x - last < 0.07 * span else 0
        last = x
        label = ax.annotate(text, (x, 1.0), xycoords=("data", "axes fraction"), xytext=(0, 3 + 12 * row),
                            textcoords="offset points", va="bottom", ha="center", fontsize=9,
                            annotation_clip=False, **style)
        label.set_in_layout(False)


def _geometry(ax) -> dict[str, float]:
    """Where the axes sit in the saved image (call after the figure was saved)."""
    box = ax.get_position()
    (xmin, xmax), (ymin, ymax) = ax.get_xlim(), ax.get_ylim()
    return {"left": box.x0, "right": box.x1, "top": 1.0 - box.y1, "bottom": 1.0 - box.y0,
            "xmin": xmin, "xmax": xmax, "ymin": ymin, "ymax": ymax}


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


def value_chart(ratios: np.ndarray, potential: np.ndarray, at_ratio: np.ndarray, scenario_ratio: float,
                scenario_value: float, words: Words, narrow: bool = False) -> Chart:
    """Relative value across cost-loss ratios (Richardson 2000), the scenario's ratio marked."""
    _, _, ncol, wrap = _layout(narrow)
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
        finite = np.concatenate([potential[np.isfinite(potential)], at_ratio[np.isfinite(at_ratio)], [0.0]])
        ax.set_ylim(max(-0.5, float(finite.min()) - 0.05), 1.02)
        ax.set_xlim(0, 1)
        ax.set_xlabel(_wrap("Cost-loss ratio: what acting costs / what it saves when the event comes (0 to 1)", wrap))
        ax.set_ylabel("Relative value\n(1 = perfect, 0 = best fixed rule)")
        _title(ax, "Relative value: what the forecast is worth at other costs", narrow)
        fig.legend(loc="outside lower center", ncol=ncol if narrow else 3)
        return Chart(_png(fig))


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
        ax.set_xlabel(f"Season cost ({words.currency})")
        _money_axis(ax.xaxis)
        if narrow:
            ax.xaxis.set_major_locator(MaxNLocator(3))
        _title(ax, f"What if next season is different? ({words.currency} per season)", narrow)
        fig.legend(loc="outside lower center", ncol=ncol)
        return Chart(_png(fig))


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
        ax.set_xlabel(f"Expected cost in a season ({words.currency})")
        _money_axis(ax.xaxis)
        if narrow:
            ax.xaxis.set_major_locator(MaxNLocator(3))
        _title(ax, f"Where the money goes under the operating rules ({words.currency} per season)", narrow)
        fig.legend(loc="outside lower center", ncol=ncol)
        return Chart(_png(fig))


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
