"""spaCy's language resources for the chain: lookup lemma tables and stop-word lists, and
which languages have a chain of their own."""

from __future__ import annotations

import gzip
import importlib.util
import json
import logging
from functools import cache
from importlib.metadata import entry_points
from pathlib import Path
from typing import Any

from talkthemes.errors import ConfigError

__all__ = [
    "CHAIN_LANGUAGES",
    "check_language",
    "lemma_table_words",
    "load_lemma_table",
    "load_lookup_data",
    "lookup_languages",
    "lookup_tables",
    "spacy_stop_words",
]

logger = logging.getLogger(__name__)

#: Languages with a chain of their own: spaCy's stop words, a spacy-lookups-data lemma
#: table, a shipped fillers list and the national ids and phone formats of the scrub step
#: (``docs/prepare.md``, "Chains per language").
CHAIN_LANGUAGES: tuple[str, ...] = ("de", "en", "es", "fr", "it", "nl", "pt")


def check_language(lang: str, pipeline: str = "") -> None:
    """Check that ``[prepare] lang`` can be prepared.

    A language of :data:`CHAIN_LANGUAGES` passes. Another language passes with a warning
    when spaCy has a stop-word list for it and either spacy-lookups-data a lookup lemma
    table or ``[prepare] pipeline`` is set: it is prepared with those alone (no fillers
    list, no national ids).

    Raises
    ------
    ConfigError
        Otherwise, naming the supported languages.
    """
    if lang in CHAIN_LANGUAGES:
        return
    supported = ", ".join(CHAIN_LANGUAGES)
    try:
        spacy_stop_words(lang)
    except ConfigError:
        raise ConfigError(
            f"[prepare] lang = {lang!r}: not a language code spaCy knows; "
            f"the supported languages are {supported}"
        ) from None
    if not pipeline and lang not in lookup_languages():
        raise ConfigError(
            f"[prepare] lang = {lang!r}: no preparation chain for it and spacy-lookups-data "
            f"ships no lookup lemma table for it; the supported languages are {supported} "
            f"(others with a lookup table: "
            f"{', '.join(x for x in lookup_languages() if x not in CHAIN_LANGUAGES)}), "
            "or set [prepare] pipeline to an installed spaCy pipeline for the language"
        )
    logger.warning(
        "[prepare] lang = %r has no chain of its own (supported: %s): prepared with spaCy's "
        "stop words and %s only, without a fillers list or national ids",
        lang,
        supported,
        "the pipeline" if pipeline else "the spacy-lookups-data lemma table",
    )


@cache
def lookup_tables() -> dict[str, dict[str, Any]]:
    """The tables ``spacy-lookups-data`` ships, by language: table name → file.

    Read from the package's ``spacy_lookups`` entry points, the ones spaCy's
    ``registry.lookups`` reads, without importing spaCy (which takes half a second).
    """
    out: dict[str, dict[str, Any]] = {}
    for ep in entry_points(group="spacy_lookups"):
        try:
            tables = ep.load()
        except Exception as exc:  # a broken plug-in: its languages are not offered
            logger.warning("cannot read the spaCy lookups of %r: %s", ep.name, exc)
            continue
        if isinstance(tables, dict):
            out[ep.name] = tables
    return out


def load_lookup_data(path: Any) -> Any:
    """A table file of ``spacy-lookups-data`` (JSON, or gzipped JSON when the plain file
    is not there), as spaCy's ``util.load_language_data`` reads it."""
    path = Path(str(path))
    if path.exists():
        return json.loads(path.read_bytes())
    return json.loads(gzip.decompress(path.with_name(path.name + ".gz").read_bytes()))


@cache
def lookup_languages() -> tuple[str, ...]:
    """Language codes for which ``spacy-lookups-data`` ships a lookup lemma table."""
    return tuple(sorted(lang for lang, t in lookup_tables().items() if "lemma_lookup" in t))


