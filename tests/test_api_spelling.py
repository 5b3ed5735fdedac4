"""Errors speak the user's language (issue 18 item 8): from Python a message names the argument
(``value_col=``, ``freq='W-SUN'``), from the command line the flag (``--value-col``, ``--freq W-SUN``).

Each case sends the same bad input through the Python API and through ``evcal`` on the command line
(in-process) and checks that the two lines are the same text but for the spelling of the settings:
one mechanism (:mod:`evcal.spelling`), several messages, several modules (io/tables via io/reader,
io/frequency, io/longformat, io/drivers, io/cells, discovery/inputs). The histories are invented
(a few weekly rows), named as such.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st
from typer.testing import CliRunner

import evcal
from evcal.cli import app
from evcal.errors import EvcalError
from evcal.panel import fit_panel

runner = CliRunner()
#: invented weekly Sundays, 2022-2024
WEEKS = pd.date_range("2022-01-02", periods=150, freq="W-SUN")


def _write(folder: Path, name: str, frame: pd.DataFrame) -> Path:
    path = folder / name
    frame.to_csv(path, index=False)
    return path


def _weekly(folder: Path, **columns: Any) -> Path:
    """An invented weekly history with ``columns`` (default ``date`` and ``value``)."""
    frame = pd.DataFrame({"date": WEEKS.strftime("%Y-%m-%d"), "value": 100.0 + (WEEKS.month % 5)})
    for name, values in columns.items():
        frame[name] = values
    return _write(folder, "h.csv", frame)


def _api_line(call: Callable[[], Any]) -> str:
    with pytest.raises(EvcalError) as err:
        call()
    (line,) = err.value.problems
    return line


def _cli_line(args: list[str]) -> str:
    res = runner.invoke(app, args)
    assert res.exit_code == 2, res.output
    lines = res.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: "), res.output
    return lines[0].removeprefix("error: ")


def _same_but_spelling(api: str, cli: str, pairs: list[tuple[str, str]]) -> None:
    """The API line names each argument, the CLI line each flag, and nothing else differs."""
    for arg, flag in pairs:
        assert arg in api and arg not in cli, (arg, api, cli)
        assert flag in cli, (flag, cli)
    translated = api
    for arg, flag in pairs:
        translated = translated.replace(arg, flag)
    assert translated == cli


def test_a_missing_date_column(tmp_path: Path) -> None:
    """io/tables.find_column through io/reader. Fails on main: the API said 'with --date-col'."""
    path = _write(tmp_path, "h.csv", pd.DataFrame({"day": WEEKS.strftime("%Y-%m-%d"), "units": 1.0}))
    api = _api_line(lambda: evcal.fit(path))
    cli = _cli_line(["fit", str(path), "-o", str(tmp_path / "m")])
    assert api.endswith("name the date column with date_col=")
    _same_but_spelling(api, cli, [("date_col=", "--date-col")])
    assert not (tmp_path / "m").exists()


def test_a_frequency_the_dates_contradict(tmp_path: Path) -> None:
    """io/frequency.check_forced_freq. Fails on main: the API said 'pass --freq W-SUN'."""
    path = _weekly(tmp_path)
    api = _api_line(lambda: evcal.fit(path, freq="D"))
    cli = _cli_line(["fit", str(path), "--freq", "D", "-o", str(tmp_path / "m")])
    assert "h.csv: freq='D' reads the dates as daily" in api
    assert api.endswith("pass freq='W-SUN', or leave freq= out to detect it")
    _same_but_spelling(api, cli, [("freq='D'", "--freq D"), ("freq='W-SUN'", "--freq W-SUN"),
                                  ("freq=", "--freq")])


def test_an_unknown_frequency(tmp_path: Path) -> None:
    """io/frequency.parse_freq_option: the line starts with the setting. Fails on main ('--freq: ...')."""
    path = _weekly(tmp_path)
    api = _api_line(lambda: evcal.fit(path, freq="fortnightly"))
    cli = _cli_line(["fit", str(path), "--freq", "fortnightly", "-o", str(tmp_path / "m")])
    assert api.startswith("freq: unknown frequency 'fortnightly'; use D (daily)")
    assert cli.startswith("--freq: unknown frequency 'fortnightly'; use D (daily)")
    assert api.replace("freq:", "--freq:", 1) == cli


def test_values_under_the_date_header(tmp_path: Path) -> None:
    """io/reader's swapped columns: two settings at once, as each side writes them."""
    path = _write(tmp_path, "h.csv", pd.DataFrame({"date": range(1000, 1150),
                                                   "value": WEEKS.strftime("%Y-%m-%d")}))
    api = _api_line(lambda: evcal.fit(path))
    cli = _cli_line(["fit", str(path), "-o", str(tmp_path / "m")])
    assert api.endswith("or pass date_col='value', value_col='date'")
    assert cli.endswith("or pass --date-col 'value' --value-col 'date'")
    assert api.replace("date_col='value', value_col='date'", "--date-col 'value' --value-col 'date'") == cli


