"""The settings of `scoremon bin`, with their defaults (light: the command line reads the
defaults for its help without loading the binning machinery)."""
from __future__ import annotations

from dataclasses import dataclass

from ..errors import InputError

TRENDS = ("increasing", "decreasing", "auto", "none")
# the dynamic programme's work grows with the cube of the fine classes (see coarse.py)
MAX_FINE_CLASSES = 100


@dataclass(frozen=True)
class Settings:
    """How the bins were made (the options of `scoremon bin`, with their defaults)."""

    fine_classes: int = 20     # quantile classes per numeric characteristic
    min_share: float = 0.05    # every bin holds at least this share of the table's rows
    min_events: int = 30       # … and at least this many events
    trend: str = "auto"        # WoE across numeric bins: increasing, decreasing, auto, none
    max_bins: int = 8          # bins per characteristic, missing and catch-all not counted

    def __post_init__(self):
        if not 2 <= self.fine_classes <= MAX_FINE_CLASSES:
            raise InputError(f"fine classes {self.fine_classes}: give a whole number from 2 to {MAX_FINE_CLASSES}")
        if not 0 <= self.min_share < 1:
            raise InputError(f"minimum share {self.min_share}: give a share from 0 to below 1, e.g. 0.05")
        if self.min_events < 0:
            raise InputError(f"minimum events {self.min_events}: give 0 or more")
        if self.trend not in TRENDS:
            raise InputError(f"trend {self.trend!r}: give one of {', '.join(TRENDS)}")
        if self.max_bins < 1:
            raise InputError(f"maximum bins {self.max_bins}: give 1 or more")
