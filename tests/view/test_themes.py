"""The theme table and the themes' names (labels read fresh, three top terms until labelled)."""

from __future__ import annotations

import dataclasses
import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from tests.view.data import SHARES, make_version

from talkthemes.charts.terms import term_chart
from talkthemes.versions.load import Version
from talkthemes.view.theme_map import theme_layout
from talkthemes.view.themes import shown_terms, theme_names, theme_table, with_names


def test_theme_table_and_names(version: Version) -> None:
    layout = theme_layout(version.topic_terms)
    table = theme_table(version, layout, lam=1.0)
    assert list(table["theme_id"]) == [11, 12, 13]
    assert table["coverage"].tolist() == pytest.approx([3 / 6, 2 / 6, 1 / 6])
    assert table["mean_share"].tolist() == pytest.approx(SHARES.mean(axis=0).tolist())
    assert table["name"][0] == "Bills"
    assert table["name"][1] == "Power · outage"  # the suggested name until labelled
    assert table["top_terms"][1].startswith("power, outage")
    assert theme_names(version) == list(table["name"])
    version.themes[1] = dataclasses.replace(version.themes[1], label="Power cuts")
    assert theme_names(version)[1] == "Power cuts"  # labels are read each time


def test_with_names_refreshes_labels_and_hidden(version: Version) -> None:
    frame = pd.DataFrame({"theme_id": [13, 11], "name": ["old", "old"], "share": [0.1, 0.2]})
    version.themes[2] = dataclasses.replace(version.themes[2], hidden=True)
    out = with_names(frame, version)
    assert list(out["name"]) == [theme_names(version)[2], "Bills"]
    assert list(out["hidden"]) == [True, False]


def test_first_name_terms_hidden_unless_the_prep_kept_them_as_words(tmp_path: Path) -> None:
    # "jasper" and "amber" are in the first-name list and are not everyday words
    vocabulary = ["jasper", "amber", "router", "reset", "signal", "cable"]
    topic_terms = np.array([[0.4, 0.3, 0.15, 0.1, 0.03, 0.02]])
    version = make_version(np.ones((2, 1)), topic_terms=topic_terms, vocabulary=vocabulary)
    version.folder = tmp_path
    assert shown_terms(version, 0, 3) == ["router", "reset", "signal"]  # no prep.json
    assert theme_names(version) == ["Router · reset"]  # the suggested name leaves them out too
    prep = {
        "settings": {"not_names": ["Jasper"]},  # a product that shares a first name
        "names": {"in_use": ["amber"], "named": []},  # the corpus uses it as a word
    }
    (tmp_path / "prep.json").write_text(json.dumps(prep), encoding="utf-8")
    fresh = make_version(np.ones((2, 1)), topic_terms=topic_terms, vocabulary=vocabulary)
    fresh.folder = tmp_path
    assert shown_terms(fresh, 0, 3) == ["jasper", "amber", "router"]
    assert theme_names(fresh) == ["Jasper · amber"]  # words the prep kept may name it


def test_a_sparse_nmf_theme_lists_only_the_words_it_weighs_and_its_chart_draws() -> None:
    """An NMF theme with two nonzero words once gave the report zero weights on a log axis."""
    phi = np.zeros((3, 6))
    phi[0, [0, 1]] = [0.7, 0.3]
    phi[1, 2:] = 0.25
    phi[2, :] = 1 / 6
    version = make_version(SHARES, topic_terms=phi)
    table = version.term_table(0, n=15)
    assert table["term"].tolist() == ["bill", "pay"] and (table["weight"] > 0).all()
    spec = term_chart(table, "bill · pay").to_dict()
    assert spec["layer"]  # drawn, no InputError about non-positive weights
