"""What the command line loads before it fits (issue 16, build 3: a fast default fit).

Python's start and the imports were most of a weekly fit's whole command. The CLI and the fit's
modules must leave the heavy libraries to the step that uses them: statsmodels and scipy (scipy.stats
alone took 2 s under load) to the estimators, openpyxl to the .xlsx writers, matplotlib and Jinja2 to
the report. Checked in a fresh interpreter (a subprocess: this test process has imported them already).
No timings here: benchmarks/default_fit.py.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys

LAZY = ("openpyxl", "scipy", "scipy.stats", "statsmodels", "matplotlib", "jinja2")


def test_the_cli_fit_path_loads_no_heavy_library_before_it_is_used() -> None:
    code = ("import json, sys\n"
            "import evcal.cli.commands, evcal.engine, evcal.model.summary\n"
            f"print(json.dumps([m for m in {LAZY!r} if m in sys.modules]))\n")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True,
                         env={**os.environ, "OPENBLAS_NUM_THREADS": "1"})
    # main before this change: ["openpyxl"] (the model store's text guard imported it for every fit)
    assert json.loads(out.stdout) == []
