"""History strategies: the demo history or a synthetic one (any frequency, any week-ending day),
then damaged or made odd, written as CSV, Excel or Parquet, and read by one command.

The synthetic histories are invented, with a known truth (see
:func:`corpus.assets.synthetic_daily`).
"""

from __future__ import annotations

import csv
import io
from typing import Any

import pandas as pd
from hypothesis import strategies as st

from corpus import assets
from corpus.case import Case

Rows = list[list[str]]

SYNTH_CALENDAR = """\
name: Synthetic test calendar (invented)
events:
  - {{name: easter-weekend, when: {{easter: -2}}, length: 4}}
  - {{name: christmas-closed, when: {{fixed: "12-25"}}, effect: zero}}
{extra}"""
SHUTDOWN = '  - {name: summer-shutdown, when: {span: {start: "08-01", end: "08-14"}}, effect: zero}\n'


def _frame_rows(frame: pd.DataFrame) -> Rows:
    return [list(frame.columns)] + [[str(v) for v in row] for row in frame.itertuples(index=False)]


@st.composite
def base_history(draw: st.DrawFn) -> dict[str, Any]:
    """A valid history (rows of text), its calendar text and facts about it."""
    source = draw(st.sampled_from(["demo", "demo", "synthetic"]))
    if source == "demo":
        rows = _frame_rows(assets.demo_frame())
        return {
            "rows": rows,
            "calendar": assets.demo_calendar(),
            "freq": "W-SUN",
            "what": "demo weekly",
            "plan_year": assets.PLAN_YEAR,
        }
    freq = draw(st.sampled_from(assets.FREQS))
    years = {"D": 2, "M": 3, "Q": 4}.get(freq, 3)
    first = draw(st.integers(2015, 2021))
    daily = assets.synthetic_daily(f"{first}-01-01", f"{first + years}-01-10", seed=draw(st.integers(0, 99)))
    shutdown = draw(st.booleans())
    if shutdown:  # a two-week plant shutdown every August, known to be zero (the case)
        daily[(daily.index.month == 8) & (daily.index.day <= 14)] = 0.0
    daily[(daily.index.month == 12) & (daily.index.day == 25)] = 0.0
    frame = assets.to_periods(daily, freq)
    cal = SYNTH_CALENDAR.format(extra=SHUTDOWN if shutdown else "").encode()
    return {
        "rows": _frame_rows(frame),
        "calendar": cal,
        "freq": freq,
        "what": f"synthetic {freq}{' with August shutdown' if shutdown else ''}",
        "plan_year": first + years + 1,
    }


def _set_cell(rows: Rows, col: int, value: str, where: int) -> Rows:
    i = 1 + where % (len(rows) - 1)
    rows[i][col] = value
    return rows


