"""A chain per language: ``[prepare] lang`` set to each supported language on invented calls."""

from __future__ import annotations

import logging
import random
from importlib import resources

import pytest

from talkthemes.config import PrepareSettings
from talkthemes.errors import ConfigError
from talkthemes.prepare.chain import build_processor, prepare_corpus
from talkthemes.prepare.filter import filler_languages, load_fillers
from talkthemes.prepare.lexicon import (
    CHAIN_LANGUAGES,
    check_language,
    load_lemma_table,
    spacy_stop_words,
)

# Invented calls: per language, a greeting, two topics (each a few sentences whose nouns
# and verbs are inflected), and the lemmas the chain must give for some of their words
# (word as said -> lemma, each as spacy-lookups-data's table gives it).
CALLS: dict[str, dict[str, object]] = {
    "es": {
        "greeting": "Buenos días, gracias por llamar, ¿en qué puedo ayudarle?",
        "topics": [
            [
                "Pues los recibos de los pagos llegaron dos veces, vale.",
                "Los clientes reclamaron los cargos y los descuentos.",
                "Revisé los importes de las tarifas y los saldos.",
            ],
            [
                "El técnico cambió los contadores averiados después de la tormenta.",
                "Los cables y los postes quedaron rotos, claro.",
                "Los vecinos esperaron las reparaciones toda la noche.",
            ],
        ],
        "lemmas": {"recibos": "recibo", "clientes": "cliente", "contadores": "contador",
                   "cables": "cable", "revisé": "revisar"},
    },
    "de": {
        "greeting": "Guten Tag, danke für Ihren Anruf, wie kann ich helfen?",
        "topics": [
            [
                "Die Rechnungen kamen zweimal und die Zahlungen wurden abgebucht, genau.",
                "Die Kunden haben die Gebühren und Rabatte reklamiert.",
                "Ich prüfte die Beträge der Tarife und die Guthaben.",
            ],
            [
                "Der Techniker tauschte die defekten Zähler nach dem Gewitter.",
                "Die Kabel und Masten waren kaputt, okay.",
                "Die Nachbarn warteten die ganze Nacht auf die Reparaturen.",
            ],
        ],
        "lemmas": {"rechnungen": "rechnung", "kunden": "kunde", "zahlungen": "zahlung",
                   "prüfte": "prüfen", "nachbarn": "nachbar"},
    },
    "fr": {
        "greeting": "Bonjour, merci de votre appel, comment puis-je vous aider ?",
        "topics": [
            [
                "Euh, les factures sont arrivées deux fois et les paiements ont été débités.",
                "Les clients ont contesté les frais et les remises.",
                "J'ai vérifié les montants des tarifs et les soldes.",
            ],
            [
                "Le technicien a remplacé les compteurs après les orages.",
                "Les câbles et les poteaux étaient cassés, voilà.",
                "Les voisins ont attendu les réparations toute la nuit.",
            ],
        ],
        "lemmas": {"factures": "facture", "clients": "client", "compteurs": "compteur",
                   "vérifié": "vérifier", "voisins": "voisin"},
    },
    "it": {
        "greeting": "Buongiorno, grazie per aver chiamato, come posso aiutarla?",
        "topics": [
            [
                "Allora, le fatture sono arrivate due volte e i pagamenti addebitati.",
                "I clienti hanno contestato le spese e gli sconti.",
                "Ho controllato gli importi delle tariffe e i saldi.",
            ],
            [
                "Il tecnico ha sostituito i contatori dopo i temporali.",
                "I cavi e i pali erano rotti, certo.",
                "I vicini hanno aspettato le riparazioni tutta la notte.",
            ],
        ],
        "lemmas": {"fatture": "fattura", "clienti": "cliente", "contatori": "contatore",
                   "tariffe": "tariffa", "cavi": "cavo"},
    },
    "nl": {
        "greeting": "Goedemorgen, bedankt voor uw telefoontje, waarmee kan ik helpen?",
        "topics": [
            [
                "Nou, de facturen kwamen twee keer en de betalingen werden afgeschreven.",
                "De klanten hebben de kosten en kortingen betwist.",
                "Ik controleerde de bedragen van de tarieven en de saldo's.",
            ],
            [
                "De monteur verving de meters na de onweersbuien.",
                "De kabels en palen waren kapot, oké.",
                "De buren wachtten de hele nacht op de reparaties.",
            ],
        ],
        "lemmas": {"facturen": "factuur", "klanten": "klant", "meters": "meter",
                   "controleerde": "controleren", "kabels": "kabel"},
    },
    "pt": {
        "greeting": "Bom dia, obrigado pela sua chamada, em que posso ajudar?",
        "topics": [
            [
                "Pois, os recibos chegaram duas vezes e os pagamentos foram debitados.",
                "Os clientes reclamaram das taxas e dos descontos.",
                "Verifiquei os montantes das tarifas e os saldos.",
            ],
            [
                "O técnico substituiu os contadores depois das tempestades.",
                "Os cabos e os postes ficaram partidos, claro.",
                "Os vizinhos esperaram pelas reparações a noite toda.",
            ],
        ],
        "lemmas": {"clientes": "cliente", "contadores": "contador", "pagamentos": "pagamento",
                   "verifiquei": "verificar", "vizinhos": "vizinho"},
    },
}  # fmt: skip


