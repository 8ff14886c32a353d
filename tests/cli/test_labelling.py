"""The labelling commands: suggested names in ``themes``, the spreadsheet round trip
(``themes --out`` / ``label --from``), merge, not a theme and the curation log."""

from __future__ import annotations

import csv
import json
from pathlib import Path

from typer.testing import CliRunner

from talkthemes import cli
from talkthemes.workspace import Workspace

runner = CliRunner()


def invoke(ws: Workspace, *args: str):
    return runner.invoke(cli.app, [*args, "-w", str(ws.root)])


def themes_json(ws: Workspace) -> dict:
    res = invoke(ws, "themes", "--json")
    assert res.exit_code == 0, res.stderr
    return json.loads(res.stdout)


def test_themes_show_suggested_names_until_labelled(published: Workspace) -> None:
    doc = themes_json(published)
    names = [t["suggested_name"] for t in doc["themes"]]
    assert len(set(names)) == len(names) == 3
    for t in doc["themes"]:
        assert t["name"] == t["suggested_name"] and t["labelled"] is False
        first = t["suggested_name"].split(" · ")[0].lower().replace(" ", "_")
        assert first in t["top_terms"][:12]  # built from its most relevant terms
    tid = doc["themes"][0]["theme_id"]
    assert invoke(published, "label", str(tid), "Meter readings").exit_code == 0
    doc = themes_json(published)
    assert doc["themes"][0]["name"] == "Meter readings" and doc["themes"][0]["labelled"]
    assert doc["themes"][0]["suggested_name"] == names[0]  # still there, for the record
    res = invoke(published, "themes")
    assert res.exit_code == 0
    assert "Meter readings" in res.stdout and f"{names[1]} *" in " ".join(res.stdout.split())
    assert "* suggested name, not labelled yet" in res.stdout


def _sheet(path: Path) -> list[list[str]]:
    with path.open(encoding="utf-8-sig", newline="") as fh:
        return list(csv.reader(fh))


def _write(path: Path, rows: list[list[str]]) -> None:
    with path.open("w", encoding="utf-8", newline="") as fh:
        csv.writer(fh).writerows(rows)


def test_the_spreadsheet_round_trip(published: Workspace, tmp_path: Path) -> None:
    out = tmp_path / "themes.csv"
    res = invoke(published, "themes", "--out", str(out))
    assert res.exit_code == 0, res.stderr
    assert "label --from" in res.stderr
    rows = _sheet(out)
    header = rows[0]
    assert header[:8] == [
        "theme_id", "suggested_name", "label", "note", "share", "coverage", "top_terms",
        "top_phrases",
    ]  # fmt: skip
    assert header[8:] == [f"evidence_{i}{s}" for i in (1, 2, 3) for s in ("", "_call")]
    ids = [int(r[0]) for r in rows[1:]]
    doc = themes_json(published)
    assert ids == [t["theme_id"] for t in doc["themes"]]
    assert [r[1] for r in rows[1:]] == [t["suggested_name"] for t in doc["themes"]]
    labels = ['Bills, "late" fees\nand refunds', "=SUM(A1:A9)", ""]
    for r, label in zip(rows[1:], labels, strict=True):
        r[2], r[3] = label, f"note for {r[0]}, with a comma"
    _write(out, rows)
    res = invoke(published, "label", "--from", str(out), "--json")
    assert res.exit_code == 0, res.stderr
    done = json.loads(res.stdout)
    assert done["applied"] is True and done["rows"] == 3 and len(done["changed"]) == 3
    got = {t["theme_id"]: (t["label"], t["note"]) for t in themes_json(published)["themes"]}
    assert got == {
        i: (lab, f"note for {i}, with a comma") for i, lab in zip(ids, labels, strict=True)
    }
    # written out again, read back again: nothing changes
    invoke(published, "themes", "--out", str(out))
    assert [r[2] for r in _sheet(out)[1:]][:2] == [labels[0], "'=SUM(A1:A9)"]  # defused
    res = invoke(published, "label", "--from", str(out), "--json")
    assert json.loads(res.stdout)["changed"] == [] and json.loads(res.stdout)["unchanged"] == 3
    with published.store() as store:
        log = store.curation_log()
    assert sum(e.action == "label" for e in log) == 2  # the blank label changed nothing


