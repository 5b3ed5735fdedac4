"""A season that drifts (issue 15, Build 7: choices by the data), on invented series with a known truth.

The series here are invented for the tests (named as such): monthly sales with a
known seasonal pattern, either fixed or with December's departure falling in a
straight line over the years. AICc (:mod:`evcal.model.choose`) must take the
drifting season when it is there and leave it out when it is not; the plan must
extend the drift into the future with the same code after a save and a load.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import evcal
from evcal.model.result import load_model
from evcal.plan.build import plan_periods

NO_EVENTS = "name: no events\n"
#: invented: December's log departure from January, 0.30 in 2000 falling to 0.10 by 2019
DEC_START, DEC_END = 0.30, 0.10
DEC_SLOPE = (DEC_END - DEC_START) / 19.0


def invented_monthly(drift: bool, seed: int = 3) -> pd.DataFrame:
    """Invented monthly sales 2000-2019: a 2 % a year trend, a mild season, 1 % noise."""
    rng = np.random.default_rng(seed)
    idx = pd.period_range("2000-01", "2019-12", freq="M")
    years = idx.year.to_numpy() - 2000
    season = 0.08 * np.sin(2 * np.pi * (idx.month.to_numpy() - 1) / 12)
    dec = np.where(idx.month == 12, DEC_START + (DEC_SLOPE * years if drift else 0.0), 0.0)
    log_y = 6.0 + 0.02 * (years + idx.month.to_numpy() / 12) + season + dec + rng.normal(0, 0.01, len(idx))
    return pd.DataFrame({"date": idx.end_time.strftime("%Y-%m-%d"), "value": np.exp(log_y)})


def drift_choice(res) -> dict:
    return next(c for c in res.spec.choices if c["setting"] == "season_drift")


def test_invented_drifting_december_is_chosen_and_recovered() -> None:
    res = evcal.fit(invented_monthly(drift=True), NO_EVENTS)
    choice = drift_choice(res)
    assert choice["chosen"] == "drifting", choice["reason"]
    assert "lowest AICc" in choice["reason"]
    assert res.spec.season_drift_origin == pytest.approx(2019.5)
    # the slope of December's departure per year, and its level in the last year (the origin)
    assert res.params["season_drift[12]"] == pytest.approx(DEC_SLOPE, abs=0.002)
    dec_2019 = DEC_END + 0.08 * np.sin(2 * np.pi * 11 / 12)  # December minus January (0), 2019
    assert res.params["season[12]"] == pytest.approx(dec_2019 - DEC_SLOPE * 0.46, abs=0.02)


def test_invented_fixed_season_keeps_a_fixed_season() -> None:
    res = evcal.fit(invented_monthly(drift=False), NO_EVENTS)
    choice = drift_choice(res)
    assert choice["chosen"] == "fixed", choice["reason"]
    assert res.spec.season_drift_origin is None
    assert not any(c.startswith("season_drift[") for c in res.params.index)


def test_a_short_history_is_not_offered_a_drifting_season() -> None:
    short = invented_monthly(drift=True).iloc[-48:]  # invented, 4 years
    choice = drift_choice(evcal.fit(short, NO_EVENTS))
    assert choice["chosen"] == "fixed" and choice["candidates"] == []
    assert "6 years" in choice["reason"]


def test_a_given_season_drift_wins() -> None:
    res = evcal.fit(invented_monthly(drift=True), NO_EVENTS, season_drift=False)
    assert res.spec.season_drift_origin is None
    assert not any(c["setting"] == "season_drift" for c in res.spec.choices)


def test_the_plan_extends_the_drift_after_a_save_and_load(tmp_path) -> None:
    res = evcal.fit(invented_monthly(drift=True), NO_EVENTS)
    future = pd.period_range("2020-01", "2021-12", freq="M")
    before = plan_periods(res, future, n_sims=0).table["plan"].to_numpy()
    res.save(tmp_path / "m")
    loaded = load_model(tmp_path / "m")
    assert loaded.spec.season_drift_origin == res.spec.season_drift_origin
    after = plan_periods(loaded, future, n_sims=0).table["plan"].to_numpy()
    np.testing.assert_allclose(after, before, rtol=1e-9)
    # December's share keeps falling: the 2021 December against its own year is below 2020's
    dec_share = [before[11] / before[:12].sum(), before[23] / before[12:].sum()]
    assert dec_share[1] < dec_share[0]