def test_a_negative_value(tmp_path: Path) -> None:
    """io/cells.parse_values. Fails on main: both said '--allow-negative (allow_negative=True)'."""
    values = list(100.0 + (WEEKS.month % 5))
    values[3] = -3.0
    path = _weekly(tmp_path, value=values)
    api = _api_line(lambda: evcal.fit(path))
    cli = _cli_line(["fit", str(path), "-o", str(tmp_path / "m")])
    assert "negative value -3" in api and "or pass allow_negative=True if negatives are real" in api
    _same_but_spelling(api, cli, [("allow_negative=True", "--allow-negative")])


def test_a_missing_driver_column(tmp_path: Path) -> None:
    """io/drivers.driver_cells. Fails on main: the API said 'name the driver column with --driver'."""
    path = _weekly(tmp_path)
    api = _api_line(lambda: evcal.fit(path, drivers=["price"]))
    cli = _cli_line(["fit", str(path), "--driver", "price", "-o", str(tmp_path / "m")])
    assert api.endswith("no driver column 'price'; columns found: 'date', 'value'; "
                        "name the driver column with drivers=")
    _same_but_spelling(api, cli, [("drivers=", "--driver")])


def test_a_driver_on_the_log_scale_at_zero(tmp_path: Path) -> None:
    """io/drivers: the advice carries a value (a list in Python, ``NAME:level`` on the command line)."""
    price = [2.0] * len(WEEKS)
    price[4] = 0.0
    path = _weekly(tmp_path, price=price)
    api = _api_line(lambda: evcal.fit(path, drivers=["price:log"]))
    cli = _cli_line(["fit", str(path), "--driver", "price:log", "-o", str(tmp_path / "m")])
    assert "use drivers=['price:level'], or fix the value" in api
    _same_but_spelling(api, cli, [("drivers=['price:level']", "--driver price:level")])


def test_a_panel_key_column_that_is_not_there(tmp_path: Path) -> None:
    """io/longformat (read_panel's find_column). Fails on main: the API said 'with --series-col'."""
    frame = pd.DataFrame({"date": list(WEEKS.strftime("%Y-%m-%d")) * 2, "value": 5.0,
                          "product": ["a"] * len(WEEKS) + ["b"] * len(WEEKS)})
    path = _write(tmp_path, "long.csv", frame)
    api = _api_line(lambda: fit_panel(path, None, ["store"]))
    cli = _cli_line(["fit", str(path), "--series-col", "store", "-o", str(tmp_path / "m")])
    assert api.endswith("no key column 'store'; columns found: 'date', 'value', 'product'; "
                        "name the key column with series_cols=")
    _same_but_spelling(api, cli, [("series_cols=", "--series-col")])


def test_a_series_named_for_a_history(tmp_path: Path) -> None:
    """discovery/inputs. Fails on main: the API said 'drop --series'."""
    path = _weekly(tmp_path)
    api = _api_line(lambda: evcal.discover(path, series="P1"))
    cli = _cli_line(["discover", str(path), "--series", "P1", "-o", str(tmp_path / "d")])
    assert api.endswith("holds several; drop series=")
    _same_but_spelling(api, cli, [("drop series=", "drop --series")])


