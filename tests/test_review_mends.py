"""Review mends: the drivers.csv reader of the store, and the error lines of drivers from the calendar
and of a --compare-drivers file.

Data: the invented weekly sales with a price elasticity of -1.8 of tests/test_drivers.py (invented, with a
known truth).
"""

from __future__ import annotations

import pandas as pd
import pytest
from test_drivers import invented

import evcal
from evcal.errors import ModelError
from evcal.io import read_history
from evcal.model.drivers import driver_table
from evcal.report.model_folder import read_model_folder
from evcal.store.tables import check_drivers


@pytest.fixture(scope="module")
def folder(tmp_path_factory) -> tuple[evcal.FitResult, object]:
    fit = evcal.fit(read_history(invented(), drivers=["price:log", "temperature"]), None, errors="ols")
    out = tmp_path_factory.mktemp("mends") / "m"
    fit.save(out)
    return fit, out


def test_the_store_reads_drivers_csv_back_as_the_fit_wrote_it(folder) -> None:
    fit, out = folder
    back = check_drivers(out / "drivers.csv", {"price", "temperature"})
    # drivers.csv keeps 6 significant digits
    pd.testing.assert_frame_equal(back, driver_table(fit), rtol=1e-5)
    report = read_model_folder(out).drivers
    pd.testing.assert_frame_equal(report, back)


def test_a_drivers_csv_naming_a_driver_the_model_lacks_is_one_line(folder, tmp_path) -> None:
    _, out = folder
    text = (out / "drivers.csv").read_text().replace('"temperature"', '"rain"')
    (tmp_path / "drivers.csv").write_text(text)
    with pytest.raises(ModelError) as err:
        check_drivers(tmp_path / "drivers.csv", {"price", "temperature"})
    assert str(err.value).count("\n") == 0
    assert 'drivers.csv: line 3: column driver: "rain" is not one of price, temperature' in str(err.value)
    with pytest.raises(ModelError, match="drivers.csv: not found; model.json lists outside drivers"):
        check_drivers(tmp_path / "none" / "drivers.csv", {"price"})
