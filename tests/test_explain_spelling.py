"""Errors of the explain step speak the user's language: through the Python API
(:func:`evcal.plan.explain.explain_plan`, :func:`~evcal.plan.explain.explain_history`) they name the
arguments (``date=``, ``start=``/``end=``, ``actuals=``), through ``evcal explain`` the flags; the rest of
the line is the same text. The history and calendar are invented (a few years of weekly rows, a spring
sale), named as such.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pytest
from test_api_spelling import _api_line, _cli_line, _same_but_spelling

import evcal
from evcal.model import load_model
from evcal.plan import make_plan
from evcal.plan.explain import explain_history, explain_plan

#: invented weekly Sundays, 2020-2024
WEEKS = pd.date_range("2020-01-05", periods=260, freq="W-SUN")
CALENDAR = "name: invented shop\nevents:\n  - {name: spring-sale, when: {fixed: \"04-01\"}}\n"


@pytest.fixture(scope="module")
def model(tmp_path_factory: pytest.TempPathFactory) -> Path:
    folder = tmp_path_factory.mktemp("explain-spelling")
    values = 100.0 + (WEEKS.month % 5)
    pd.DataFrame({"date": WEEKS.strftime("%Y-%m-%d"), "value": values}).to_csv(folder / "h.csv", index=False)
    (folder / "cal.yaml").write_text(CALENDAR)
    evcal.fit(folder / "h.csv", folder / "cal.yaml", errors="ols").save(folder / "model")
    return folder / "model"


def test_a_date_outside_the_history(model: Path) -> None:
    """Fails before: the API said '--date 2010-01-03: outside the history ...'."""
    api = _api_line(lambda: explain_history(load_model(model), "2010-01-03"))
    cli = _cli_line(["explain", str(model), "--date", "2010-01-03"])
    assert api.startswith("date='2010-01-03': outside the history (periods dated 2020-01-05 to ")
    _same_but_spelling(api, cli, [("date='2010-01-03'", "--date 2010-01-03")])


def test_a_date_outside_the_plan(model: Path) -> None:
    """Fails before: the API said '--date ...' and '(--from, --to)'."""
    plan = make_plan(load_model(model), "2025-01-01", "2025-03-31", n_sims=0)
    api = _api_line(lambda: explain_plan(plan, "2025-06-01"))
    cli = _cli_line(["explain", str(model), "--date", "2025-06-01", "--from", "2025-01-01", "--to",
                     "2025-03-31"])
    assert api.endswith("give a date inside the horizon (start=, end=)")
    _same_but_spelling(api, cli, [("date='2025-06-01'", "--date 2025-06-01"), ("start=", "--from"),
                                  ("end=", "--to")])


def test_a_year_to_date_replan(model: Path) -> None:
    """Fails before: the API said '(--actuals)'. The command line has no --actuals for explain, so the
    API line alone: it names the argument and no flag."""
    so_far = pd.DataFrame({"date": ["2025-01-05", "2025-01-12"], "value": [101.0, 102.0]})
    plan = make_plan(load_model(model), "2025-01-13", "2025-12-31", n_sims=0, total=6000, actuals=so_far)
    api = _api_line(lambda: explain_plan(plan, "2025-06-01"))
    assert api == ("explain: a year-to-date re-plan (actuals=) is not split into parts; explain the plan "
                   "without actuals=")
