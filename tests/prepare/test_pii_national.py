"""The scrub step's IBANs, national ids and national phone formats (all values invented,
their check digits computed here or by hand; published examples are in
tests/external/test_iban_reference.py)."""

from __future__ import annotations

import pytest

from talkthemes.cli._explain import explain_rows
from talkthemes.config import PrepareSettings
from talkthemes.prepare.chain import build_processor, prepare_corpus
from talkthemes.prepare.scrub import SCRUB_KINDS, scrub
from talkthemes.privacy import Masker, plain
from talkthemes.text.pii_national import (
    bsn_valid,
    codice_fiscale_valid,
    dni_nie_valid,
    iban_valid,
    nif_pt_valid,
    nir_valid,
    steuer_id_valid,
)


def _iban(country: str, bban: str) -> str:
    """An IBAN with its check digits computed (ISO 7064 MOD 97-10), grouped by four."""
    digits = "".join(str(int(c, 36)) for c in bban + country + "00")
    plain_iban = f"{country}{98 - int(digits) % 97:02d}{bban}"
    return " ".join(plain_iban[i : i + 4] for i in range(0, len(plain_iban), 4))


def _dni(number: int) -> str:
    return f"{number:08d}" + "TRWAGMYFPDXBNJZSQVHLCKE"[number % 23]


def _nie(prefix: str, seven: str) -> str:
    number = int(str("XYZ".index(prefix)) + seven)
    return prefix + seven + "TRWAGMYFPDXBNJZSQVHLCKE"[number % 23]


def _bsn(first8: str) -> str:
    total = sum(w * int(c) for w, c in zip(range(9, 1, -1), first8, strict=True))
    last = total % 11
    assert last < 10, "choose other digits: no ninth digit makes these 11-proof"
    return first8 + str(last)


def _nif(first8: str) -> str:
    r = sum(w * int(c) for w, c in zip(range(9, 1, -1), first8, strict=True)) % 11
    return first8 + str(0 if r < 2 else 11 - r)


def _nir(first13: str) -> str:
    return first13 + f"{97 - int(first13) % 97:02d}"


def _steuer(first10: str) -> str:
    product = 10
    for c in first10:
        total = (int(c) + product) % 10 or 10
        product = total * 2 % 11
    return first10 + str((11 - product) % 10)


def _wrong_last_digit(s: str) -> str:
    return s[:-1] + str((int(s[-1]) + 1) % 10)


def _kinds(text: str, lang: str | None) -> tuple[str, dict[str, int]]:
    counts: dict[str, int] = {}
    out, _ = scrub(text, counts, mark="_", lang=lang)
    return out, {k: v for k, v in counts.items() if v}


# -- the checks ------------------------------------------------------------------------------
def test_builders_agree_with_the_checks():
    assert iban_valid(_iban("ES", "21000418450200051332"))
    assert dni_nie_valid(_dni(48213976))
    assert bsn_valid(_bsn("27351847"))
    assert nif_pt_valid(_nif("25941736"))
    assert nir_valid(_nir("2840675123045"))
    assert steuer_id_valid(_steuer("4719382654"))


@pytest.mark.parametrize(
    ("check", "valid", "wrong"),
    [
        (iban_valid, _iban("NL", "ZYXW0417164300"), _iban("NL", "ZYXW0417164300")[:-1] + "1"),
        (dni_nie_valid, _dni(48213976), _dni(48213976)[:-1] + "A"),
        (dni_nie_valid, _nie("X", "1234567"), _nie("X", "1234567")[:-1] + "B"),
        (bsn_valid, _bsn("27351847"), _wrong_last_digit(_bsn("27351847"))),
        (nif_pt_valid, _nif("25941736"), _wrong_last_digit(_nif("25941736"))),
        (nir_valid, _nir("2840675123045"), _wrong_last_digit(_nir("2840675123045"))),
        (steuer_id_valid, _steuer("4719382654"), _wrong_last_digit(_steuer("4719382654"))),
        (codice_fiscale_valid, "RSSMRA85T10A562S", "RSSMRA85T10A562T"),
    ],
)
def test_valid_and_wrong_check(check, valid: str, wrong: str):
    assert check(valid)
    assert not check(wrong)


