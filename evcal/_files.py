"""Atomic output: write to a temporary sibling, then rename into place (atomic on one filesystem).

A failed run leaves nothing half written. The temporary file or folder is
private while written (as ``tempfile`` makes it); the finished one gets the
permissions a plain ``open`` or ``mkdir`` would give under the process umask.

Every folder evcal writes carries :data:`MARKER` (``evcal-output.json``): its
kind, format version and every file evcal put there. A folder that is not
evcal's, or holds a file evcal did not write, is never replaced
(:class:`~evcal.errors.OutputError`). Temporary siblings are named
``.evcal-tmp.<name>.<pid>.<random>`` (a folder being swapped out
``.evcal-old.``...), so the next write to the same target can remove those
of a killed save whose process is gone, and nothing else.
"""

from __future__ import annotations

import contextlib
import json
import os
import re
import shutil
import sys
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from evcal.errors import OutputError, clip

#: the marker file in every folder evcal writes
MARKER = "evcal-output.json"
#: kinds of folder evcal writes
FOLDER_KINDS = ("model", "panel", "findings", "demo")
#: version of the marker (and of the folder layout it describes)
MARKER_VERSION = 1
#: prefixes of evcal's temporary siblings (a save in progress, a folder being swapped out)
TMP_PREFIX = ".evcal-tmp."
OLD_PREFIX = ".evcal-old."

#: the files of a model folder written before the marker existed
LEGACY_MODEL_FILES = frozenset({"model.json", "lifts.csv", "occurrences.csv", "profile.csv", "fitted.csv"})
#: the files a panel folder written before the marker may hold
LEGACY_PANEL_FILES = frozenset({"panel.json", "series.csv", "lifts.csv", "pooling.csv", "occurrences.csv",
                                "profile.csv", "fitted.parquet", "coefficients.parquet", "skipped.csv"})
#: the files a findings folder (evcal discover) written before the marker may hold
LEGACY_FINDINGS_FILES = frozenset({"suggestions.csv", "suggestions.yaml", "findings.png", "index_effects.csv",
                                   "lost_demand.csv"})
#: the entries of a demo folder written before the marker existed
LEGACY_DEMO_ENTRIES = frozenset({"model", "plan.csv", "plan.xlsx", "backtest.csv", "report.html"})
_LEGACY_TOP = LEGACY_MODEL_FILES | LEGACY_PANEL_FILES | LEGACY_FINDINGS_FILES | LEGACY_DEMO_ENTRIES


def _umask() -> int:
    """The process umask, read from /proc where it can be (``os.umask`` reads it only by changing it)."""
    with contextlib.suppress(OSError, ValueError, StopIteration), \
            open("/proc/self/status", encoding="ascii") as status:
        return next(int(line.split()[1], 8) for line in status if line.startswith("Umask:"))
    mask = os.umask(0o022)  # elsewhere: set and put back at once
    os.umask(mask)
    return mask


def _as_created(path: Path, mode: int) -> None:
    with contextlib.suppress(OSError):  # a filesystem without modes (some network shares)
        os.chmod(path, mode & ~_umask())


# ---------------------------------------------------------------- whose folder is it


@dataclass(frozen=True)
class Owner:
    """What evcal knows of an existing folder it wrote: its kind, version and any stranger's files."""

    kind: str
    version: Any
    extra: tuple[str, ...] = ()


def folder_files(folder: Path) -> list[str]:
    """Every file under ``folder`` (recursively, ``/``-separated, sorted); links and empty folders too.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (d / "a.csv").write_text("x")
    >>> folder_files(d)
    ['a.csv']
    """
    found: list[str] = []
    for root, dirs, files in os.walk(folder):
        rel = Path(root).relative_to(folder)
        found.extend((rel / name).as_posix() for name in files)
        for name in dirs:
            full = os.path.join(root, name)
            if os.path.islink(full):  # os.walk does not descend into links: count the link itself
                found.append((rel / name).as_posix())
            elif not os.listdir(full):  # an empty folder someone made
                found.append((rel / name).as_posix() + "/")
    return sorted(found)


