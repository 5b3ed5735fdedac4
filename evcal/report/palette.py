"""The report's colours, shared by the charts, the calendar view and the CSS.

One colour per event, kept the same in every chart and in the calendar view so
a reader learns it once; no colour repeats, however many events there are. The
event colours are earthy and distinct from the neutral base grey; neighbours in
the list differ in hue and lightness so they stay apart in a greyscale print.
"""

from __future__ import annotations

import colorsys
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


#: lightness and saturation (HLS) of the colours after the twelve above, in turn: darker and lighter
#: neighbours stay apart in a greyscale print; muted, like the hand-picked ones
_MORE_LIGHTNESS = (0.36, 0.52, 0.44)
_MORE_SATURATION = (0.55, 0.45, 0.62)
#: the golden-ratio step around the hue circle: each new hue lands in the widest gap left
_GOLDEN = 0.6180339887


def event_colour(k: int) -> str:
    """The ``k``-th event colour: the twelve hand-picked ones, then as many more as there are events.

    Beyond twelve the hue steps by the golden ratio around the circle (lightness and saturation in
    turn), so 24 events get 24 colours at least 13 CIELAB units apart (the test measures it); no
    colour repeats, so an event keeps its own colour in every chart however many there are.

    Examples
    --------
    >>> event_colour(0), event_colour(12)
    ('#2f7d5b', '#8e6c29')
    """
    if k < len(EVENT_COLOURS):
        return EVENT_COLOURS[k]
    m = k - len(EVENT_COLOURS)
    hue = (0.11 + m * _GOLDEN) % 1.0
    r, g, b = colorsys.hls_to_rgb(hue, _MORE_LIGHTNESS[m % 3], _MORE_SATURATION[m % 3])
    return f"#{round(r * 255):02x}{round(g * 255):02x}{round(b * 255):02x}"


def event_colours(names: Iterable[str]) -> dict[str, str]:
    """Give each name its own colour, in order (:func:`event_colour`).

    Examples
    --------
    >>> event_colours(["easter", "promo"])
    {'easter': '#2f7d5b', 'promo': '#d98b2b'}
    """
    out: dict[str, str] = {}
    for name in names:
        if name not in out:
            out[name] = event_colour(len(out))
    return out
