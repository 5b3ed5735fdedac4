"""A progress bar on stderr for long runs (panel fits and plans, the backtest, discover).

Low in the package (it imports nothing of evcal), so that any step may show
progress without importing the module that runs panels.
"""

from __future__ import annotations

import contextlib
import sys
from collections.abc import Callable, Iterator

__all__ = ["progress_bar", "progress_enabled"]


def progress_enabled(flag: bool | None = None) -> bool:
    """Show progress only when asked, or by default when stderr is a terminal."""
    if flag is not None:
        return flag
    return bool(getattr(sys.stderr, "isatty", lambda: False)())


@contextlib.contextmanager
def progress_bar(total: int, enabled: bool, label: str) -> Iterator[Callable[..., None]]:
    """A transient progress bar on stderr; yields ``advance(n, stage=None)`` (which does nothing when not
    enabled); ``stage``, when given, names what runs next beside the label."""
    if not enabled:
        yield lambda n, stage=None: None
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
            bar.update(task, advance=n, description=f"{label}: {stage}")
            bar.refresh()  # a new stage is shown at once, not at the refresh thread's next tick

        yield advance
