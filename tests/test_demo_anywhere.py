"""`evcal demo` after `pip install`, from any folder (issue 18, item 1).

The demo's history and calendar are package data (``evcal/data/demo/``). Before
they were, the demo looked for ``./demo`` or the source tree's ``demo/`` and said
"demo data not found" anywhere else. Three checks, from cheap to real:

* the package alone (the ``evcal`` folder copied out of the source tree, as
  site-packages holds it) runs ``python -m evcal.cli demo`` in an empty folder;
* the wheel ``pip`` builds from the source carries the demo files (the
  ``package-data`` of pyproject.toml);
* slow: that wheel installed into a fresh venv runs the ``evcal`` entry point in
  an empty folder, with evcal imported from the venv, not the source tree.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import zipfile
from pathlib import Path

import pandas as pd
import pytest

from evcal.demo import CALENDAR, HISTORY, TARGET

ROOT = Path(__file__).resolve().parents[1]
DEMO_FILES = (f"evcal/data/demo/{HISTORY}", f"evcal/data/demo/{CALENDAR}")


def _env_without_source(pythonpath: Path | None = None) -> dict[str, str]:
    """The environment of a user's shell: no PYTHONPATH into the source tree, one BLAS thread."""
    env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"}
    if pythonpath is not None:
        env["PYTHONPATH"] = str(pythonpath)
    env.update(OPENBLAS_NUM_THREADS="1", OMP_NUM_THREADS="1")
    return env


def _check_demo_folder(out: Path, stdout: str) -> None:
    written = (HISTORY, CALENDAR, "model/lifts.csv", "plan.csv", "plan.xlsx", "backtest.csv", "report.html")
    for name in written:
        assert (out / name).is_file(), name
    # the copies in the output folder are the bundled files, byte for byte (the tutorial edits them)
    bundled = ROOT / "evcal" / "data" / "demo"
    for name in (HISTORY, CALENDAR):
        assert (out / name).read_bytes() == (bundled / name).read_bytes(), name
    plan = pd.read_csv(out / "plan.csv")
    assert abs(plan["plan"].sum() - TARGET) < 1e-6 * TARGET
    assert "What a planner would quote:" in stdout


def test_demo_runs_from_an_empty_folder_with_the_package_alone(tmp_path: Path) -> None:
    # fails on main: "error: demo data not found (looked in .../work/demo, .../site/demo); run from the
    # evcal source folder or pass --data DIR ..."
    site = tmp_path / "site"
    shutil.copytree(ROOT / "evcal", site / "evcal", ignore=shutil.ignore_patterns("__pycache__"))
    work = tmp_path / "work"
    work.mkdir()
    run = subprocess.run([sys.executable, "-m", "evcal.cli", "demo", "--out", "demo-output"], cwd=work,
                         env=_env_without_source(site), capture_output=True, text=True, timeout=300)
    assert run.returncode == 0, run.stdout[-2000:] + run.stderr[-2000:]
    _check_demo_folder(work / "demo-output", run.stdout)


def test_a_wrong_data_folder_is_one_line(tmp_path: Path) -> None:
    run = subprocess.run([sys.executable, "-m", "evcal.cli", "demo", "--out", "o", "--data", "nowhere"],
                         cwd=tmp_path, capture_output=True, text=True, timeout=120)
    assert run.returncode == 2
    lines = run.stderr.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in run.stderr, run.stderr
    assert f"--data nowhere: no {HISTORY} or {CALENDAR} there" in lines[0]
    assert not (tmp_path / "o").exists()


@pytest.fixture(scope="module")
def wheel(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The wheel pip builds from a copy of the source (the source tree stays clean of build/)."""
    src = tmp_path_factory.mktemp("src")
    for name in ("pyproject.toml", "README.md"):
        shutil.copy(ROOT / name, src / name)
    shutil.copytree(ROOT / "evcal", src / "evcal", ignore=shutil.ignore_patterns("__pycache__"))
    dist = tmp_path_factory.mktemp("dist")
    run = subprocess.run([sys.executable, "-m", "pip", "wheel", "--no-deps", "-q", "-w", str(dist), str(src)],
                         capture_output=True, text=True, timeout=600, env=_env_without_source())
    assert run.returncode == 0, run.stderr[-3000:]
    (built,) = dist.glob("evcal-*.whl")
    return built


def test_the_wheel_carries_the_demo_data(wheel: Path) -> None:
    # fails on main: the wheel holds no evcal/data/demo/ (the data sat in the repository's demo/)
    names = set(zipfile.ZipFile(wheel).namelist())
    for name in DEMO_FILES:
        assert name in names, name


@pytest.mark.slow
def test_evcal_demo_after_pip_install_from_an_empty_folder(wheel: Path, tmp_path: Path) -> None:
    venv = tmp_path / "venv"
    # system site-packages give the dependencies without a download; the venv's own evcal comes first
    subprocess.run([sys.executable, "-m", "venv", "--system-site-packages", str(venv)], check=True,
                   timeout=300)
    py = venv / "bin" / "python"
    subprocess.run([str(py), "-m", "pip", "install", "--no-deps", "-q", str(wheel)], check=True, timeout=600,
                   env=_env_without_source())
    work = tmp_path / "empty"
    work.mkdir()
    where = subprocess.run([str(py), "-c", "import evcal; print(evcal.__file__)"], cwd=work, check=True,
                           env=_env_without_source(), capture_output=True, text=True).stdout.strip()
    assert Path(where).resolve().is_relative_to(venv.resolve()), where
    run = subprocess.run([str(venv / "bin" / "evcal"), "demo"], cwd=work, env=_env_without_source(),
                         capture_output=True, text=True, timeout=600)
    assert run.returncode == 0, run.stdout[-2000:] + run.stderr[-2000:]
    _check_demo_folder(work / "demo-output", run.stdout)
