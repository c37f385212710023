"""The safety caution shown with every performance prediction."""

from __future__ import annotations

__all__ = ["SAFETY_CAUTION", "SAFETY_TITLE"]

SAFETY_TITLE = "Safety caution"

SAFETY_CAUTION = (
    "These figures are planning estimates, not a safety analysis. Before anything flies, "
    "follow your local aviation authority's rules, the fire and explosives codes that apply "
    "where you are, and the safety code of your rocketry organisation. Motors and energetic "
    "materials are handled only by people certified to handle them. Have the design and "
    "these numbers reviewed by a licensed engineer."
)
