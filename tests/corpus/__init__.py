"""A generated corpus of bad and odd inputs, run through the real ``evcal`` process.

Strategies (``hypothesis``) build cases: a few files in an empty folder and one
command line, with what the issue's standard expects of it (refused, accepted,
or either, within limits). The runner runs each case as a real subprocess
with time and memory limits, hashes every file before and after, and checks
what came out. ``tests/test_hostile_corpus.py`` runs a fixed-seed subset in CI;
``benchmarks/hostile_corpus.py`` runs the full corpus and prints a table.

Everything here is test machinery: the data are invented (or the invented
demo's), and named as such.
"""

from corpus.case import Case, Outcome
from corpus.collect import build_corpus
from corpus.runner import failures, format_failures, format_table, run_all, run_case

__all__ = [
    "Case",
    "Outcome",
    "build_corpus",
    "failures",
    "format_failures",
    "format_table",
    "run_all",
    "run_case",
]
