"""No runaway work: K above what the prep supports, a fit too large for the memory setting,
and an unreachable scheduler are refused before anything runs, with exit code 2 and a
message naming the limit."""

from __future__ import annotations

import socket
import time
import tracemalloc

import numpy as np
import pytest
import scipy.sparse as sp
from tests.external.bars import make_bars_corpus, pixel_names
from tests.support.preps import install_prep
from typer.testing import CliRunner

from talkthemes.cli._common import app
from talkthemes.config import SweepSettings, render_settings, settings_from_dict
from talkthemes.errors import ConfigError
from talkthemes.models.factory import make_model
from talkthemes.sweep.grid import CellSpec
from talkthemes.sweep.limits import (
    PROCESS_BYTES,
    PrepSize,
    check_k,
    check_memory,
    estimate_fit_bytes,
    largest_k,
)
from talkthemes.sweep.run import run_sweep
from talkthemes.workspace import Workspace, atomic_write_text

runner = CliRunner()


def _set_sweep(ws: Workspace, **values: object) -> None:
    atomic_write_text(ws.settings_path, render_settings(settings_from_dict({"sweep": values})))


def _sweeps(ws: Workspace) -> list[int]:
    with ws.store() as store:
        return store.sweep_ids()


@pytest.fixture
def bars(tmp_path_factory: pytest.TempPathFactory) -> Workspace:
    ws = Workspace(tmp_path_factory.mktemp("bars") / "ws")
    ws.init()
    _, _, texts = make_bars_corpus(400, seed=3)
    install_prep(ws, pixel_names(), texts)  # 400 calls, 25 terms
    return ws


def test_largest_k_names_the_limit_that_binds() -> None:
    by_terms = PrepSize(calls=400, train=360, fit=288, terms=25, nonzero=4000, tokens=8000)
    assert largest_k(by_terms, 5) == (25, largest_k(by_terms, 5)[1])
    assert "25 terms" in largest_k(by_terms, 5)[1]
    by_calls = PrepSize(calls=60, train=54, fit=43, terms=200, nonzero=900, tokens=1800)
    most, reason = largest_k(by_calls, 5)
    assert most == 10 and "54 training calls / [sweep] min_calls_per_theme = 5" in reason
    most, reason = largest_k(by_calls, 1)  # one call per theme: the calls one fit sees bind
    assert most == 43 and "43 calls one fit trains on" in reason


def test_sweep_refuses_k_above_the_terms_before_recording_anything(bars: Workspace) -> None:
    with pytest.raises(ConfigError, match=r"at most 25 themes \(25 terms"):
        run_sweep(bars, k="20,100000", families=["nmf"], seeds=1, workers=1)
    assert _sweeps(bars) == []
    res = runner.invoke(app, ["sweep", "--k", "100000", "--family", "lda", "-w", str(bars.root)])
    assert res.exit_code == 2
    assert "K = 100,000 is more than the current prep supports: at most 25" in res.stderr
    assert _sweeps(bars) == []


def test_sweep_refuses_k_above_the_calls_per_theme(ws: Workspace) -> None:
    vocab = [f"w{i:03d}" for i in range(200)]
    rng = np.random.default_rng(0)
    texts = [list(rng.choice(vocab, size=30)) for _ in range(60)]
    install_prep(ws, vocab, texts)
    with pytest.raises(ConfigError, match="min_calls_per_theme = 5") as err:
        run_sweep(ws, k="5,40", families=["nmf"], seeds=1, workers=1)
    assert "K = 40" in str(err.value)
    _set_sweep(ws, min_calls_per_theme=1)  # the setting moves the limit
    size = PrepSize(calls=60, train=60, fit=60, terms=200, nonzero=1500, tokens=1800)
    check_k([40], size, ws.settings().sweep)


def test_memory_estimate_bounds_a_measured_fit() -> None:
    """The model part of the estimate is at least what the fit allocates through numpy (as
    tracemalloc sees it) and not wildly more: a broken estimate (K or V dropped) fails."""
    rng = np.random.default_rng(0)
    n_docs, n_terms, per_doc, k = 3000, 4000, 40, 40
    rows = np.repeat(np.arange(n_docs), per_doc)
    cols = np.minimum(rng.zipf(1.3, size=n_docs * per_doc) - 1, n_terms - 1)
    counts = sp.csr_matrix((np.ones(rows.size), (rows, cols)), shape=(n_docs, n_terms))
    counts.sum_duplicates()
    size = PrepSize(n_docs, n_docs, n_docs, n_terms, int(counts.nnz), tokens=0)
    settings = SweepSettings(lda_passes=1, nmf_max_iter=20)
    for family in ("lda", "nmf"):
        make_model(family, 3, 0, settings).fit(counts[:50])  # imports and compilation first
        tracemalloc.start()
        try:
            make_model(family, k, 0, settings).fit(counts, shares=False)
            peak = tracemalloc.get_traced_memory()[1]
        finally:
            tracemalloc.stop()
        starts = settings.lda_starts
        estimate = estimate_fit_bytes(family, k, size, lda_starts=starts) - PROCESS_BYTES
        assert peak <= estimate <= 4 * peak, (family, peak, estimate)


def test_memory_estimate_grows_with_k_and_the_vocabulary() -> None:
    size = PrepSize(calls=20000, train=18000, fit=14400, terms=10000, nonzero=10**6, tokens=10**7)
    wide = PrepSize(calls=20000, train=18000, fit=14400, terms=40000, nonzero=10**6, tokens=10**7)
    for family in ("lda", "nmf"):
        small, big = (estimate_fit_bytes(family, k, size) for k in (10, 1000))
        assert big > small > PROCESS_BYTES
        assert estimate_fit_bytes(family, 1000, wide) > big
    # LDA's K × V arrays: 5,000 topics over 40,000 terms need more than the 8 GiB default
    # (six float64 arrays of 2e8 entries are 9 GiB alone); 1,000 fit
    assert check_memory([CellSpec("lda", 1000, 0)], wide, SweepSettings()) < 8 * 2**30
    with pytest.raises(ConfigError, match=r"cell lda-k5000-s0 would need about \d+\.\d GiB"):
        check_memory([CellSpec("lda", 1000, 0), CellSpec("lda", 5000, 0)], wide, SweepSettings())


def test_sweep_refuses_a_cell_over_the_memory_setting(bars: Workspace) -> None:
    _set_sweep(bars, worker_memory_gb=0.25)  # below the process alone
    res = runner.invoke(
        app, ["sweep", "--k", "5", "--family", "nmf", "--seeds", "1", "-w", str(bars.root)]
    )
    assert res.exit_code == 2
    assert "cell nmf-k005-s0 would need about 0.4 GiB" in res.stderr
    assert "worker_memory_gb = 0.25 GiB" in res.stderr
    assert _sweeps(bars) == []


def _closed_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def test_unreachable_scheduler_exits_2_within_the_timeout(bars: Workspace) -> None:
    address = f"tcp://127.0.0.1:{_closed_port()}"
    _set_sweep(bars, scheduler_timeout=2)
    start = time.monotonic()
    res = runner.invoke(
        app,
        ["sweep", "--k", "5", "--family", "nmf", "--scheduler", address, "-w", str(bars.root)],
    )
    elapsed = time.monotonic() - start
    assert res.exit_code == 2, res.stderr
    assert f"--scheduler {address}: no Dask scheduler answered within 2 s" in res.stderr
    assert elapsed < 20  # the 2 s timeout, plus starting the command; never the old 30 s
    assert _sweeps(bars) == []  # nothing recorded as running
