"""Run corpus cases as real ``evcal`` processes, with limits, and check what they did.

Each case runs in a fresh folder: its files are written, every file is hashed,
``python -m evcal.cli ARGS`` runs with the folder as its working directory
(wall time and address-space limits; peak memory read from ``os.wait4``), and
every file is hashed again. The checks are the issue's standard:

* no ``Traceback`` on stderr;
* a bad input is refused (exit != 0), an odd but valid one accepted (exit 0);
* a refused run says why on stderr, one problem per line: not empty, no line
  over 500 characters, under 10 kB in all (a run that succeeds also stays under 10 kB);
* nothing changed outside what the command was asked to write, and nothing at
  all on a refused run (no file written, replaced or deleted, no leftovers);
* at most 60 s and 2 GiB, and no crash (a process killed by a signal);
* a model folder ``fit`` wrote is read back (the case's follow-up ``plan`` succeeds);
* no spreadsheet formula in what was written: text cells starting with ``=``,
  ``+``, ``-``, ``@``, tab or CR are neutralised (OWASP's CSV-injection guidance);
* no astronomic or infinite lift reported as identifiable, no non-finite plan.

When the runner is root, the child loses the capabilities that let root
write anywhere (``CAP_DAC_OVERRIDE``, ``CAP_DAC_READ_SEARCH``, dropped from its
bounding set before ``exec``), so that a read-only folder is read-only to it, as
for any user.
"""

from __future__ import annotations

import csv
import hashlib
import io
import math
import os
import resource
import shutil
import signal
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable, Iterable, Sequence
from concurrent.futures import ProcessPoolExecutor
from multiprocessing import get_context
from pathlib import Path

from corpus.case import Case, Outcome

TIME_LIMIT = 60.0  # seconds of wall time per command (the limit)
MEMORY_LIMIT = 2 << 30  # bytes of address space per command (the 2 GiB)
MAX_LINE = 500  # longest stderr line accepted (characters)
MAX_STDERR = 10_000  # bytes of stderr accepted in all
ASTRONOMIC_PCT = 10_000.0  # a lift above 100 times the base is not an estimate (common practice, no source)
PR_CAPBSET_DROP = 24  # prctl(2)
CAP_DAC = (1, 2)  # CAP_DAC_OVERRIDE, CAP_DAC_READ_SEARCH (capability.h)
FORMULA_START = ("=", "+", "-", "@", "\t", "\r")

#: check name -> column heading in the summary table, in table order
CHECKS: dict[str, str] = {
    "traceback": "tracebacks",
    "exit0_on_bad": "exit 0 on bad",
    "refused_valid": "refused valid",
    "bad_message": "bad message",
    "files_changed": "files changed",
    "over_time": "over time",
    "over_memory": "over memory",
    "crashed": "crashed",
    "no_roundtrip": "no round-trip",
    "formula_cells": "formula cells",
    "astronomic": "astronomic",
}


# ------------------------------------------------------------------ one process


def _limits(drop: bool) -> Callable[[], None]:
    def apply() -> None:  # runs in the child between fork and exec
        resource.setrlimit(resource.RLIMIT_AS, (MEMORY_LIMIT, MEMORY_LIMIT))
        resource.setrlimit(resource.RLIMIT_CORE, (0, 0))
        if drop:
            import ctypes

            libc = ctypes.CDLL(None, use_errno=True)
            for cap in CAP_DAC:
                if libc.prctl(PR_CAPBSET_DROP, cap, 0, 0, 0) != 0:
                    os._exit(97)  # cannot run as an ordinary user would: fail loudly

    return apply


def _scan(path: Path) -> tuple[int, int, str, bool]:
    """Size, longest line, the first 20 kB (text) and whether a traceback appears, read in chunks."""
    size = longest = current = 0
    head = b""
    found = False
    tail = b""
    marker = b"Traceback (most recent call last)"
    with open(path, "rb") as fh:
        while chunk := fh.read(1 << 20):
            size += len(chunk)
            if len(head) < 20_000:
                head += chunk[: 20_000 - len(head)]
            found = found or marker in tail + chunk
            tail = chunk[-len(marker) :]
            parts = chunk.split(b"\n")
            for i, part in enumerate(parts):
                current = current + len(part) if i == 0 else len(part)
                longest = max(longest, current)
    return size, longest, head.decode("utf-8", "replace"), found


