"""The prepare step's report: what each step removed or joined, and why, and how it is shown.

The chain returns its report as a plain dict (written to ``prepared/<hash>/explain.json``).
Outside that file, the names the names step removed are people's data: they are shown masked
(:func:`masked_explain`) unless the workspace allows its original text, in the JSON document
of ``prepare --json`` (:meth:`talkthemes.prepare.run.PrepareResult.to_json`) and in the
tables of ``prepare --explain``, which the command line draws from that document.

The report, by key:

``transcripts``
    ``read``, ``usable``, ``excluded``.
``roles``
    ``setting``, ``turns``, ``turns_dropped``, ``words_removed``, ``emptied``.
``scrub``
    ``removed`` (count per kind: email, url, phone, card, number, tag), ``words_removed``,
    ``emptied``.
``names``
    ``enabled``, ``removed`` (tokens per way they were found: ``cue``, ``known``,
    ``suspect``, ``capitalised``), ``tokens_removed``, ``distinct``, ``named`` (words
    given as names in enough transcripts), ``min_docs``, ``top`` (the names removed most:
    ``name``, ``count``), ``kept_as_words`` (suspects the corpus uses as words: ``word``,
    ``transcripts``), ``ordinary`` (first names kept as ordinary words: ``word``,
    ``count``), ``in_boilerplate`` (removed names that the boilerplate sentences hold),
    ``emptied``; see :mod:`talkthemes.prepare.names`. Names are people's
    data: the terminal and ``--json`` show each as the screens mask a name ("[name]",
    :func:`talkthemes.text.masked.masked_as`) unless ``[view] original_text`` is on;
    ``explain.json`` keeps them.
``boilerplate``
    ``sentences`` (each ``sentence``, ``transcripts``, ``share``), ``sentences_removed``,
    ``words_removed``, ``emptied``.
``lemmas``
    ``path``, ``lang``, ``words``, ``tokens_lemmatised``, ``terms``; ``headwords``
    (``ratio``, ``checked``, ``kept`` and ``decisions``: each ``word``, ``table``, ``lemma``,
    ``said``, ``table_said``), ``exceptions`` (each ``word``, ``lemma``, ``count``) and
    ``names`` (``enabled``, ``tokens``, ``top``: each ``name``, ``table``, ``count``); see
    :mod:`talkthemes.prepare.headwords`.
``filter``
    ``removed`` (tokens per reason), ``tokens_removed``, ``tokens_kept``, ``emptied``.
``phrases``
    ``phrases`` (joined at least once), ``tokens_joined``, ``top`` (30 most frequent:
    ``phrase``, ``count``, ``npmi``).
``vocabulary``
    ``before``, ``after``, ``removed`` (per cut), ``tokens_out_of_vocabulary``, ``emptied``.
``min_tokens``
    ``setting``, ``excluded``.
``excluded``
    Every excluded transcript: ``id`` and ``reason``.
"""

from __future__ import annotations

from typing import Any

from talkthemes.text.masked import masked_as

__all__ = ["masked_explain"]


def masked_explain(explain: dict[str, Any]) -> dict[str, Any]:
    """The report with the names the names step removed masked.

    Masked are its lists of names, and those words in the boilerplate sentences
    (everywhere: a word removed as someone's name in one call, "bill", is masked in every
    sentence), each as the screens mask a name (:func:`talkthemes.text.masked.masked_as`).

    Parameters
    ----------
    explain : dict
        The chain's report.

    Returns
    -------
    dict
        A copy of the report; ``explain`` is left as it is.
    """
    names = explain.get("names") or {}
    out = dict(explain)
    hidden = {t["name"] for t in names.get("top", [])} | set(names.get("in_boilerplate", []))
    if hidden:
        out["names"] = {
            **names,
            "top": [{**t, "name": masked_as("name")} for t in names.get("top", [])],
            "in_boilerplate": [masked_as("name")] * len(names.get("in_boilerplate", [])),
        }
    boiler = explain.get("boilerplate") or {}
    if hidden and boiler.get("sentences"):
        out["boilerplate"] = {
            **boiler,
            "sentences": [
                {**b, "sentence": _mask_words(str(b["sentence"]), hidden)}
                for b in boiler["sentences"]
            ],
        }
    return out


def _mask_words(sentence: str, hidden: set[str]) -> str:
    """A normalised sentence (lower-case words, one space apart) with ``hidden`` words
    masked."""
    return " ".join(masked_as("name") if w in hidden else w for w in sentence.split(" "))