#: (name, verdict, function(rows, where) -> rows, extra argv); verdict "bad", "ok" or "any"
def damages() -> list[tuple[str, str, Any, tuple[str, ...]]]:
    d: list[tuple[str, str, Any, tuple[str, ...]]] = []
    for text in ("2021-02-30", "not a date", "31.31.2021", "=1+1", "2021-13-01"):
        d.append((f"date cell {text!r}", "bad", lambda r, w, t=text: _set_cell(r, 0, t, w), ()))
    for text in ("1500-01-01", "2300-06-01", "9999-12-31", "0001-01-01", "1677-09-21"):
        d.append(
            (f"date outside pandas' range {text}", "bad", lambda r, w, t=text: _set_cell(r, 0, t, w), ())
        )
    for text in ("abc", "1e400", "inf", "-inf", "12..5", "=SUM(A1:A9)"):
        d.append((f"value {text!r}", "bad", lambda r, w, t=text: _set_cell(r, 1, t, w), ()))
    for text in ("", "NA", "nan"):
        d.append((f"missing value {text!r}", "ok", lambda r, w, t=text: _set_cell(r, 1, t, w), ()))
    d += [
        ("negative value", "bad", lambda r, w: _set_cell(r, 1, "-12", w), ()),
        (
            "negative value, --allow-negative",
            "ok",
            lambda r, w: _set_cell(r, 1, "-12", w),
            ("--allow-negative",),
        ),
        ("value 1e300", "any", lambda r, w: _set_cell(r, 1, "1e300", w), ()),
        (
            "duplicate row",
            "bad",
            lambda r, w: r[: 1 + w % (len(r) - 1)] + [r[1 + w % (len(r) - 1)]] + r[1 + w % (len(r) - 1) :],
            (),
        ),
        ("duplicate date, other value", "bad", lambda r, w: r + [[r[1 + w % (len(r) - 1)][0], "7"]], ()),
        ("200,000 duplicate rows", "bad", lambda r, w: r + [r[1]] * 200_000, ()),
        ("date column renamed", "bad", lambda r, w: [["day", *r[0][1:]], *r[1:]], ()),
        ("no value column", "bad", lambda r, w: [[row[0]] for row in r], ()),
        # the header moves with its column: "value,date" names both columns, and columns are read
        # by name (docs/history-files.md), so this is a valid file, not a damaged one
        ("columns in the other order", "ok", lambda r, w: [[row[1], row[0]] for row in r], ()),
        (
            "values under the date header",
            "bad",
            lambda r, w: [r[0], *[[row[1], row[0]] for row in r[1:]]],
            (),
        ),
        (
            "header in other case, extra column",
            "ok",
            lambda r, w: [["Date", "VALUE", "note"], *[[*row, "x"] for row in r[1:]]],
            (),
        ),
        ("rows shuffled", "ok", lambda r, w: [r[0], *reversed(r[1:])], ()),
        (
            "five rows missing",
            "ok",
            lambda r, w: [row for i, row in enumerate(r) if not (3 <= i - w % 50 < 8)],
            (),
        ),
        (
            "a few zero periods (not in the calendar)",
            "ok",
            lambda r, w: [
                row if not (i > 0 and (i + w) % 17 == 0) else [row[0], "0"] for i, row in enumerate(r)
            ],
            (),
        ),
        ("every value zero", "any", lambda r, w: [r[0], *[[row[0], "0"] for row in r[1:]]], ()),
        ("ten rows", "bad", lambda r, w: r[:11], ()),
        ("one row", "bad", lambda r, w: r[:2], ()),
        ("header only", "bad", lambda r, w: r[:1], ()),
        (
            "daily rows appended",
            "bad",
            lambda r, w: (
                r
                + [
                    [d.strftime("%Y-%m-%d"), "5"]
                    for d in pd.date_range(pd.Timestamp(r[-1][0]) + pd.Timedelta(days=1), periods=20)
                ]
            ),
            (),
        ),
        (
            "formula-like text in an extra column",
            "ok",
            lambda r, w: [
                [*r[0], "comment"],
                *[[*row, '=HYPERLINK("http://x.example","x")'] for row in r[1:]],
            ],
            (),
        ),
    ]
    return d


FREQ_OPTIONS = {  # (--freq value, verdict) per base frequency
    "W-SUN": [
        ("W-SAT", "bad"),
        ("W-MON", "bad"),
        ("D", "bad"),
        ("M", "bad"),
        ("W-SUN", "ok"),
        ("weekly", "ok"),
    ],
    "M": [("Q", "bad"), ("W", "bad"), ("monthly", "ok")],
    "D": [("W-SUN", "bad"), ("daily", "ok")],
    "Q": [("M", "bad"), ("quarterly", "ok")],
}


def _csv_bytes(rows: Rows, sep: str = ",", bom: bool = False, crlf: bool = False) -> bytes:
    buf = io.StringIO()
    csv.writer(buf, delimiter=sep, lineterminator="\r\n" if crlf else "\n").writerows(rows)
    return (("\ufeff" if bom else "") + buf.getvalue()).encode("utf-8")


def _typed(rows: Rows) -> pd.DataFrame:
    """Rows as a frame for Excel/Parquet: numbers as numbers where every cell of a column is one."""
    frame = pd.DataFrame(rows[1:], columns=rows[0]) if rows else pd.DataFrame()
    for col in frame.columns[1:]:
        num = pd.to_numeric(frame[col], errors="coerce")
        if num.notna().sum() == frame[col].astype(bool).sum():
            frame[col] = num
    return frame


