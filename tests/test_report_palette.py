"""Event colours stay distinct for 20+ events (issue 18: two events in the same green past about eight).

Distance is CIE 1976 Delta E in CIELAB (sRGB with the D65 white, the standard conversion of IEC 61966-2-1
and CIE 15; from memory). A Delta E of about 2.3 is a just-noticeable difference (Sharma, Digital Color
Imaging Handbook, 2003; from memory); 10 apart is plainly different colours (common practice, no source).
"""

from __future__ import annotations

import itertools

import numpy as np

from evcal.report.palette import BASE, event_colours


def _lab(hex_colour: str) -> np.ndarray:
    rgb = np.array([int(hex_colour[i:i + 2], 16) / 255 for i in (1, 3, 5)])
    linear = np.where(rgb > 0.04045, ((rgb + 0.055) / 1.055) ** 2.4, rgb / 12.92)
    xyz = np.array([[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722], [0.0193, 0.1192, 0.9505]]) @ linear
    f = xyz / np.array([0.95047, 1.0, 1.08883])
    f = np.where(f > 0.008856, np.cbrt(f), 7.787 * f + 16 / 116)
    return np.array([116 * f[1] - 16, 500 * (f[0] - f[1]), 200 * (f[1] - f[2])])


def test_24_events_get_24_plainly_different_colours():
    names = [f"event-{k}" for k in range(24)]
    colours = event_colours(names)
    assert len(set(colours.values())) == 24  # before: the twelve repeated
    labs = [_lab(c) for c in colours.values()]
    closest = min(float(np.linalg.norm(a - b)) for a, b in itertools.combinations(labs, 2))
    assert closest >= 10.0, closest  # measured 13.3
    # and none is confused with the base's grey
    assert min(float(np.linalg.norm(_lab(BASE) - lab)) for lab in labs) >= 10.0


def test_an_event_keeps_its_colour_whatever_comes_after_it():
    few = event_colours(["a", "b"])
    many = event_colours(["a", "b", *[f"x{k}" for k in range(30)]])
    assert many["a"] == few["a"] and many["b"] == few["b"]


def test_long_labels_wrap_instead_of_being_cut():
    """Issue 18: legend labels were cut ("Mothering Sunday and the six days bef…")."""
    from evcal.report.charts import plain

    label = "Mothering Sunday and the six days before it"
    wrapped = plain(label)
    assert "…" not in wrapped and " ".join(wrapped.split()) == label
    assert all(len(line) <= 38 for line in wrapped.splitlines())
    very_long = " ".join(["word"] * 60)
    assert plain(very_long).count("\n") == 2 and plain(very_long).endswith("…")  # three lines at most
