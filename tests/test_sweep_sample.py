"""The sweep's stratified sample: allocation, strata, determinism, the disjoint second
sample, its size rules and its place in the grid key (docs/methods.md, "Sweeping a sample")."""

from __future__ import annotations

import numpy as np
import pytest

from talkthemes.config import SweepSettings
from talkthemes.errors import ConfigError
from talkthemes.sweep.grid import build_cells, grid_key
from talkthemes.sweep.sample import (
    allocate,
    draw_sample,
    sample_size,
    strata_labels,
    stratified_rows,
)
from talkthemes.sweep.sample_check import check_cells, check_summary, describe_sample


def test_allocation_is_proportional_within_rounding_and_adds_up() -> None:
    sizes = np.array([5000, 3000, 1500, 400, 77, 23])
    for n in (1, 10, 99, 1000, 4321, 9999):
        alloc = allocate(sizes, n)
        assert alloc.sum() == n
        quota = n * sizes / sizes.sum()
        assert np.all(np.abs(alloc - quota) < 1), (n, alloc, quota)
        assert np.all(alloc <= sizes)
    assert allocate([50, 30, 20], 10).tolist() == [5, 3, 2]
    assert allocate([5, 5, 5], 4).tolist() == [2, 1, 1]  # ties: the earlier stratum
    with pytest.raises(ValueError, match="between 0 and 15"):
        allocate([5, 5, 5], 16)


def _labels(n: int, seed: int = 1) -> np.ndarray:
    rng = np.random.default_rng(seed)
    months = rng.choice(["2026-01", "2026-02", "2026-03"], size=n, p=[0.5, 0.3, 0.2])
    queue = rng.choice(["billing", "tech", "moves"], size=n, p=[0.6, 0.3, 0.1])
    return np.array([f"{m}|queue={q}" for m, q in zip(months, queue, strict=True)], dtype=object)


def test_each_stratum_gets_its_share_and_samples_are_disjoint_and_seeded() -> None:
    labels = _labels(20_000)
    a, b = stratified_rows(labels, 2_000, seed=7)
    assert len(a) == 2_000 and len(b) == 2_000
    assert len(np.intersect1d(a, b)) == 0
    assert np.all(np.diff(a) > 0) and np.all(np.diff(b) > 0)
    strata, sizes = np.unique(labels, return_counts=True)
    for stratum, size in zip(strata, sizes, strict=True):
        quota = 2_000 * size / len(labels)
        assert abs(np.sum(labels[a] == stratum) - quota) < 1, stratum
        assert abs(np.sum(labels[b] == stratum) - quota) < 1, stratum
    again = stratified_rows(labels, 2_000, seed=7)
    assert np.array_equal(again[0], a) and np.array_equal(again[1], b)
    other = stratified_rows(labels, 2_000, seed=8)[0]
    assert not np.array_equal(other, a)
    # a random sample, not the first rows of each stratum
    assert a.max() > 15_000 and a.min() < 1_000


def test_second_sample_is_smaller_when_strata_run_out() -> None:
    labels = np.array(["x"] * 10 + ["y"] * 4, dtype=object)
    a, b = stratified_rows(labels, 10, seed=0)
    assert len(a) == 10 and len(np.intersect1d(a, b)) == 0
    # A: x 7 of 10, y 3 of 4; B takes what is left, up to the same numbers: x 3, y 1
    assert sorted(labels[a].tolist()) == ["x"] * 7 + ["y"] * 3
    assert sorted(labels[b].tolist()) == ["x", "x", "x", "y"]


def test_strata_are_month_and_segment_fields() -> None:
    ids = [f"c{i}" for i in range(6)]
    meta = {
        "c0": {"date": "2026-01-05", "queue": "billing", "duration_s": "120", "agent": "a0"},
        "c1": {"date": "2026-01-30T23:10:00", "queue": "tech", "duration_s": "60", "agent": "a1"},
        "c2": {"date": "2026-02-01", "queue": "billing", "duration_s": "30", "agent": "a2"},
        "c3": {"date": "not a date", "queue": "billing", "agent": "a3"},
        "c4": {"queue": "tech", "agent": "a4"},
    }  # c5: no metadata at all
    labels, by = strata_labels(ids, meta)
    assert by == ["month", "agent", "queue"]  # duration_s is a number, not a segment
    assert labels[0] == "2026-01|agent=a0|queue=billing"
    assert labels[1].startswith("2026-01|")
    assert labels[2].startswith("2026-02|")
    assert labels[3].startswith("no date|") and labels[4].startswith("no date|")
    assert labels[5] == "no date|agent=(none)|queue=(none)"
    many = {f"c{i}": {"agent": f"agent {i}"} for i in range(40)}  # 40 values: not a segment
    labels, by = strata_labels(list(many), many)
    assert by == [] and set(labels) == {"all"}


