"""The methods of :class:`talkthemes.Workspace` that read versions and calls one by one:
the versions kept, a theme's calls page by page, one call with its shares.

Like the other readers (:mod:`talkthemes.api.reading`) they never take the writer lock and
are safe to call from several threads; they answer from the version that is current when
they start (or the one asked for).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING, Literal

from talkthemes.errors import ConfigError, InputError

from ._deferred import deferred
from .call_results import CallDetail, CallShare, CallsPage, CallTurn, VersionInfo
from .reading import ReadingMixin

if TYPE_CHECKING:  # heavy (numpy, the masking word lists): imported on first use
    import numpy as np

    from talkthemes import privacy
else:
    np = deferred("numpy")
    privacy = deferred("talkthemes.privacy")

__all__ = ["TEXT_CHOICES", "CallsMixin"]

#: How :meth:`CallsMixin.call` gives a call's turns.
TEXT_CHOICES = ("none", "masked", "original")
TextChoice = Literal["none", "masked", "original"]


class CallsMixin(ReadingMixin):
    """``versions``, ``theme_calls``, ``call`` (see the module notes)."""

    def versions(self) -> list[VersionInfo]:
        """Every kept version, oldest first.

        Returns
        -------
        list of VersionInfo
            Number, date, whether current, family, K, transcripts trained on, and
            whether a publish or a refresh made it.
        """
        with self._dir.store() as store:
            records = store.versions()
        out = []
        for r in records:
            n_docs = r.info.get("n_docs")
            out.append(
                VersionInfo(
                    version=r.n,
                    created_at=r.created_at,
                    current=r.current,
                    family=r.family,
                    k=r.k,
                    transcripts=None if n_docs is None else int(n_docs),
                    made_by="refresh" if r.refresh is not None else "publish",
                    previous_version=None if r.refresh is None else r.refresh.previous_version,
                )
            )
        return out

    def theme_calls(
        self,
        theme_id: int,
        *,
        version: int | None = None,
        lead_only: bool = True,
        min_share: float = 0.0,
        where: Mapping[str, str | Sequence[str]] | None = None,
        date_from: str | None = None,
        date_to: str | None = None,
        offset: int = 0,
        limit: int = 50,
    ) -> CallsPage:
        """A theme's calls, most dominated first (then by id), one page at a time.

        Parameters
        ----------
        theme_id : int
            A theme of the version.
        version : int, optional
            Default: the current version.
        lead_only : bool
            Only the calls the theme leads (its coverage); False lists every call where
            its share reaches ``min_share``.
        min_share : float
            Least share (0–1) of the theme in a call.
        where : mapping of str to str or list of str, optional
            Metadata a call must have as stored: field → value, or → any of several
            values (``{"queue": ["billing", "moves"]}``).
        date_from, date_to : str, optional
            ISO dates (``2026-03-01``): the call's ``date`` field within them, both
            included.
        offset : int
            Calls to skip (the page's start).
        limit : int
            The page's largest size.

        Returns
        -------
        CallsPage
            The page with ``total`` (matching calls over every page) and ``next_offset``.

        Raises
        ------
        InputError
            An unknown theme id, or a negative offset or limit.
        NotReadyError
            Nothing published, or ``version`` not kept.
        """
        if offset < 0 or limit < 0:
            raise InputError("offset and limit must be 0 or more")
        if not 0.0 <= min_share <= 1.0:
            raise InputError(f"min_share {min_share}: a share is between 0 and 1")
        v = self.version(version)
        pos = v.position(theme_id)
        shares = np.asarray(v.doc_topics[:, pos], dtype=np.float64)
        lead = v.lead()
        mask = shares >= float(min_share)
        if lead_only:
            mask &= lead == pos
        equals = {k: [x] if isinstance(x, str) else list(x) for k, x in (where or {}).items()}
        if equals or date_from is not None or date_to is not None:
            with self._dir.store() as store:
                ids = store.ids_with_metadata(equals, date_from=date_from, date_to=date_to)
            mask &= np.fromiter((d in ids for d in v.doc_ids), dtype=bool, count=len(v.doc_ids))
        rows = np.flatnonzero(mask)
        doc_ids = np.asarray(v.doc_ids, dtype=object)
        rows = rows[np.lexsort((doc_ids[rows].astype(str), -shares[rows]))]
        page = rows[offset : offset + limit]
        page_ids = [str(doc_ids[r]) for r in page]
        with self._dir.store() as store:
            meta = store.metadata_values(page_ids)
        lead_share, theme_ids = v.lead_share(), v.theme_ids
        calls = [
            CallShare(
                call_id=tid,
                share=float(shares[r]),
                lead_theme_id=int(theme_ids[int(lead[r])]),
                lead_share=float(lead_share[r]),
                metadata=meta.get(tid, {}),
            )
            for tid, r in zip(page_ids, page, strict=True)
        ]
        return CallsPage(v.n, int(theme_id), int(rows.size), offset, limit, calls)

    def call(
        self, call_id: str, *, version: int | None = None, text: TextChoice = "none"
    ) -> CallDetail:
        """One stored call: its shares under a version, its metadata, and its turns.

        Parameters
        ----------
        call_id : str
        version : int, optional
            Default: the current version.
        text : {'none', 'masked', 'original'}
            Leave the turns out; give them with personal data masked
            (:mod:`talkthemes.privacy`: speaker names too); or as ingested.

        Returns
        -------
        CallDetail
            ``shares`` is None, with the ``reason``, for a stored call the version was
            not trained on (stored later, or too short to train on): :meth:`assign`
            gives its shares.

        Raises
        ------
        InputError
            When no call has this id.
        ConfigError
            An unknown ``text`` choice.
        NotReadyError
            Nothing published, or ``version`` not kept.
        """
        if text not in TEXT_CHOICES:
            raise ConfigError(f"text={text!r}: choose {', '.join(TEXT_CHOICES)}")
        v = self.version(version)
        with self._dir.store() as store:
            stored = bool(store.stored_ids([call_id]))
            values = store.metadata_values([call_id])  # plain dicts, not records
            turns = store.get_turns(call_id) if stored and text != "none" else []
        meta = values.get(call_id, {})
        try:
            row = v.doc_ids.index(call_id)
        except ValueError:
            row = None
        if row is None and not stored:
            raise InputError(f"there is no call {call_id!r} in the workspace")
        shown = None if text == "none" else _turns(turns, masked=text == "masked")
        if row is None:
            return CallDetail(
                call_id, v.n, False, None, None, None, meta, text, shown,
                reason=f"not among version {v.n}'s training calls (stored after it was "
                "trained, or too short to train on): assign gives its shares",
            )  # fmt: skip
        values = np.asarray(v.doc_topics[row], dtype=np.float64)
        lead = int(np.argmax(values))
        return CallDetail(
            call_id=call_id,
            version=v.n,
            in_version=True,
            lead_theme_id=int(v.theme_ids[lead]),
            lead_share=float(values[lead]),
            shares={int(t): float(s) for t, s in zip(v.theme_ids, values, strict=True)},
            metadata=meta,
            text=text,
            turns=shown,
        )


def _turns(turns: Sequence[object], *, masked: bool) -> list[CallTurn]:
    """Stored turns as :class:`CallTurn`, with personal data masked when asked."""
    masker = privacy.masker_for(turns) if masked else None

    def show(value: str) -> str:
        return value if masker is None else privacy.plain(masker.mask(value))

    return [
        CallTurn(
            speaker=show(str(t.speaker)),
            role=str(t.role),
            start=t.start,
            end=t.end,
            text=show(str(t.text)),
        )
        for t in turns
    ]
