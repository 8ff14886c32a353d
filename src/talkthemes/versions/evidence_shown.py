"""Evidence sentences as they are shown: personal data masked with each call's own names.

The sentences stored with a version were scrubbed as the preparation chain scrubs
(e-mail addresses, numbers, card numbers …; :mod:`talkthemes.versions.evidence`). Every
place that shows them — the viewer, the report, the command line and the themes
spreadsheet — also masks what the chain does not know, as it masks a transcript
(:mod:`talkthemes.privacy`): the names in the call's speaker labels and turns, names from
the first-name list, street addresses and postcodes. That needs the call's turns, so a
:class:`EvidenceMasker` reads each call once from the store. ``[view] original_text =
true`` shows the stored sentences as they are.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Iterable

from talkthemes.privacy import Masker, masker_for, plain
from talkthemes.versions.evidence import REMOVED, EvidenceSentence
from talkthemes.workspace import Workspace

__all__ = ["EvidenceMasker", "mask_sentence", "masked_by_default", "shown_evidence"]


def mask_sentence(masker: Masker, text: str) -> str:
    """A stored sentence masked by ``masker``, the "[…]" where the chain removed something
    kept as it is (masked on its own, it would read as a masked number)."""
    return REMOVED.join(masker.mask(piece) if piece else "" for piece in text.split(REMOVED))


def masked_by_default(ws: Workspace) -> bool:
    """Whether sentences are masked: unless ``[view] original_text`` allows the original."""
    return not bool(ws.settings().view.original_text)


class EvidenceMasker:
    """Masks evidence sentences with the names learned from their calls.

    Parameters
    ----------
    ws : Workspace
        Where the calls' turns are read (each call once).
    """

    def __init__(self, ws: Workspace) -> None:
        self._ws = ws
        self._maskers: dict[str, Masker] = {}

    def _masker(self, call_id: str) -> Masker:
        masker = self._maskers.get(call_id)
        if masker is None:
            with self._ws.store() as store:
                turns = store.get_turns(call_id)
            masker = masker_for(turns)  # a call no longer stored: the first-name list only
            self._maskers[call_id] = masker
        return masker

    def mask(self, call_id: str, text: str) -> str:
        """``text`` masked, with placeholders (:func:`talkthemes.privacy.html_pieces` and
        :func:`talkthemes.privacy.plain` show them)."""
        return mask_sentence(self._masker(str(call_id)), text)

    def plain(self, call_id: str, text: str) -> str:
        """``text`` masked as plain text ("[name]", "[e-mail]" …)."""
        return plain(self.mask(call_id, text))


def shown_evidence(
    ws: Workspace,
    sentences: Iterable[EvidenceSentence],
    *,
    masked: bool | None = None,
    masker: EvidenceMasker | None = None,
) -> list[EvidenceSentence]:
    """Stored sentences with their text as shown: masked as plain text by default.

    Parameters
    ----------
    ws : Workspace
    sentences : iterable of EvidenceSentence
    masked : bool, optional
        Default: unless the workspace allows the original text (:func:`masked_by_default`).
    masker : EvidenceMasker, optional
        One to reuse across calls (it keeps the names of each call read).
    """
    sentences = list(sentences)
    if masked is None:
        masked = masked_by_default(ws)
    if not masked:
        return sentences
    masker = masker or EvidenceMasker(ws)
    return [dataclasses.replace(s, text=masker.plain(s.call_id, s.text)) for s in sentences]
