"""ISO 8601 week labels for the tables evcal writes (``plan --week-labels iso``): ``2027-W05`` beside
the date of a week ending Sunday.

The reader takes the same labels back (:mod:`evcal.io.cells`: ``YYYY-Www`` dated by the week's Sunday),
so a plan written with labels reads back as the same weeks. Only weeks ending Sunday are ISO weeks
(Monday to Sunday); a week ending on another day straddles two of them, so it gets no label rather than
one that is a day or more off.
"""

from __future__ import annotations

import pandas as pd

from evcal import spelling
from evcal.errors import PlanError

__all__ = ["ISO_WEEK_COLUMN", "WEEK_LABELS", "check_week_labels", "iso_week_labels", "with_week_labels"]

#: the column the labels are written in, right after ``date``
ISO_WEEK_COLUMN = "iso_week"
#: the label kinds ``--week-labels`` takes
WEEK_LABELS = ("iso",)


def iso_week_labels(dates: pd.Series | pd.DatetimeIndex) -> pd.Series:
    """``YYYY-Www`` of each date (its ISO year and week, from :meth:`pandas.Series.dt.isocalendar`); an
    empty label where there is no date.

    Examples
    --------
    The ISO year is not always the calendar year: 3 January 2027 is a Sunday in week 53 of 2026.

    >>> iso_week_labels(pd.Series(pd.to_datetime(["2027-01-03", "2027-01-10", "2027-02-07"]))).tolist()
    ['2026-W53', '2027-W01', '2027-W05']
    """
    iso = pd.Series(pd.to_datetime(dates)).dt.isocalendar()  # pandas' ISO year and week; <NA> for no date
    labels = iso["year"].astype(str).str.zfill(4) + "-W" + iso["week"].astype(str).str.zfill(2)
    return labels.where(iso["week"].notna(), "").astype(object)


def check_week_labels(freq: str, kind: str = "iso", option: str | None = None) -> None:
    """One :class:`~evcal.errors.PlanError` line unless ``kind`` is known and ``freq`` is weekly ending
    Sunday (before any work is done). ``option`` names the request (by default ``week_labels='iso'``
    from Python, ``--week-labels iso`` on the command line: :mod:`evcal.spelling`).

    Examples
    --------
    >>> check_week_labels("M")
    Traceback (most recent call last):
    ...
    evcal.errors.PlanError: week_labels='iso': ISO week labels are for weekly plans whose weeks end on \
Sunday (ISO weeks run Monday to Sunday); this plan is monthly; leave out week_labels=
    """
    asked = spelling.option("week_labels", kind) if option is None else f"{option} {kind}"
    bare = spelling.option("week_labels") if option is None else option
    if kind not in WEEK_LABELS:
        raise PlanError(f"{asked}: unknown kind of week label; use {' or '.join(WEEK_LABELS)} "
                        "(2027-W05: ISO 8601 year and week)")
    code = str(freq).upper()
    if code != "W-SUN":
        from evcal.io.frequency import describe_freq

        raise PlanError(f"{asked}: ISO week labels are for weekly plans whose weeks end on Sunday "
                        f"(ISO weeks run Monday to Sunday); this plan is {describe_freq(code)}; leave out "
                        f"{bare}")


def with_week_labels(table: pd.DataFrame, freq: str, kind: str = "iso", option: str | None = None) -> \
        pd.DataFrame:
    """``table`` with an :data:`ISO_WEEK_COLUMN` column right after ``date`` (a new frame).

    Parameters
    ----------
    table : DataFrame
        A table with a ``date`` column (the week's last day; a totals row without a date gets no label).
    freq : str
        The table's period frequency; weekly ending Sunday (``W-SUN``) only: any other is one
        :class:`~evcal.errors.PlanError`.
    kind : str
        ``iso``, the one kind there is.
    option : str
        How the message names the request (by default the argument or the command line's option).

    Examples
    --------
    >>> t = pd.DataFrame({"date": pd.to_datetime(["2027-01-31"]), "plan": [10.0]})
    >>> with_week_labels(t, "W-SUN").columns.tolist()
    ['date', 'iso_week', 'plan']
    """
    check_week_labels(freq, kind, option)
    out = table.copy()
    labels = iso_week_labels(pd.to_datetime(out["date"], errors="coerce"))  # a totals row: no label
    out.insert(int(out.columns.get_loc("date")) + 1, ISO_WEEK_COLUMN, labels.to_numpy())
    return out
