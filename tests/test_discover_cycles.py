"""Cycle detection on open datasets that statsmodels ships inside its package.

Each dataset loads from the installed package (no download). The known
cycle of each is stated beside its check with its source.
"""

from __future__ import annotations

import numpy as np
import pytest
import statsmodels.datasets as smd
from statsmodels.datasets import elec_equip

from evcal.discovery.cycles import describe_cycles, detect_cycles, fisher_g_pvalue


def test_co2_weekly_has_an_annual_cycle_of_about_52_weeks() -> None:
    # statsmodels.datasets.co2: Mauna Loa weekly CO2 (Keeling et al., Scripps);
    # the annual cycle is 365.25 / 7 = 52.18 weeks (calendar fact).
    cycles = detect_cycles(smd.co2.load_pandas().data["co2"])
    assert cycles, "the annual CO2 cycle must be found"
    assert cycles[0].period == pytest.approx(52.18, abs=0.3)
    assert cycles[0].lag == 52
    assert cycles[0].strength > 0.5


def test_elnino_monthly_sea_temperature_has_a_12_month_cycle() -> None:
    # statsmodels.datasets.elnino: monthly Pacific sea surface temperature
    # 1950-2010 (NOAA); the annual cycle is 12 months (calendar fact).
    data = smd.elnino.load_pandas().data.iloc[:, 1:].to_numpy().ravel()
    cycles = detect_cycles(data)
    assert cycles[0].lag == 12
    assert cycles[0].period == pytest.approx(12.0, abs=0.1)


def test_electrical_equipment_orders_cycle_is_12_not_its_quarterly_harmonic() -> None:
    # statsmodels.datasets.elec_equip: Eurostat euro-area electrical equipment
    # turnover index, monthly, not seasonally adjusted; annual cycle 12 months.
    # Its strongest periodogram ordinate is at period 3 (quarter-end peaks,
    # the 4th harmonic), so a method that reads only the top peak says 3.
    x = elec_equip.load().data.iloc[:, 0].to_numpy()
    cycles = detect_cycles(x)
    assert cycles[0].lag == 12


def test_sunspots_yearly_have_the_eleven_year_cycle() -> None:
    # statsmodels.datasets.sunspots: yearly sunspot numbers 1700-2008 (SIDC);
    # the Schwabe cycle averages about 11 years (textbook fact, from memory).
    cycles = detect_cycles(smd.sunspots.load_pandas().data["SUNACTIVITY"])
    assert 10.0 <= cycles[0].period <= 12.0


def test_nile_flow_has_no_clear_cycle() -> None:
    # statsmodels.datasets.nile: annual Nile flow at Aswan 1871-1970; no
    # periodic component is reported for it in the structural time series
    # literature (Durbin & Koopman 2001, ch. 2, from memory): a level and a break.
    cycles = detect_cycles(smd.nile.load_pandas().data["volume"])
    assert cycles == []
    assert describe_cycles(cycles).startswith("no clear cycle")


def test_invented_daily_series_shows_weekly_and_annual_cycles() -> None:
    # invented daily sales (known truth): a Saturday peak and an annual sine.
    rng = np.random.default_rng(11)
    t = np.arange(3 * 365)
    x = 100 + 10 * (t % 7 == 5) + 8 * np.sin(2 * np.pi * t / 365.25) + rng.normal(0, 3, t.size)
    lags = sorted(c.lag for c in detect_cycles(x))
    assert lags[0] == 7
    assert 360 <= lags[1] <= 370


def test_noise_and_random_walks_rarely_show_a_cycle() -> None:
    # Known truth: white noise and random walks have no cycle. At alpha = 0.01
    # the Fisher test alone allows about 1 in 100; with the ACF confirmation we
    # allow at most 3 of 60 series (a loose bound, so the test is not flaky).
    found = 0
    for seed in range(30):
        rng = np.random.default_rng(seed)
        found += bool(detect_cycles(rng.normal(size=120)))
        found += bool(detect_cycles(np.cumsum(rng.normal(size=150))))
    assert found <= 3


def test_fisher_g_pvalue_matches_monte_carlo() -> None:
    # Fisher (1929) exact distribution of g = max I / sum I for m iid
    # exponential ordinates (white-noise periodogram); checked by simulation.
    rng = np.random.default_rng(3)
    m = 20
    draws = rng.exponential(size=(20000, m))
    g = draws.max(axis=1) / draws.sum(axis=1)
    for x in (0.25, 0.3, 0.4):
        assert fisher_g_pvalue(x, m) == pytest.approx((g > x).mean(), abs=0.01)
