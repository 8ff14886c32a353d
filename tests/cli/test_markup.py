"""Text from users and inputs is printed literally: never read as terminal markup.

Labels, notes, metadata values, file names and reject reasons reach the terminal through
``themes``, ``status``, ``label``, the ingest summary and ``export``. Whatever they hold —
``[red]``, ``[/x]``, ``[link=…]``, escape sequences, emoji codes — the command exits as it
would for plain text, and the text appears as it is (control characters shown as ``?``).
"""

from __future__ import annotations

import csv
import io
import itertools
import json
from pathlib import Path

import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st
from rich.color import ColorSystem
from rich.console import Console
from typer.testing import CliRunner

from talkthemes.cli import _common
from talkthemes.cli._common import app, line
from talkthemes.cli._shared import ThemesTable
from talkthemes.config import render_settings
from talkthemes.text import terminal_text
from talkthemes.workspace import Workspace, atomic_write_text

from .conftest import copy_workspace

runner = CliRunner()
WIDE = {"COLUMNS": "1000"}  # wide enough that no table wraps a cell

HOSTILE = (
    "[red]changed colour[/red]",
    "[/x]",
    "[ingest] max_file_mb",
    "[link=https://example.org/x]click me[/link]",
    "[bold]never closed",
    "\x1b[31mescape sequence\x1b[0m\x07",
    ":warning: :thumbs_up:",
    "ends with a backslash\\",
    "back\\[red]slash",
    "=HYPERLINK(1)",
    "[/]",
)
# Any text on one line (a newline would split it over two lines of a table).
ONE_LINE = st.characters(exclude_categories=("Cs",), exclude_characters="\n")
user_text = st.text(ONE_LINE, min_size=1, max_size=40)
file_names = st.text(
    st.characters(exclude_categories=("Cs",), exclude_characters="\n/\x00"),
    min_size=1,
    max_size=30,
).filter(lambda s: s not in (".", "..") and len(s.encode()) < 200)


def flat(text: str) -> str:
    """Whitespace runs as one space: tables pad cells and expand tabs."""
    return " ".join(text.split())


def shown(value: str) -> str:
    """How ``value`` looks on the terminal: control characters as ``?``."""
    return flat(terminal_text(value))


def invoke(*args: str) -> tuple[int, str, str]:
    res = runner.invoke(app, list(args), env=WIDE)
    return res.exit_code, res.stdout, res.stderr


def test_label_note_themes_and_export_show_any_text(
    published_root: Path, tmp_path_factory: pytest.TempPathFactory
) -> None:
    ws = copy_workspace(published_root, tmp_path_factory.mktemp("labels") / "ws")
    w = str(ws.root)
    theme = json.loads(invoke("themes", "--json", "-w", w)[1])["themes"][0]["theme_id"]
    out_csv = ws.root.parent / "shares.csv"

    @settings(max_examples=40, deadline=None)
    @given(text=user_text)
    @example(text=HOSTILE[0])
    @example(text="  ".join(HOSTILE))
    def check(text: str) -> None:
        code, _, err = invoke("label", "-w", w, "--note", text, "--", str(theme), text)
        assert code == 0, err
        assert shown(text) in flat(err)

        code, out, err = invoke("themes", "--json", "-w", w)
        assert code == 0, err
        name = json.loads(out)["themes"][0]["name"]
        code, out, err = invoke("themes", "-w", w)
        assert code == 0, err
        assert shown(name) in flat(out)

        code, _, err = invoke("export", "--out", str(out_csv), "-w", w)
        assert code == 0, err
        with out_csv.open(newline="", encoding="utf-8") as fh:
            rows = [r for r in csv.DictReader(fh) if r["lead_theme_id"] == str(theme)]
        assert rows
        # the label as stored (a CR too: RFC 4180 line ends), or with the quote that keeps
        # a spreadsheet from reading it as a formula
        assert {r["lead_theme_label"] for r in rows} <= {text, "'" + text}

    check()


def test_export_keeps_a_carriage_return_inside_a_label(published: Workspace) -> None:
    w = str(published.root)
    assert invoke("label", "-w", w, "1", "before\rafter")[0] == 0
    out_csv = published.root.parent / "shares.csv"
    assert invoke("export", "--out", str(out_csv), "-w", w)[0] == 0
    with out_csv.open(newline="", encoding="utf-8") as fh:
        labels = {r["lead_theme_label"] for r in csv.DictReader(fh) if r["lead_theme_id"] == "1"}
    assert labels == {"before\rafter"}


