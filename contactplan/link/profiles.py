"""CONTRACT: per-pass rate profiles and the recorder result (filled in by the link work)."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np


@dataclass(eq=False)
class PassProfile:
    """Samples along one pass: times (TT s), elevation (deg), Eb/N0 at the best rate and rate (kbit/s, 0: none)."""

    station: str
    t_tt: np.ndarray
    elevation_deg: np.ndarray
    rate_kbps: np.ndarray
    ebn0_db: np.ndarray | None = None


@dataclass(eq=False)
class RecorderResult:
    """Recorder fill over the window. Arrays share ``t_tt``; gigabits are 1e9 bits."""

    t_tt: np.ndarray
    fill_gbit: np.ndarray
    capacity_gbit: float
    generated_gbit: float
    downlinked_gbit: float
    lost_gbit: float
    end_gbit: float
    overflow_spans: list = field(default_factory=list)  # [(start_tt, end_tt, lost_gbit)]
    oldest_age_s: np.ndarray | None = None  # age of the oldest data on board at each t_tt
    downlinked_by_booking_gbit: dict = field(default_factory=dict)