def test_shape_rules():
    assert not iban_valid(_iban("DE", "370400440532013000")[:-2])  # Germany: 22 characters
    assert not bsn_valid("000000000")
    assert not nif_pt_valid(_nif("41234567"))  # 4 only as 45…
    assert nif_pt_valid(_nif("45123456"))
    assert not steuer_id_valid(_steuer("0719382654"))  # no leading 0
    assert not steuer_id_valid(_steuer("1234567890"))  # every digit once
    assert not nir_valid(_nir("2841375123045"))  # month 13
    corsica = "2840" + "62A" + "123045"  # département 2A is read as 19
    key = 97 - int(corsica.replace("2A", "19")) % 97
    assert nir_valid(f"{corsica}{key:02d}")
    assert not codice_fiscale_valid("abcdefghijklmnop")  # letters only: never a word


# -- in the scrub step -----------------------------------------------------------------------
@pytest.mark.parametrize(
    ("lang", "id_text"),
    [
        ("es", _dni(48213976)),
        ("es", _dni(48213976)[:-1] + "-" + _dni(48213976)[-1]),
        ("es", _nie("Y", "0203040")),
        ("it", "RSSMRA85T10A562S"),
        ("nl", _bsn("27351847")),
        ("pt", _nif("25941736")),
        ("fr", _nir("2840675123045")),
        ("de", _steuer("4719382654")),
    ],
)
def test_valid_id_is_removed_wrong_check_is_not(lang: str, id_text: str):
    out, kinds = _kinds(f"mi número es {id_text} gracias", lang)
    assert out == "mi número es _ gracias"
    assert kinds == {"national_id": 1}
    # the same shape with a wrong check: not an id
    last = id_text[-1]
    if last.isdigit():
        wrong = _wrong_last_digit(id_text)
    else:
        wrong = id_text[:-1] + ("A" if last != "A" else "B")
    out, kinds = _kinds(f"pedido {wrong} listo", lang)
    assert "national_id" not in kinds
    if wrong.isdigit():  # a long run of digits is still removed (a number, or a phone
        # when it has the shape of one: 259417360 is a Portuguese landline)
        assert len(kinds) == 1 and set(kinds) <= {"number", "phone"}
        assert out == "pedido _ listo"
    elif wrong.isalnum():  # letters and digits in one word: left as it is
        assert (out, kinds) == (f"pedido {wrong} listo", {})


def test_digit_ids_are_read_in_their_own_language_only():
    bsn = _bsn("27351847")
    assert _kinds(bsn, "nl")[1] == {"national_id": 1}
    assert _kinds(bsn, "en")[1] == {"number": 1}
    assert _kinds(bsn, None)[1] == {"national_id": 1}  # no language given: every id
    # written with letters, the Spanish and Italian ids are read in every language
    assert _kinds(_dni(48213976), "en")[1] == {"national_id": 1}
    assert _kinds("RSSMRA85T10A562S", "de")[1] == {"national_id": 1}


def test_written_groupings():
    nir = _nir("2840675123045")
    spaced = f"{nir[0]} {nir[1:3]} {nir[3:5]} {nir[5:7]} {nir[7:10]} {nir[10:13]} {nir[13:]}"
    assert _kinds(f"numéro {spaced} merci", "fr") == ("numéro _ merci", {"national_id": 1})
    tax = _steuer("4719382654")
    spaced = f"{tax[:2]} {tax[2:5]} {tax[5:8]} {tax[8:]}"
    assert _kinds(f"IdNr {spaced} danke", "de") == ("IdNr _ danke", {"national_id": 1})


@pytest.mark.parametrize("lang", ["en", "es", None])
def test_iban_any_country(lang: str | None):
    for iban in (
        _iban("ES", "21000418450200051332"),
        _iban("NL", "ZYXW0417164300"),
        _iban("IT", "X0542811101000000123456"),
        _iban("PT", "000201231234567890154"),
    ):
        out, kinds = _kinds(f"la cuenta {iban} por favor", lang)
        assert (out, kinds) == ("la cuenta _ por favor", {"iban": 1}), iban
        glued = iban.replace(" ", "")
        assert _kinds(f"cuenta {glued}.", lang) == ("cuenta _.", {"iban": 1})
        assert _kinds(f"cuenta {glued.lower()} ok", lang) == ("cuenta _ ok", {"iban": 1})


