"""Moved to :mod:`evcal.store` (one model-folder format for one series and for many); kept for
:mod:`evcal.report.model_folder`, which imports :func:`read_folder` from here."""

from evcal.store import read_folder

__all__ = ["read_folder"]
