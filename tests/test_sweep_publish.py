"""Publishing: idempotent re-publish, a cell fitted without a sweep, spreadsheet-safe
exports."""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import pandas as pd
import pytest
from tests.external.bars import make_bars_corpus, pixel_names
from tests.support.preps import install_prep
from typer.testing import CliRunner

from talkthemes.cli._common import app
from talkthemes.config import render_settings, settings_from_dict
from talkthemes.errors import ConfigError
from talkthemes.sweep.run import run_sweep
from talkthemes.versions.load import load_version
from talkthemes.versions.publish import publish
from talkthemes.workspace import Workspace, atomic_write_text

runner = CliRunner()


@pytest.fixture
def bars(tmp_path_factory: pytest.TempPathFactory) -> Workspace:
    ws = Workspace(tmp_path_factory.mktemp("bars") / "ws")
    ws.init()
    _, _, texts = make_bars_corpus(300, seed=6)
    install_prep(ws, pixel_names(), texts)
    return ws


def _versions(ws: Workspace) -> list[int]:
    with ws.store() as store:
        return store.version_numbers()


def test_publish_without_a_sweep_fits_the_cell_with_progress(bars: Workspace) -> None:
    atomic_write_text(
        bars.settings_path, render_settings(settings_from_dict({"sweep": {"publish_seed": 3}}))
    )
    seen: list[tuple[int, int, str]] = []
    with bars.lock("publish"):
        result = publish(
            bars, k=10, family="nmf", progress=lambda d, t, w="": seen.append((d, t, w))
        )
    assert (result.status, result.version, result.sweep_id) == ("published", 1, None)
    assert (result.family, result.k, result.seed, result.cell) == ("nmf", 10, 3, "nmf-k010-s3")
    assert "fitted without a sweep" in result.message
    assert seen[0][:2] == (0, 5) and seen[-1][:2] == (5, 5)
    assert any("fitting nmf K=10 on 300 transcripts" in w for _, _, w in seen)
    v = load_version(bars)
    assert v.k == 10 and len(v.doc_ids) == 300
    assert v.info["fitted_without_sweep"] and v.info["cell"] == "nmf-k010-s3"
    # the same settings a sweep uses: the bars' ten topics are recovered as ten distinct bars
    assert len({tuple(sorted(v.top_terms(i, 5))) for i in range(v.k)}) == 10


def test_publish_without_a_sweep_refuses_k_the_prep_cannot_support(bars: Workspace) -> None:
    res = runner.invoke(app, ["publish", "--k", "40", "--family", "lda", "-w", str(bars.root)])
    assert res.exit_code == 2
    assert "K = 40 is more than the current prep supports: at most 25 themes" in res.stderr
    assert _versions(bars) == []
    res = runner.invoke(app, ["publish", "--k", "5", "--family", "plsa", "-w", str(bars.root)])
    assert res.exit_code == 2 and "--family 'plsa': expected lda or nmf" in res.stderr


def test_republishing_the_current_cell_changes_nothing_unless_forced(bars: Workspace) -> None:
    run_sweep(bars, k="8,10", families=["nmf"], seeds=2, workers=1)
    root = str(bars.root)
    first = runner.invoke(app, ["publish", "--k", "10", "--family", "nmf", "--json", "-w", root])
    assert first.exit_code == 0, first.stderr
    doc = json.loads(first.stdout)
    assert doc["status"] == "published" and doc["sweep_id"] is not None
    ids = load_version(bars).theme_ids
    files = sorted(p.name for p in (bars.versions_dir / "1").iterdir())

    again = runner.invoke(app, ["publish", "--k", "10", "--family", "nmf", "--json", "-w", root])
    assert again.exit_code == 0, again.stderr
    doc2 = json.loads(again.stdout)
    assert doc2["status"] == "already_current" and doc2["version"] == 1
    assert "already current" in doc2["message"] and "--force" in doc2["message"]
    text = runner.invoke(app, ["publish", "--cell", doc["cell"], "-w", root])
    assert text.exit_code == 0, text.stderr
    assert "Version 1 is already current" in text.stdout and "Nothing changed" in text.stdout
    assert _versions(bars) == [1] and load_version(bars).theme_ids == ids
    assert sorted(p.name for p in (bars.versions_dir / "1").iterdir()) == files

    forced = runner.invoke(
        app, ["publish", "--k", "10", "--family", "nmf", "--force", "--json", "-w", root]
    )
    assert forced.exit_code == 0, forced.stderr
    assert json.loads(forced.stdout)["status"] == "published"
    assert _versions(bars) == [1, 2]
    assert set(load_version(bars).theme_ids).isdisjoint(ids)  # a new version, new theme ids

    # a K the sweep does not hold is fitted directly, and is not "current"
    other = publish(bars, k=6, family="nmf")
    assert (other.status, other.version, other.sweep_id) == ("published", 3, None)


def test_publish_direct_fit_memory_is_checked(bars: Workspace) -> None:
    atomic_write_text(
        bars.settings_path,
        render_settings(settings_from_dict({"sweep": {"worker_memory_gb": 0.25}})),
    )
    with pytest.raises(ConfigError, match=r"worker_memory_gb = 0\.25 GiB"):
        publish(bars, k=5, family="lda")
    assert _versions(bars) == []


def test_csv_export_neutralises_formulas_parquet_keeps_them(
    bars: Workspace, tmp_path: Path
) -> None:
    """OWASP, "CSV Injection": a cell starting with =, +, -, @ is prefixed with a quote so a
    spreadsheet shows it as text."""
    with bars.lock("publish"):
        publish(bars, k=5, family="nmf")
    v = load_version(bars)
    hostile = '=HYPERLINK("http://example.invalid","x")'
    root = str(bars.root)
    assert runner.invoke(app, ["label", str(v.theme_ids[0]), hostile, "-w", root]).exit_code == 0
    minus = runner.invoke(app, ["label", "-w", root, "--", str(v.theme_ids[1]), "-1+2"])
    assert minus.exit_code == 0, minus.stderr
    out = tmp_path / "shares.csv"
    res = runner.invoke(app, ["export", "--out", str(out), "-w", root])
    assert res.exit_code == 0, res.stderr
    rows = list(csv.DictReader(io.StringIO(out.read_text(encoding="utf-8"))))
    labels = {r["lead_theme_label"] for r in rows}
    assert "'" + hostile in labels and "'-1+2" in labels
    assert not any(label.startswith(("=", "+", "-", "@")) for label in labels)
    shares = [float(r[f"share_{v.theme_ids[0]}"]) for r in rows]  # numbers stay numbers
    assert all(0 <= s <= 1 for s in shares)
    raw = tmp_path / "shares.parquet"
    assert runner.invoke(app, ["export", "--out", str(raw), "-w", root]).exit_code == 0
    assert hostile in set(pd.read_parquet(raw)["lead_theme_label"])
