"""Command-line strategies: output locations (an input, the user's folder, an existing folder
where a file is meant, a read-only or missing parent, ``-``) and options out of range.

Every case runs in a folder holding the user's ``data/`` (the invented demo
history and a notes file of theirs), a calendar and a model folder that
``evcal fit`` wrote.
"""

from __future__ import annotations

from hypothesis import strategies as st

from corpus import assets
from corpus.case import Case, Expect

Y = str(assets.PLAN_YEAR)
FIT = ("fit", "data/sales.csv", "-c", "cal.yaml", "--errors", "ols")
DISCOVER = ("discover", "data/sales.csv", "-c", "cal.yaml", "--errors", "ols")
BACKTEST = ("backtest", "data/sales.csv", "-c", "cal.yaml", "--errors", "ols", "--holdout-years", "1")
PLAN = ("plan", "model", "--from", f"{Y}-01-01", "--to", f"{Y}-12-31", "--sims", "20")
DATES = ("calendar", "dates", "cal.yaml", "--from", "2024", "--to", "2026")
REPORT = ("report", "model")

#: (name, argv, expect, writes, extra dirs, read-only dirs, extra files)
Template = tuple[
    str,
    tuple[str, ...],
    Expect,
    tuple[str, ...],
    tuple[str, ...],
    tuple[str, ...],
    tuple[tuple[str, bytes], ...],
]


def _writers(out: str) -> list[tuple[str, tuple[str, ...]]]:
    """Every writing command, with ``--out`` at ``out`` plus a suffix of the kind it writes."""
    return [
        ("fit", (*FIT, "--out", out + "m")),
        ("discover", (*DISCOVER, "--out", out + "found")),
        ("backtest", (*BACKTEST, "--out", out + "bt.csv")),
        ("plan", (*PLAN, "--out", out + "plan.csv")),
        ("plan xlsx", (*PLAN, "--out", out + "plan.xlsx")),
        ("report", (*REPORT, "--out", out + "r.html")),
        ("calendar dates", (*DATES, "--out", out + "dates.csv")),
    ]


