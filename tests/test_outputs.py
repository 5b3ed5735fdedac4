"""Where evcal may write: ``--out`` never destroys what evcal did not write, never an input.

Issue 13, "What was seen" 1, 4 (``--out`` in a read-only folder or naming an
existing directory) and 6 (leftovers of a killed save), and the last-resort
handler. The data are the bundled demo files (invented Fernhollow Garden
Centres, see evcal/data/demo/README.md), fitted with ``--errors ols`` for speed. Every
refusal must leave every file byte-identical (hashes before and after), exit
with code 2, say one line and show no traceback.
"""

from __future__ import annotations

import hashlib
import json
import os
import shutil
import signal
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest
from typer.testing import CliRunner

from evcal.cli import app

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "evcal" / "data" / "demo"
HISTORY = DEMO / "fernhollow-history.csv"
CALENDAR = DEMO / "fernhollow-calendar.yaml"
MODEL_FILES = {"model.json", "lifts.csv", "occurrences.csv", "profile.csv", "fitted.csv"}

runner = CliRunner()


def _hashes(folder: Path) -> dict[str, str]:
    """Every file under ``folder`` (hidden ones too) with the SHA-256 of its bytes."""
    return {p.relative_to(folder).as_posix(): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.rglob("*")) if p.is_file()}


def _refused(res, *needles: str) -> str:
    """Exit code 2, one line on stderr naming ``needles``, no traceback."""
    assert res.exit_code == 2, res.output
    assert "Traceback" not in res.output
    lines = [line for line in res.output.splitlines() if line.strip()]
    assert len(lines) == 1, res.output
    for needle in needles:
        assert needle in lines[0], (needle, lines[0])
    return lines[0]


def _data(tmp_path: Path) -> Path:
    """A user's data folder: the history, the calendar and a file of their own."""
    data = tmp_path / "data"
    data.mkdir()
    shutil.copy(HISTORY, data / "sales.csv")
    shutil.copy(CALENDAR, data / "cal.yaml")
    (data / "notes.txt").write_text("my own notes, not evcal's\n")
    return data


def _fit(history: Path, out: Path, *extra: str):
    return runner.invoke(app, ["fit", str(history), "-c", str(CALENDAR), "--errors", "ols",
                               "--out", str(out), *extra])


@pytest.fixture(scope="module")
def model(tmp_path_factory: pytest.TempPathFactory) -> Path:
    d = tmp_path_factory.mktemp("model")
    res = _fit(HISTORY, d / "model")
    assert res.exit_code == 0, res.output
    return d / "model"


# ---------------------------------------- seen 1: --out destroys what evcal did not write


def test_fit_out_at_the_data_folder_is_refused_and_nothing_changes(tmp_path: Path) -> None:
    data = _data(tmp_path)
    before = _hashes(data)
    res = runner.invoke(app, ["fit", str(data / "sales.csv"), "-c", str(data / "cal.yaml"),
                              "--errors", "ols", "--out", str(data)])
    _refused(res, str(data))
    assert _hashes(data) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["data"]  # no hidden sibling either


def test_discover_out_at_a_folder_with_files_is_refused(tmp_path: Path) -> None:
    data = _data(tmp_path)
    target = tmp_path / "reports"
    target.mkdir()
    (target / "q3.xlsx").write_bytes(b"not evcal's")
    (target / "readme.md").write_text("mine\n")
    before, before_data = _hashes(target), _hashes(data)
    res = runner.invoke(app, ["discover", str(data / "sales.csv"), "--errors", "ols", "--out", str(target)])
    line = _refused(res, str(target), "not written by evcal")
    assert "choose a new folder" in line
    assert _hashes(target) == before and _hashes(data) == before_data


def test_fit_out_at_its_own_history_file_is_refused(tmp_path: Path) -> None:
    data = _data(tmp_path)
    before = _hashes(data)
    res = _fit(data / "sales.csv", data / "sales.csv")
    _refused(res, "sales.csv", "input")
    assert _hashes(data) == before
    assert (data / "sales.csv").is_file()
    assert not any(p.name.startswith(".") for p in data.iterdir())  # not moved aside to a hidden name


def test_plan_out_inside_the_model_folder_is_refused(model: Path) -> None:
    before = _hashes(model)
    res = runner.invoke(app, ["plan", str(model), "--from", "2027-01-01", "--to", "2027-12-31",
                              "--sims", "0", "--out", str(model / "lifts.csv")])
    _refused(res, "lifts.csv", "input")
    assert _hashes(model) == before