def test_iban_with_a_wrong_check_is_not_an_iban():
    iban = _iban("ES", "21000418450200051332")
    wrong = iban[:2] + f"{(int(iban[2:4]) + 1) % 100:02d}" + iban[4:]
    out, kinds = _kinds(f"ref {wrong} gracias", "es")
    assert "iban" not in kinds
    assert out.startswith(f"ref {wrong[:4]} ")  # the letters stay; the digits are a number


def test_iban_followed_by_a_four_letter_word():
    iban = _iban("ES", "21000418450200051332")
    assert _kinds(f"{iban} para pagar", "es") == ("_ para pagar", {"iban": 1})


@pytest.mark.parametrize(
    ("lang", "text"),
    [
        ("es", "+34 612 34 56 78"),
        ("es", "0034 612 345 678"),
        ("es", "612345678"),
        ("es", "91 123 45 67"),
        ("de", "0171/1234567"),
        ("de", "030 / 123 456 78"),
        ("de", "+49 (0)30 1234567"),
        ("de", "030 12345678"),
        ("de", "01711234567"),
        ("fr", "06.12.34.56.78"),
        ("fr", "06 12 34 56 78"),
        ("fr", "+33 (0)6 12 34 56 78"),
        ("fr", "0612345678"),
        ("it", "333 123 4567"),
        ("it", "06/1234567"),
        ("it", "+39 333 123 4567"),
        ("it", "3331234567"),
        ("nl", "020-1234567"),
        ("nl", "+31 (0)20 123 4567"),
        ("nl", "0612345678"),
        ("pt", "912 345 678"),
        ("pt", "+351 912 345 678"),
        ("pt", "00351912345678"),
        ("pt", "912345678"),
    ],
)
def test_national_phone_formats(lang: str, text: str):
    assert _kinds(f"llame al {text}, gracias", lang) == ("llame al _, gracias", {"phone": 1})


@pytest.mark.parametrize(
    ("text", "left"),
    [
        ("el 12/05/2023 a las", "el 12/05/2023 a las"),  # a date is not a phone
        ("um 10.30 Uhr", "um 10.30 Uhr"),
        ("kostet 12.99 Euro", "kostet 12.99 Euro"),
    ],
)
def test_dates_and_prices_are_not_phones(text: str, left: str):
    out, kinds = _kinds(text, "de")
    assert out == left and kinds == {}


def test_explain_counts_each_kind():
    iban = _iban("ES", "21000418450200051332")
    turns = [
        ("customer", f"Mi cuenta es {iban} y mi DNI {_dni(48213976)}."),
        ("customer", "Llámeme al 612345678 por la factura del contrato."),
    ]
    filler = [("agent", "La factura del contrato y el recibo del pago llegan mañana.")]
    data = [(f"c{i}", turns + filler if i == 0 else filler * 3) for i in range(25)]
    settings = PrepareSettings(
        lang="es",
        vocab_min_docs=1,
        vocab_max_doc_share=1.0,
        boilerplate_min_share=0,
        min_tokens=1,
        n_process=1,
    )
    _, explain = prepare_corpus(lambda: [data], settings, min_terms=1)
    removed = explain["scrub"]["removed"]
    assert list(removed) == list(SCRUB_KINDS)
    assert (removed["iban"], removed["national_id"], removed["phone"]) == (1, 1, 1)
    row = next(r for r in explain_rows(explain) if r["step"] == "scrub")
    assert "iban 1" in row["details"] and "national_id 1" in row["details"]
    assert "phone 1" in row["details"]


def test_chain_passes_its_language_to_scrub():
    processor = build_processor(PrepareSettings(lang="nl", n_process=1))
    counts: dict[str, int] = {}
    processor.text([("customer", f"mijn bsn is {_bsn('27351847')}")], counts)
    assert counts == {"national_id": 1}


def test_screens_mask_the_same_kinds():
    iban = _iban("NL", "ZYXW0417164300")
    text = f"Mijn rekening is {iban} en mijn BSN {_bsn('27351847')}."
    assert plain(Masker(lang="nl").mask(text)) == (
        "Mijn rekening is [bank account] en mijn BSN [id number]."
    )
    shown = plain(Masker(lang="it").mask("Il codice è RSSMRA85T10A562S, grazie."))
    assert shown == "Il codice è [id number], grazie."
    # a wrong check letter: not an id (a reference code), shown as it is
    assert plain(Masker(lang="it").mask("codice RSSMRA85T10A562T")) == "codice RSSMRA85T10A562T"
