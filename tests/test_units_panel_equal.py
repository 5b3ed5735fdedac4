"""Occurrence intervals of the panel's exact-aggregation path equal the single-series path's.

Invented weekly data (made here, seeded): daily sales with a two-week promotion
and a three-day fair inside it most years, a level shift, summed to weeks. The
weekly event columns are curved (exact aggregation, :mod:`evcal.engine.refine`),
so a panel solves them in a block; an occurrence whose weeks hold both events
and the shift draws its coefficients jointly from their covariance.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import evcal
from evcal.calendar import load_calendar
from evcal.engine.run import fit_long_panel
from evcal.io.longformat import read_panel
from evcal.model.options import FitOptions

PROMO = [("2019-03-04", "2019-03-17"), ("2020-03-02", "2020-03-15"), ("2021-03-01", "2021-03-14"),
         ("2022-03-07", "2022-03-20"), ("2019-09-02", "2019-09-08"), ("2021-09-06", "2021-09-12")]
FAIR = [("2019-03-11", "2019-03-13"), ("2020-03-09", "2020-03-11"), ("2021-03-08", "2021-03-10"),
        ("2022-03-14", "2022-03-16"), ("2020-10-05", "2020-10-07")]


def _dates(spans: list[tuple[str, str]]) -> str:
    return "[" + ", ".join(f"{{start: {a}, end: {b}}}" for a, b in spans) + "]"


CAL = f"""
name: overlapping promotion and fair (invented)
events:
  - name: promo
    when: {{dates: {_dates(PROMO)}}}
  - name: fair
    when: {{dates: {_dates(FAIR)}}}
interventions:
  - {{name: refit, type: level_shift, start: 2021-01-04}}
"""


DAYS = pd.date_range("2018-01-01", "2023-12-31", freq="D")


def on_days(spans: list[tuple[str, str]]) -> np.ndarray:
    """1.0 on the days of ``spans`` (inclusive date ranges), 0.0 elsewhere, over DAYS."""
    return sum(((a <= DAYS) & (b >= DAYS)).astype(float) for a, b in spans)


def weekly_sums(i: int, events: np.ndarray, rng: np.random.Generator) -> pd.Series:
    """Series i of the invented panels: daily sales (level 100(1+i), a yearly wave, the log-lifts
    ``events``, +10 % from 2021-01-04) summed to weeks ending Sunday, times log-normal noise sd 3 %."""
    doy = DAYS.day_of_year.to_numpy()
    log_daily = (np.log(100.0 * (1 + i)) + 0.2 * np.sin(2 * np.pi * doy / 365.25) + events
                 + 0.1 * (DAYS >= "2021-01-04"))
    weekly = pd.Series(np.exp(log_daily), index=DAYS).resample("W-SUN").sum()
    return weekly * np.exp(rng.normal(0, 0.03, len(weekly)))


def _frame(n_series: int = 3, seed: int = 3) -> pd.DataFrame:
    """Invented weekly sums of daily sales: +35 % promotion, +65 % fair, +10 % level shift, noise sd 3 %."""
    rng = np.random.default_rng(seed)
    events = 0.3 * on_days(PROMO) + 0.5 * on_days(FAIR)
    frames = []
    for i in range(n_series):
        weekly = weekly_sums(i, events, rng)
        frames.append(pd.DataFrame({"product": f"P{i}", "date": weekly.index,
                                    "value": weekly.round(2).to_numpy()}))
    return pd.concat(frames, ignore_index=True)


@pytest.fixture(scope="module")
def fits():
    cal = load_calendar(CAL)
    panel = read_panel(_frame(), ["product"])
    return cal, panel, fit_long_panel(panel, cal, FitOptions(errors="ols"))


COLS = ["added_units", "added_pct", "low_units", "high_units"]


def test_panel_occurrence_intervals_equal_the_single_series_fit(fits):
    # fails on main: the panel drew each coefficient alone, e.g. promo 2019-03-04 [531.9, 684.9]
    # against the single fit's joint [536.7, 679.9] (fair 2019-03-11 [169.9, 257.5] vs [172.0, 252.4]);
    # passes: equal to about 1e-12 relative (the two paths' arithmetic differs in order only)
    cal, panel, pf = fits
    assert set(pf.series["engine"]) == {"batched"}
    for j in (0, 2):  # series 1 gets ARIMA errors by AIC when fitted alone: another model
        alone = evcal.fit(panel.history(j), cal)  # the per-series path (errors auto: OLS chosen)
        assert alone.model_choice["chosen"] == "ols"
        ref = alone.occurrences.reset_index(drop=True)
        occ = pf.occurrences[pf.occurrences["_sid"] == j].reset_index(drop=True)
        assert list(occ["start"].astype(str)) == list(ref["start"])
        np.testing.assert_allclose(occ[COLS].to_numpy(float), ref[COLS].to_numpy(float), rtol=1e-8)
        # the independent draws were wider here: the promotion's and the fair's estimates are
        # negatively correlated, so their overlap's parts vary less than each coefficient alone says

def test_block_of_one_equals_the_panel(fits):
    # a single series with --errors ols is a block of one: the same path as the panel
    cal, panel, pf = fits
    alone = evcal.fit(panel.history(1), cal, errors="ols")
    ref = alone.occurrences.reset_index(drop=True)
    occ = pf.occurrences[pf.occurrences["_sid"] == 1].reset_index(drop=True)
    np.testing.assert_allclose(occ[COLS].to_numpy(float), ref[COLS].to_numpy(float), rtol=1e-8)


def test_joint_draws_do_not_depend_on_how_the_series_are_chunked(fits, monkeypatch):
    # the joint draws run over chunks of series (memory); a block larger than one chunk (e.g. 2,000
    # weekly series of benchmarks/panel.py, 333 series a chunk) broke on main: ValueError, operands
    # could not be broadcast together with shapes (1000,333,3,2) (500,3,2); passes: equal results
    import evcal.effects.occurrences as occurrences

    cal, panel, pf = fits
    monkeypatch.setattr(occurrences, "_CHUNK", 1)  # one series a chunk
    small = fit_long_panel(panel, cal, FitOptions(errors="ols"))
    np.testing.assert_array_equal(small.occurrences[COLS].to_numpy(float),
                                  pf.occurrences[COLS].to_numpy(float))
