"""Each language's chain against spaCy's own resources.

References (versions are checked below):
- spaCy 3.8: the stop-word list of each language, read from its module
  (``spacy.lang.<code>.stop_words.STOP_WORDS``), not through our loader.
- spacy-lookups-data 1.0.5: each language's lookup lemma table (``<code>_lemma_lookup``),
  read through spaCy's own ``spacy.lookups.load_lookups``. The French table gives a list of
  lemmas per word; spaCy's French lemmatizer reads the first (``spacy.lang.fr.lemmatizer``),
  and so does the reference here.

The word lists are common words of customer calls in each language (our choice); the
table decides what their lemma is. Our lemma step must agree with the table on every word
where our own checks do not intervene: the headword check (``[prepare]
lemma_keep_ratio``, :mod:`talkthemes.prepare.headwords`), which lets the corpus keep a
word the table would merge, is left out by giving each word alone, with no corpus.
"""

from __future__ import annotations

import importlib
from importlib.metadata import version

import pytest
import spacy
from spacy.lookups import load_lookups

from talkthemes.config import PrepareSettings
from talkthemes.prepare.chain import build_processor
from talkthemes.prepare.filter import KEEP
from talkthemes.prepare.lexicon import CHAIN_LANGUAGES

WORDS: dict[str, list[str]] = {
    "en": ["invoices", "customers", "payments", "meters", "engineers", "paid", "contracts",
           "tariffs", "faults", "refunds", "calls", "amounts", "readings", "charges", "bills"],
    "es": ["facturas", "clientes", "pagos", "recibos", "contadores", "llamaron", "pagué",
           "tarifas", "cargos", "técnicos", "averías", "cortes", "reclamaciones",
           "devoluciones", "saldos"],
    "de": ["Rechnungen", "Kunden", "Zahlungen", "Gebühren", "Zähler", "Techniker", "prüfte",
           "bezahlte", "Verträge", "Tarife", "Leitungen", "Störungen", "kündigte", "Anrufe",
           "Beträge"],
    "fr": ["factures", "clients", "paiements", "compteurs", "techniciens", "payé", "vérifié",
           "contrats", "tarifs", "pannes", "coupures", "remboursements", "appels", "montants",
           "relevés"],
    "it": ["fatture", "clienti", "pagamenti", "contatori", "tecnici", "pagato", "contratti",
           "tariffe", "guasti", "rimborsi", "chiamate", "importi", "bollette", "letture",
           "addebiti"],
    "nl": ["facturen", "klanten", "betalingen", "meters", "monteurs", "betaalde",
           "contracten", "tarieven", "storingen", "kabels", "terugbetalingen", "gesprekken",
           "bedragen", "rekeningen", "aansluitingen"],
    "pt": ["faturas", "clientes", "pagamentos", "contadores", "técnicos", "pagou",
           "contratos", "tarifas", "avarias", "reembolsos", "chamadas", "montantes",
           "leituras", "débitos", "recibos"],
}  # fmt: skip


def test_reference_versions():
    assert spacy.__version__.startswith("3.8")
    assert version("spacy-lookups-data") == "1.0.5"
    assert set(WORDS) == set(CHAIN_LANGUAGES)


@pytest.fixture(scope="module", params=CHAIN_LANGUAGES)
def chain(request):
    lang = request.param
    return lang, build_processor(PrepareSettings(lang=lang, drop_names=False)).encoder


def test_stop_words_hold_spacys_list(chain):
    lang, enc = chain
    module = importlib.import_module(f"spacy.lang.{lang}.stop_words")
    spacy_list = {w.lower() for w in module.STOP_WORDS}
    assert len(spacy_list) > 150
    assert spacy_list <= enc.filter.stop_words
    for word in sorted(spacy_list)[:: max(1, len(spacy_list) // 40)]:
        if word.isalpha():
            assert enc.filter.reason(word, word) != KEEP, (lang, word)


def test_lemmas_agree_with_the_lookup_table(chain):
    lang, enc = chain
    table = load_lookups(lang, ["lemma_lookup"]).get_table("lemma_lookup")
    checked = in_table = 0
    for word in WORDS[lang]:
        if word.lower() in enc.headwords.contested:
            continue  # our headword check: the corpus decides (see the module notes)
        entry = table.get(word, None)
        if entry is None:
            entry = table.get(word.lower(), word.lower())
        else:
            in_table += 1
        expected = (entry[0] if isinstance(entry, list) else entry).lower()
        got = enc.kept(word)
        if enc.filter.reason(expected, word.lower()) != KEEP:
            assert got == [], (lang, word)
            continue
        assert got == [expected], (lang, word, expected)
        checked += 1
    assert checked >= 10, (lang, checked)
    assert in_table >= 9, (lang, in_table)
