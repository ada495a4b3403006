"""What every figure of the report shares: colours, line styles, the two layouts, plain-text labels.

The figures themselves are pure functions from a run's numbers to PNG bytes, by theme:
``cost_figures`` (costs and cutoffs: season cost, savings, risk), ``quality_figures`` (the
forecast's quality: reliability, ROC, relative value), ``stress_figures`` (stress cases) and
``operations_figures`` (the operating rules: where the money goes, completion).

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
from dataclasses import dataclass, field

from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.ticker import FuncFormatter, MaxNLocator

from ..inputs.errors import printable

__all__ = ["Chart", "Words", "OKABE_ITO", "BASELINE_STYLE", "user_text"]


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


PALETTE_COLOURS = 128  # colours of a figure's PNG palette


def _png(fig: Figure) -> bytes:
    """The figure as a PNG of at most :data:`PALETTE_COLOURS` colours, without metadata.

    A chart holds a few flat colours and their anti-aliased edges, so an adaptive palette (median
    cut, no dithering; Pillow, which matplotlib itself requires) keeps it as it looks at a third of
    the bytes of full colour: the report embeds every figure twice (wide and narrow) and stays
    under 2 MB. Reducing a chart to a palette is common practice (no single source).
    """
    from PIL import Image  # matplotlib depends on Pillow

    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", dpi=fig.dpi, metadata={"Software": None}, facecolor="white")
    image = Image.open(io.BytesIO(buffer.getvalue())).convert("RGB")
    palette = image.quantize(colors=PALETTE_COLOURS, method=Image.Quantize.MEDIANCUT, dither=Image.Dither.NONE)
    out = io.BytesIO()
    palette.save(out, format="PNG", optimize=True)
    return out.getvalue()


def _money_bars_done(fig: Figure, ax, words, xlabel: str, title: str, narrow: bool, ncol: int) -> "Chart":
    """The end shared by the horizontal money-bar charts (stress cases, operating rules' costs):
    money on the x axis (three ticks when narrow), the title, the legend below, the PNG."""
    ax.set_xlabel(f"{xlabel} ({words.currency})")
    _money_axis(ax.xaxis)
    if narrow:
        ax.xaxis.set_major_locator(MaxNLocator(3))
    _title(ax, f"{title} ({words.currency} per season)", narrow)
    fig.legend(loc="outside lower center", ncol=ncol)
    return Chart(_png(fig))


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