def read_marker(folder: str | Path) -> dict[str, Any] | None:
    """The marker of ``folder`` when it is a valid one evcal wrote, else None."""
    path = Path(folder) / MARKER
    if not path.is_file() or path.is_symlink() or path.stat().st_size > 50_000_000:
        return None
    data = _json(path)
    files = data.get("files")
    if data.get("written_by") != "evcal" or not isinstance(data.get("kind"), str):
        return None
    return data if isinstance(files, list) and all(isinstance(f, str) for f in files) else None


def _json(path: Path) -> dict[str, Any]:
    """The JSON object in ``path``; empty when it cannot be read or is not an object."""
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError, RecursionError):
        return {}
    return data if isinstance(data, dict) else {}


def _head(path: Path, size: int = 4096) -> str:
    try:
        with open(path, "rb") as f:
            return f.read(size).decode("utf-8", errors="replace")
    except OSError:
        return ""


def _legacy_owner(folder: Path, files: set[str]) -> Owner | None:
    """A folder evcal wrote before the marker existed (exactly its own files), else None."""
    if files == LEGACY_MODEL_FILES:
        version = _json(folder / "model.json").get("format_version")
        return Owner("model", version) if version == 1 else None
    if "panel.json" in files and files <= LEGACY_PANEL_FILES:
        panel = _json(folder / "panel.json")
        return Owner("panel", panel.get("format_version")) if panel.get("format") == "evcal-panel" else None
    if {"suggestions.csv", "suggestions.yaml"} <= files <= LEGACY_FINDINGS_FILES:
        return Owner("findings", 1) if _head(folder / "suggestions.csv").startswith("kind,start,") \
            else None
    top = {f.split("/", 1)[0] for f in files}
    if "model" in top and top <= LEGACY_DEMO_ENTRIES and (folder / "model").is_dir():
        inner = {f.split("/", 1)[1] for f in files if f.startswith("model/")}
        report = folder / "report.html"
        if _legacy_owner(folder / "model", inner) == Owner("model", 1) and (
                not report.is_file() or 'class="kicker">evcal report<' in _head(report, 20_000)):
            return Owner("demo", 1)
    return None


def folder_owner(folder: str | Path) -> Owner | None:
    """Whether evcal wrote the existing folder ``folder``: its :class:`Owner`, or None when it did not.

    A folder is evcal's when it holds a valid :data:`MARKER`, or is one written
    before the marker existed (exactly evcal's files, with evcal's headers).
    ``extra`` lists the files the marker does not name: a user's files, never deleted.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> folder_owner(d) is None
    True
    >>> write_marker(d, "model").kind
    'model'
    """
    folder = Path(folder)
    marker = read_marker(folder)
    if marker is not None:
        listed = set(marker["files"]) | {MARKER}
        return Owner(marker["kind"], marker.get("format_version"),
                     tuple(f for f in folder_files(folder) if f not in listed and not _is_temp(f)))
    # without a marker, look inside only when the top level could be an old evcal folder: --out at
    # a home folder must not walk a million files to say no
    if not set(os.listdir(folder)) <= _LEGACY_TOP:
        return None
    return _legacy_owner(folder, set(folder_files(folder)))


def _check_kind(kind: str) -> None:
    if kind not in FOLDER_KINDS:
        raise ValueError(f"kind {kind!r}: not one of {', '.join(FOLDER_KINDS)}")


def write_marker(folder: str | Path, kind: str, files: list[str] | None = None) -> Owner:
    """Write ``folder``'s :data:`MARKER` naming ``files`` (default: every file now in it)."""
    from evcal import __version__

    folder = Path(folder)
    _check_kind(kind)
    listed = sorted(f for f in (folder_files(folder) if files is None else files) if f != MARKER)
    body = {"written_by": "evcal", "kind": kind, "format_version": MARKER_VERSION,
            "evcal_version": __version__, "files": listed}
    with atomic_path(folder / MARKER) as tmp:
        tmp.write_text(json.dumps(body, indent=1) + "\n", encoding="utf-8")
    return Owner(kind, MARKER_VERSION)


