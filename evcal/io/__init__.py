"""Reading history: a file of dated values in, a clean regular series out.

>>> from evcal.io import read_history, History, detect_freq, check_length

Frequencies are pandas period strings: ``"D"``, ``"W-SUN"`` (any week-ending
day), ``"M"``, ``"Q-DEC"``. Gaps are NaN and listed, never filled with zeros.
"""

from evcal.io.frequency import (
    check_forced_freq,
    describe_freq,
    detect_freq,
    detect_label,
    parse_freq_option,
    periods_per_year,
)
from evcal.io.history import History, check_length, summarise_periods
from evcal.io.reader import read_history

__all__ = [
    "History",
    "check_forced_freq",
    "check_length",
    "describe_freq",
    "detect_freq",
    "detect_label",
    "parse_freq_option",
    "periods_per_year",
    "read_history",
    "summarise_periods",
]