def _calls(lang: str, n: int = 24) -> list[tuple[str, list[tuple[str, str]]]]:
    spec = CALLS[lang]
    rng = random.Random(3)
    out = []
    for i in range(n):
        topic = spec["topics"][i % 2]  # type: ignore[index]
        turns = [("agent", spec["greeting"])]
        turns += [("customer", s) for s in rng.sample(topic, len(topic))]
        out.append((f"{lang}-{i}", turns))
    return out


def test_the_seven_languages_are_supported():
    assert CHAIN_LANGUAGES == ("de", "en", "es", "fr", "it", "nl", "pt")
    assert set(CHAIN_LANGUAGES) <= set(filler_languages())
    for lang in CHAIN_LANGUAGES:
        check_language(lang)  # no error, no warning
        assert len(load_lemma_table(lang)) > 100_000 or lang == "en"


@pytest.mark.parametrize("lang", sorted(CALLS))
def test_prepare_gives_lemmas_without_stop_words(lang: str):
    settings = PrepareSettings(
        lang=lang,
        vocab_min_docs=2,
        vocab_max_doc_share=1.0,
        boilerplate_min_share=0.9,  # the greeting only (each topic sentence is in half)
        min_tokens=3,
        phrases=False,
        n_process=1,
    )
    corpus, explain = prepare_corpus(lambda: [_calls(lang)], settings, min_terms=10)
    vocab = set(corpus.vocabulary)
    assert explain["lemmas"]["lang"] == lang
    lemmas: dict[str, str] = CALLS[lang]["lemmas"]  # type: ignore[assignment]
    table = {k.lower(): v.lower() for k, v in load_lemma_table(lang).items()}
    for word, lemma in lemmas.items():
        assert table.get(word, word) == lemma or lang == "de"  # German: looked up as written
        assert lemma in vocab, (lang, word, lemma)
        assert word not in vocab
    dropped = spacy_stop_words(lang) | load_fillers(lang)
    assert not vocab & dropped
    # the greeting is the same in every call: boilerplate
    assert explain["boilerplate"]["sentences"][0]["transcripts"] == 24
    # every kept term is a lower-case alphabetic lemma
    assert all(t.isalpha() and t == t.lower() for t in vocab)


@pytest.mark.parametrize("lang", ["fr", "it", "nl", "pt"])
def test_fillers_files_are_ours_and_say_so(lang: str):
    path = resources.files("talkthemes").joinpath("data", f"fillers_{lang}.txt")
    header = path.read_text(encoding="utf-8").splitlines()[:5]
    assert any("Common practice" in line for line in header)
    assert any("back-channels" in line for line in header)
    words = load_fillers(lang)
    assert len(words) >= 30 and all(w.isalpha() for w in words)
    processor = build_processor(PrepareSettings(lang=lang, drop_names=False))
    assert processor.encoder.filter.fillers == words


def test_french_table_reads_the_first_lemma_of_each_list():
    table = load_lemma_table("fr")
    assert table["factures"] == "facture"
    assert table["vérifié"] == "vérifier"


def test_german_takes_no_capital_for_a_name():
    processor = build_processor(PrepareSettings(lang="de"))
    assert processor.encoder.names is False
    assert processor.encoder.person_names is not None
    assert processor.encoder.person_names.capitals is False
    fr = build_processor(PrepareSettings(lang="fr"))
    assert fr.encoder.person_names is not None and fr.encoder.person_names.capitals


def test_unsupported_language_names_the_supported_ones():
    with pytest.raises(ConfigError, match=r"'qq'.*supported languages are de, en, es, fr, it"):
        build_processor(PrepareSettings(lang="qq"))
    # spaCy knows Persian, but spacy-lookups-data has no lemma table for it
    with pytest.raises(ConfigError, match=r"'fa'.*supported languages are de, en, es.*sv"):
        build_processor(PrepareSettings(lang="fa"))


def test_other_language_with_a_table_runs_with_a_warning(caplog):
    with caplog.at_level(logging.WARNING, logger="talkthemes.prepare.lexicon"):
        processor = build_processor(PrepareSettings(lang="sv"))
    assert "has no chain of its own" in caplog.text and "'sv'" in caplog.text
    assert processor.encoder.filter.fillers == frozenset()
    assert processor.encoder.kept("Kunderna betalade fakturorna") == ["kund", "betala", "faktura"]
