"""Wording and file helpers shared by the HTML report and the workbook."""

from __future__ import annotations

import os
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import evcal

CAUTION = (
    "This plan is an estimate. It is built from past sales and the events in the "
    "calendar file, and it is uncertain: the low–high band shows by how much. Use it "
    "as a starting point; the decisions it informs (orders, staffing, targets, "
    "budgets) belong to the people who own them."
)


def readable(path: Path) -> None:
    """Give a finished temporary file the usual permissions (it is made owner-only).

    Reports and workbooks are meant to be shared; the temporary file behind the
    atomic write starts as 0600, so open it up to what the user's umask allows.
    """
    mask = os.umask(0)
    os.umask(mask)
    os.chmod(path, 0o666 & ~mask)


def page_frame(model: Mapping[str, Any], files: list[str]) -> dict[str, str]:
    """What every page's frame shows: the version, the caution, the files it was made from."""
    fitted_with = model.get("evcal_version")
    made = f"Made by evcal {evcal.__version__}" + (
        f" from a model fitted with evcal {fitted_with}" if fitted_with else ""
    )
    return {"version": evcal.__version__, "caution": CAUTION, "made": made, "files": "; ".join(files)}
