"""What every report page's frame shows (the caution is the plan workbook's own, evcal.plan.workbook)."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import evcal
from evcal.plan.workbook import CAUTION


def page_frame(model: Mapping[str, Any], files: list[str]) -> dict[str, str]:
    """What every page's frame shows: the version, the caution, the files it was made from."""
    fitted_with = model.get("evcal_version")
    made = f"Made by evcal {evcal.__version__}" + (
        f" from a model fitted with evcal {fitted_with}" if fitted_with else ""
    )
    return {"version": evcal.__version__, "caution": CAUTION, "made": made, "files": "; ".join(files)}
