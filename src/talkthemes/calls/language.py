"""The language of a call: normalising given codes and detecting it from the turns.

A call's language is an ISO 639-1 code (``"es"``), or :data:`UNDECIDED` (``"und"``, the
BCP 47 / ISO 639-2 code for "undetermined") when too few words or too little confidence
allow no decision. Detection uses py3langid (a naive Bayes classifier over byte n-grams,
Lui & Baldwin 2012) among every language of its model that has an ISO 639-1 code, so a
Polish call comes out Polish, not as the nearest of the languages we ship a chain for.

Speed: a call is not classified whole. Windows of :data:`WINDOW_WORDS` words spread
evenly over the call are classified one by one; two of them decide when they agree with
confidence, else all :data:`WINDOWS` vote, each with its probability times its words, so a
mixed call takes the language of most of its words (see ``docs/prepare.md``, "Language of
a call").

References
----------
Lui, M., Baldwin, T. (2012). langid.py: an off-the-shelf language identification tool.
*Proceedings of ACL 2012, System Demonstrations*, 25–30.
"""

from __future__ import annotations

import functools
import itertools
import unicodedata
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

SUPPORTED_LANGUAGES: tuple[str, ...] = ("en", "es", "de", "fr", "it", "nl", "pt")
"""Languages we ship a preparation chain for."""

UNDECIDED = "und"
"""The code of a call whose language could not be decided."""

MIN_CONFIDENCE = 0.5
"""Default least confidence (the winner's word-weighted probability) to decide."""

MIN_WORDS = 3
"""Default least number of words a call needs before its language is detected."""

WINDOWS = 8
"""A long call is sampled in this many windows spread evenly over its words."""

WINDOW_WORDS = 12
"""Words per window."""

SURE = 0.9
"""The two first windows decide alone when they agree with at least this probability each."""

# ISO 639-1 (all two-letter codes), plus the legacy codes still emitted by some locales.
_ISO_639_1_TEXT = """aa ab ae af ak am an ar as av ay az ba be bg bh bi bm bn bo br bs ca ce
    ch co cr cs cu
    cv cy da de dv dz ee el en eo es et eu fa ff fi fj fo fr fy ga gd gl gn gu gv ha he hi ho
    hr ht hu hy hz ia id ie ig ii ik io is it iu ja jv ka kg ki kj kk kl km kn ko kr ks ku kv
    kw ky la lb lg li ln lo lt lu lv mg mh mi mk ml mn mr ms mt my na nb nd ne ng nl nn no nr
    nv ny oc oj om or os pa pi pl ps pt qu rm rn ro ru rw sa sc sd se sg si sk sl sm sn so sq
    sr ss st su sv sw ta te tg th ti tk tl tn to tr ts tt tw ty ug uk ur uz ve vi vo wa wo xh
    yi yo za zh zu"""
_ISO_639_1 = frozenset(_ISO_639_1_TEXT.split())
_LEGACY = {"iw": "he", "in": "id", "ji": "yi", "no": "nb"}  # "no": spaCy's Norwegian is nb

# ISO 639-2 (/T and /B) and 639-3 codes, English and native names (accents folded) -> 639-1:
# the seven languages one a line, then common others.
_ALIASES = """
    en: eng english
    es: spa spanish castilian espanol castellano
    de: deu ger german deutsch
    fr: fra fre french francais
    it: ita italian italiano
    nl: nld dut dutch flemish nederlands vlaams
    pt: por portuguese portugues
    pl: pol polish polski; cs: ces cze czech; sk: slk slo slovak; sl: slv slovenian slovene
    hr: hrv croatian; sr: srp serbian; bg: bul bulgarian; ru: rus russian; uk: ukr ukrainian
    ro: ron rum romanian; hu: hun hungarian; fi: fin finnish; et: est estonian; lv: lav latvian
    lt: lit lithuanian; sv: swe swedish; da: dan danish; nb: nob nor norwegian bokmal
    nn: nno nynorsk; is: isl ice icelandic; ca: cat catalan; gl: glg galician
    eu: eus baq basque; ga: gle irish; cy: cym wel welsh; el: ell gre greek; tr: tur turkish
    ar: ara arabic; he: heb hebrew; fa: fas per persian farsi; hi: hin hindi; ur: urd urdu
    bn: ben bengali; zh: zho chi chinese; ja: jpn japanese; ko: kor korean; vi: vie vietnamese
    th: tha thai; id: ind indonesian; ms: msa may malay; tl: tgl tagalog filipino fil
    sw: swa swahili; af: afr afrikaans
"""
_NAMES: dict[str, str] = {
    alias: code.strip()
    for entry in _ALIASES.replace("\n", ";").split(";")
    if entry.strip()
    for code, aliases in [entry.split(":")]
    for alias in aliases.split()
}


@dataclass(frozen=True)
class LanguageGuess:
    """A call's detected language.

    Attributes
    ----------
    code : str
        ISO 639-1 code (possibly a language without a chain), or :data:`UNDECIDED`.
    confidence : float
        0..1: the word-weighted probability of ``code`` over the windows classified
        (0.0 when no decision was tried).
    words : int
        Words the decision rested on: those classified, or all the call's words when they
        were too few to try.
    """

    code: str
    confidence: float
    words: int