def _env(home: Path) -> dict[str, str]:
    env = {k: v for k, v in os.environ.items() if not k.startswith("EVCAL_")}
    env.update(
        HOME=str(home),
        MPLCONFIGDIR=str(home / "mpl"),
        TMPDIR=str(home / "tmp"),
        OPENBLAS_NUM_THREADS="1",
        OMP_NUM_THREADS="1",
        MKL_NUM_THREADS="1",
        PYTHONDONTWRITEBYTECODE="1",
        PYTHONPATH=os.environ.get("PYTHONPATH", ""),
        COLUMNS="100",
    )
    return env


def _spawn(argv: Sequence[str], work: Path, home: Path, drop: bool) -> dict:
    """Run ``python -m evcal.cli argv`` in ``work``; return code, time, peak memory, stderr facts."""
    out_path, err_path = home / "stdout", home / "stderr"
    with open(out_path, "wb") as fo, open(err_path, "wb") as fe:
        t0 = time.monotonic()
        proc = subprocess.Popen(
            [sys.executable, "-m", "evcal.cli", *argv],
            cwd=work,
            env=_env(home),
            stdin=subprocess.DEVNULL,
            stdout=fo,
            stderr=fe,
            preexec_fn=_limits(drop),
            start_new_session=True,
        )
        timed_out = False
        while True:
            pid, status, usage = os.wait4(proc.pid, os.WNOHANG)
            if pid:
                break
            if time.monotonic() - t0 > TIME_LIMIT:
                timed_out = True
                os.killpg(proc.pid, signal.SIGKILL)
                pid, status, usage = os.wait4(proc.pid, 0)
                break
            time.sleep(0.02)
        seconds = time.monotonic() - t0
    proc.returncode = os.waitstatus_to_exitcode(status)  # reaped here, not by Popen
    size, longest, head, traceback = _scan(err_path)
    with open(out_path, "rb") as fh:
        out_head = fh.read(2000).decode("utf-8", "replace")
    _, _, _, out_traceback = _scan(out_path)
    return {
        "rc": proc.returncode,
        "seconds": seconds,
        "maxrss_mib": usage.ru_maxrss / 1024,
        "timed_out": timed_out,
        "err_size": size,
        "err_longest": longest,
        "stderr": head,
        "traceback": traceback or out_traceback,
        "stdout": out_head,
    }


# ------------------------------------------------------------------ files


def _snapshot(root: Path) -> dict[str, str]:
    """Relative path -> content hash (``<dir>`` for folders, ``<link>`` target for links)."""
    found: dict[str, str] = {}
    for dirpath, dirnames, filenames in os.walk(root):
        base = Path(dirpath)
        for name in dirnames:
            p = base / name
            found[str(p.relative_to(root))] = f"<link {os.readlink(p)}>" if p.is_symlink() else "<dir>"
        for name in filenames:
            p = base / name
            if p.is_symlink():
                found[str(p.relative_to(root))] = f"<link {os.readlink(p)}>"
                continue
            h = hashlib.sha256()
            with open(p, "rb") as fh:
                while chunk := fh.read(1 << 20):
                    h.update(chunk)
            found[str(p.relative_to(root))] = h.hexdigest()
    return found


def _under(path: str, targets: Iterable[str]) -> bool:
    p = Path(os.path.normpath(path))
    for t in targets:
        t_ = Path(os.path.normpath(t))
        if p == t_ or t_ in p.parents:
            return True
    return False


def _materialise(case: Case, work: Path) -> None:
    for d in case.dirs:
        (work / d).mkdir(parents=True, exist_ok=True)
    for rel, data in case.files:
        p = work / rel
        p.parent.mkdir(parents=True, exist_ok=True)
        p.write_bytes(data)