def test_fit_from_a_file_inside_the_out_folder_is_refused(model: Path, tmp_path: Path) -> None:
    out = tmp_path / "model"
    shutil.copytree(model, out)
    before = _hashes(out)
    res = runner.invoke(app, ["fit", str(out / "fitted.csv"), "--value-col", "actual", "--errors", "ols",
                              "--out", str(out)])
    _refused(res, "fitted.csv", "input")
    assert _hashes(out) == before


def test_calendar_dates_out_at_its_calendar_is_refused(tmp_path: Path) -> None:
    data = _data(tmp_path)
    before = _hashes(data)
    res = runner.invoke(app, ["calendar", "dates", str(data / "cal.yaml"), "--from", "2026", "--to", "2027",
                              "--out", str(data / "cal.yaml")])
    _refused(res, "cal.yaml", "input")
    assert _hashes(data) == before


def test_plan_over_a_users_csv_is_refused(model: Path, tmp_path: Path) -> None:
    mine = tmp_path / "plan.csv"
    mine.write_text("date,units\n2027-01-01,5\n")
    res = runner.invoke(app, ["plan", str(model), "--from", "2027-01-01", "--to", "2027-12-31",
                              "--sims", "0", "--out", str(mine)])
    _refused(res, str(mine), "not written by evcal")
    assert mine.read_text() == "date,units\n2027-01-01,5\n"


def test_report_and_backtest_refuse_an_input(model: Path, tmp_path: Path) -> None:
    before = _hashes(model)
    res = runner.invoke(app, ["report", str(model), "--out", str(model / "model.json")])
    _refused(res, "model.json")
    res = runner.invoke(app, ["backtest", str(HISTORY), "-c", str(CALENDAR), "--out", str(HISTORY)])
    _refused(res, str(HISTORY))
    assert _hashes(model) == before


# ---------------------------------------- seen 4: read-only parent, existing directory


def test_plan_out_naming_an_existing_directory_is_refused(model: Path, tmp_path: Path) -> None:
    folder = tmp_path / "plans"
    folder.mkdir()
    (folder / "old.csv").write_text("x\n")
    res = runner.invoke(app, ["plan", str(model), "--from", "2027-01-01", "--to", "2027-12-31",
                              "--sims", "0", "--out", str(folder)])
    # (an existing folder named plans has no .csv suffix: name it with one to reach the folder check)
    _refused(res, str(folder))
    folder_csv = tmp_path / "plans.csv"
    folder_csv.mkdir()
    res = runner.invoke(app, ["plan", str(model), "--from", "2027-01-01", "--to", "2027-12-31",
                              "--sims", "0", "--out", str(folder_csv)])
    _refused(res, str(folder_csv), "is a folder")
    assert folder_csv.is_dir() and list(folder_csv.iterdir()) == []
    res = runner.invoke(app, ["calendar", "dates", str(CALENDAR), "--from", "2026", "--to", "2027",
                              "--out", str(folder)])
    _refused(res, str(folder), "is a folder")
    assert (folder / "old.csv").read_text() == "x\n"


