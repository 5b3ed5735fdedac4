"""Draw the corpus from the strategies with hypothesis, reproducibly (a fixed seed, no database).

Hypothesis is used as the generator here: each kind's strategy is run in a
``@given`` function that only records what it is given, with the generate
phase alone (no shrinking: the cases run later, as real processes, in
parallel). The same seed gives the same cases.
"""

from __future__ import annotations

from hypothesis import HealthCheck, Phase, given, settings
from hypothesis import seed as hyp_seed
from hypothesis import strategies as st

from corpus.calendars import calendar_cases
from corpus.case import Case
from corpus.commands import command_cases, templates
from corpus.histories import history_cases
from corpus.models import model_cases

STRATEGIES: dict[str, st.SearchStrategy[Case]] = {
    "calendar": calendar_cases(),
    "history": history_cases(),
    "model": model_cases(),
    "command": command_cases(),
}

#: cases per kind in the full run (>= 700 in all; the command lines are a finite list)
FULL = {"calendar": 260, "history": 240, "model": 150, "command": len(templates())}
#: the CI subset: every command line of the issue's list would be too slow, so a sample of each kind
CI = {"calendar": 12, "history": 10, "model": 8, "command": 10}


def draw_cases(strategy: st.SearchStrategy[Case], n: int, seed: int) -> list[Case]:
    """Up to ``n`` distinct cases drawn from ``strategy`` with hypothesis, the same for the same seed."""
    found: dict[str, Case] = {}

    @hyp_seed(seed)
    @settings(
        max_examples=max(3 * n, 20),
        database=None,
        phases=[Phase.generate],
        deadline=None,
        suppress_health_check=list(HealthCheck),
        derandomize=False,
        print_blob=False,
    )
    @given(strategy)
    def record(case: Case) -> None:
        if len(found) < n:
            found.setdefault(case.key, case)

    record()
    return list(found.values())


def build_corpus(sizes: dict[str, int] | None = None, seed: int = 13) -> list[Case]:
    """The corpus: ``sizes`` cases of each kind (default :data:`FULL`), drawn with ``seed``.

    Examples
    --------
    >>> cases = build_corpus({"command": 3}, seed=1)   # doctest: +SKIP
    >>> [c.kind for c in cases]                         # doctest: +SKIP
    ['command', 'command', 'command']
    """
    sizes = FULL if sizes is None else sizes
    cases: list[Case] = []
    for kind, n in sizes.items():
        cases += draw_cases(STRATEGIES[kind], n, seed)
    return cases
