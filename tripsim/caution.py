"""The caution every plan and report carries."""

from __future__ import annotations

__all__ = ["CAUTION"]

#: Printed with every human-readable result and included in JSON, maps and docs.
CAUTION = (
    "Estimates only: real consumption varies with traffic, driving, weather and the vehicle's "
    "condition. Keep a reserve, check charger availability and local rules before you go. "
    "Charging equipment must be installed and serviced by qualified people under local codes."
)
