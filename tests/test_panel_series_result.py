"""A panel's series fitted again alone is the panel's model (the settings the data chose once for the panel).

Invented data with a known truth (named so): two monthly series; the small one sells by working days
(a commuter pattern), the large one does not, so the panel's once-for-all choice on their sum differs
from what the small series would choose on its own rows.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from evcal.panel import fit_panel

CAL = "name: invented (test)\nevents:\n  - {name: easter, when: {easter: 0}, before: 2}\n"


def _long() -> pd.DataFrame:
    rng = np.random.default_rng(16)
    months = pd.period_range("2012-01", "2021-12", freq="M")
    days = pd.date_range("2012-01-01", "2021-12-31", freq="D")
    weekday_mix = np.array([1.3, 1.3, 1.3, 1.3, 1.3, 0.3, 0.2])[days.day_of_week]
    small = pd.Series(10 * weekday_mix, index=days).resample("ME").sum().to_numpy()
    small = small * np.exp(rng.normal(0, 0.005, len(months)))
    season = 1 + 0.2 * np.sin(2 * np.pi * (months.month.to_numpy() - 1) / 12)
    large = 100_000 * season * np.exp(rng.normal(0, 0.03, len(months)))
    dates = months.to_timestamp(how="end").normalize()
    return pd.concat([pd.DataFrame({"store": "small", "date": dates, "value": small}),
                      pd.DataFrame({"store": "large", "date": dates, "value": large})], ignore_index=True)


def test_a_series_refitted_alone_keeps_the_panels_choices():
    panel = fit_panel(_long(), CAL, ["store"], errors="ols")
    design = panel.settings["design"]
    res = panel.series_result("small")
    assert res.spec.trading_days == design["trading_days"]
    assert res.spec.fourier_order == design["fourier_order"]
    row = panel.coefficients.set_index("store").loc["small"].dropna()
    assert set(res.params.index) == set(row.index)  # the same columns ...
    np.testing.assert_allclose(res.params[row.index].to_numpy(), row.to_numpy(dtype=float), rtol=1e-6)
