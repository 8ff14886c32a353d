"""spaCy's language resources for the chain: lookup lemma tables and stop-word lists."""

from __future__ import annotations

from functools import cache

from talkthemes.errors import ConfigError

__all__ = ["lemma_table_words", "load_lemma_table", "lookup_languages", "spacy_stop_words"]


@cache
def lookup_languages() -> tuple[str, ...]:
    """Language codes for which ``spacy-lookups-data`` ships a lookup lemma table."""
    # spaCy is heavy to import: deferred to first use on purpose
    from spacy.util import registry

    out = []
    for lang, tables in registry.lookups.get_all().items():
        if isinstance(tables, dict) and "lemma_lookup" in tables:
            out.append(lang)
    return tuple(sorted(out))


def load_lemma_table(lang: str) -> dict[str, str]:
    """spaCy's lookup lemma table for a language, as a plain dict (word as written → lemma).

    Parameters
    ----------
    lang : str
        spaCy language code.

    Returns
    -------
    dict of str to str

    Raises
    ------
    ConfigError
        When ``spacy-lookups-data`` ships no lookup table for the language.
    """
    # spaCy is heavy to import: deferred to first use on purpose
    from spacy.util import load_language_data, registry

    if lang not in lookup_languages():
        raise ConfigError(
            f"[prepare] lang = {lang!r}: spacy-lookups-data ships no lookup lemma table for it "
            f"(languages with one: {', '.join(lookup_languages())}); choose one of those, or set "
            "[prepare] pipeline to an installed spaCy pipeline for the language"
        )
    table = load_language_data(registry.lookups.get(lang)["lemma_lookup"])
    return {str(k): str(v) for k, v in table.items() if isinstance(v, str)}


@cache
def lemma_table_words(lang: str) -> frozenset[str]:
    """Every word of a language's lookup lemma table, both sides, lower-cased (empty when
    ``spacy-lookups-data`` ships no table for it).

    What the names step (:mod:`talkthemes.prepare.names`) and the on-screen masking
    (:mod:`talkthemes.privacy`) take as words of the language, not names.
    """
    try:
        table = load_lemma_table(lang)
    except ConfigError:  # no lookup table for the language: the callers use stop words only
        return frozenset()
    return frozenset({k.lower() for k in table} | {v.lower() for v in table.values()})


def spacy_stop_words(lang: str) -> frozenset[str]:
    """spaCy's stop-word list for a language (``Language.Defaults.stop_words``).

    Raises
    ------
    ConfigError
        When spaCy does not know the language.
    """
    # spaCy is heavy to import: deferred to first use on purpose
    import spacy.util

    try:
        cls = spacy.util.get_lang_class(lang)
    except (ImportError, KeyError):
        raise ConfigError(f"[prepare] lang = {lang!r}: not a language code spaCy knows") from None
    return frozenset(w.lower() for w in cls.Defaults.stop_words)
