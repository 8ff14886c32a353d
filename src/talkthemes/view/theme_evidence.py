"""The data behind a theme's evidence sentences on screen and in the report.

The sentences are chosen when the version is written and stored with it
(:mod:`talkthemes.versions.evidence`); this module only shows them: each sentence with
the theme terms it holds highlighted (:class:`~talkthemes.view.transcript.TermHighlighter`,
which finds lemmas and phrases in the wording as said), the speaker's role, the call it
comes from and the theme's share in that call. Personal data is masked on screen as in a
transcript, with the call's own names (:mod:`talkthemes.versions.evidence_shown`), unless
the workspace allows the original text. The sentence text is untrusted: the HTML is built
only from :func:`talkthemes.text.html_text`-escaped pieces
(:func:`~talkthemes.view.transcript.segments_html`) and our own tags.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from talkthemes.text import html_text, percent
from talkthemes.versions.evidence_shown import EvidenceMasker
from talkthemes.versions.load import Version
from talkthemes.view.tables import table_lead_count
from talkthemes.view.transcript import Segment, TermHighlighter, segments_html, segments_text

__all__ = ["ROLE_WORDS", "EvidenceView", "evidence_html", "evidence_note", "evidence_views"]

# Okabe–Ito vermillion and blue, as the transcript shows the roles; soft ink otherwise.
_ROLE_COLOURS = {"Customer": "#D55E00", "Agent": "#0072B2"}

#: How a speaker's role is written beside a sentence.
ROLE_WORDS = {"customer": "Customer", "agent": "Agent", "unknown": "Speaker"}


@dataclass(frozen=True)
class EvidenceView:
    """One evidence sentence ready to show.

    Attributes
    ----------
    call_id : str
    role : str
        As written on screen ("Customer", "Agent", "Speaker").
    share : float
        The theme's share in the call.
    segments : list of Segment
        The sentence cut into (text, highlighted) pieces.
    """

    call_id: str
    role: str
    share: float
    segments: list[Segment]

    @property
    def text(self) -> str:
        """The sentence as plain text (masked data written as "[name]" …)."""
        return segments_text(self.segments)

    @property
    def hits(self) -> int:
        """Highlighted runs in the sentence."""
        return sum(1 for _, h in self.segments if h)


def evidence_views(
    version: Version,
    position: int,
    lemmas: Mapping[str, str] | None = None,
    *,
    limit: int | None = None,
    masker: EvidenceMasker | None = None,
) -> list[EvidenceView]:
    """A theme's stored evidence sentences with its terms highlighted.

    Parameters
    ----------
    version : Version
    position : int
        The theme's row.
    lemmas : mapping, optional
        The lookup lemma table (:func:`talkthemes.view.transcript.version_lemmas`), so
        that "paid" is found for the term ``pay``.
    limit : int, optional
        At most this many sentences.
    masker : EvidenceMasker, optional
        Masks personal data with each call's names (the segments then hold placeholders,
        which :func:`~talkthemes.view.transcript.segments_html` shows as "[name]" …);
        None shows the stored text (only where the workspace allows the original).
    """
    out = []
    for s in version.evidence(position)[:limit]:
        highlighter = TermHighlighter(s.terms, lemmas=lemmas)
        text = masker.mask(s.call_id, s.text) if masker is not None else s.text
        out.append(
            EvidenceView(
                call_id=s.call_id,
                role=ROLE_WORDS.get(s.role, ROLE_WORDS["unknown"]),
                share=s.share,
                segments=highlighter.segments(text),
            )
        )
    return out


def evidence_html(views: list[EvidenceView]) -> str:
    """Evidence sentences as HTML quotes: role, highlighted sentence, call and share.

    Every piece of text is escaped; the only markup is ours (``blockquote``, ``span``,
    ``mark``), with class names the report styles and inline styles the viewer needs.
    """
    parts = ['<div class="tt-evidence">']
    for v in views:
        source = f"call {v.call_id} · {percent(v.share, 0)} this theme"
        colour = _ROLE_COLOURS.get(v.role, "#6b6b6b")
        parts.append(
            '<blockquote class="tt-evidence-item" style="margin:0 0 0.7rem 0;'
            'padding:0.2rem 0 0.2rem 0.8rem;border-left:3px solid #0072B2">'
            f'<span class="who" style="font-weight:600;color:{colour}">{html_text(v.role)}</span> '
            f"{segments_html(v.segments)} "
            f'<span class="src" style="color:#6b6b6b;font-size:0.85em">{html_text(source)}</span>'
            "</blockquote>"
        )
    parts.append("</div>")
    return "".join(parts)


def evidence_note(version: Version, position: int) -> str | None:
    """Why a theme shows no evidence sentence (None when it has some)."""
    if not version.evidence_stored():
        return (
            "This version was published before evidence sentences were kept; they come "
            "with the next publish or refresh."
        )
    if version.evidence(position):
        return None
    if table_lead_count(version, position) == 0:
        return "This theme leads no call, so it has no evidence sentence."
    return "No sentence of the calls this theme leads holds its top words."