def test_draw_sample_records_what_the_grid_key_needs() -> None:
    ids = [f"c{i:04d}" for i in range(1000)]
    meta = {t: {"date": f"2026-0{1 + i % 4}-10", "site": "north" if i % 3 else "south"}
            for i, t in enumerate(ids)}  # fmt: skip
    s = draw_sample(ids, meta, 300, seed=2)
    assert s.size == 300 and len(s.rows_a) == 300 and s.n_strata == 8
    assert s.info()["by"] == ["month", "site"] and s.info()["calls"] == 1000
    assert s.key_part() == draw_sample(ids, meta, 300, seed=2).key_part()
    assert s.digest != draw_sample(ids, meta, 300, seed=3).digest


def test_sample_size_rules() -> None:
    base = SweepSettings()
    assert sample_size(base, 50_000) == 0  # small prep: every call
    assert sample_size(base, 250_000) == 100_000  # above auto_sample_above
    assert sample_size(SweepSettings(auto_sample_above=0), 250_000) == 0
    assert sample_size(base, 1000, 400) == 400
    assert sample_size(SweepSettings(sample=300), 1000) == 300
    for bad, says in ((0, "at least 1"), (-5, "at least 1"), (1000, "smaller"), (5000, "smaller")):
        with pytest.raises(ConfigError, match=says) as info:
            sample_size(base, 1000, bad)
        assert "--sample" in str(info.value) and "1,000" in str(info.value)


def test_the_sample_changes_the_grid_key_and_no_sample_keeps_the_old_one() -> None:
    cells = build_cells([5, 10], ["lda"], 2)
    settings = SweepSettings()
    plain = grid_key("abc", cells, settings)
    assert grid_key("abc", cells, settings, None) == plain
    # the sample settings are not in the key by themselves: only a drawn sample is
    assert grid_key("abc", cells, SweepSettings(sample=10, auto_sample_above=5)) == plain
    part = {"n": 100, "seed": 0, "by": ["month"], "rows": "0123456789abcdef"}
    keyed = grid_key("abc", cells, settings, part)
    assert keyed != plain
    assert grid_key("abc", cells, settings, {**part, "rows": "fedcba9876543210"}) != keyed
    # the key of a sweep of every call as computed before sampling existed (pinned)
    assert plain == _old_grid_key("abc", cells, settings)


def _old_grid_key(prep: str, cells: list, settings: SweepSettings) -> str:
    import hashlib
    import json

    from talkthemes.sweep.grid import RUN_ONLY_SETTINGS

    relevant = settings.model_dump(exclude=set(RUN_ONLY_SETTINGS))
    doc = json.dumps(
        {"prep": prep, "cells": [c.cell for c in cells], "settings": relevant}, sort_keys=True
    )
    return hashlib.sha256(doc.encode()).hexdigest()[:16]


def test_check_refits_the_recommended_k_and_its_neighbours_only() -> None:
    specs = build_cells([4, 6, 8, 10, 12], ["lda", "nmf"], 2)
    todo, ks = check_cells(specs, {"lda": 4, "nmf": 8})
    assert ks == {"lda": [4, 6], "nmf": [6, 8, 10]}
    assert len(todo) == (2 + 3) * 2
    summary = check_summary(
        {"lda": 4, "nmf": 8}, {"lda": 4, "nmf": 10}, ks,
        sample_b=500, cells=10, seconds=3.21, failed=[],
    )  # fmt: skip
    assert summary["families"]["lda"]["agree"] is True
    assert summary["families"]["nmf"] == {"k_a": 8, "k_b": 10, "agree": False,
                                          "ks_refit": [6, 8, 10]}  # fmt: skip
    lines = describe_sample(
        {
            "n": 1000,
            "calls": 5000,
            "by": ["month", "queue"],
            "strata": 12,
            "seed": 0,
            "automatic": False,
            "check": summary,
        }
    )
    assert lines[0] == (
        "Swept on a sample of 1,000 of 5,000 calls, stratified by month, queue (12 strata, seed 0)."
    )
    assert "second, disjoint sample of 500 calls (10 cells, 3.2 s)" in lines[1]
    assert lines[2] == "  LDA: K = 4 on sample A, K = 4 on sample B (K refitted: 4, 6): they agree."
    assert lines[3] == (
        "  NMF: K = 8 on sample A, K = 10 on sample B (K refitted: 6, 8, 10): they differ."
    )
    assert describe_sample(None) == []


def test_publish_refuses_a_sample_it_cannot_read(tmp_path) -> None:
    from talkthemes.errors import NotReadyError
    from talkthemes.sweep.sample import load_sample_rows, save_sample

    ids = [f"c{i}" for i in range(50)]
    s = draw_sample(ids, {}, 20, seed=0)
    with pytest.raises(NotReadyError, match=r"sample_rows\.npy is missing"):
        load_sample_rows(tmp_path, s.info())
    save_sample(tmp_path, s)
    assert np.array_equal(load_sample_rows(tmp_path, s.info()), s.rows_a)
    other = draw_sample(ids, {}, 20, seed=1)
    with pytest.raises(NotReadyError, match="does not hold the rows"):
        load_sample_rows(tmp_path, other.info())
