"""Moved to :mod:`talkthemes.prepare.frozen`."""

# compat: re-exports until the merge
from talkthemes.prepare.frozen import (
    NO_KNOWN_TERMS,
    AppliedBatch,
    Batch,
    PrepApplier,
    PrepSpec,
    build_frozen_prep,
    load_prep_spec,
)

__all__ = [
    "NO_KNOWN_TERMS",
    "AppliedBatch",
    "Batch",
    "PrepApplier",
    "PrepSpec",
    "build_frozen_prep",
    "load_prep_spec",
]
