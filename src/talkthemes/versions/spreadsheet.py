"""The themes spreadsheet: ``themes --out themes.csv`` and ``label --from themes.csv``.

Labelling in a spreadsheet is a round trip: the CSV lists every theme of a version with
what a labeller needs (id, suggested name, label, note, share, coverage, top terms, top
phrases and three evidence sentences with their calls), then, when the version has one,
a last row for the **unthemed** group (``theme_id`` ``unthemed``, its count and reasons in
``note``; :mod:`talkthemes.versions.unthemed`); the labeller fills the ``label`` and
``note`` columns; reading it back sets those two fields of every theme listed, all in one
transaction or not at all. The unthemed row is not a theme: it is skipped on the way
back, and a label written on it is refused.

The file is CSV as RFC 4180 writes it (fields with commas, quotes or line breaks quoted,
quotes doubled, records ending in CRLF), in UTF-8 with a byte-order mark so that
spreadsheet programs read it as UTF-8. Every text cell that a spreadsheet would run as a
formula (``=``, ``+``, ``-``, ``@``, tab, carriage return at the start) gets a leading
``'`` (:func:`talkthemes.text.csv_frame`), and so does a text that already starts with
``'`` followed by one of those characters or another ``'``; reading strips exactly that
one ``'`` again, so every label comes back as it was written.

Reading checks every row before anything is applied and reports each problem with the
file and the row (the header is row 1, as a spreadsheet numbers it): a cell that is not
UTF-8, a theme id that is not a number or not a theme of the version, a theme listed
twice, more cells than the header names.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from talkthemes.errors import InputError
from talkthemes.text import csv_frame
from talkthemes.text.escape import FORMULA_START
from talkthemes.versions.evidence import EvidenceSentence
from talkthemes.versions.load import Version
from talkthemes.versions.unthemed import UNTHEMED, unthemed_group

__all__ = [
    "EVIDENCE_COLUMNS",
    "READ_COLUMNS",
    "LabelRow",
    "SheetProblem",
    "read_label_sheet",
    "sheet_bytes",
    "themes_sheet",
]

#: Evidence sentences per theme in the sheet.
EVIDENCE_COLUMNS = 3
#: The columns read back (besides ``theme_id``).
READ_COLUMNS = ("label", "note")
_BOM = b"\xef\xbb\xbf"
_GUARDED = (*FORMULA_START, "'")


def _guard(value: object) -> object:
    """A text that would lose its leading ``'`` on the way back gets one more."""
    if isinstance(value, str) and value.startswith("'") and value[1:].startswith(_GUARDED):
        return "'" + value
    return value


def _unguard(cell: str) -> str:
    """Undo the one ``'`` the writer put before a formula start or another ``'``."""
    if cell.startswith("'") and cell[1:].startswith(_GUARDED):
        return cell[1:]
    return cell


def themes_sheet(
    version: Version,
    *,
    lam: float = 0.6,
    n_terms: int = 10,
    evidence: Sequence[Sequence[EvidenceSentence]] | None = None,
) -> pd.DataFrame:
    """One row per theme of a version, as ``themes --out`` writes it.

    Columns: ``theme_id, suggested_name, label, note, share`` (average share per
    transcript), ``coverage`` (share of transcripts it leads), ``top_terms`` (``n_terms``
    by relevance at ``lam``), ``top_phrases`` (the five most relevant phrases), then
    ``evidence_1, evidence_1_call`` … up to :data:`EVIDENCE_COLUMNS`: the sentences of
    ``evidence`` (per theme row, as shown: personal data masked,
    :func:`talkthemes.versions.evidence_shown.shown_evidence`), or else as stored.

    When the version has an unthemed group, a last row says so: ``theme_id`` and
    ``suggested_name`` ``unthemed``, ``note`` its sentence (count, share of the version's
    transcripts, reasons), the other cells empty.
    """
    suggested = version.suggested_names()
    cov, mean = version.coverage(), version.mean_share()
    rows = []
    for i, t in enumerate(version.themes):
        ranked = version.term_table(i, n=200, lam=lam)["term"].tolist()
        phrases = [w for w in ranked if "_" in w][:5]
        row: dict[str, object] = {
            "theme_id": t.theme_id,
            "suggested_name": suggested[i],
            "label": t.label,
            "note": t.note,
            "share": round(float(mean[i]), 4),
            "coverage": round(float(cov[i]), 4),
            "top_terms": ", ".join(w.replace("_", " ") for w in ranked[:n_terms]),
            "top_phrases": ", ".join(w.replace("_", " ") for w in phrases),
        }
        said = version.evidence(i) if evidence is None else evidence[i]
        for e in range(EVIDENCE_COLUMNS):
            row[f"evidence_{e + 1}"] = said[e].text if e < len(said) else ""
            row[f"evidence_{e + 1}_call"] = said[e].call_id if e < len(said) else ""
        rows.append(row)
    group = unthemed_group(version.folder, version.doc_ids)
    if group.count and rows:
        last = dict.fromkeys(rows[0], "")
        last.update(
            theme_id=UNTHEMED, suggested_name=UNTHEMED, note=group.sentence(), share=None,
            coverage=None,
        )  # fmt: skip
        rows.append(last)
    return pd.DataFrame(rows)


def sheet_bytes(frame: pd.DataFrame) -> bytes:
    """The sheet as CSV bytes (RFC 4180, UTF-8 with a byte-order mark, formulas defused)."""
    guarded = frame.copy()
    for col in guarded.columns:
        if guarded[col].dtype == object or pd.api.types.is_string_dtype(guarded[col].dtype):
            guarded[col] = guarded[col].map(_guard)
    text = csv_frame(guarded).to_csv(index=False, lineterminator="\r\n")
    return _BOM + text.encode("utf-8")