# ------------------------------------------------------------------ content checks


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def _formula_cells(path: Path) -> list[str]:
    """Cells of a written CSV or workbook that a spreadsheet would run as a formula."""
    found: list[str] = []
    if path.suffix.lower() == ".csv":
        with open(path, encoding="utf-8", errors="replace", newline="") as fh:
            for r, row in enumerate(csv.reader(fh), start=1):
                for c, cell in enumerate(row, start=1):
                    if cell.startswith(FORMULA_START) and not _is_number(cell):
                        found.append(f"{path.name} row {r} col {c}: {cell[:60]!r}")
    elif path.suffix.lower() == ".xlsx":
        import openpyxl

        from evcal.plan.workbook_plan import FORMULA_SHEETS, is_own_formula

        wb = openpyxl.load_workbook(path, read_only=True)
        for ws in wb.worksheets:
            for row in ws.iter_rows():
                for cell in row:
                    # the plan's re-spread and the parts that follow it
                    own = ws.title in FORMULA_SHEETS and is_own_formula(str(cell.value))
                    if getattr(cell, "data_type", None) == "f" and not own:
                        found.append(f"{path.name} {ws.title}!{cell.coordinate}: {str(cell.value)[:60]!r}")
        wb.close()
    return found


def _float(text: str) -> float | None:
    try:
        return float(text)
    except ValueError:
        return None


def _astronomic(path: Path) -> list[str]:
    """Identifiable lifts that are not finite, beyond +-10,000 %, or an estimated -100 % with no
    interval (a degenerate fit); non-finite plan values."""
    found: list[str] = []
    if path.suffix.lower() != ".csv":
        return found
    with open(path, encoding="utf-8", errors="replace", newline="") as fh:
        rows = list(csv.DictReader(fh))
    if path.name == "lifts.csv":
        for row in rows:
            if str(row.get("identifiable", "")).strip().lower() in ("no", "false"):
                continue
            note = str(row.get("note") or "").lower()
            low, high = _float(row.get("low_pct") or ""), _float(row.get("high_pct") or "")
            lift = _float(row.get("lift_pct") or "")
            if lift is not None and lift <= -99.9 and low == high and "closure" not in note:
                # an estimated event at -100 % with no interval: a degenerate fit, not a lift
                found.append(f"lifts.csv {row.get('event')!r} lift_pct={row.get('lift_pct')} [{low}, {high}]")
            for col in ("lift_pct", "low_pct", "high_pct"):
                v = _float(row.get(col) or "")
                if v is not None and (not math.isfinite(v) or abs(v) > ASTRONOMIC_PCT):
                    found.append(f"lifts.csv {row.get('event')!r} {col}={row.get(col)}")
    elif rows and "plan" in rows[0] and "base" in rows[0]:
        for i, row in enumerate(rows, start=2):
            for col in ("base", "plan"):
                v = _float(row.get(col) or "")
                if v is not None and not math.isfinite(v):
                    found.append(f"{path.name} row {i} {col}={row.get(col)}")
    return found[:5]


# ------------------------------------------------------------------ one case


def run_case(case: Case, keep: Path | None = None) -> Outcome:
    """Run one case in a fresh folder and check it (see the module notes).

    Examples
    --------
    >>> out = run_case(Case("command", "no history", ("fit", "nothing.csv", "--out", "m")))  # doctest: +SKIP
    >>> out.failed                                                                          # doctest: +SKIP
    {}
    """
    root = Path(tempfile.mkdtemp(prefix="evcal-corpus-"))
    work, home = root / "work", root / "home"
    drop = os.geteuid() == 0
    try:
        work.mkdir()
        (home / "mpl").mkdir(parents=True)
        (home / "tmp").mkdir()
        _materialise(case, work)
        for d in case.readonly:
            os.chmod(work / d, 0o555)
        before = _snapshot(work)
        run = _spawn(case.argv, work, home, drop)
        after = _snapshot(work)
        outcome = Outcome(case, run["rc"], run["seconds"], run["maxrss_mib"], run["stderr"], run["stdout"])
        _check_main(case, run, before, after, outcome)
        if run["rc"] == 0 and not outcome.failed:
            _check_outputs(case, work, before, after, outcome)
            for follow in case.follow:
                _check_follow(case, follow, work, home, drop, outcome)
        if keep is not None and outcome.failed:
            _keep(case, outcome, keep)
        return outcome
    finally:
        for d in case.readonly:
            if (work / d).exists():
                os.chmod(work / d, 0o755)
        shutil.rmtree(root, ignore_errors=True)


