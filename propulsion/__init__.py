"""propulsion: delta-v budgets with units, losses and margins for rockets.

Python use::

    import propulsion
    mission = propulsion.load_mission("missions/hobby_single_stage.toml")
    result = propulsion.budget(mission)
    result.stages.to_frame()   # pandas DataFrame, SI units in the column names
    result.legs.to_frame()
    print(result.verdict.text)

Quantities enter as text with units and are SI floats inside; results are SI.
These are planning estimates, not a safety analysis (see ``SAFETY_CAUTION``).
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

__version__ = "0.1.0"

__all__ = [
    "SAFETY_CAUTION",
    "MissionError",
    "PropulsionError",
    "__version__",
    "budget",
    "fly",
    "load_mission",
    "parse_mission",
    "pick",
    "scatter",
    "size",
    "split",
]

if TYPE_CHECKING:
    from propulsion.ascent import fly
    from propulsion.errors import MissionError, PropulsionError
    from propulsion.ledger import budget
    from propulsion.mission import load_mission, parse_mission
    from propulsion.report.cautions import SAFETY_CAUTION
    from propulsion.selection import pick
    from propulsion.sizing import size
    from propulsion.stage_split import split
    from propulsion.studies.scatter import scatter

_LAZY = {
    "budget": "propulsion.ledger",
    "fly": "propulsion.ascent",
    "size": "propulsion.sizing",
    "split": "propulsion.stage_split",
    "pick": "propulsion.selection",
    "scatter": "propulsion.studies.scatter",
    "load_mission": "propulsion.mission",
    "parse_mission": "propulsion.mission",
    "MissionError": "propulsion.errors",
    "PropulsionError": "propulsion.errors",
    "SAFETY_CAUTION": "propulsion.report.cautions",
}


def __getattr__(name: str) -> Any:
    """Import the public API on first use, so the command line starts fast."""
    if name in _LAZY:
        import importlib

        return getattr(importlib.import_module(_LAZY[name]), name)
    raise AttributeError(f"module 'propulsion' has no attribute {name!r}")
