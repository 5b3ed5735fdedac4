"""The report's colours, shared by the charts, the calendar view and the CSS.

One colour per event, kept the same in every chart and in the calendar view so
a reader learns it once. The event colours are earthy and distinct from the
neutral base grey; neighbours in the list differ in hue and lightness so they
stay apart in a greyscale print.
"""

from __future__ import annotations

from collections.abc import Iterable

INK = "#1e2b2f"  # text, axes
MUTED = "#5f6f70"  # secondary text
GRID = "#dfe5e1"
PAPER = "#fbfaf6"
ACTUAL = "#1e2b2f"
FITTED = "#c4562f"  # terracotta
BASE = "#8fa39a"  # sage grey: the base, no events
BASE_FILL = "#cfdad3"
BAND = "#e8c872"  # the low/high band
ABOVE = "#5d8a6a"  # seasonal index above 100
BELOW = "#c9a15b"  # seasonal index below 100
EXCLUDED = "#e9e2d0"  # excluded periods in the history chart

EVENT_COLOURS = (
    "#2f7d5b",  # moss
    "#d98b2b",  # marigold
    "#4f67a8",  # slate blue
    "#b44a62",  # berry
    "#5fa8b5",  # pond
    "#86653f",  # bark
    "#8c72bd",  # heather
    "#a8a331",  # lichen
    "#3e5560",  # slate
    "#e07a5f",  # clay
    "#6b8e23",  # fern
    "#c76fa0",  # foxglove
)


def event_colours(names: Iterable[str]) -> dict[str, str]:
    """Give each name a colour, in order; the list repeats after twelve names.

    Examples
    --------
    >>> event_colours(["easter", "promo"])
    {'easter': '#2f7d5b', 'promo': '#d98b2b'}
    """
    out: dict[str, str] = {}
    for name in names:
        if name not in out:
            out[name] = EVENT_COLOURS[len(out) % len(EVENT_COLOURS)]
    return out