def test_metadata_values_and_file_names_in_ingest_and_status(tmp_path: Path) -> None:
    counter = itertools.count()

    @settings(max_examples=25, deadline=None)
    @given(name=file_names, value=user_text)
    @example(name="[red]call", value="[link=https://example.org]x[/link]")
    @example(name="[bold]x [ingest] :warning:", value="[/x]")
    def check(name: str, value: str) -> None:
        base = tmp_path / f"case{next(counter)}"
        (base / "good").mkdir(parents=True)
        (base / "bad").mkdir()
        good = base / "good" / f"{name}.txt"
        good.write_text("Agent: Hello there.\nCustomer: My meter reading is wrong.\n", "utf-8")
        bad = base / "bad" / f"{name}.txt"
        bad.write_text("   \n", encoding="utf-8")  # empty: rejected, named in the summary
        manifest = base / "manifest.csv"
        with manifest.open("w", newline="", encoding="utf-8") as fh:
            csv.writer(fh).writerows([["call_id", "queue"], [good.stem, value]])
        w = str(base / "ws")

        code, out, err = invoke(
            "ingest", str(good), str(bad), "-m", str(manifest), "-w", w, "--create"
        )
        assert code == 3, out + err  # the empty file is rejected, the other one kept
        assert "rejected" in err and shown(str(bad)) in flat(err)
        assert "Traceback" not in out + err

        code, out, err = invoke("status", "--json", "-w", w)
        assert code == 0, err
        data = json.loads(out)
        assert data["transcripts"] == 1
        code, out, err = invoke("status", "-w", w)
        assert code == 0, err
        for stored in data["metadata_fields"].get("queue", {}).get("top", {}):
            for part in stored.split("\n"):  # a stored line break splits the table cell
                assert shown(part) in flat(out)

    check()


def test_reject_reasons_keep_their_brackets(tmp_path: Path) -> None:
    calls = tmp_path / "calls"
    calls.mkdir()
    (calls / "c1.txt").write_text("Agent: Hello.\nCustomer: The bill is wrong.\n", "utf-8")
    (tmp_path / "elsewhere.txt").write_text("Agent: Hi.\nCustomer: Moving house.\n", "utf-8")
    (calls / "link.txt").symlink_to(tmp_path / "elsewhere.txt")
    ws = Workspace(tmp_path / "ws")
    ws.init()
    settings_ = ws.settings()
    settings_.ingest.follow_symlinks = False
    atomic_write_text(ws.settings_path, render_settings(settings_))
    code, _, err = invoke("ingest", str(calls), "-w", str(ws.root))
    assert code == 0, err
    assert "symbolic link not followed (setting [ingest] follow_symlinks)" in err


def test_hostile_labels_change_no_colour_and_make_no_link_on_a_terminal(
    published: Workspace, monkeypatch: pytest.MonkeyPatch
) -> None:
    """On a colour terminal the label's markup would be escape codes; it must stay text."""
    for console in (_common.out, _common.err):
        monkeypatch.setattr(console, "_force_terminal", True)
        monkeypatch.setattr(console, "_color_system", ColorSystem.TRUECOLOR)
    w = str(published.root)
    label = "[red]x[/red] [link=https://example.org]y[/link] [bold]z"
    code, out, err = invoke("label", "-w", w, "--", "1", label)
    assert code == 0
    code, out, _ = invoke("themes", "-w", w)
    assert code == 0
    for text in (out, err):
        assert "\x1b]8;" not in text  # no terminal hyperlink
        assert "\x1b[31m" not in text  # no red
    assert label in out and label in err  # contiguous: no tag became a style


@pytest.mark.parametrize("text", HOSTILE)
def test_line_and_tables_render_literally(text: str) -> None:
    console = Console(file=io.StringIO(), width=200, force_terminal=True, color_system="truecolor")
    theme = {
        "theme_id": 1,
        "name": text,
        "hidden": False,
        "coverage": 0.5,
        "mean_share": 0.25,
        "coherence": {"c_npmi": 0.1},
        "top_terms": [text, "meter"],
    }
    console.print(line(("rejected", "red"), ": ", text))
    console.print(ThemesTable([theme]))
    plain = Console(file=io.StringIO(), width=200)
    plain.print(line(("rejected", "red"), ": ", text))
    plain.print(ThemesTable([theme]))
    result = plain.file.getvalue()  # type: ignore[attr-defined]
    assert flat(f"rejected: {terminal_text(text)}") in flat(result)
    assert result.count(flat(terminal_text(text))) >= 1
    coloured = console.file.getvalue()  # type: ignore[attr-defined]
    assert "\x1b]8;" not in coloured
    # after our red "rejected" and its reset, the rest of the line carries no escape code
    rest = coloured.split("rejected", 1)[1].split("\n")[0].replace("\x1b[0m", "", 1)
    assert "\x1b" not in rest