def templates() -> list[Template]:
    t: list[Template] = [
        ("fit --out the user's data folder", (*FIT, "--out", "data"), "bad", (), (), (), ()),
        (
            "fit --out the user's data folder --force",
            (*FIT, "--out", "data", "--force"),
            "bad",
            (),
            (),
            (),
            (),
        ),
        ("discover --out the user's data folder", (*DISCOVER, "--out", "data"), "bad", (), (), (), ()),
        ("fit --out its input", (*FIT, "--out", "data/sales.csv"), "bad", (), (), (), ()),
        (
            "fit --out its input, by another path",
            (*FIT, "--out", "./data/../data/sales.csv"),
            "bad",
            (),
            (),
            (),
            (),
        ),
        ("fit --out its calendar", (*FIT, "--out", "cal.yaml"), "bad", (), (), (), ()),
        ("backtest --out its input", (*BACKTEST, "--out", "data/sales.csv"), "bad", (), (), (), ()),
        ("plan --out a file of its model", (*PLAN, "--out", "model/lifts.csv"), "bad", (), (), (), ()),
        ("plan --out the model folder", (*PLAN, "--out", "model"), "bad", (), (), (), ()),
        (
            "calendar dates --out its calendar",
            ("calendar", "dates", "cal.yaml", "--from", "2024", "--to", "2026", "--out", "cal.yaml"),
            "bad",
            (),
            (),
            (),
            (),
        ),
        ("report --out a file of its model", (*REPORT, "--out", "model/fitted.csv"), "bad", (), (), (), ()),
        ("report --out the model folder", (*REPORT, "--out", "model"), "bad", (), (), (), ()),
        ("fit --out a user's file", (*FIT, "--out", "data/notes.txt"), "bad", (), (), (), ()),
        (
            "plan --out a user's file",
            (*PLAN, "--out", "data/notes.csv"),
            "any",
            ("data/notes.csv",),
            (),
            (),
            (("data/notes.csv", b"my,own\n1,2\n"),),
        ),
        (
            "plan --out a folder named plan.csv",
            (*PLAN, "--out", "plan.csv"),
            "bad",
            (),
            ("plan.csv",),
            (),
            (),
        ),
        ("plan --out a folder of the user's", (*PLAN, "--out", "data"), "bad", (), (), (), ()),
        ("report --out a folder named r.html", (*REPORT, "--out", "r.html"), "bad", (), ("r.html",), (), ()),
        ("calendar dates --out a folder", (*DATES, "--out", "data"), "bad", (), (), (), ()),
        (
            "backtest --out a folder named bt.csv",
            (*BACKTEST, "--out", "bt.csv"),
            "bad",
            (),
            ("bt.csv",),
            (),
            (),
        ),
        ("fit --out the model folder evcal wrote", (*FIT, "--out", "model"), "any", ("model",), (), (), ()),
        (
            "fit --out the model folder evcal wrote --force",
            (*FIT, "--out", "model", "--force"),
            "ok",
            ("model",),
            (),
            (),
            (),
        ),
        (
            "fit --out an existing empty folder",
            (*FIT, "--out", "empty"),
            "any",
            ("empty",),
            ("empty",),
            (),
            (),
        ),
        (
            "fit --out a new folder inside the user's folder",
            (*FIT, "--out", "data/model"),
            "ok",
            ("data/model",),
            (),
            (),
            (),
        ),
        (
            "calendar dates --out a new file in the user's folder",
            (*DATES, "--out", "data/dates.csv"),
            "ok",
            ("data/dates.csv",),
            (),
            (),
            (),
        ),
        (
            "fit beside a hidden leftover of a killed save",
            (*FIT, "--out", "m"),
            "ok",
            ("m", ".m.x7k2p9qz"),
            (".m.x7k2p9qz",),
            (),
            ((".m.x7k2p9qz/model.json", b"{"),),
        ),
        (
            "fit into a path with spaces and accents",
            (
                "fit",
                "my data/ventes été.csv",
                "-c",
                "cal.yaml",
                "--errors",
                "ols",
                "--out",
                "my data/modèle 1",
            ),
            "ok",
            ("my data/modèle 1",),
            (),
            (),
            (("my data/ventes été.csv", assets.demo_history()),),
        ),
        ("fit --out -", (*FIT, "--out", "-"), "any", ("-",), (), (), ()),
        ("plan --out -", (*PLAN, "--out", "-"), "any", ("-",), (), (), ()),
        ("calendar dates --out -", (*DATES, "--out", "-"), "any", ("-",), (), (), ()),
        ("plan --out plan.txt", (*PLAN, "--out", "plan.txt"), "bad", (), (), (), ()),
        (
            "plan --sims 100000000",
            (*PLAN, "--out", "plan.csv", "--sims", "100000000"),
            "any",
            ("plan.csv",),
            (),
            (),
            (),
        ),
        ("plan --sims -1", (*PLAN, "--out", "plan.csv", "--sims", "-1"), "bad", (), (), (), ()),
        ("plan --sims 0", (*PLAN, "--out", "plan.csv", "--sims", "0"), "ok", ("plan.csv",), (), (), ()),
        (
            "plan --from an impossible date",
            ("plan", "model", "--from", f"{Y}-13-45", "--to", f"{Y}-12-31", "--out", "plan.csv"),
            "bad",
            (),
            (),
            (),
            (),
        ),
        (
            "plan --to before --from",
            ("plan", "model", "--from", f"{Y}-12-31", "--to", f"{Y}-01-01", "--out", "plan.csv"),
            "bad",
            (),
            (),
            (),
            (),
        ),
        (
            "plan inside the history",
            ("plan", "model", "--from", "2022-01-01", "--to", "2022-12-31", "--out", "plan.csv"),
            "bad",
            (),
            (),
            (),
            (),
        ),
        (
            "plan --to 9999-12-31",
            (
                "plan",
                "model",
                "--from",
                f"{Y}-01-01",
                "--to",
                "9999-12-31",
                "--out",
                "plan.csv",
                "--sims",
                "0",
            ),
            "any",
            ("plan.csv",),
            (),
            (),
            (),
        ),
        (
            "plan over 100 years",
            (
                "plan",
                "model",
                "--from",
                f"{Y}-01-01",
                "--to",
                "2126-12-31",
                "--out",
                "plan.csv",
                "--sims",
                "20",
            ),
            "any",
            ("plan.csv",),
            (),
            (),
            (),
        ),
        (
            "calendar dates over 200 years",
            ("calendar", "dates", "cal.yaml", "--from", "2000", "--to", "2200", "--out", "d.csv"),
            "any",
            ("d.csv",),
            (),
            (),
            (),
        ),
        (
            "calendar dates --from 1 --to 99999",
            ("calendar", "dates", "cal.yaml", "--from", "1", "--to", "99999"),
            "bad",
            (),
            (),
            (),
            (),
        ),
        (
            "calendar check --from 1800 --to 1850",
            ("calendar", "check", "cal.yaml", "--from", "1800", "--to", "1850"),
            "any",
            (),
            (),
            (),
            (),
        ),
        ("fit --errors bogus", (*FIT, "--errors", "bogus", "--out", "m"), "bad", (), (), (), ()),
        ("fit --transform sqrt", (*FIT, "--transform", "sqrt", "--out", "m"), "bad", (), (), (), ()),
        ("fit --fourier-order -1", (*FIT, "--fourier-order", "-1", "--out", "m"), "bad", (), (), (), ()),
        (
            "fit --fourier-order 100000",
            (*FIT, "--fourier-order", "100000", "--out", "m"),
            "bad",
            (),
            (),
            (),
            (),
        ),
        ("fit --trend-order 9", (*FIT, "--trend-order", "9", "--out", "m"), "bad", (), (), (), ()),
        (
            "fit --arima-order 1,2",
            (*FIT, "--errors", "arima", "--arima-order", "1,2", "--out", "m"),
            "bad",
            (),
            (),
            (),
            (),
        ),
        (
            "fit --arima-order -1,0,0",
            (*FIT, "--errors", "arima", "--arima-order", "-1,0,0", "--out", "m"),
            "bad",
            (),
            (),
            (),
            (),
        ),
        ("fit --date-col missing", (*FIT, "--date-col", "when", "--out", "m"), "bad", (), (), (), ()),
        ("fit --value-col date", (*FIT, "--value-col", "date", "--out", "m"), "bad", (), (), (), ()),
        (
            "fit a history that does not exist",
            ("fit", "data/nope.csv", "-c", "cal.yaml", "--out", "m"),
            "bad",
            (),
            (),
            (),
            (),
        ),
        (
            "fit a folder as the history",
            ("fit", "data", "-c", "cal.yaml", "--out", "m"),
            "bad",
            (),
            (),
            (),
            (),
        ),
        (
            "fit a calendar that is a folder",
            ("fit", "data/sales.csv", "-c", "data", "--out", "m"),
            "bad",
            (),
            (),
            (),
            (),
        ),
        (
            "backtest --holdout-years 0",
            (*BACKTEST[:-2], "--holdout-years", "0", "--out", "bt.csv"),
            "bad",
            (),
            (),
            (),
            (),
        ),
        (
            "backtest --holdout-years 50",
            (*BACKTEST[:-2], "--holdout-years", "50", "--out", "bt.csv"),
            "bad",
            (),
            (),
            (),
            (),
        ),
        ("discover --critical 1", (*DISCOVER, "--critical", "1", "--out", "found"), "bad", (), (), (), ()),
        ("plan --total nan", (*PLAN, "--total", "nan", "--out", "plan.csv"), "bad", (), (), (), ()),
        ("plan --total inf", (*PLAN, "--total", "inf", "--out", "plan.csv"), "bad", (), (), (), ()),
        ("plan --total -5", (*PLAN, "--total", "-5", "--out", "plan.csv"), "bad", (), (), (), ()),
        ("plan --total abc", (*PLAN, "--total", "abc", "--out", "plan.csv"), "bad", (), (), (), ()),
        (
            "plan --total 1e300",
            (*PLAN, "--total", "1e300", "--out", "plan.csv"),
            "any",
            ("plan.csv",),
            (),
            (),
            (),
        ),
        (
            "plan --totals a missing file",
            (*PLAN, "--totals", "nope.csv", "--out", "plan.csv"),
            "bad",
            (),
            (),
            (),
            (),
        ),
        (
            "plan --calendar a missing file",
            (*PLAN, "--calendar", "nope.yaml", "--out", "plan.csv"),
            "bad",
            (),
            (),
            (),
            (),
        ),
        ("show a folder that is not a model", ("show", "data"), "bad", (), (), (), ()),
        (
            "plan a folder that is not a model",
            ("plan", "data", "--from", f"{Y}-01-01", "--to", f"{Y}-12-31", "--out", "plan.csv"),
            "bad",
            (),
            (),
            (),
            (),
        ),
    ]
    for what, argv in _writers("ro/"):
        t.append((f"{what} --out in a read-only folder", argv, "bad", (), ("ro",), ("ro",), ()))
    for what, argv in _writers("missing/deeper/"):
        t.append((f"{what} --out under a missing folder", argv, "bad", (), (), (), ()))
    return t


@st.composite
def command_cases(draw: st.DrawFn) -> Case:
    """One command line from the list above, in the standard folder."""
    name, argv, expect, writes, dirs, readonly, extra = draw(st.sampled_from(templates()))
    if expect == "bad" and not writes and not readonly and "--out" in argv:
        # a refused option with --out at a new path: if it runs anyway, writing there is the
        # exit-0-on-bad failure, not also a changed file (an existing path stays protected)
        out = argv[argv.index("--out") + 1]
        taken = {"data", "data/sales.csv", "data/notes.txt", "cal.yaml", "model", *dirs}
        if out not in taken and not out.startswith(("model/", "./")):
            writes = (out.split("/")[0] if out.startswith("missing/") else out,)
    files = [
        ("data/sales.csv", assets.demo_history()),
        ("data/notes.txt", b"my own notes\n"),
        ("cal.yaml", assets.demo_calendar()),
        *((f"model/{p}", b) for p, b in assets.base_model()),
        *extra,
    ]
    return Case(
        "command", f"command: {name}", argv, tuple(files), expect, writes, dirs=dirs, readonly=readonly
    )
