"""The transcript model: duplicate hash and the compact form sent between processes."""

from __future__ import annotations

import hashlib
import pickle
import re
import unicodedata

from hypothesis import given, settings
from hypothesis import strategies as st

from talkthemes.calls.model import Transcript, Turn, normalised_hash


def _definition(text: str) -> str:
    """The documented rule, written the plain way: NFKC, case folding, \\w+ runs joined by
    single spaces, SHA-256."""
    norm = unicodedata.normalize("NFKC", text.casefold())
    return hashlib.sha256(" ".join(re.findall(r"\w+", norm)).encode("utf-8")).hexdigest()


@settings(max_examples=400, deadline=None)
@given(st.text(alphabet=st.characters(max_codepoint=127), max_size=200) | st.text(max_size=80))
def test_hash_follows_the_definition_on_ascii_and_unicode_text(text: str) -> None:
    assert normalised_hash(text) == _definition(text)


def test_hash_ignores_case_punctuation_and_spacing() -> None:
    a = normalised_hash("Agent: Hello, how can I help?\r\n")
    assert a == normalised_hash("agent hello how can i help")
    assert a != normalised_hash("agent hello how can we help")
    assert normalised_hash("STRASSE") == normalised_hash("straße")


def test_transcript_survives_pickling_with_its_hash() -> None:
    t = Transcript(
        "call-1",
        [Turn("Agent", "agent", "hello there", 0.0, 1.5), Turn("Ana", "customer", "hi", None)],
        "/x/call-1.txt",
        "txt",
        {"queue": "billing"},
    )
    digest = t.content_hash()
    back = pickle.loads(pickle.dumps(t))
    assert back == t
    assert back.digest == digest
    assert back.turns[0].end == 1.5 and back.turns[1].start is None


def test_transcript_with_its_stored_form_survives_pickling() -> None:
    t = Transcript(
        "call-2",
        [Turn("Agent", "agent", "héllo", 0.5, None), Turn("", "unknown", "x y z", None, 2.0)],
        "/x/call-2.txt",
        "txt",
    )
    form = t.stored_form()
    assert form.n_words == 4 and form.role_turns == (1, 0, 1)
    back = pickle.loads(pickle.dumps(t))
    assert back == t and back.stored == form
