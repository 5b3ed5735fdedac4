"""Where a command may write: the output-location rule, in one place.

Every command that writes calls :func:`check_output` first, before it reads
an input or computes anything, so a long fit never ends in a permission
error and nothing the user did not ask for is ever lost. The rule:

* ``--out`` is a new path in an existing folder evcal can write to; or
* something evcal wrote itself: a folder carrying evcal's marker
  (``evcal-output.json``, see :mod:`evcal._files`) and nothing else, or a file
  of the kind the command writes (plan, compare, backtest and dates CSVs by
  their header row, the HTML report by its ``generator`` meta tag, a workbook
  by its document properties);
* never an input of the same command, a folder holding an input, or a path
  inside an input folder;
* ``force=True`` (``--force``) also replaces evcal's own output of another kind
  or format version, never anything evcal did not write and never an input.

Every refusal is one :class:`~evcal.errors.OutputError` line: the path, what
is wrong and what to do instead.
"""

from __future__ import annotations

import contextlib
import os
import re
import zipfile
from collections.abc import Iterable
from pathlib import Path
from typing import Any

from evcal._files import FOLDER_KINDS, MARKER_VERSION, _temp_name, folder_owner, foreign_problem
from evcal.errors import OutputError
from evcal.spelling import option, subject

__all__ = ["FILE_KINDS", "FOLDER_KINDS", "KINDS", "check_beside", "check_output", "file_kind"]

#: kinds of single file evcal writes
FILE_KINDS = ("plan", "compare", "backtest", "dates", "report", "explain")
KINDS = FOLDER_KINDS + FILE_KINDS

#: a name to suggest for a new output of each kind
_DEFAULT_NAME = {"model": "model", "panel": "panel-model", "findings": "findings", "demo": "demo-output",
                 "plan": "plan.csv", "compare": "compare.csv", "backtest": "backtest.csv",
                 "dates": "dates.csv", "report": "report.html", "explain": "explain.csv"}
_WHAT = {"model": "model folder", "panel": "panel model folder", "findings": "findings folder",
         "demo": "demo folder", "plan": "plan", "compare": "comparison", "backtest": "backtest table",
         "dates": "dates list", "report": "HTML report", "explain": "explanation"}

# Header rows of the CSV files evcal writes (DESIGN.md "Outputs — contract", evcal.backtesting.COLUMNS,
# evcal.plan.scenarios); kept here as text so this check imports nothing heavy.
_CSV_HEADERS = {("event", "start", "end", "strength"): "dates",
                ("year", "method", "spread", "wape", "bias", "peak_error"): "backtest",
                ("date", "plan_a", "plan_b", "difference"): "compare",
                ("date", "part", "kind", "amount", "share_pct", "what"): "explain"}  # evcal.plan.explain
#: a plan's columns (a panel plan puts its key columns first)
_PLAN_RUNS = (("date", "base", "plan", "low", "high"), ("date", "share", "base", "plan", "low", "high"),
              ("date", "plan", "plan_before", "adjustment"))
#: sheet names of evcal's workbooks (evcal.plan.workbook.SHEETS + Notes; a compare; a plain plan)
_WORKBOOK_SHEETS = {("Plan", "Lifts", "Seasonal index", "Past occurrences", "Notes"): "plan",
                    ("Plan", "Lifts", "Seasonal index", "Past occurrences", "Drivers", "Notes"): "plan",
                    ("Plan",): "plan", ("Plan", "Notes"): "plan", ("Scenarios",): "compare",
                    ("Scenarios", "Events", "Plans"): "compare",
                    # with the Parts sheet (evcal.plan.workbook_parts: each period's parts)
                    ("Plan", "Lifts", "Seasonal index", "Past occurrences", "Parts", "Notes"): "plan",
                    ("Plan", "Lifts", "Seasonal index", "Past occurrences", "Drivers", "Parts", "Notes"):
                    "plan"}