def _check_main(
    case: Case, run: dict, before: dict[str, str], after: dict[str, str], outcome: Outcome
) -> None:
    rc = run["rc"]
    failed = outcome.failed
    if run["traceback"]:
        failed["traceback"] = outcome.last_line()
    if case.expect == "bad" and rc == 0:
        failed["exit0_on_bad"] = "exit 0"
    if case.expect == "ok" and rc != 0:
        failed["refused_valid"] = f"exit {rc}: {outcome.last_line()}"
    if rc != 0 and not run["timed_out"]:
        if run["err_size"] == 0:
            failed["bad_message"] = f"exit {rc} and nothing on stderr"
        elif run["err_longest"] > MAX_LINE:
            failed["bad_message"] = f"a stderr line of {run['err_longest']:,} characters"
    if run["err_size"] > MAX_STDERR:
        failed["bad_message"] = f"{run['err_size']:,} bytes on stderr"
    changed = sorted(p for p in set(before) | set(after) if before.get(p) != after.get(p))
    wrong = changed if rc != 0 else [p for p in changed if not _under(p, case.writes)]
    if wrong:
        what = [
            f"{p} ({'new' if p not in before else 'deleted' if p not in after else 'changed'})" for p in wrong
        ]
        failed["files_changed"] = (
            ("refused, yet " if rc != 0 else "")
            + ", ".join(what[:4])
            + (f" and {len(what) - 4} more" if len(what) > 4 else "")
        )
    if run["timed_out"] or run["seconds"] > TIME_LIMIT:
        failed["over_time"] = f"{run['seconds']:.0f} s"
    err = run["stderr"]
    killed = rc is not None and rc < 0 and not run["timed_out"]
    if (
        run["maxrss_mib"] * (1 << 20) > 0.95 * MEMORY_LIMIT
        or "MemoryError" in err
        or "bad_alloc" in err
        or "Cannot allocate memory" in err
        or (killed and -rc == signal.SIGKILL)  # the kernel's out-of-memory kill
    ):
        failed["over_memory"] = f"{run['maxrss_mib']:.0f} MiB peak, exit {rc}"
    elif killed:  # another signal: a crash (a C stack overflow, an abort)
        failed["crashed"] = f"killed by {signal.Signals(-rc).name}, {run['maxrss_mib']:.0f} MiB peak"


def _check_outputs(
    case: Case, work: Path, before: dict[str, str], after: dict[str, str], outcome: Outcome
) -> None:
    written = [p for p in after if after[p] != before.get(p) and not after[p].startswith("<")]
    cells: list[str] = []
    big: list[str] = []
    for rel in written:
        cells += _formula_cells(work / rel)
        big += _astronomic(work / rel)
    if cells:
        outcome.failed["formula_cells"] = f"{len(cells)} cell(s), e.g. {cells[0]}"
    if big:
        outcome.failed["astronomic"] = "; ".join(big[:2])


def _check_follow(
    case: Case, argv: tuple[str, ...], work: Path, home: Path, drop: bool, outcome: Outcome
) -> None:
    run = _spawn(argv, work, home, drop)
    outcome.seconds += run["seconds"]
    if run["rc"] != 0 or run["traceback"]:
        lines = [ln for ln in run["stderr"].splitlines() if ln.strip()]
        outcome.failed["no_roundtrip"] = (
            f"evcal {' '.join(argv)}: exit {run['rc']}: {lines[-1][:250] if lines else ''}"
        )
        if run["traceback"]:
            outcome.failed.setdefault("traceback", "in the follow-up: " + (lines[-1][:200] if lines else ""))
    if run["timed_out"]:
        outcome.failed["over_time"] = f"follow-up {run['seconds']:.0f} s"


