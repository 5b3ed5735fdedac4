"""One corpus case (files + a command line + what is expected) and what running it gave."""

from __future__ import annotations

import hashlib
import shlex
from dataclasses import dataclass, field
from typing import Literal

#: ``bad``: must be refused (exit != 0, nothing written or deleted); ``ok``: an odd but valid input,
#: must succeed; ``any``: either, as long as every other check holds (the issue leaves it open)
Expect = Literal["bad", "ok", "any"]


@dataclass(frozen=True)
class Case:
    """A folder of files and one ``evcal`` command line run in it.

    Paths are relative to the case's working folder (the process's cwd).

    Attributes
    ----------
    kind : str
        The family of the case in the summary table (``calendar``, ``history``, ``model``,
        ``command``).
    name : str
        What was done to the input, short (``calendar: assume inf``).
    argv : tuple of str
        The arguments after ``evcal``.
    files : tuple of (path, bytes)
        Files to create before the run.
    expect : {"bad", "ok", "any"}
        What the issue's standard asks of this input.
    writes : tuple of str
        Paths the command was asked to write (a file, or a folder and all under it): the only
        places a successful run may change.
    dirs : tuple of str
        Extra (empty) folders to create.
    readonly : tuple of str
        Folders made read-only before the run.
    follow : tuple of tuple of str
        Commands run after a successful run, each expected to succeed (a model ``fit`` wrote must
        load: ``plan`` on it). Their outputs must be listed in ``writes``.
    """

    kind: str
    name: str
    argv: tuple[str, ...]
    files: tuple[tuple[str, bytes], ...] = ()
    expect: Expect = "bad"
    writes: tuple[str, ...] = ()
    dirs: tuple[str, ...] = ()
    readonly: tuple[str, ...] = ()
    follow: tuple[tuple[str, ...], ...] = ()

    @property
    def command(self) -> str:
        """The command line as a user would type it."""
        return "evcal " + shlex.join(self.argv)

    @property
    def key(self) -> str:
        """A short id that is the same for the same files and command (used to drop repeats)."""
        h = hashlib.sha256(
            repr((self.argv, self.expect, self.writes, self.dirs, self.readonly, self.follow)).encode()
        )
        for path, data in self.files:
            h.update(path.encode())
            h.update(hashlib.sha256(data).digest())
        return h.hexdigest()[:12]


@dataclass
class Outcome:
    """What one case's run gave, and which checks it failed."""

    case: Case
    returncode: int | None
    seconds: float
    maxrss_mib: float
    stderr: str
    stdout_head: str = ""
    #: check name -> one line of detail, for every check the run failed
    failed: dict[str, str] = field(default_factory=dict)

    @property
    def ok(self) -> bool:
        return not self.failed

    def last_line(self) -> str:
        lines = [ln for ln in self.stderr.splitlines() if ln.strip()]
        return lines[-1][:300] if lines else ""