#: the first and last sheets of a reconciled plan's workbook, a sheet per level between them
#: (evcal.plan.workbook_levels.LEVELS_SHEETS)
_LEVELS_WORKBOOK = ("Levels", "Notes")
#: the first columns of the tables of ``plan --scenario`` (evcal.plan.scenarios: side by side, by event)
_SCENARIO_RUNS = (("date", "plan:"), ("date", "iso_week", "plan:"), ("event", "units_before_spread:"),
                  ("event", "units:"))


# ---------------------------------------------------------------- what a file is


def header_columns(head: str) -> tuple[str, ...]:
    """The column names of a CSV's first line (``head``: the file's start), as evcal writes them.

    Examples
    --------
    >>> header_columns('\\ufeff"date",plan:now\\r\\n2027-01-03,5\\n')
    ('date', 'plan:now')
    """
    line = head.lstrip("\ufeff").split("\n", 1)[0].rstrip("\r")
    return tuple(c.strip().strip('"') for c in line.split(","))


def file_columns(path: str | Path) -> tuple[str, ...] | None:
    """The column names of the CSV at ``path`` (:func:`header_columns`), None when it cannot be read."""
    try:
        with open(path, encoding="utf-8", errors="replace") as f:
            return header_columns(f.readline())
    except OSError:
        return None


def _csv_kind(head: str) -> str | None:
    cols = header_columns(head)
    if any(cols[i:i + len(run)] == run for run in _PLAN_RUNS for i in range(len(cols))):
        return "plan"
    for *head, prefix in _SCENARIO_RUNS:  # the first scenario's name follows the prefix
        k = len(head)
        if len(cols) > k and list(cols[:k]) == head and cols[k].startswith(prefix):
            return "compare"
    return _CSV_HEADERS.get(cols)


def _workbook_kind(path: Path) -> str | None:
    try:
        with zipfile.ZipFile(path) as book:
            core = book.read("docProps/core.xml").decode("utf-8", errors="replace")[:100_000]
            workbook = book.read("xl/workbook.xml").decode("utf-8", errors="replace")[:1_000_000]
    except (OSError, KeyError, zipfile.BadZipFile, ValueError):
        return None
    creator = re.search(r"<dc:creator>([^<]*)</dc:creator>", core)
    sheets = tuple(re.findall(r'<sheet [^>]*name="([^"]*)"', workbook))
    kind = _WORKBOOK_SHEETS.get(sheets)
    if kind is None and len(sheets) > 2 and (sheets[0], sheets[-1]) == _LEVELS_WORKBOOK:
        kind = "plan"
    if creator is None or kind is None:
        return None
    # evcal's own creator; "openpyxl" (its default) for workbooks written before evcal set it,
    # recognised by evcal's exact sheet names
    return kind if creator.group(1) in ("evcal", "openpyxl") else None


def file_kind(path: str | Path) -> str | None:
    """The kind of output file evcal wrote at ``path`` (one of :data:`FILE_KINDS`), or None.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> p = pathlib.Path(tempfile.mkdtemp()) / "x.csv"
    >>> _ = p.write_text("event,start,end,strength\\nsale,2026-01-01,2026-01-02,1\\n")
    >>> file_kind(p)
    'dates'
    >>> _ = p.write_text("date,units\\n")
    >>> file_kind(p) is None
    True
    """
    path = Path(path)
    try:
        with open(path, "rb") as f:
            head = f.read(65_536)
    except OSError:
        return None
    if head.startswith(b"PK"):
        return _workbook_kind(path)
    text = head.decode("utf-8", errors="replace")
    if text.lstrip().lower().startswith(("<!doctype html", "<html")):
        if '<meta name="generator" content="evcal' in text or 'class="kicker">evcal report<' in text:
            return "report"
        return None
    return _csv_kind(text)


# ---------------------------------------------------------------- the rule


def _suggest(near: Path, kind: str) -> str:
    """A path that does not exist yet, for the message: ``near/<default name>`` (or -2, -3, ...)."""
    name = _DEFAULT_NAME[kind]
    stem, dot, suffix = name.partition(".")
    for n in range(1, 100):
        candidate = near / (name if n == 1 else f"{stem}-{n}{dot}{suffix}")
        if not candidate.exists():
            return str(candidate)
    return str(near / name)