def foreign_problem(owner: Owner | None) -> str | None:
    """Why an existing folder with this :func:`folder_owner` may not be replaced, or None.

    The one rule for the command line's early check (:func:`evcal.outputs.check_output`)
    and the writer's own (:func:`refuse_foreign_folder`); each adds its advice.
    """
    if owner is None:
        return "this folder was not written by evcal and would be replaced with everything in it"
    if owner.extra:
        more = f" and {len(owner.extra) - 1} more file(s)" if len(owner.extra) > 1 else ""
        return f"holds {clip(owner.extra[0], 100)}{more} that evcal did not write"
    return None


def refuse_foreign_folder(target: Path) -> None:
    """Raise :class:`OutputError` unless the existing ``target`` is a folder evcal may replace."""
    if target.is_symlink() or not target.is_dir():
        raise OutputError(f"{target}: exists and is not a folder evcal wrote (it is a "
                          f"{'link' if target.is_symlink() else 'file'}); choose a new folder name")
    problem = foreign_problem(folder_owner(target))
    if problem is not None:
        raise OutputError(f"{target}: {problem}; move any file of yours out of it, or choose a new "
                          "folder name")


# ---------------------------------------------------------------- temporary siblings and leftovers


def _temp_name(target: Path, prefix: str = TMP_PREFIX, suffix: str = "") -> Path:
    """A fresh name ``.evcal-tmp.<name>.<pid>.<random><suffix>`` beside ``target`` (not created)."""
    return target.parent / f"{prefix}{target.name}.{os.getpid()}.{os.urandom(5).hex()}{suffix}"


def _is_temp(relative: str) -> bool:
    """Whether a path inside a folder is one of evcal's temporary siblings (a save in progress)."""
    name = relative.rstrip("/").rsplit("/", 1)[-1]
    return name.startswith((TMP_PREFIX, OLD_PREFIX))


def _alive(pid: int) -> bool:
    if pid == os.getpid() or sys.platform == "win32":  # os.kill(pid, 0) would end the process there
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # someone else's process (or no way to tell): alive
        pass
    return True


def remove_leftovers(target: Path) -> None:
    """Remove (best effort) evcal's temporary siblings of ``target`` whose process is no longer alive.

    Only names ``.evcal-tmp.<target name>.<pid>.<random>[suffix]`` (and ``.evcal-old.``) count;
    a pid that is alive, or any other name, is left alone.
    """
    pattern = re.compile(rf"(?:{re.escape(TMP_PREFIX)}|{re.escape(OLD_PREFIX)}){re.escape(target.name)}"
                         rf"\.(\d+)\.[0-9a-z_]+{re.escape(target.suffix)}")
    with contextlib.suppress(OSError):
        for name in os.listdir(target.parent):
            found = pattern.fullmatch(name)
            path = target.parent / name
            if found and not _alive(int(found.group(1))):
                with contextlib.suppress(OSError):
                    if path.is_dir() and not path.is_symlink():
                        shutil.rmtree(path)
                    else:
                        path.unlink()


# ---------------------------------------------------------------- the writers


@contextlib.contextmanager
def atomic_path(target: str | Path) -> Iterator[Path]:
    """Yield a temporary file path next to ``target``; rename it on success.

    Raises
    ------
    OutputError
        ``target`` is an existing folder (a file is never put in a folder's place).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> with atomic_path(d / "out.txt") as tmp:
    ...     _ = tmp.write_text("hello")
    >>> (d / "out.txt").read_text()
    'hello'
    """
    target = Path(target)
    if target.is_dir():
        raise OutputError(f"{target}: is a folder, and a file is to be written here; name a file "
                          "inside it or beside it instead")
    target.parent.mkdir(parents=True, exist_ok=True)
    remove_leftovers(target)
    tmp = _temp_name(target, suffix=target.suffix)
    fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
    os.close(fd)
    try:
        yield tmp
        _as_created(tmp, 0o666)
        os.replace(tmp, target)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise


