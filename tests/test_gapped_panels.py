"""Series with missing periods of their own: the panel gives each the results it gets alone.

Invented weekly data (made here, seeded): daily sales with a two-week promotion
most years, a one-off gala held once, and a level shift, summed to weeks. Each
series loses two weeks of its own (a fixed seed); one loses the gala's only week,
so the gala has no occurrence in its history (``no``), while the others see it
once (``weak``: fewer than three occurrences, evcal.model.strength, common
practice, no source). The panel fits every fit-row pattern on its own rows:
each series' lifts, occurrences, seasonal index and fitted rows must equal
``evcal.fit`` on that series' own rows, whatever the other series' gaps.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from test_units_panel_equal import PROMO, on_days, weekly_sums

import evcal
from evcal.calendar import load_calendar
from evcal.engine.run import fit_long_panel
from evcal.io.longformat import read_panel
from evcal.model.options import FitOptions

GALA = ("2020-06-10", "2020-06-12")  # Wednesday to Friday of the week ending 2020-06-14
CAL = f"""
name: promotion and a one-off gala (invented)
events:
  - name: promo
    when: {{dates: [{", ".join(f"{{start: {a}, end: {b}}}" for a, b in PROMO)}]}}
  - name: gala
    when: {{dates: [{{start: {GALA[0]}, end: {GALA[1]}}}]}}
interventions:
  - {{name: refit, type: level_shift, start: 2021-01-04}}