def test_a_sheet_with_problems_changes_nothing_and_names_each_row(
    published: Workspace, tmp_path: Path
) -> None:
    ids = [t["theme_id"] for t in themes_json(published)["themes"]]
    bad = tmp_path / "bad.csv"
    _write(
        bad,
        [
            ["theme_id", "label", "note"],
            [str(ids[0]), "fine", ""],
            ["999", "unknown", ""],
            [str(ids[0]), "twice", ""],
            ["x1", "not a number", ""],
        ],
    )
    with bad.open("ab") as fh:
        fh.write(f"{ids[1]},caf\xe9,\r\n".encode("latin-1"))
    res = invoke(published, "label", "--from", str(bad))
    assert res.exit_code == 2
    for row, why in [
        (3, "there is no theme 999"),
        (4, f"theme {ids[0]} is listed again (first on row 2)"),
        (5, "theme_id 'x1' is not a theme id"),
        (6, "column label is not UTF-8 text (byte 0xE9)"),
    ]:
        assert f"{bad} row {row}: {why}" in " ".join(res.stderr.split())
    assert "4 problem(s) found; nothing was applied" in res.stderr
    assert all(t["label"] == "" for t in themes_json(published)["themes"])  # not even row 2
    res = invoke(published, "label", "--from", str(bad), "--json")
    assert res.exit_code == 2 and len(json.loads(res.stdout)["problems"]) == 4
    res = invoke(published, "label", "--from", str(tmp_path / "missing.csv"))
    assert res.exit_code == 2 and "missing.csv: cannot read it" in res.stderr


def test_merge_not_a_theme_note_and_the_log(published: Workspace) -> None:
    a, b, c = (t["theme_id"] for t in themes_json(published)["themes"])
    res = invoke(published, "label", str(b), "--merge-into", str(a))
    assert res.exit_code == 0, res.stderr
    assert f"Theme {b} merged into theme {a}" in " ".join(res.stderr.split())
    doc = themes_json(published)
    assert doc["k"] == 2 and [t["theme_id"] for t in doc["themes"]] == [a, c]
    merged = doc["themes"][0]
    assert merged["merged"] == [b] and merged["coherence"]["c_npmi"] is None
    assert merged["mean_share"] > 0.5  # two of the three themes' shares, summed
    res = invoke(published, "label", str(b), "A label")
    assert res.exit_code == 2 and f"theme {b} is merged into theme {a}" in res.stderr
    assert (
        invoke(published, "label", str(c), "--not-a-theme", "--note", "hold music").exit_code == 0
    )
    doc = themes_json(published)
    assert doc["themes"][1]["not_a_theme"] is True and doc["themes"][1]["note"] == "hold music"
    assert invoke(published, "label", str(c), "--hide").exit_code == 0  # the same flag
    res = invoke(published, "label", str(b), "--unmerge")
    assert res.exit_code == 0 and themes_json(published)["k"] == 3
    res = invoke(published, "label", "--log", "--json")
    actions = [(e["action"], e["theme_id"]) for e in json.loads(res.stdout)["log"]]
    assert actions == [("unmerge", b), ("not_a_theme", c), ("note", c), ("merge", b)]
    res = invoke(published, "label", "--log", str(c))
    assert "marked not a theme" in res.stdout and "hold music" in res.stdout
    for args in (["label"], ["label", str(a), "--merge-into", str(a)], ["label", "7", "x"]):
        assert invoke(published, *args).exit_code == 2


def test_the_shares_export_carries_the_lead_themes_suggested_name(
    published: Workspace, tmp_path: Path
) -> None:
    names = {t["theme_id"]: t["suggested_name"] for t in themes_json(published)["themes"]}
    out = tmp_path / "shares.csv"
    assert invoke(published, "export", "--out", str(out)).exit_code == 0
    with out.open(encoding="utf-8", newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert rows and all(
        r["lead_theme_suggested_name"] == names[int(r["lead_theme_id"])] for r in rows
    )


def test_export_names_its_share_columns_in_a_file_beside(
    published: Workspace, tmp_path: Path
) -> None:
    doc = themes_json(published)
    names = {t["theme_id"]: t["name"] for t in doc["themes"]}
    out = tmp_path / "shares.csv"
    res = invoke(published, "export", "--out", str(out), "--json")
    assert res.exit_code == 0, res.stderr
    companion = tmp_path / "shares.themes.csv"
    assert json.loads(res.stdout)["themes_file"] == str(companion)
    with out.open(encoding="utf-8", newline="") as fh:
        header = next(csv.reader(fh))
    share_cols = [c for c in header if c.startswith("share_")]
    assert share_cols == [f"share_{t}" for t in sorted(names)]  # ascending theme id
    with companion.open(encoding="utf-8", newline="") as fh:
        themes = list(csv.DictReader(fh))
    assert [t["column"] for t in themes] == share_cols
    assert all(t["name"] == names[int(t["theme_id"])] for t in themes)
    assert {t["named_by"] for t in themes} == {"suggested"}
    res = invoke(published, "export", "--out", str(out))
    assert "shares.themes.csv" in res.stderr.replace("\n", "")  # messages go to stderr
    # a metadata field no transcript has is refused by name (exit 2), nothing written over
    before = out.read_bytes()
    res = invoke(published, "export", "--out", str(out), "--metadata", "agent")
    assert res.exit_code == 2 and "'agent'" in res.stderr and out.read_bytes() == before
    assert invoke(published, "export", "--out", str(out), "--metadata", " , ").exit_code == 2
