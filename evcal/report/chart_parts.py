"""The parts every chart of the report is made of: the figure and axes in the house style, the date
axis, the key (at the side, or under the chart when long), user text made safe for matplotlib, and the
PNG data URI a chart is embedded as.

Figures are made without pyplot, so no global state is touched and nothing needs a display.
"""

from __future__ import annotations

import base64
import io
import textwrap

import matplotlib.dates as mdates
from matplotlib.axes import Axes
from matplotlib.figure import Figure

from evcal.report import palette as pal

__all__ = ["DPI", "SIDE_KEY_MAX", "WIDTH_IN", "date_axis", "figure", "legend", "new_figure", "plain",
           "side_or_below_key", "units_tick"]

WIDTH_IN = 10.0
DPI = 130
_MAX_LABEL = 38


#: lines a chart label may take before the rest is cut with "…" (a legend entry, an axis label)
_MAX_LINES = 3


def plain(text: object, limit: int = _MAX_LABEL) -> str:
    """User text made safe for matplotlib: no mathtext, wrapped at ``limit`` characters a line.

    A long event label is wrapped onto up to three lines rather than cut (a legend that reads
    "Mothering Sunday and the six days bef…" names no event); only past three lines is it cut.

    Examples
    --------
    >>> plain("$5 off")
    '\\\\$5 off'
    >>> print(plain("Mothering Sunday and the six days before it", 24))
    Mothering Sunday and the
    six days before it
    """
    s = textwrap.fill(" ".join(str(text).split()), width=limit, max_lines=_MAX_LINES, placeholder=" …")
    return s.replace("\\", "\\\\").replace("$", r"\$")


def figure(fig: Figure | None, alt: str, caption: str = "") -> dict[str, str] | None:
    """A chart as a PNG data URI (no timestamp in the file) with its alternative text; None for no chart."""
    if fig is None:
        return None
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=DPI, metadata={"Software": None}, facecolor=fig.get_facecolor())
    uri = "data:image/png;base64," + base64.b64encode(buf.getvalue()).decode("ascii")
    return {"uri": uri, "alt": alt, "caption": caption}


def new_figure(height: float) -> tuple[Figure, Axes]:
    """A white figure of the report's width with one axes in the house style (light grid, no top/right)."""
    fig = Figure(figsize=(WIDTH_IN, height), facecolor="white", layout="constrained")
    ax = fig.add_subplot()
    ax.set_facecolor("white")
    ax.spines[["top", "right"]].set_visible(False)
    ax.spines[["left", "bottom"]].set_color(pal.MUTED)
    ax.tick_params(colors=pal.INK, labelsize=9)
    ax.grid(True, axis="y", color=pal.GRID, linewidth=0.8)
    ax.set_axisbelow(True)
    return fig, ax


def units_tick(x: float, _pos: int) -> str:
    """An axis tick in units: 1.2M, 45k, 3.4k, 950."""
    if abs(x) >= 1e6:
        return f"{x / 1e6:.1f}M"
    if abs(x) >= 1e4:
        return f"{x / 1e3:.0f}k"
    if abs(x) >= 1e3:
        return f"{x / 1e3:.1f}k"
    return f"{x:.0f}"


def date_axis(ax: Axes) -> None:
    """Dates on the x axis, concise labels, 4 to 12 ticks."""
    locator = mdates.AutoDateLocator(minticks=4, maxticks=12)
    ax.xaxis.set_major_locator(locator)
    ax.xaxis.set_major_formatter(mdates.ConciseDateFormatter(locator))


def legend(ax: Axes, **kw: object) -> None:
    """The axes' key without a frame, in the report's ink."""
    leg = ax.legend(frameon=False, fontsize=8.5, **kw)
    for text in leg.get_texts():
        text.set_color(pal.INK)


#: a key with more entries than this goes under the chart in columns, and the figure grows to hold it: at
#: the side, 20 wrapped event labels overflow the figure's height and are cut (issue 18)
SIDE_KEY_MAX = 8
_KEY_COLUMNS = 3
_KEY_LINE_IN = 0.19  # inches a legend line takes at fontsize 8.5, with its spacing


def side_or_below_key(fig: Figure, ax: Axes, handles: list | None = None, labels: list | None = None
                       ) -> None:
    """The chart's key at its right side when short, else under it in columns, with the figure made taller
    by the key's lines (each label wraps to at most three, :func:`plain`)."""
    if handles is None or labels is None:
        handles, labels = ax.get_legend_handles_labels()
    if len(labels) <= SIDE_KEY_MAX:
        legend(ax, handles=handles, labels=labels, loc="upper left", bbox_to_anchor=(1.0, 1.0))
        return
    rows = -(-len(labels) // _KEY_COLUMNS)  # the key fills its columns top to bottom
    lines = rows * max(str(label).count("\n") + 1 for label in labels)
    fig.set_figheight(fig.get_figheight() + _KEY_LINE_IN * lines + 0.3)
    leg = fig.legend(handles, labels, loc="outside lower center", ncols=_KEY_COLUMNS, frameon=False,
                     fontsize=8.5)
    for text in leg.get_texts():
        text.set_color(pal.INK)