def test_a_log_transform_on_a_zero(tmp_path: Path) -> None:
    """model/inputs: the transform to use instead. Fails on main: the API said 'use --transform count'."""
    values = list(100.0 + (WEEKS.month % 5))
    values[7] = 0.0
    path = _weekly(tmp_path, value=values)
    api = _api_line(lambda: evcal.fit(path, transform="log"))
    cli = _cli_line(["fit", str(path), "--transform", "log", "-o", str(tmp_path / "m")])
    assert "is zero and transform='log' needs positive values; use transform='count' for series" in api
    _same_but_spelling(api, cli, [("transform='log'", "--transform log"),
                                  ("transform='count'", "--transform count")])


@pytest.fixture(scope="module")
def model(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """An invented weekly model (no calendar), fitted once for the plan cases."""
    folder = tmp_path_factory.mktemp("spelling")
    evcal.fit(_weekly(folder), errors="ols").save(folder / "model")
    return folder / "model"


def test_a_horizon_that_ends_before_it_starts(model: Path, tmp_path: Path) -> None:
    """plan/horizon: two settings and their days. Fails on main: the API said '--to ... --from ...'."""
    from evcal.plan import make_plan

    api = _api_line(lambda: make_plan(evcal.load_model(model), "2025-06-01", "2025-03-31", n_sims=0))
    cli = _cli_line(["plan", str(model), "--from", "2025-06-01", "--to", "2025-03-31",
                     "-o", str(tmp_path / "p.csv")])
    assert api.startswith("end='2025-03-31' is before start='2025-06-01'; the horizon must end")
    _same_but_spelling(api, cli, [("end='2025-03-31'", "--to 2025-03-31"),
                                  ("start='2025-06-01'", "--from 2025-06-01")])


def test_a_target_that_is_not_positive(model: Path, tmp_path: Path) -> None:
    """plan/spread.check_total. Fails on main: the API said '--total -5: ... e.g. --total 125000'."""
    from evcal.plan import make_plan

    fitted = evcal.load_model(model)
    api = _api_line(lambda: make_plan(fitted, "2025-01-01", "2025-12-31", total=-5, n_sims=0))
    cli = _cli_line(["plan", str(model), "--from", "2025-01-01", "--to", "2025-12-31", "--total", "-5",
                     "-o", str(tmp_path / "p.csv")])
    assert api == "total=-5: the target total must be a positive number of units, e.g. total=125000"
    _same_but_spelling(api, cli, [("total=-5", "--total -5"), ("total=125000", "--total 125000")])


def test_the_api_spells_arguments_again_after_a_command_ran_in_process(tmp_path: Path) -> None:
    """The command line switches the flag spelling on for its own run only."""
    from evcal import spelling

    path = _write(tmp_path, "h.csv", pd.DataFrame({"day": WEEKS.strftime("%Y-%m-%d"), "value": 1.0}))
    assert "--date-col" in _cli_line(["fit", str(path), "-o", str(tmp_path / "m")])
    assert not spelling.flags_on()
    assert _api_line(lambda: evcal.read_history(path)).endswith("with date_col=")


IDENT = st.from_regex(r"[a-z]{1,8}(_[a-z]{1,8}){0,2}", fullmatch=True)


@given(arg=IDENT, value=st.one_of(st.text(min_size=1, max_size=10), st.integers()))
def test_option_spells_every_argument_both_ways(arg: str, value: Any) -> None:
    """Any argument: Python's ``arg=value`` (a valid keyword argument), the flag with dashes."""
    from evcal import spelling

    assert spelling.option(arg) == f"{arg}="
    assert spelling.option(arg, value) == f"{arg}={value!r}"
    assert eval(f"dict({spelling.option(arg, value)})") == {arg: value}  # noqa: S307 - the text is Python
    with spelling.flags():
        flag = "--" + arg.replace("_", "-")
        assert spelling.option(arg) == flag == spelling.subject(arg)
        assert spelling.option(arg, value) == f"{flag} {value}"
    assert not spelling.flags_on()
