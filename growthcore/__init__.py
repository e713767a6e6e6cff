"""growthcore: turn a quantity measured over time into a defensible growth model."""

from __future__ import annotations

__version__ = "0.1.0"
