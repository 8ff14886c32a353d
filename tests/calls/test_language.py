"""The language of a call: normalising given codes and names, the und rule, mixed calls."""

from __future__ import annotations

import pytest

from talkthemes.calls.language import (
    SUPPORTED_LANGUAGES,
    UNDECIDED,
    LanguageGuess,
    detect_language,
    detect_languages,
    normalize_language,
)

# Invented call turns (no real company or person).
SPANISH = [
    "Buenos días, le llamo porque la factura de este mes es mucho más alta de lo normal.",
    "Entiendo, ¿me puede dar el número de cliente para revisar su cuenta, por favor?",
    "Sí, claro, un momento que lo busco en el correo que me enviaron la semana pasada.",
    "Perfecto, ya veo que el contador se leyó dos veces y por eso le cobramos de más.",
    "Vaya, entonces ¿me van a devolver el dinero o lo descuentan en la próxima factura?",
    "Lo descontamos en la próxima factura y le enviamos una confirmación por escrito hoy.",
    "Muy bien, muchas gracias por su ayuda, ha sido usted muy amable conmigo esta mañana.",
    "A usted, que tenga un buen día y no dude en llamarnos si necesita cualquier otra cosa.",
]
ENGLISH = [
    "Sorry, could we switch to English for a moment, my husband wants to ask something.",
    "Of course, no problem at all, what would he like to know about the refund today?",
]
POLISH = [
    "Dzień dobry, dzwonię w sprawie rachunku za prąd, który jest znacznie wyższy niż zwykle.",
    "Rozumiem, proszę podać numer klienta, a sprawdzę, co się stało z odczytem licznika.",
    "Oczywiście, chwileczkę, muszę go znaleźć w wiadomości, którą dostałam w zeszłym tygodniu.",
]


@pytest.mark.parametrize(
    ("value", "expected"),
    [
        ("es", "es"),
        ("ES", "es"),
        ("es-MX", "es"),
        ("es_ES", "es"),
        ("spa", "es"),
        ("Spanish", "es"),
        ("español", "es"),
        ("espanol", "es"),
        ("Castellano", "es"),
        (" en-GB ", "en"),
        ("eng", "en"),
        ("English", "en"),
        ("deu", "de"),
        ("ger", "de"),
        ("Deutsch", "de"),
        ("fra", "fr"),
        ("fre", "fr"),
        ("français", "fr"),
        ("ita", "it"),
        ("italiano", "it"),
        ("nld", "nl"),
        ("dut", "nl"),
        ("Nederlands", "nl"),
        ("Flemish", "nl"),
        ("nl-BE", "nl"),
        ("por", "pt"),
        ("pt-BR", "pt"),
        ("Português", "pt"),
        ("pol", "pl"),
        ("Polish", "pl"),
        ("sv-SE", "sv"),
        ("zh-Hant-TW", "zh"),
        ("no", "nb"),
        ("nob", "nb"),
        ("iw", "he"),
        ("spa-MX", "es"),
        ("", None),
        ("   ", None),
        ("x", None),
        ("und", None),
        ("xx", None),
        ("xyz", None),
        ("Klingon", None),
    ],
)
def test_normalize_language(value: str, expected: str | None) -> None:
    assert normalize_language(value) == expected


def test_every_supported_language_normalises_to_itself() -> None:
    assert all(normalize_language(code) == code for code in SUPPORTED_LANGUAGES)
    assert SUPPORTED_LANGUAGES == ("en", "es", "de", "fr", "it", "nl", "pt")


@pytest.mark.parametrize("texts", [[], [""], ["   ", ""], ["hola amigo"], ["ok", "yes"]])
def test_too_few_words_are_undecided(texts: list[str]) -> None:
    guess = detect_language(texts)
    assert guess == LanguageGuess(UNDECIDED, 0.0, sum(len(t.split()) for t in texts))


def test_min_words_is_honoured() -> None:
    assert detect_language(SPANISH[:1], min_words=100).code == UNDECIDED
    assert detect_language(SPANISH[:1], min_words=5).code == "es"


def test_low_confidence_is_undecided() -> None:
    guess = detect_language(SPANISH, min_confidence=1.01)
    assert guess.code == UNDECIDED
    assert 0.5 < guess.confidence <= 1.0


def test_a_spanish_call() -> None:
    guess = detect_language(SPANISH)
    assert guess.code == "es"
    assert guess.confidence >= 0.9
    assert 0 < guess.words <= sum(len(t.split()) for t in SPANISH)


@pytest.mark.parametrize("english_first", [False, True])
def test_a_mixed_call_takes_the_language_of_most_words(english_first: bool) -> None:
    spanish = SPANISH * 2  # 16 Spanish turns, 4 English ones: 80 % of the turns
    turns = ENGLISH * 2 + spanish if english_first else spanish + ENGLISH * 2
    words = [len(t.split()) for t in turns]
    assert sum(words[4:] if english_first else words[:16]) / sum(words) > 0.75
    guess = detect_language(turns)
    assert guess.code == "es"
    assert guess.confidence < 0.95  # the English windows counted against it


@pytest.mark.parametrize("english_first", [False, True])
def test_a_call_half_in_each_language_is_undecided(english_first: bool) -> None:
    turns = ENGLISH * 4 + SPANISH if english_first else SPANISH + ENGLISH * 4
    words = [len(t.split()) for t in turns]
    assert abs(sum(words[:8]) - sum(words[8:])) <= 1  # 125 and 124 words
    guess = detect_language(turns)
    assert guess.code == UNDECIDED
    assert 0.45 < guess.confidence < 0.5


def test_a_language_without_a_chain_is_named_not_forced_into_one() -> None:
    assert detect_language(POLISH).code == "pl"


def test_detect_languages_keeps_the_order() -> None:
    guesses = detect_languages([SPANISH, ["ok"], POLISH, ENGLISH * 3])
    assert [g.code for g in guesses] == ["es", UNDECIDED, "pl", "en"]
    assert detect_languages([]) == []


def test_thresholds_pass_through_the_batch_form() -> None:
    assert detect_languages([SPANISH], min_words=10_000)[0].code == UNDECIDED


def test_a_single_string_is_refused_not_read_letter_by_letter() -> None:
    with pytest.raises(TypeError, match="sequence of str"):
        detect_language(SPANISH[0])
