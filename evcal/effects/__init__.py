"""Effects step: fitted coefficients -> base, contributions, lifts, occurrences, seasonal index.

One table builder for a single series (a block of one) and for a panel:
:func:`evcal.effects.block.block_tables`.
"""

from __future__ import annotations

from evcal.effects.block import LIFT_COLUMNS, BlockTables, block_tables
from evcal.effects.decompose import decompose
from evcal.effects.occurrences import OCC_COLUMNS, Z95
from evcal.effects.span import GroupInfo, SpanContext, closure_shares

__all__ = ["BlockTables", "block_tables", "decompose", "LIFT_COLUMNS", "OCC_COLUMNS", "Z95", "GroupInfo",
           "SpanContext", "closure_shares"]
