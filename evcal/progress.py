"""Progress on stderr for long runs: a bar for counted work (panel fits and plans, the backtest,
discover) and a spinner for one long step (a single fit, a plan's simulations, a report).

Low in the package (it imports nothing of evcal), so that any step may show progress without importing
the module that runs panels. The command line's ``--quiet`` and ``--verbose`` reach it through
:func:`configure`: quiet shows no progress at all; verbose also prints each stage as a line on stderr
(so a log file, where no bar is drawn, still shows what ran).
"""

from __future__ import annotations

import contextlib
import sys
from collections.abc import Callable, Iterator

__all__ = ["configure", "progress_bar", "progress_enabled", "progress_spinner", "stage_line"]

#: set by the command line for the command being run (:func:`configure`)
_SETTINGS: dict[str, bool | None] = {"show": None, "stage_lines": False}


def configure(show: bool | None = None, stage_lines: bool = False) -> None:
    """Progress for the rest of the run: ``show`` False hides every bar (``--quiet``), None leaves it
    to the terminal; ``stage_lines`` prints each stage as a line on stderr (``--verbose``)."""
    _SETTINGS["show"] = show
    _SETTINGS["stage_lines"] = stage_lines


def progress_enabled(flag: bool | None = None) -> bool:
    """Show progress only when asked, or by default when stderr is a terminal (and not ``--quiet``)."""
    if flag is not None:
        return flag
    if _SETTINGS["show"] is not None:
        return bool(_SETTINGS["show"])
    return bool(getattr(sys.stderr, "isatty", lambda: False)())


def stage_line(text: str) -> None:
    """Print ``evcal: TEXT`` on stderr when stages are shown as lines (``--verbose``), else nothing."""
    if _SETTINGS["stage_lines"]:
        print(f"evcal: {text}", file=sys.stderr, flush=True)


@contextlib.contextmanager
def progress_bar(total: int, enabled: bool, label: str) -> Iterator[Callable[..., None]]:
    """A transient progress bar on stderr; yields ``advance(n, stage=None)`` (which does nothing when not
    enabled, but for the stage lines of ``--verbose``); ``stage``, when given, names what runs next
    beside the label."""
    if not enabled:
        def quiet_advance(n: int, stage: str | None = None) -> None:
            if stage is not None:
                stage_line(f"{label}: {stage}")

        yield quiet_advance
        return
    from rich.console import Console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

    with Progress(TextColumn("{task.description}"), BarColumn(), MofNCompleteColumn(),
                  TimeRemainingColumn(), console=Console(stderr=True), transient=True) as bar:
        task = bar.add_task(label, total=total)

        def advance(n: int, stage: str | None = None) -> None:
            if stage is None:
                bar.advance(task, n)
                return
            stage_line(f"{label}: {stage}")
            bar.update(task, advance=n, description=f"{label}: {stage}")
            bar.refresh()  # a new stage is shown at once, not at the refresh thread's next tick

        yield advance


@contextlib.contextmanager
def progress_spinner(label: str, enabled: bool | None = None) -> Iterator[None]:
    """One long step whose parts are not counted: a transient spinner with ``label`` and the seconds
    spent on stderr while it runs (when :func:`progress_enabled`), and the stage line of ``--verbose``."""
    stage_line(label)
    if not progress_enabled(enabled):
        yield
        return
    from rich.console import Console
    from rich.progress import Progress, SpinnerColumn, TextColumn, TimeElapsedColumn

    with Progress(SpinnerColumn(), TextColumn("{task.description}"), TimeElapsedColumn(),
                  console=Console(stderr=True), transient=True) as spinner:
        spinner.add_task(label, total=None)
        yield
