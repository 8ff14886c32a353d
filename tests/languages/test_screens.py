"""The screens with several languages: the viewer's language picker and the reports."""

from __future__ import annotations

from pathlib import Path

import pytest
from streamlit.testing.v1 import AppTest
from tests.viewer.test_app import open_app
from typer.testing import CliRunner

from talkthemes.app import _shared
from talkthemes.cli import app

from .conftest import Mixed


def _sidebar_text(at: AppTest) -> str:
    return "\n".join(str(m.value) for m in at.sidebar.markdown)


def test_the_language_picker_switches_every_section_to_that_language(
    published: Mixed, monkeypatch: pytest.MonkeyPatch
) -> None:
    at = open_app(published.root, monkeypatch)
    pickers = [s for s in at.sidebar.selectbox if s.label == "Language"]
    assert len(pickers) == 1 and list(pickers[0].options) == ["en", "es"]
    assert "K = 6" in _sidebar_text(at)  # the English version
    pickers[0].select("es").run()
    assert not at.exception, [e.value for e in at.exception]
    assert at.session_state[_shared.LANGUAGE] == "es"
    assert "K = 3" in _sidebar_text(at)  # the Spanish version
    at.switch_page("theme_cards.py").run()  # the choice holds in another section
    assert not at.exception, [e.value for e in at.exception]
    assert "K = 3" in _sidebar_text(at)
    assert str(published.root / "languages" / "es") in [c.value for c in at.sidebar.code]


def test_no_language_picker_with_one_language(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, ingested: Mixed
) -> None:
    import talkthemes as tt

    ws = tt.Workspace.create(tmp_path / "one")
    ws.ingest([ingested.sources / "en"])
    at = open_app(ws.root, monkeypatch)
    assert not [s for s in at.sidebar.selectbox if s.label == "Language"]


def test_report_writes_one_file_per_language(published: Mixed, tmp_path: Path) -> None:
    out = tmp_path / "themes.html"
    result = CliRunner().invoke(app, ["report", "--out", str(out), "-w", str(published.root)])
    assert result.exit_code == 0, result.output
    spanish = tmp_path / "themes.es.html"
    assert out.is_file() and spanish.is_file()
    page = spanish.read_text("utf-8")
    assert "K = 3" in page or "K=3" in page
    assert "(es)" in result.output


def test_the_service_answers_each_call_in_its_languages_themes(published: Mixed) -> None:
    from tests.service.conftest import start

    import talkthemes as tt

    ws = tt.Workspace.open(published.root)
    spanish = (sorted((published.sources / "es").glob("*.txt"))[0]).read_text("utf-8")
    english = sorted((published.sources / "en").rglob("*.txt"))[0].read_text("utf-8")
    service = next(start(ws))
    res = service.post("/v1/assign", json={"items": [{"text": english}, {"text": spanish}]})
    assert res.status_code == 200, res.text
    en, es = res.json()["results"]
    assert (en["language"], es["language"]) == ("en", "es")
    es_version = ws.language("es").version()
    assert es["lead_theme_id"] in es_version.theme_ids and len(es["shares"]) == 3
    assert es["language_version"] == es_version.n
    names = dict(zip(es_version.theme_ids, es_version.suggested_names(), strict=True))
    assert es["lead_theme_name"] == names[es["lead_theme_id"]]
    assert len(en["shares"]) == 6