def _keep(case: Case, outcome: Outcome, keep: Path) -> None:
    """Write a failing case's files and command under ``keep`` to reproduce it by hand."""
    dest = keep / f"{case.kind}-{case.key}"
    dest.mkdir(parents=True, exist_ok=True)
    _materialise(case, dest)
    (dest / "CASE.txt").write_text(
        f"{case.name}\nexpect: {case.expect}\ncd {dest} && python -m evcal.cli "
        f"{' '.join(case.command.split()[1:])}\n"
        + "".join(f"then: evcal {' '.join(f)}\n" for f in case.follow)
        + "".join(f"{k}: {v}\n" for k, v in outcome.failed.items())
        + f"\nstderr:\n{outcome.stderr[:4000]}\n",
        encoding="utf-8",
    )


# ------------------------------------------------------------------ many cases


def _run_one(args: tuple[Case, Path | None]) -> Outcome:
    return run_case(*args)


def run_all(
    cases: Sequence[Case],
    workers: int = 2,
    keep: Path | None = None,
    progress: Callable[[int, Outcome], None] | None = None,
) -> list[Outcome]:
    """Run every case on ``workers`` processes (each starts one ``evcal`` at a time); keep the order."""
    if workers <= 1:
        results = []
        for i, c in enumerate(cases):
            results.append(run_case(c, keep))
            if progress:
                progress(i, results[-1])
        return results
    with ProcessPoolExecutor(max_workers=workers, mp_context=get_context("fork")) as pool:
        results = []
        for i, res in enumerate(pool.map(_run_one, [(c, keep) for c in cases])):
            results.append(res)
            if progress:
                progress(i, res)
    return results


def failures(outcomes: Iterable[Outcome]) -> dict[str, list[Outcome]]:
    """Check name -> the outcomes that failed it (every check listed, empty when none)."""
    found: dict[str, list[Outcome]] = {name: [] for name in CHECKS}
    for o in outcomes:
        for name in o.failed:
            found[name].append(o)
    return found


def format_table(outcomes: Sequence[Outcome]) -> str:
    """Cases per kind and, per check, how many failed it; a total row; exit 1 counted aside."""
    kinds = sorted({o.case.kind for o in outcomes})
    head = ["kind", "cases", *CHECKS.values(), "exit 1", "max s", "max MiB"]
    rows = []
    for kind in [*kinds, "total"]:
        group = [o for o in outcomes if kind in ("total", o.case.kind)]
        rows.append(
            [
                kind,
                str(len(group)),
                *(str(sum(name in o.failed for o in group)) for name in CHECKS),
                str(sum(o.returncode == 1 for o in group)),
                f"{max((o.seconds for o in group), default=0):.1f}",
                f"{max((o.maxrss_mib for o in group), default=0):.0f}",
            ]
        )
    widths = [max(len(r[i]) for r in [head, *rows]) for i in range(len(head))]
    buf = io.StringIO()
    for r in [head, *rows]:
        buf.write(
            " | ".join(
                c.rjust(w) if i else c.ljust(w) for i, (c, w) in enumerate(zip(r, widths, strict=True))
            )
            + "\n"
        )
        if r is head:
            buf.write("-+-".join("-" * w for w in widths) + "\n")
    return buf.getvalue()


def format_failures(outcomes: Sequence[Outcome], examples: int = 3) -> str:
    """For each failed check: how many cases, then a few examples (case, command, detail)."""
    buf = io.StringIO()
    for name, bad in failures(outcomes).items():
        if not bad:
            continue
        buf.write(f"\n{CHECKS[name]}: {len(bad)} case(s)\n")
        seen: set[str] = set()
        for o in bad:
            if o.case.name in seen:
                continue
            seen.add(o.case.name)
            buf.write(f"  - {o.case.name}\n    $ {o.case.command}\n    {o.failed[name][:300]}\n")
            if len(seen) >= examples:
                break
    return buf.getvalue()