@contextlib.contextmanager
def atomic_paths(*targets: str | Path) -> Iterator[list[Path]]:
    """Yield temporary file paths next to ``targets``; put them all in place on success, or none.

    The files are written to temporaries first (as :func:`atomic_path` does); only when every one is
    written are they renamed into place, each existing target first set aside (``.evcal-old.``...) so
    that a rename failing half way puts back the ones already replaced. On any failure every
    temporary is removed and the targets are as they were: a pair of tables that belong together
    (a scenarios table and its by-event table) is never left half new.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> with atomic_paths(d / "a.csv", d / "b.csv") as (a, b):
    ...     _ = a.write_text("1"), b.write_text("2")
    >>> sorted(p.name for p in d.iterdir())
    ['a.csv', 'b.csv']
    """
    paths = [Path(t) for t in targets]
    for target in paths:
        if target.is_dir():
            raise OutputError(f"{target}: is a folder, and a file is to be written here; name a file "
                              "inside it or beside it instead")
        target.parent.mkdir(parents=True, exist_ok=True)
        remove_leftovers(target)
    temps: list[Path] = []
    try:
        for target in paths:
            temps.append(_temp_name(target, suffix=target.suffix))
            os.close(os.open(temps[-1], os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600))
        yield list(temps)
        _swap_in(paths, temps)
    except BaseException:
        for tmp in temps:
            tmp.unlink(missing_ok=True)
        raise


def _swap_in(targets: list[Path], temps: list[Path]) -> None:
    """Rename each of ``temps`` onto its target; on a failure, put back what was there before."""
    done: list[tuple[Path, Path | None]] = []  # target, where its former file was set aside
    try:
        for target, tmp in zip(targets, temps, strict=True):
            _as_created(tmp, 0o666)
            old = None
            if target.exists() or target.is_symlink():
                old = _temp_name(target, OLD_PREFIX, suffix=target.suffix)
                os.replace(target, old)
            done.append((target, old))
            os.replace(tmp, target)
    except BaseException:
        for target, old in reversed(done):
            with contextlib.suppress(OSError):
                if old is not None:
                    os.replace(old, target)
                else:
                    target.unlink(missing_ok=True)
        raise
    for _, old in done:
        if old is not None:
            with contextlib.suppress(OSError):
                old.unlink()


@contextlib.contextmanager
def atomic_dir(target: str | Path, kind: str | None = None) -> Iterator[Path]:
    """Yield a temporary folder next to ``target``; swap it into place on success.

    An existing ``target`` folder is replaced only after the new one is
    complete, and only when evcal wrote it (:func:`folder_owner`) and it holds
    nothing evcal did not put there. With ``kind`` (one of
    :data:`FOLDER_KINDS`) the new folder gets its :data:`MARKER`, naming every
    file written into it.

    Raises
    ------
    OutputError
        ``target`` exists and is not a folder evcal may replace.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> with atomic_dir(d / "model", kind="model") as tmp:
    ...     _ = (tmp / "lifts.csv").write_text("event\\n")
    >>> sorted(p.name for p in (d / "model").iterdir())
    ['evcal-output.json', 'lifts.csv']
    """
    if kind is not None:
        _check_kind(kind)  # before anything is written, not after the folder is filled
    target = Path(target)
    if target.exists() or target.is_symlink():
        refuse_foreign_folder(target)
    target.parent.mkdir(parents=True, exist_ok=True)
    remove_leftovers(target)
    tmp = _temp_name(target)
    tmp.mkdir(mode=0o700)
    try:
        yield tmp
        if kind is not None:
            write_marker(tmp, kind)
        _as_created(tmp, 0o777)
        if target.exists():
            refuse_foreign_folder(target)  # again: a file may have been dropped in meanwhile
            old = _temp_name(target, OLD_PREFIX)
            os.replace(target, old)
            os.replace(tmp, target)
            shutil.rmtree(old, ignore_errors=True)
        else:
            os.replace(tmp, target)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