"""
N_SERIES = 5
GALA_WEEK = pd.Timestamp("2020-06-14")
LOSES_GALA = 3  # the series whose gaps take the gala's only week


def _frame(seed: int = 11) -> pd.DataFrame:
    """Invented weekly sums: +35 % promotion, +40 % gala, +10 % shift, noise sd 3 %; two weeks missing."""
    rng = np.random.default_rng(seed)
    events = 0.3 * on_days(PROMO) + 0.34 * on_days([GALA])
    frames = []
    for i in range(N_SERIES):
        weekly = weekly_sums(i, events, rng)
        # two weeks of its own inside the history (never the first or last week, nor the gala's)
        inner = np.flatnonzero((weekly.index > weekly.index[0]) & (weekly.index < weekly.index[-1])
                               & (weekly.index != GALA_WEEK))
        drop = rng.choice(inner, 2, replace=False)
        keep = np.ones(len(weekly), dtype=bool)
        keep[drop] = False
        if i == LOSES_GALA:
            keep[weekly.index == GALA_WEEK] = False
        frames.append(pd.DataFrame({"product": f"P{i}", "date": weekly.index[keep],
                                    "value": weekly.round(2).to_numpy()[keep]}))
    return pd.concat(frames, ignore_index=True)


@pytest.fixture(scope="module")
def fits():
    cal = load_calendar(CAL)
    frame = _frame()
    panel = read_panel(frame, ["product"])
    return cal, frame, panel, fit_long_panel(panel, cal, FitOptions(errors="ols"))


def _own(table: pd.DataFrame, j: int) -> pd.DataFrame:
    out = table[table["_sid"] == j].drop(columns="_sid").reset_index(drop=True)
    # (text columns are categorical when the block's rows share a few values: compare the text)
    return out.astype({c: object for c in out.columns if isinstance(out[c].dtype, pd.CategoricalDtype)})


def test_every_series_has_its_own_missing_weeks(fits):
    _, frame, panel, pf = fits
    counts = frame.groupby("product").size()
    assert (counts == counts.max() - np.where(counts.index == f"P{LOSES_GALA}", 1, 0)).all()
    patterns = {tuple(np.isnan(panel.values[:, j])) for j in range(N_SERIES)}
    assert len(patterns) == N_SERIES
    assert set(pf.series["engine"]) == {"batched"}


@pytest.mark.parametrize("j", range(N_SERIES))
def test_gapped_series_equal_their_fit_alone(fits, j):
    # each series alone: evcal.fit on its own rows (the missing weeks are gaps of its history)
    cal, _, panel, pf = fits
    alone = evcal.fit(panel.history(j), cal, errors="ols")
    lifts = _own(pf.lifts, j)
    ref = alone.lifts.reset_index(drop=True)
    assert list(lifts["event"]) == list(ref["event"])
    assert list(lifts["identifiable"]) == list(ref["identifiable"])
    assert list(lifts["note"].fillna("")) == list(ref["note"].fillna(""))
    num = ["lift_pct", "low_pct", "high_pct", "units_per_occurrence", "leverage", "vif_season", "vif_events"]
    np.testing.assert_allclose(lifts[num].to_numpy(float), ref[num].to_numpy(float), rtol=1e-9)
    occ, ref_occ = _own(pf.occurrences, j), alone.occurrences.reset_index(drop=True)
    assert list(occ["start"].astype(str)) == list(ref_occ["start"].astype(str))
    cols = ["added_units", "added_pct", "low_units", "high_units"]
    np.testing.assert_allclose(occ[cols].to_numpy(float), ref_occ[cols].to_numpy(float), rtol=1e-9)
    prof, ref_prof = _own(pf.profile, j), alone.profile.reset_index(drop=True)
    np.testing.assert_allclose(prof[["index", "low_index", "high_index"]].to_numpy(float),
                               ref_prof[["index", "low_index", "high_index"]].to_numpy(float), rtol=1e-9)
    fitted = pf.fitted[pf.fitted["_sid"] == j].reset_index(drop=True)
    ref_fit = alone.fitted.reset_index(drop=True)
    np.testing.assert_allclose(fitted["fitted"].to_numpy(float), ref_fit["fitted"].to_numpy(float), rtol=1e-9)
    # the missing weeks are not fitted, as alone
    assert fitted["in_fit"].sum() == ref_fit["in_fit"].sum() == np.isfinite(panel.values[:, j]).sum()


def test_a_gap_on_an_events_only_occurrence_is_reported_as_alone(fits):
    # the gala's only week is missing in one series: no occurrence in its history ("no"); the
    # others see it once: a lift resting on one occurrence is weak
    cal, _, panel, pf = fits
    gala = pf.lifts[pf.lifts["event"] == "gala"].set_index("_sid")
    assert gala.loc[LOSES_GALA, "identifiable"] == "no"
    assert np.isnan(gala.loc[LOSES_GALA, "lift_pct"])
    others = [j for j in range(N_SERIES) if j != LOSES_GALA]
    assert (gala.loc[others, "identifiable"] == "weak").all()
    assert np.isfinite(gala.loc[others, "lift_pct"]).all()
    alone = evcal.fit(panel.history(LOSES_GALA), cal, errors="ols")
    ref = alone.lifts.set_index("event").loc["gala"]
    assert ref["identifiable"] == "no" and gala.loc[LOSES_GALA, "note"] == ref["note"]
    occ = pf.occurrences[(pf.occurrences["event"] == "gala")]
    assert LOSES_GALA not in set(occ["_sid"]) or np.isnan(
        occ.loc[occ["_sid"] == LOSES_GALA, "added_units"]).all() or (
        occ.loc[occ["_sid"] == LOSES_GALA, "added_units"] == 0).all()


def test_a_series_gives_the_same_results_whatever_the_other_series_gaps(fits):
    # the panel of all five against each series in a panel of its own (the other patterns gone)
    cal, frame, _, pf = fits
    for j in (0, LOSES_GALA):
        own = read_panel(frame[frame["product"] == f"P{j}"], ["product"])
        one = fit_long_panel(own, cal, FitOptions(errors="ols"))
        for name in ("lifts", "occurrences", "profile"):
            a = _own(getattr(pf, name), j)
            b = _own(getattr(one, name), 0)
            pd.testing.assert_frame_equal(a, b, check_exact=False, rtol=1e-12)


def test_packed_groups_give_the_tables_of_their_own_units(fits):
    # the five patterns are five design groups of one series; they are packed into one unit whose
    # tables are built together (evcal.engine.packs): the same rows, in the same order, as the
    # groups' own units, to the rounding of the block's matrix products
    from evcal.engine.packs import PackUnit, pack_units
    from evcal.engine.run import plan_units
    from evcal.engine.units import concat_tables, run_batch, run_unit

    cal, _, panel, pf = fits
    units, _, groups = plan_units(panel, cal, pf.options)
    assert len(groups) == N_SERIES
    own = concat_tables([run_batch(u).tables for u in units])
    packed = pack_units(list(units))
    assert len(packed) == 1 and isinstance(packed[0], PackUnit)
    together = concat_tables([run_unit(packed[0]).tables])
    for name in ("lifts", "occurrences", "profile", "quality"):
        a, b = (t.astype({c: object for c in t.columns if isinstance(t[c].dtype, pd.CategoricalDtype)})
                for t in (getattr(own, name), getattr(together, name)))
        pd.testing.assert_frame_equal(a, b, check_exact=False, rtol=1e-13)
    # each series keeps its own strength numbers and its own fit rows
    gala = together.lifts[together.lifts["event"] == "promo"]["leverage"].to_numpy(float)
    assert len(set(gala.round(12))) == N_SERIES
    f_own = pd.concat([b.frame() for b in own.fitted], ignore_index=True)
    f_together = pd.concat([b.frame() for b in together.fitted], ignore_index=True)
    pd.testing.assert_frame_equal(f_own, f_together, check_exact=False, rtol=1e-13)
    assert (f_together["in_fit"] == np.isfinite(f_together["actual"])).all()


def test_no_design_group_is_factorised_before_its_unit_runs_nor_kept_after(fits):
    # a gapped panel has a design group per pattern of missing weeks: made when the work is cut, every
    # group's factorisation (SharedSolve, about 0.6 MB for 260 weeks x 65 columns) was held before any
    # unit ran and until the end, so the peak memory grew with the number of patterns. Now a group is
    # factorised by the unit that solves it and released once its units have run.
    import gc

    from evcal.engine.batched import SharedSolve
    from evcal.engine.packs import pack_units
    from evcal.engine.run import plan_units
    from evcal.engine.units import run_unit

    def alive() -> int:
        gc.collect()
        return sum(isinstance(o, SharedSolve) for o in gc.get_objects())

    cal, _, panel, pf = fits
    held = alive()
    units, _, groups = plan_units(panel, cal, pf.options)
    assert len(groups) == N_SERIES
    assert alive() - held == 0  # main: 5, one per pattern
    packed = pack_units(list(units))
    result = run_unit(packed[0])
    assert alive() - held == 0  # main: 5 (the groups keep them)
    assert all(not g.refine_cache for g in groups)
    # asked again (a plan solving the block), a group makes its factorisation anew: the same numbers
    assert len(result.params) == N_SERIES
    assert groups[0].solve.X.shape == (int(groups[0].rows.sum()), len(groups[0].info.fitted_cols))


def test_identification_from_the_designs_values_equals_the_frames(fits):
    # the engine checks every pattern on the design's values taken out once (FrameValues) instead of the
    # frame: every status, note and strength number must be the frame's, exactly
    from evcal.engine.run import plan_units
    from evcal.model.identify import FrameValues, check_columns, rows_values

    cal, _, panel, pf = fits
    _, _, groups = plan_units(panel, cal, pf.options)
    for g in groups:
        tpl = g.template
        X = tpl.at_origin(g.origin)[0]
        values = FrameValues.of(X)
        cols = list(g.info.fitted_cols)
        assert np.array_equal(rows_values(values, g.rows, cols), X.loc[g.rows, cols].to_numpy(dtype=float))
        base = [c for c in cols if g.info.roles[c] in ("trend", "seasonal")]
        candidates = [c for c in tpl.inp.status if tpl.inp.status[c].status not in ("assumed", "like")]
        by_frame = check_columns(X, g.rows, base, candidates, g.info.roles, cal)
        by_values = check_columns(values, g.rows, base, candidates, g.info.roles, cal)
        assert repr(by_values) == repr(by_frame)
        own = {c: st.status for c, st in g.info.status.items() if c in by_values}
        assert {c: st.status for c, st in by_values.items()} == own
    with pytest.raises(KeyError, match="not in the design"):
        rows_values(FrameValues.of(X), g.rows, ["no such column"])
