"""Settle each call's language: detect it where needed, then apply what metadata gives.

A ``language`` (or ``lang``) metadata field — a manifest column, or a column of a table of
transcripts — that names a language wins (``Spanish``, ``es-MX`` and ``spa`` all read as
``es``); a value that names none is reported and the call's language is detected. With
``[prepare.languages] detect = false`` a call without a given language is in ``[prepare]
lang``. Detection runs once per call (:func:`talkthemes.calls.language.detect_languages`).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from talkthemes.progress import Progress, report

if TYPE_CHECKING:
    from talkthemes.store import Store
    from talkthemes.workspace import Workspace

__all__ = ["DETECT_BATCH", "Settled", "settle_languages"]

#: Calls read from the store per detection batch.
DETECT_BATCH = 2000


@dataclass
class Settled:
    """What settling did: calls run through the detector, and values that name no language."""

    detected: int = 0
    unknown_values: dict[str, int] = field(default_factory=dict)  # value -> calls

    def messages(self) -> list[str]:
        """One line per metadata value that names no language."""
        return [
            f"language {value!r} ({n:,} call{'s' if n != 1 else ''}) names no language we "
            "know; the language of these calls is detected instead"
            for value, n in sorted(self.unknown_values.items())
        ]


def settle_languages(
    folder: Workspace, store: Store, *, progress: Progress | None = None
) -> Settled:
    """Detect the language of every call not yet detected, then set each call's language in
    effect (given, else detected). The caller holds the workspace lock.

    Parameters
    ----------
    folder : Workspace
        The workspace folder (for its settings).
    store : Store
        Its store, open for writing.
    progress : Progress, optional
        ``progress(done, total, "languages")`` per detection batch.

    Returns
    -------
    Settled
    """
    settings = folder.settings().prepare
    options = settings.languages
    out = Settled()
    if options.detect:
        total = store.count_undetected()
        if total:
            from talkthemes.calls.language import detect_languages

            for batch in store.undetected_batches(DETECT_BATCH):
                guesses = detect_languages(
                    [texts for _, texts in batch], min_confidence=options.min_confidence
                )
                store.set_detected_languages(
                    [(rowid, g.code) for (rowid, _), g in zip(batch, guesses, strict=True)]
                )
                out.detected += len(batch)
                report(progress, out.detected, total, "languages")
    from talkthemes.calls.language import normalize_language

    given: dict[str, str] = {}
    for value, n in store.given_language_values().items():
        if not value.strip():
            continue  # an empty cell gives nothing
        code = normalize_language(value)
        if code is None:
            out.unknown_values[value] = n
        else:
            given[value] = code
    store.apply_languages(given, default=None if options.detect else settings.lang)
    return out
