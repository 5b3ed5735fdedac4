"""How the folders beside this file were written: by evcal 0.1.0 (commit 7d13c11, before issue 14).

Run with that version of evcal on the path: ``python make.py tests/corpus/v0_1``. The data are
invented (a monthly shop with a known truth: 100 a month, a seasonal wave), named as such.
"""

import sys
from pathlib import Path

import numpy as np
import pandas as pd

CAL = """name: invented shop for the 0.1 folder fixture
events:
  - name: spring-fair
    label: "=Spring fair, 3 days"
    when: {easter: -2}
    length: 3
  - {name: xmas, when: {fixed: '12-25'}, effect: zero}
"""


def main(out: Path) -> None:
    import evcal
    from evcal.panel import fit_panel

    out.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(1)
    months = pd.date_range("2021-01-31", "2023-12-31", freq="ME")
    y = 100 * np.exp(0.2 * np.sin(2 * np.pi * months.day_of_year.to_numpy() / 365.25)
                     + rng.normal(0, 0.03, len(months)))
    evcal.fit(pd.DataFrame({"date": months, "value": y.round(1)}), CAL, errors="ols").save(out / "model")
    long = pd.concat([pd.DataFrame({"store": "S1", "product": p, "date": months,
                                    "value": (y * (i + 1)).round(1)}) for i, p in enumerate(["P1", "-P2"])],
                     ignore_index=True)
    long.to_csv(out / "long.csv", index=False)
    (out / "cal.yaml").write_text(CAL)
    fit_panel(str(out / "long.csv"), str(out / "cal.yaml"), series_cols=["store", "product"], errors="ols",
              out=out / "panel")
    for name in ("long.csv", "cal.yaml"):
        (out / name).unlink()


if __name__ == "__main__":
    main(Path(sys.argv[1]))