def _fold(value: str) -> str:
    """Lower case without accents (``"Español"`` -> ``"espanol"``)."""
    decomposed = unicodedata.normalize("NFKD", value.strip().lower())
    return "".join(ch for ch in decomposed if not unicodedata.combining(ch))


def normalize_language(value: str) -> str | None:
    """The ISO 639-1 code a language tag, code or name stands for.

    Parameters
    ----------
    value : str
        A BCP 47 / POSIX tag (``"es-MX"``, ``"es_ES"``), an ISO 639-1, 639-2 or 639-3
        code (``"ES"``, ``"spa"``), or an English or native name (``"Spanish"``,
        ``"español"``). Case and accents do not matter.

    Returns
    -------
    str or None
        The two-letter code (``"es"``; Norwegian ``"no"`` becomes spaCy's ``"nb"``), or
        None when ``value`` is empty, ``"und"`` or not a language we know.
    """
    folded = _fold(value)
    if folded in _NAMES:
        return _NAMES[folded]
    primary = folded.replace("_", "-").split("-", 1)[0]
    if primary in _LEGACY:
        return _LEGACY[primary]
    if primary in _ISO_639_1:
        return primary
    return _NAMES.get(primary) if len(primary) == 3 else None


@functools.cache
def _identifier() -> Any:
    """py3langid's classifier, loaded once per process, among ISO 639-1 languages."""
    # Deferred: loading the model takes about half a second and 25 MB, so only callers
    # that detect pay for it.
    from py3langid.langid import MODEL_FILE, LanguageIdentifier

    ident = LanguageIdentifier.from_model_file(MODEL_FILE, norm_probs=True)
    ident.set_languages(sorted(c for c in set(ident.nb_classes) if c in _ISO_639_1))
    ident.nb_ptc = np.ascontiguousarray(ident.nb_ptc)  # the column subset, kept compact
    return ident


def _windows(words: list[str]) -> list[list[str]]:
    """Runs of :data:`WINDOW_WORDS` words: all of a short call, or :data:`WINDOWS` spread out."""
    n = len(words)
    if n <= WINDOWS * WINDOW_WORDS:  # short call: all of it, in consecutive runs
        count = max(1, n // WINDOW_WORDS)
        bounds = [round(i * n / count) for i in range(count + 1)]
        return [words[a:b] for a, b in itertools.pairwise(bounds)]
    step = n / WINDOWS
    starts = [int(i * step + (step - WINDOW_WORDS) / 2) for i in range(WINDOWS)]
    return [words[s : s + WINDOW_WORDS] for s in starts]


def detect_language(
    texts: Sequence[str],
    *,
    min_confidence: float = MIN_CONFIDENCE,
    min_words: int = MIN_WORDS,
) -> LanguageGuess:
    """The language of one call from its turns' texts (customer and agent).

    The call's words are cut into windows of :data:`WINDOW_WORDS` words: all of them for
    a short call, :data:`WINDOWS` spread evenly over a long one. Two windows, one in each
    half of the call, are classified first; when they name the same language,
    each with a probability of at least :data:`SURE`, they decide. Otherwise every window
    is classified and gives its language its probability times its number of words. The
    language given most wins; its confidence is that sum over the words of the windows
    classified (a window that chose another language adds 0), so a call half in one
    language and half in another stays undecided.

    Parameters
    ----------
    texts : sequence of str
        The call's turns, in order.
    min_confidence : float
        Below this confidence the answer is :data:`UNDECIDED`.
    min_words : int
        A call with fewer words is :data:`UNDECIDED` without trying.

    Returns
    -------
    LanguageGuess

    Raises
    ------
    TypeError
        When ``texts`` is a single string instead of a sequence of turns.
    """
    if isinstance(texts, str):
        raise TypeError("detect_language takes the call's turns (a sequence of str), not a str")
    words = [word for text in texts for word in text.split()]
    if len(words) < max(min_words, 1):
        return LanguageGuess(UNDECIDED, 0.0, len(words))
    classify = _identifier().classify
    runs = _windows(words)
    first = sorted({len(runs) // 4, 3 * len(runs) // 4})
    votes = {i: classify(" ".join(runs[i])) for i in first}
    codes = {code for code, _ in votes.values()}
    if len(codes) > 1 or min(p for _, p in votes.values()) < SURE:
        votes.update((i, classify(" ".join(run))) for i, run in enumerate(runs) if i not in votes)
    weight: dict[str, float] = {}
    total = 0
    for i, (code, probability) in votes.items():
        weight[code] = weight.get(code, 0.0) + probability * len(runs[i])
        total += len(runs[i])
    code = max(weight, key=weight.__getitem__)
    confidence = min(1.0, weight[code] / total)
    if confidence < min_confidence:
        return LanguageGuess(UNDECIDED, confidence, total)
    return LanguageGuess(_LEGACY.get(code, code), confidence, total)


def detect_languages(
    calls: Iterable[Sequence[str]],
    *,
    min_confidence: float = MIN_CONFIDENCE,
    min_words: int = MIN_WORDS,
) -> list[LanguageGuess]:
    """:func:`detect_language` for each call (each a sequence of turn texts), in order."""
    return [
        detect_language(texts, min_confidence=min_confidence, min_words=min_words)
        for texts in calls
    ]
