"""A call's terms as a version counted them: the call prepared again with the version's
frozen prep (:class:`talkthemes.prepare.frozen.PrepApplier`), which gives the training
counts exactly for the calls the version was trained on."""

from __future__ import annotations

import numpy as np

from talkthemes.errors import InputError
from talkthemes.prepare.frozen import PrepApplier, load_prep_spec
from talkthemes.versions.load import Version
from talkthemes.workspace import Workspace

__all__ = ["CallCounter", "call_counter", "call_counts"]

#: What counts a call's terms under a version (built once, used for many calls).
CallCounter = PrepApplier


def call_counter(ws: Workspace, version: Version) -> CallCounter:
    """The version's frozen prep, to count calls' terms as its training counted them."""
    return PrepApplier(load_prep_spec(ws, version))


def call_counts(
    ws: Workspace, version: Version, call_id: str, counter: CallCounter | None = None
) -> np.ndarray:
    """A stored call's term counts over the version's vocabulary, shape (V,).

    Raises
    ------
    InputError
        When no transcript has this id.
    """
    with ws.store() as store:
        found = store.turns_for([call_id])
    if not found:
        raise InputError(f"there is no transcript {call_id!r} in the workspace")
    counter = counter or call_counter(ws, version)
    applied = counter.apply([(call_id, list(found[0][1]))])
    return np.asarray(applied.counts.toarray()[0], dtype=np.float64)