@dataclass(frozen=True)
class LabelRow:
    """One theme's label and note read from a sheet (None: the column is not in the file)."""

    row: int
    theme_id: int
    label: str | None
    note: str | None


@dataclass(frozen=True)
class SheetProblem:
    """A problem with a sheet: the row (1 = the header; None for the whole file) and why."""

    row: int | None
    message: str

    def line(self, path: Path | str) -> str:
        """``themes.csv row 4: …`` (or ``themes.csv: …``)."""
        where = f"{path}" if self.row is None else f"{path} row {self.row}"
        return f"{where}: {self.message}"


def _bad_bytes(cell: str) -> str | None:
    """The first byte that was not UTF-8 in a cell decoded with ``surrogateescape``."""
    for ch in cell:
        if "\udc80" <= ch <= "\udcff":
            return f"0x{ord(ch) - 0xDC00:02X}"
    return None


def read_label_sheet(
    path: Path,
    shown_ids: Sequence[int],
    merged_into: Mapping[int, int] | None = None,
    *,
    version: int | None = None,
) -> tuple[list[LabelRow], list[SheetProblem]]:
    """Read the labels and notes of a themes sheet, checking every row.

    Parameters
    ----------
    path : Path
        The CSV file.
    shown_ids : sequence of int
        The theme ids of the version being labelled (merged themes as one).
    merged_into : mapping of int to int, optional
        ``theme_id → the id it is shown as`` for themes merged into another.
    version : int, optional
        The version's number, for messages.

    Returns
    -------
    rows : list of LabelRow
        The rows read (only meaningful when there is no problem).
    problems : list of SheetProblem
        Every problem found; apply nothing unless it is empty.

    Raises
    ------
    InputError
        When the file cannot be read at all.
    """
    try:
        data = Path(path).read_bytes()
    except OSError as exc:
        raise InputError(f"{path}: cannot read it: {exc.strerror or exc}") from None
    if data.startswith(_BOM):
        data = data[len(_BOM) :]
    text = data.decode("utf-8", errors="surrogateescape")
    try:
        records = list(csv.reader(io.StringIO(text, newline=""), strict=True))
    except csv.Error as exc:
        return [], [SheetProblem(None, f"not a CSV file: {exc}")]
    problems: list[SheetProblem] = []
    if not records or not any(c.strip() for c in records[0]):
        return [], [SheetProblem(None, "empty: expected a header row with theme_id, label, note")]
    header = [h.strip().lstrip("\ufeff") for h in records[0]]
    if any(_bad_bytes(h) for h in header):
        return [], [SheetProblem(1, "the header is not UTF-8 text; save the file as CSV UTF-8")]
    index = {h: i for i, h in reversed(list(enumerate(header)))}
    twice = sorted({h for h in header if h and header.count(h) > 1})
    if twice:
        problems.append(SheetProblem(1, "column(s) named twice: " + ", ".join(twice)))
    read = [c for c in READ_COLUMNS if c in index]
    if "theme_id" not in index or not read:
        need = ["theme_id"] if "theme_id" not in index else []
        need += [] if read else ["label or note"]
        has = ", ".join(h for h in header if h) or "nothing"
        missing = " and no ".join(need)
        problems.append(SheetProblem(1, f"no {missing} column (the header has: {has})"))
        return [], problems
    shown = {int(t) for t in shown_ids}
    merged_into = dict(merged_into or {})
    first_row: dict[int, int] = {}
    rows: list[LabelRow] = []
    for number, record in enumerate(records[1:], start=2):
        if not any(c.strip() for c in record):
            continue  # spreadsheets keep empty rows at the end
        bad = [
            (header[i] if i < len(header) else f"cell {i + 1}", b)
            for i, c in enumerate(record)
            if (b := _bad_bytes(c))
        ]
        if bad:
            column, byte = bad[0]
            problems.append(
                SheetProblem(
                    number,
                    f"column {column} is not UTF-8 text (byte {byte}); save the file as "
                    "CSV UTF-8 and try again",
                )
            )
            continue
        extra = [c for c in record[len(header) :] if c.strip()]
        if extra:
            problems.append(
                SheetProblem(number, f"{len(record)} cells, but the header names {len(header)}")
            )
            continue

        def cell(name: str, record: list[str] = record) -> str | None:
            i = index.get(name)
            if i is None:
                return None
            return _unguard(record[i]) if i < len(record) else ""

        raw_id = (cell("theme_id") or "").strip()
        if raw_id == UNTHEMED:
            if (cell("label") or "").strip():
                problems.append(
                    SheetProblem(
                        number,
                        "the unthemed row is not a theme (transcripts the preparation left "
                        "out): it takes no label; leave its label cell empty",
                    )
                )
            continue
        try:
            number_id = float(raw_id)
            if not number_id.is_integer():
                raise ValueError
            theme_id = int(number_id)
        except ValueError:
            problems.append(SheetProblem(number, f"theme_id {raw_id!r} is not a theme id"))
            continue
        if theme_id in first_row:
            problems.append(
                SheetProblem(
                    number, f"theme {theme_id} is listed again (first on row {first_row[theme_id]})"
                )
            )
            continue
        first_row[theme_id] = number
        if theme_id not in shown:
            if theme_id in merged_into:
                why = (
                    f"theme {theme_id} is merged into theme {merged_into[theme_id]}: give "
                    f"the label on theme {merged_into[theme_id]}'s row"
                )
            else:
                where = f"version {version}" if version is not None else "the version"
                why = f"there is no theme {theme_id} in {where} (see 'talkthemes themes')"
            problems.append(SheetProblem(number, why))
            continue
        rows.append(LabelRow(number, theme_id, cell("label"), cell("note")))
    return rows, problems
