"""A catch-all K on a planted corpus: the sweep stores each cell's largest lead share and the
recommendation sets that K aside, saying so (docs/methods.md, "The recommendation").

The planted corpus (the invented rail operator's line) has six reasons, one of them in ten
of every fifteen calls. At K = 3 that reason's theme leads about 60% of the calls, below
2.5/3 = 83%; at K = 6 it still leads over half of them, above both 2.5/6 = 42% and the
floor of 35% (the defaults): the K that would otherwise win on coherence is set aside as
a catch-all.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from typer.testing import CliRunner

from talkthemes.cli._common import app
from talkthemes.demo.harness import PlantedWorkspace, build_workspace
from talkthemes.demo.planted import PlantedSpec
from talkthemes.metrics.evenness import catch_all_threshold, is_catch_all, largest_lead_share
from talkthemes.models.factory import make_model
from talkthemes.sweep.split import split_rows, subsample_rows


@pytest.fixture(scope="module")
def planted(tmp_path_factory: pytest.TempPathFactory) -> PlantedWorkspace:
    spec = PlantedSpec(reasons=6, calls=300, seed=0, weights=(10, 1, 1, 1, 1, 1))
    return build_workspace(
        tmp_path_factory.mktemp("catch-all"), spec, settings={"prepare": {"n_process": 1}}
    )


def test_largest_lead_share_counts_lead_themes() -> None:
    theta = np.array([[0.6, 0.4, 0.0], [0.1, 0.8, 0.1], [0.5, 0.2, 0.3], [0.4, 0.4, 0.2]])
    assert largest_lead_share(theta) == pytest.approx(3 / 4)  # a tie goes to the first
    assert np.isnan(largest_lead_share(np.zeros((0, 3))))
    assert is_catch_all(0.43, 6, 2.5) and not is_catch_all(0.41, 6, 2.5)
    assert not is_catch_all(0.43, 6, 2.5, 0.45)  # the floor
    assert catch_all_threshold(10, 2.5, 0.35) == 0.35 and catch_all_threshold(4, 2.5, 0.35) == 0.625
    assert not is_catch_all(0.9, 6, 0) and not is_catch_all(float("nan"), 6, 2.5)


def test_sweep_sets_the_catch_all_k_aside(planted: PlantedWorkspace) -> None:
    root = str(planted.workspace.root)
    result = CliRunner().invoke(
        app, ["sweep", "--k", "3,6", "--family", "nmf", "--seeds", "2", "--json", "-w", root]
    )
    assert result.exit_code == 0, result.output
    doc = json.loads(result.output)
    cells = {c["cell"]: c for c in doc["cells"]}
    assert all(1 / c["k"] <= c["largest_lead_share"] <= 1 for c in cells.values())
    rec = doc["recommendations"]["nmf"]
    assert rec["catch_all"] == [6]
    assert rec["k"] == 3
    assert any(r.startswith("set aside as catch-all") and "K=6" in r for r in rec["reasons"])
    assert "no catch-all theme" in rec["rule"]
    assert any(r["k"] == 6 and r["why_not"].startswith("catch-all") for r in rec["runners_up"])

    # the stored share is the cell's own: refit the cell on its training rows and count
    corpus = planted.corpus
    settings = planted.workspace.settings().sweep
    train, _ = split_rows(corpus.doc_ids, settings.heldout_share)
    train = subsample_rows(train, settings.subsample, 1)
    model = make_model("nmf", 6, 1, settings).fit(corpus.counts.tocsr()[train])
    share = largest_lead_share(model.result_.doc_topics)
    assert cells["nmf-k006-s1"]["largest_lead_share"] == pytest.approx(share)
    assert share > 2.5 / 6


def test_the_check_can_be_turned_off(planted: PlantedWorkspace) -> None:
    ws = planted.workspace
    settings = ws.settings_path.read_text(encoding="utf-8")
    ws.settings_path.write_text(settings + "\n[sweep]\ncatch_all_ratio = 0\n", encoding="utf-8")
    try:
        result = CliRunner().invoke(
            app,
            ["sweep", "--k", "3,6", "--family", "nmf", "--seeds", "2", "--json",
             "-w", str(ws.root)],
        )  # fmt: skip
    finally:
        ws.settings_path.write_text(settings, encoding="utf-8")
    assert result.exit_code == 0, result.output
    rec = json.loads(result.output)["recommendations"]["nmf"]
    assert rec["catch_all"] == [] and rec["k"] == 6  # the more coherent K, unchecked