@st.composite
def history_cases(draw: st.DrawFn) -> Case:
    """A history (valid, odd or damaged; CSV, Excel or Parquet) read by fit, backtest or discover."""
    base = draw(base_history())
    rows: Rows = [list(r) for r in base["rows"]]
    mode = draw(st.sampled_from(["valid", "damage", "damage", "damage", "freq", "quarterly", "format"]))
    extra: tuple[str, ...] = ()
    name, verdict = "valid", "ok"
    fmt, sep, bom, crlf = "csv", ",", False, False
    if mode == "damage":
        name, verdict, fn, extra = draw(st.sampled_from(damages()))
        rows = fn(rows, draw(st.integers(0, 10_000)))
    elif mode == "freq":
        freq = base["freq"]
        options = FREQ_OPTIONS.get(freq) or [("W-SUN", "bad"), (freq, "ok"), ("weekly", "ok")]
        value, verdict = draw(st.sampled_from(options))
        name, extra = f"--freq {value} on {freq} dates", ("--freq", value)
    elif mode == "quarterly" and base["what"] == "demo weekly":
        frame = assets.demo_frame().astype({"value": float})
        q = frame.groupby(pd.PeriodIndex(pd.to_datetime(frame["date"]), freq="Q"))["value"].sum()
        q = q.iloc[1:-1]  # whole quarters only
        rows = [["date", "value"], *[[str(p.start_time.date()), f"{v:g}"] for p, v in q.items()]]
        name = "the demo summed to quarters"
        if draw(st.booleans()):  # the garden-centres calendar has more events than quarters can tell apart
            base = {**base, "calendar": assets.garden_calendar()}
            name += ", garden-centres calendar"
    elif mode == "format":
        name, fmt, sep, bom, crlf = draw(
            st.sampled_from(
                [
                    ("semicolons", "csv", ";", False, False),
                    ("tabs", "csv", "\t", False, False),
                    ("BOM", "csv", ",", True, False),
                    ("CRLF", "csv", ",", False, True),
                    ("BOM, CRLF, semicolons", "csv", ";", True, True),
                    ("Excel", "xlsx", ",", False, False),
                    ("Parquet", "parquet", ",", False, False),
                ]
            )
        )
    if mode == "damage" and draw(st.integers(0, 4)) == 0:
        fmt = draw(st.sampled_from(["xlsx", "parquet"]))
    if fmt == "csv":
        data, path = _csv_bytes(rows, sep, bom, crlf), "sales.csv"
    else:
        data, path = assets.table_bytes(_typed(rows), fmt), f"sales.{fmt}"
    if mode == "damage" and draw(st.integers(0, 9)) == 0:  # a file that is not what its name says
        name, verdict = draw(
            st.sampled_from(
                [
                    ("binary garbage named .csv", "bad"),
                    ("CSV text named .xlsx", "bad"),
                    ("truncated parquet", "bad"),
                    ("empty file", "bad"),
                ]
            )
        )
        data, path = {
            "binary garbage named .csv": (bytes(range(256)) * 40, "sales.csv"),
            "CSV text named .xlsx": (_csv_bytes(rows), "sales.xlsx"),
            "truncated parquet": (assets.table_bytes(_typed(base["rows"]), "parquet")[:300], "sales.parquet"),
            "empty file": (b"", "sales.csv"),
        }[name]
    y = str(base["plan_year"])
    demo = base["what"] == "demo weekly"  # backtests need the demo's seven years
    command = draw(st.sampled_from(["fit"] * 7 + (["backtest"] * 2 if demo else []) + ["discover"]))
    follow: tuple[tuple[str, ...], ...] = ()
    if command == "fit":
        argv = ("fit", path, "-c", "cal.yaml", "--errors", "ols", "--out", "m", *extra)
        writes = ("m", "plan.csv")
        follow = (
            ("plan", "m", "--from", f"{y}-01-01", "--to", f"{y}-12-31", "--out", "plan.csv", "--sims", "20"),
        )
    elif command == "backtest":
        argv = (
            "backtest",
            path,
            "-c",
            "cal.yaml",
            "--errors",
            "ols",
            "--holdout-years",
            "1",
            "--out",
            "bt.csv",
            *extra,
        )
        writes = ("bt.csv",)
    else:
        argv = ("discover", path, "-c", "cal.yaml", "--errors", "ols", "--out", "found", *extra)
        writes = ("found",)
    expect = "any" if command != "fit" and verdict == "ok" and mode == "quarterly" else verdict
    return Case(
        "history",
        f"history {command}: {base['what']}: {name} ({fmt})",
        argv,
        ((path, data), ("cal.yaml", base["calendar"])),
        expect,
        writes,
        follow=follow if expect != "bad" else (),
    )