def _out(out: Path) -> str:
    """The output as the user gave it: ``--out PATH`` on the command line, ``out='PATH'`` in Python."""
    return option("out", str(out))


def _force() -> str:
    """The switch that replaces evcal's own output of another kind: ``--force`` / ``force=True``."""
    return option("force", True)


def _same(a: Path, b: Path) -> bool:
    if a.exists() and b.exists():
        with contextlib.suppress(OSError):
            return os.path.samefile(a, b)
    return a.resolve() == b.resolve()


def _check_inputs(out: Path, inputs: Iterable[Any], kind: str) -> None:
    real_out = out.resolve()
    paths = [Path(i) for i in inputs if isinstance(i, str | os.PathLike) and str(i) and "://" not in str(i)]
    for inp in paths:
        real_in = inp.resolve()
        if _same(out, inp):
            raise OutputError(f"{_out(out)}: is an input of this command ({inp}); evcal never writes over "
                              f"an input; choose a new {_WHAT[kind]} such as {_suggest(out.parent, kind)}")
        if real_in.is_relative_to(real_out):
            raise OutputError(f"{_out(out)}: holds {inp}, an input of this command, and would be replaced; "
                              f"choose a new {_WHAT[kind]} such as {_suggest(out, kind)}")
        if inp.is_dir() and real_out.is_relative_to(real_in):
            raise OutputError(f"{_out(out)}: is inside {inp}, an input of this command; write the "
                              f"{_WHAT[kind]} outside it, e.g. {_suggest(inp.parent, kind)}")


