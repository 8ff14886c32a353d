"""Compatibility path: theme alignment moved to :mod:`talkthemes.versions.align`."""

# compat: re-exports until the merge
from talkthemes.versions.align import (
    Alignment,
    Calibration,
    align_themes,
    calibrate_threshold,
)

__all__ = ["Alignment", "Calibration", "align_themes", "calibrate_threshold"]