def _read_only_folder() -> Path:
    """A folder nobody can create files in, not even root (chmod does not stop root)."""
    if os.geteuid() != 0:
        import tempfile

        d = Path(tempfile.mkdtemp())
        d.chmod(0o500)
        return d
    # sysfs refuses new files with EACCES for root as well (seen on Linux; /proc answers ENOENT)
    sys_dir = Path("/sys")
    try:
        fd = os.open(sys_dir / ".evcal-probe", os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
    except PermissionError:
        return sys_dir
    except OSError:
        pytest.skip("no folder here refuses writes to root (/sys is missing)")
    os.close(fd)
    os.unlink(sys_dir / ".evcal-probe")
    pytest.skip("running as root and /sys accepts new files: no honest read-only folder to test with")


def test_read_only_parent_is_refused_before_any_fit(monkeypatch: pytest.MonkeyPatch) -> None:
    import evcal.engine
    calls = []
    monkeypatch.setattr(evcal.engine, "fit", lambda *a, **k: calls.append(a) or pytest.fail("fit ran"))
    folder = _read_only_folder()
    res = _fit(HISTORY, folder / "model")
    _refused(res, str(folder), "cannot write")
    assert calls == []
    assert not (folder / "model").exists()


def test_missing_parent_is_refused(tmp_path: Path) -> None:
    res = _fit(HISTORY, tmp_path / "no-such-folder" / "model")
    _refused(res, "no-such-folder", "does not exist")
    assert list(tmp_path.iterdir()) == []


# ---------------------------------------------------------------- evcal's own outputs


def test_fit_again_over_its_own_model_folder(tmp_path: Path) -> None:
    out = tmp_path / "model"
    assert _fit(HISTORY, out).exit_code == 0
    marker = json.loads((out / "evcal-output.json").read_text())
    assert marker["written_by"] == "evcal" and marker["kind"] == "model"
    assert set(marker["files"]) == MODEL_FILES
    res = _fit(HISTORY, out)
    assert res.exit_code == 0, res.output
    assert {p.name for p in out.iterdir()} == MODEL_FILES | {"evcal-output.json"}
    assert [p.name for p in tmp_path.iterdir()] == ["model"]


def test_a_model_folder_from_before_the_marker_is_evcals_own(model: Path, tmp_path: Path) -> None:
    old = tmp_path / "old-model"
    shutil.copytree(model, old)
    (old / "evcal-output.json").unlink()  # as evcal wrote model folders before this issue
    res = _fit(HISTORY, old)
    assert res.exit_code == 0, res.output
    assert (old / "evcal-output.json").is_file()


def test_a_users_file_in_a_model_folder_blocks_replacing_it(model: Path, tmp_path: Path) -> None:
    out = tmp_path / "model"
    shutil.copytree(model, out)
    (out / "my-notes.txt").write_text("keep me\n")
    before = _hashes(out)
    res = _fit(HISTORY, out)
    _refused(res, "my-notes.txt", "did not write")
    res = _fit(HISTORY, out, "--force")  # --force never deletes a user's file either
    _refused(res, "my-notes.txt")
    assert _hashes(out) == before


def test_plan_again_over_its_own_plan_and_workbook(model: Path, tmp_path: Path) -> None:
    for name in ("plan.csv", "plan.xlsx"):
        args = ["plan", str(model), "--from", "2027-01-01", "--to", "2027-12-31", "--sims", "0",
                "--out", str(tmp_path / name)]
        assert runner.invoke(app, args).exit_code == 0
        res = runner.invoke(app, args)
        assert res.exit_code == 0, res.output
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plan.csv", "plan.xlsx"]


def test_force_replaces_evcals_own_output_of_another_kind_only(tmp_path: Path) -> None:
    found = tmp_path / "found"
    res = runner.invoke(app, ["discover", str(HISTORY), "--errors", "ols", "--out", str(found)])
    assert res.exit_code == 0, res.output
    assert json.loads((found / "evcal-output.json").read_text())["kind"] == "findings"
    before = _hashes(found)
    line = _refused(_fit(HISTORY, found), str(found), "--force")
    assert "findings" in line
    assert _hashes(found) == before
    res = _fit(HISTORY, found, "--force")
    assert res.exit_code == 0, res.output
    assert json.loads((found / "evcal-output.json").read_text())["kind"] == "model"
    # a plan file over evcal's dates list: another kind, so --force only
    dates = tmp_path / "dates.csv"
    assert runner.invoke(app, ["calendar", "dates", str(CALENDAR), "--from", "2026", "--to", "2026",
                               "--out", str(dates)]).exit_code == 0
    args = ["plan", str(found), "--from", "2027-01-01", "--to", "2027-12-31", "--sims", "0", "--out",
            str(dates)]
    _refused(runner.invoke(app, args), str(dates), "--force")
    assert runner.invoke(app, [*args, "--force"]).exit_code == 0
    assert dates.read_text().startswith("date,base,plan,low,high")
    # never a folder evcal did not write, never an input
    data = _data(tmp_path)
    before = _hashes(data)
    _refused(_fit(data / "sales.csv", data, "--force"), str(data))
    _refused(_fit(data / "sales.csv", data / "sales.csv", "--force"), "input")
    assert _hashes(data) == before


def test_the_writer_itself_refuses_a_folder_evcal_did_not_write(model: Path, tmp_path: Path) -> None:
    from evcal.errors import OutputError
    from evcal.model import load_model

    data = _data(tmp_path)
    before = _hashes(data)
    with pytest.raises(OutputError, match="not written by evcal"):
        load_model(model).save(data)  # the Python API, without the command's check
    assert _hashes(data) == before


# ---------------------------------------------------------------- seen 6: leftovers of a killed save


_KILLED_SAVE = textwrap.dedent("""
    import sys, time
    from pathlib import Path
    from evcal._files import atomic_dir
    with atomic_dir(Path(sys.argv[1]), kind="model") as tmp:
        (tmp / "lifts.csv").write_text("event\\n")
        print(tmp, flush=True)
        time.sleep(120)
""")


def test_leftovers_of_a_killed_save_are_removed_by_the_next_save(model: Path, tmp_path: Path) -> None:
    from evcal.model import load_model

    target = tmp_path / "model"
    # a real SIGKILL in the middle of a save: the child says where it writes, then waits to be killed
    child = subprocess.Popen([sys.executable, "-c", _KILLED_SAVE, str(target)], stdout=subprocess.PIPE,
                             text=True)
    try:
        tmp = Path(child.stdout.readline().strip())
    finally:
        child.send_signal(signal.SIGKILL)
        child.wait(timeout=30)
    assert tmp.is_dir() and (tmp / "lifts.csv").is_file()
    assert tmp.name.startswith(f".evcal-tmp.model.{child.pid}.")  # recognisably evcal's
    # things that are not this target's dead leftovers stay: another process alive, other names
    alive = tmp_path / f".evcal-tmp.model.{os.getpid()}.abc123"
    alive.mkdir()
    foreign = [tmp_path / ".model.k2j4x8", tmp_path / ".evcal-tmp.other.1.ab", tmp_path / "model-old"]
    for f in foreign:
        f.mkdir()
    load_model(model).save(target)
    assert not tmp.exists()
    assert alive.is_dir() and all(f.is_dir() for f in foreign)
    assert (target / "evcal-output.json").is_file()


def test_a_dead_file_leftover_is_removed_and_the_plan_written(model: Path, tmp_path: Path) -> None:
    # a planted leftover of a plan save whose process is gone (pid of a finished child)
    dead_pid = subprocess.Popen([sys.executable, "-c", "pass"])
    dead_pid.wait()
    left = tmp_path / f".evcal-tmp.plan.csv.{dead_pid.pid}.0a1b2c3d4e.csv"
    left.write_text("half a plan")
    res = runner.invoke(app, ["plan", str(model), "--from", "2027-01-01", "--to", "2027-12-31",
                              "--sims", "0", "--out", str(tmp_path / "plan.csv")])
    assert res.exit_code == 0, res.output
    assert not left.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plan.csv"]


# ---------------------------------------------------------------- the last-resort handler


@pytest.mark.parametrize("error", [RecursionError("maximum recursion depth exceeded"), MemoryError(),
                                   OverflowError("int too large to convert to float"),
                                   PermissionError(13, "Permission denied", "/srv/shared/x.csv"),
                                   ZeroDivisionError("float division by zero")])
def test_an_unexpected_error_is_one_line_and_exit_one(error: BaseException, tmp_path: Path,
                                                      monkeypatch: pytest.MonkeyPatch) -> None:
    import evcal.engine
    def boom(*args: object, **kwargs: object) -> None:
        raise error

    monkeypatch.setattr(evcal.engine, "fit", boom)
    res = _fit(HISTORY, tmp_path / "model")
    assert res.exit_code == 1, res.output
    assert "Traceback" not in res.output
    lines = [line for line in res.output.splitlines() if line.strip()]
    assert len(lines) == 1, res.output
    assert lines[0].startswith("error: evcal fit: ")
    assert type(error).__name__ in lines[0]
    if isinstance(error, OSError):
        assert "/srv/shared/x.csv" in lines[0] and "Permission denied" in lines[0]
    else:
        assert str(HISTORY) in lines[0] and "report" in lines[0]
    assert not (tmp_path / "model").exists()


def test_debug_shows_the_traceback(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    import evcal.engine
    def boom(*args: object, **kwargs: object) -> None:
        raise RecursionError("maximum recursion depth exceeded")

    monkeypatch.setattr(evcal.engine, "fit", boom)
    res = runner.invoke(app, ["--debug", "fit", str(HISTORY), "-c", str(CALENDAR), "--out",
                              str(tmp_path / "model")])
    assert res.exit_code == 1
    assert "Traceback" in res.output and "RecursionError" in res.output
    assert res.output.strip().splitlines()[-1].startswith("error: evcal fit: ")
    res = _fit(HISTORY, tmp_path / "model")  # the flag is per run
    assert "Traceback" not in res.output


_PROCESS = textwrap.dedent("""
    import sys
    import evcal.engine
    def boom(*a, **k):
        raise OverflowError("date value out of range")
    evcal.engine.fit = boom
    from evcal.cli import main
    sys.argv = ["evcal", *sys.argv[1:]]
    main()
""")


def test_the_real_process_says_one_line_and_debug_the_traceback(tmp_path: Path) -> None:
    args = ["fit", str(HISTORY), "-c", str(CALENDAR), "--out", str(tmp_path / "model")]
    proc = subprocess.run([sys.executable, "-c", _PROCESS, *args], capture_output=True, text=True,
                          timeout=120, check=False)
    assert proc.returncode == 1
    assert "Traceback" not in proc.stderr
    assert len(proc.stderr.strip().splitlines()) == 1, proc.stderr
    assert "OverflowError" in proc.stderr and "report" in proc.stderr
    proc = subprocess.run([sys.executable, "-c", _PROCESS, "--debug", *args], capture_output=True,
                          text=True, timeout=120, check=False)
    assert proc.returncode == 1
    assert "Traceback" in proc.stderr