def _check_parent(out: Path) -> None:
    parent = out.parent
    if not parent.exists():
        raise OutputError(f"{_out(out)}: the folder {parent} does not exist; create it first or choose "
                          "an existing folder")
    if not parent.is_dir():
        raise OutputError(f"{_out(out)}: {parent} is a file, not a folder; choose a path in a folder")
    probe = _temp_name(out, suffix=out.suffix)
    try:  # really write: os.access says yes to root on a read-only share, and on /sys
        fd = os.open(probe, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
    except OSError as err:
        raise OutputError(f"{_out(out)}: cannot write in the folder {parent} ({err.strerror or err}); "
                          f"choose a folder you can write to") from None
    os.close(fd)
    probe.unlink(missing_ok=True)


def _check_folder(out: Path, kind: str, force: bool) -> None:
    if out.is_symlink() or not out.is_dir():
        what = "link" if out.is_symlink() else "file"
        raise OutputError(f"{_out(out)}: is a {what}, and the {_WHAT[kind]} is a folder; choose a new "
                          f"folder such as {_suggest(out.parent, kind)}")
    owner = folder_owner(out)
    problem = foreign_problem(owner)
    if owner is None:
        raise OutputError(f"{_out(out)}: {problem}; choose a new folder such as {_suggest(out, kind)}")
    if problem is not None:
        raise OutputError(f"{_out(out)}: {problem}; move {'them' if len(owner.extra) > 1 else 'it'} out "
                          f"of the folder, or choose a new folder such as {_suggest(out.parent, kind)}")
    if (owner.kind != kind or owner.version not in (MARKER_VERSION, 1)) and not force:
        found = f"{_WHAT.get(owner.kind, owner.kind)} (format version {owner.version})"
        raise OutputError(f"{_out(out)}: holds evcal's {found}, not a {_WHAT[kind]}; choose a new folder "
                          f"such as {_suggest(out.parent, kind)}, or add {_force()} to replace it")


def _check_file(out: Path, kind: str, force: bool) -> None:
    if out.is_symlink():
        raise OutputError(f"{_out(out)}: is a link; evcal does not replace links; name the file itself "
                          f"or a new file such as {_suggest(out.parent, kind)}")
    if out.is_dir():
        raise OutputError(f"{_out(out)}: is a folder, and the {_WHAT[kind]} is one file; name a new file "
                          f"such as {_suggest(out.parent, kind)}")
    found = file_kind(out)
    if found is None:
        raise OutputError(f"{_out(out)}: this file was not written by evcal and would be replaced; "
                          f"choose a new file such as {_suggest(out.parent, kind)}")
    if found != kind and not force:
        raise OutputError(f"{_out(out)}: holds evcal's {_WHAT[found]}, not a {_WHAT[kind]}; choose a new "
                          f"file such as {_suggest(out.parent, kind)}, or add {_force()} to replace it")


def check_output(out: str | Path, kind: str, inputs: Iterable[Any] = (), force: bool = False) -> Path:
    """Check that a command may write its ``kind`` of output at ``out``; call it before any work.

    Parameters
    ----------
    out : path
        The ``--out`` the user gave.
    kind : str
        What the command writes: a folder (:data:`FOLDER_KINDS`) or a file (:data:`FILE_KINDS`).
    inputs : paths
        Every file or folder the command reads (None and non-paths are skipped).
    force : bool
        Also replace evcal's own output of another kind or format version.

    Returns
    -------
    Path
        ``out`` as a path.

    Raises
    ------
    OutputError
        One line: the path, what is wrong, what to do instead.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> check_output(d / "model", "model").name
    'model'
    >>> _ = (d / "sales.csv").write_text("date,value\\n")
    >>> check_output(d / "sales.csv", "plan")  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    evcal.errors.OutputError: out='.../sales.csv': this file was not written by evcal ...
    """
    if kind not in KINDS:
        raise ValueError(f"kind {kind!r}: not one of {', '.join(KINDS)}")
    if out is None or not str(out).strip():
        raise OutputError(f"{subject('out')}: empty; name a new {_WHAT[kind]} such as {_DEFAULT_NAME[kind]}")
    out = Path(out)
    _check_inputs(out, inputs, kind)
    if out.exists() or out.is_symlink():
        (_check_folder if kind in FOLDER_KINDS else _check_file)(out, kind, force)
    _check_parent(out)
    return out



def check_beside(out: str | Path, beside: str | Path, what: str, kind: str, inputs: Iterable[Any] = (),
                 force: bool = False, named: str | None = None) -> Path:
    """Check the file a command writes beside ``out`` without being told its name (a scenarios table's
    by-event table, ``<stem>-events.csv``) by the rule of :func:`check_output`, naming ``out``.

    ``what`` says what goes there; ``named`` how the message names ``out`` (default: ``--out PATH``
    on the command line, ``out='PATH'`` in Python). A writer checks again just before it writes, with
    ``force=True``: evcal's own file of any kind may go, never one evcal did not write.

    Raises
    ------
    OutputError
        One line: ``out`` as given, the file beside it and what is wrong with it, what to do.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (d / "s-events.csv").write_text("my,own,notes\\n")
    >>> check_beside(d / "s.csv", d / "s-events.csv", "the by-event table", "compare")  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    evcal.errors.OutputError: out='.../s.csv': s-events.csv beside it, where the by-event table goes, was ...
    """
    out, beside = Path(out), Path(beside)
    where = f"{named or _out(out)}: {beside.name} beside it, where {what} goes,"
    other = f"choose another name for {subject('out')}"
    paths = [Path(i) for i in inputs if isinstance(i, str | os.PathLike) and str(i) and "://" not in str(i)]
    if any(_same(beside, p) for p in paths):
        raise OutputError(f"{where} is an input of this command; evcal never writes over an input; {other}")
    if beside.is_symlink() or beside.is_dir():
        raise OutputError(f"{where} is a {'link' if beside.is_symlink() else 'folder'}, which evcal does "
                          f"not replace; move it, or {other}")
    if not beside.exists():
        return beside
    found = file_kind(beside)
    if found is None:
        raise OutputError(f"{where} was not written by evcal and would be replaced; move it, or {other}")
    if found != kind and not force:
        raise OutputError(f"{where} holds evcal's {_WHAT[found]}; {other}, or add {_force()} to replace it")
    return beside
