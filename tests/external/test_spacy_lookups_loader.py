"""The chain reads spaCy's language resources without importing spaCy: the same data.

Reference: spaCy's own loaders, ``spacy.util.registry.lookups`` with
``spacy.util.load_language_data`` (the tables of the ``spacy-lookups-data`` package) and
``Language.Defaults.stop_words`` of ``spacy.util.get_lang_class`` (the stop-word lists).
"""

from __future__ import annotations

import subprocess
import sys

import pytest

from talkthemes.prepare.lexicon import (
    CHAIN_LANGUAGES,
    load_lookup_data,
    lookup_languages,
    lookup_tables,
    spacy_stop_words,
)


def test_the_same_languages_have_a_lookup_table():
    from spacy.util import registry

    expected = {
        lang
        for lang, tables in registry.lookups.get_all().items()
        if isinstance(tables, dict) and "lemma_lookup" in tables
    }
    assert set(lookup_languages()) == expected


@pytest.mark.parametrize("lang", CHAIN_LANGUAGES)
def test_the_same_tables_and_stop_words(lang):
    import spacy.util
    from spacy.util import load_language_data, registry

    theirs = registry.lookups.get(lang)
    for name in ("lemma_lookup", "lemma_index", "lemma_rules"):
        if name in theirs:
            assert load_lookup_data(lookup_tables()[lang][name]) == load_language_data(
                theirs[name]
            ), name
        else:
            assert name not in lookup_tables()[lang]
    stop = spacy.util.get_lang_class(lang).Defaults.stop_words
    assert spacy_stop_words(lang) == frozenset(w.lower() for w in stop)


def test_building_the_chain_does_not_import_spacy():
    code = (
        "import sys\n"
        "from talkthemes.config import PrepareSettings\n"
        "from talkthemes.prepare.chain import build_processor\n"
        "build_processor(PrepareSettings(lang='es'))\n"
        "print('spacy' in sys.modules)\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"