@cache
def load_lemma_table(lang: str) -> dict[str, str]:
    """spaCy's lookup lemma table for a language, as a plain dict (word as written → lemma).

    Parameters
    ----------
    lang : str
        spaCy language code.

    Returns
    -------
    dict of str to str
        Where the table gives a list of lemmas (French), the first, as spaCy reads it.
        Loaded once per process and shared: do not modify it.

    Raises
    ------
    ConfigError
        When ``spacy-lookups-data`` ships no lookup table for the language.
    """
    if lang not in lookup_languages():
        raise ConfigError(
            f"[prepare] lang = {lang!r}: spacy-lookups-data ships no lookup lemma table for it "
            f"(languages with one: {', '.join(lookup_languages())}); choose one of those, or set "
            "[prepare] pipeline to an installed spaCy pipeline for the language"
        )
    table = load_lookup_data(lookup_tables()[lang]["lemma_lookup"])
    # most tables map a word to its lemma; the French one to a list of lemmas, of which
    # spaCy's lookup reads the first (spacy.lang.fr.lemmatizer)
    if all(v.__class__ is str for v in table.values()):
        return table  # keys of a JSON object are strings already
    out: dict[str, str] = {}
    for k, v in table.items():
        if isinstance(v, list):
            v = v[0] if v else None
        if isinstance(v, str):
            out[str(k)] = v
    return out


@cache
def lemma_table_words(lang: str) -> frozenset[str]:
    """Every word of a language's lookup lemma table, both sides, lower-cased (empty when
    ``spacy-lookups-data`` ships no table for it).

    What the names step (:mod:`talkthemes.prepare.names`) and the on-screen masking
    (:mod:`talkthemes.privacy`) take as words of the language, not names. Kept on disk
    between runs (:mod:`talkthemes.prepare.lexicon_cache`).
    """
    # the cache reads this module's tables: imported here
    from talkthemes.prepare.lexicon_cache import cached

    try:
        table = load_lemma_table(lang)
    except ConfigError:  # no lookup table for the language: the callers use stop words only
        return frozenset()

    def build() -> frozenset[str]:
        return frozenset({k.lower() for k in table} | {v.lower() for v in table.values()})

    return cached("words", lang, ("lemma_lookup",), build, sorted, _strings)


def _strings(value: Any) -> frozenset[str]:
    if not isinstance(value, list) or not all(isinstance(w, str) for w in value):
        raise TypeError("not a list of words")
    return frozenset(value)


@cache
def spacy_stop_words(lang: str) -> frozenset[str]:
    """spaCy's stop-word list for a language (``spacy/lang/<code>/stop_words.py``, the list
    ``Language.Defaults.stop_words`` holds).

    The module is read on its own: importing the language's package would also build its
    tokenizer exceptions, which takes seconds for French and is not needed here.

    Raises
    ------
    ConfigError
        When spaCy does not know the language.
    """
    path = _spacy_folder() / "lang" / lang / "stop_words.py"
    if lang.isalpha() and lang.islower() and path.is_file():
        spec = importlib.util.spec_from_file_location(f"_talkthemes_stop_words_{lang}", path)
        if spec is not None and spec.loader is not None:
            module = importlib.util.module_from_spec(spec)
            spec.loader.exec_module(module)
            return frozenset(w.lower() for w in module.STOP_WORDS)
    # spaCy is heavy to import: only for a language without a stop_words module
    import spacy.util

    try:
        cls = spacy.util.get_lang_class(lang)
    except (ImportError, KeyError):
        raise ConfigError(f"[prepare] lang = {lang!r}: not a language code spaCy knows") from None
    return frozenset(w.lower() for w in cls.Defaults.stop_words)


def _spacy_folder() -> Path:
    """spaCy's package folder, found without importing spaCy."""
    spec = importlib.util.find_spec("spacy")
    if spec is None or not spec.submodule_search_locations:
        raise ConfigError("spaCy is not installed")
    return Path(next(iter(spec.submodule_search_locations)))
