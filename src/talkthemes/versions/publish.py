"""Publishing a sweep cell: the chosen family and K refitted on every transcript, as a
new version whose themes are all new (docs/methods.md, "Publishing").

Publishing is idempotent: when the model asked for is the current version's — same prep,
family, K, seed and model settings (its *fit key*) — nothing is fitted or written and the
result says so (``status = "already_current"``), unless ``force`` asks for a new version
anyway. ``--k K --family F`` without a sweep cell of that K fits the one cell directly, with
the ``[sweep]`` settings a sweep would use and ``[sweep] publish_seed``, after the same
checks a sweep makes (:mod:`talkthemes.sweep.limits`).
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass
from typing import Any

import pandas as pd

from talkthemes.config import SweepSettings
from talkthemes.errors import ConfigError, InputError, NotReadyError
from talkthemes.prepare.corpus import PreparedCorpus
from talkthemes.progress import Progress, report
from talkthemes.store.records import SweepRecord
from talkthemes.sweep.grid import FAMILIES, CellSpec
from talkthemes.sweep.limits import PrepSize, check_k, check_memory
from talkthemes.sweep.run import load_current_prep
from talkthemes.sweep.sample import load_sample_rows
from talkthemes.sweep.scoring import seed_agreement
from talkthemes.versions.fit import fit_version
from talkthemes.versions.fit_sample import fit_on_every_call
from talkthemes.versions.load import load_version
from talkthemes.versions.write import write_version
from talkthemes.workspace import Workspace

__all__ = ["PublishResult", "find_cell", "fit_key", "pick_cell", "publish"]


@dataclass
class PublishResult:
    """What ``publish`` did.

    Attributes
    ----------
    status : str
        ``published`` (a new version), or ``already_current`` (the model asked for is the
        current version's; nothing changed).
    sweep_id : int or None
        The sweep the cell came from; None when the cell was fitted without a sweep.
    """

    version: int
    family: str
    k: int
    seed: int
    cell: str
    sweep_id: int | None
    fit_seconds: float
    themes: list[dict[str, Any]]
    status: str = "published"
    sample_calls: int | None = None

    @property
    def message(self) -> str:
        """One line saying what happened."""
        if self.status == "already_current":
            return (
                f"Version {self.version} is already current: {self.family} K={self.k} "
                f"(cell {self.cell}). Nothing changed (--force publishes it again as a new "
                "version)."
            )
        source = "" if self.sweep_id is not None else ", fitted without a sweep"
        if self.sample_calls is not None:
            source += f", fitted from the sweep's sample of {self.sample_calls:,} calls"
        return (
            f"Published version {self.version}: {self.family} K={self.k} "
            f"(cell {self.cell}{source}, fit in {self.fit_seconds:.1f} s)."
        )

    def to_json(self) -> dict[str, Any]:
        """A JSON-ready dict (``sample_calls`` only for a cell swept on a sample)."""
        doc = {
            "status": self.status,
            "message": self.message,
            "version": self.version,
            "family": self.family,
            "k": self.k,
            "seed": self.seed,
            "cell": self.cell,
            "sweep_id": self.sweep_id,
            "fit_seconds": self.fit_seconds,
            "themes": self.themes,
        }
        if self.sample_calls is not None:
            doc["sample_calls"] = self.sample_calls
        return doc


def fit_key(
    prep_hash: str,
    family: str,
    k: int,
    seed: int,
    settings: SweepSettings,
    sample: dict[str, Any] | None = None,
) -> str:
    """A short hash of everything that decides a published model: the prep, family, K,
    seed, the family's model settings and the top terms its coherence is scored on; for a
    cell swept on a sample, the sample's rows and the passes over every call."""
    model = {
        name: value
        for name, value in settings.model_dump().items()
        if name.startswith(f"{family}_") or name == "topn"
    }
    body: dict[str, Any] = {
        "prep": prep_hash, "family": family, "k": int(k), "seed": int(seed), "model": model,
    }  # fmt: skip
    if sample:
        body["sample"] = {"rows": sample.get("rows"), "passes": settings.sample_publish_passes}
    doc = json.dumps(body, sort_keys=True)
    return hashlib.sha256(doc.encode()).hexdigest()[:16]


def pick_cell(
    cells: pd.DataFrame, *, k: int | None, family: str | None, cell: str | None
) -> pd.Series:
    """Choose the cell to publish: by id, or by (family, K) taking the medoid seed.

    The medoid seed is the one whose topics agree most, on average, with the other seeds'
    topics (the same average-Jaccard agreement as stability), so the published themes
    are the most typical of that K.
    """
    if cell is not None:
        hit = cells[cells["cell"] == cell]
        if hit.empty:
            raise InputError(f"--cell {cell!r} is not in the sweep (e.g. {cells['cell'].iloc[0]})")
        return hit.iloc[0]
    if k is None or family is None:
        raise ConfigError("give --k and --family, or --cell, or --version")
    hit = cells[(cells["k"] == k) & (cells["family"] == family)]
    if hit.empty:
        ks = sorted(set(cells.loc[cells["family"] == family, "k"]))
        raise InputError(
            f"no {family} cell with K={k} in the sweep (K swept for {family}: "
            f"{', '.join(map(str, ks)) or 'none'})"
        )
    if len(hit) == 1:
        return hit.iloc[0]
    if "agreement" in hit.columns:
        return hit.sort_values(["agreement", "seed"], ascending=[False, True]).iloc[0]
    return hit.sort_values("seed").iloc[0]


def find_cell(
    ws: Workspace,
    prep_hash: str,
    sweep_id: int | None,
    *,
    k: int | None,
    family: str | None,
    cell: str | None,
) -> tuple[SweepRecord, pd.Series]:
    """The newest sweep of the current prep holding the requested cell, and that cell."""
    with ws.store() as store:
        ids = [sweep_id] if sweep_id is not None else store.sweep_ids(prep_hash)
        if not ids:
            if store.sweep_ids():
                raise NotReadyError(
                    "the sweeps were run on an older prep: run 'talkthemes sweep' again first"
                )
            raise NotReadyError("no sweep yet: run 'talkthemes sweep' first")
        last_error: Exception | None = None
        for sid in ids:
            cells = pd.DataFrame([c.row() for c in store.cells(sid)])
            if cells.empty:
                continue
            try:
                chosen = pick_cell(
                    seed_agreement(cells, ws.settings().sweep.stability_topn),
                    k=k,
                    family=family,
                    cell=cell,
                )
            except InputError as exc:
                last_error = exc
                continue
            sweep = store.get_sweep(sid)
            assert sweep is not None
            if sweep.prep_hash != prep_hash:
                raise NotReadyError(
                    f"sweep {sid} was run on an older prep: run 'talkthemes sweep' again first"
                )
            return sweep, chosen
    if last_error is not None:
        raise last_error
    raise NotReadyError("no finished sweep cell yet: run 'talkthemes sweep' first")


@dataclass(frozen=True)
class _Choice:
    """The model to publish: a sweep cell, or a cell fitted without a sweep."""

    family: str
    k: int
    seed: int
    cell: str
    sweep_id: int | None
    sample: dict[str, Any] | None = None


def _choose(
    ws: Workspace,
    prep_hash: str,
    sweep_id: int | None,
    *,
    k: int | None,
    family: str | None,
    cell: str | None,
) -> _Choice:
    """The sweep cell asked for; with ``--k`` and ``--family`` and no such cell in a sweep of
    the current prep, that cell fitted directly with ``[sweep] publish_seed``."""
    if family is not None and family not in FAMILIES:
        raise ConfigError(f"--family {family!r}: expected lda or nmf")
    try:
        sweep, chosen = find_cell(ws, prep_hash, sweep_id, k=k, family=family, cell=cell)
    except (NotReadyError, InputError):
        if cell is not None or sweep_id is not None or k is None or family is None:
            raise
        seed = ws.settings().sweep.publish_seed
        return _Choice(family, int(k), seed, CellSpec(family, int(k), seed).cell, None)
    return _Choice(
        str(chosen["family"]),
        int(chosen["k"]),
        int(chosen["seed"]),
        str(chosen["cell"]),
        sweep.id,
        sweep.info.get("sample"),
    )


def _already_current(ws: Workspace, key: str, prep_hash: str, choice: _Choice) -> int | None:
    """The current version's number when it is the model asked for, else None.

    Versions published before the fit key was recorded are compared by prep, family, K and
    seed."""
    with ws.store() as store:
        current = store.current_version()
    if current is None:
        return None
    n = current.n
    info = load_version(ws, n).info
    if "fit_key" in info:
        same = info["fit_key"] == key
    else:
        same = (info.get("prep_hash"), info.get("family"), info.get("k"), info.get("seed")) == (
            prep_hash,
            choice.family,
            choice.k,
            choice.seed,
        )
    return n if same else None


def publish(
    ws: Workspace,
    *,
    k: int | None = None,
    family: str | None = None,
    cell: str | None = None,
    sweep_id: int | None = None,
    force: bool = False,
    progress: Progress | None = None,
) -> PublishResult:
    """Fit the chosen cell's model on every eligible transcript and publish it as a version.

    Every theme of a version published this way is new. The caller holds the workspace
    lock.

    Parameters
    ----------
    ws : Workspace
    k, family : optional
        The topic count and family; the sweep cell of that (family, K) with the medoid seed,
        or, when no sweep of the current prep has one, that cell fitted here.
    cell : str, optional
        A sweep cell id instead of ``k`` and ``family``.
    sweep_id : int, optional
        The sweep to take the cell from (default: the newest one holding it).
    force : bool
        Publish a new version even when the model asked for is the current version's.
    progress : Progress, optional
        ``progress(done, total, step)`` at each step (total 5).

    Returns
    -------
    PublishResult
        ``status`` is ``already_current`` when nothing was published.

    Raises
    ------
    ConfigError
        Neither ``k`` and ``family`` nor ``cell`` given; a family other than lda or nmf; a
        directly fitted K above what the prep supports or whose estimated memory exceeds
        ``[sweep] worker_memory_gb``.
    NotReadyError, InputError
        Nothing prepared; a ``cell`` that no sweep holds.
    """

    def step(name: str, i: int) -> None:
        report(progress, i, 5, name)

    prep, prep_folder = load_current_prep(ws)
    settings = ws.settings()
    choice = _choose(ws, prep.hash, sweep_id, k=k, family=family, cell=cell)
    key = fit_key(prep.hash, choice.family, choice.k, choice.seed, settings.sweep, choice.sample)
    current = None if force else _already_current(ws, key, prep.hash, choice)
    if current is not None:
        step("already current", 5)
        version = load_version(ws, current)
        return PublishResult(
            version=current,
            family=choice.family,
            k=choice.k,
            seed=choice.seed,
            cell=str(version.info.get("cell", choice.cell)),
            sweep_id=version.info.get("sweep_id"),
            fit_seconds=0.0,
            themes=version.summary(lam=settings.view.relevance_lambda),
            status="already_current",
        )
    step("loading the prep", 0)
    corpus = PreparedCorpus.load(prep_folder)
    if choice.sweep_id is None:  # the checks a sweep makes before fitting, for all calls
        size = PrepSize.of(corpus, settings.sweep)
        spec = CellSpec(choice.family, choice.k, choice.seed)
        check_k([choice.k], size, settings.sweep, fit_calls=size.calls)
        check_memory([spec], size, settings.sweep, fit_calls=size.calls, shares_calls=size.calls)
    fam, kk, seed = choice.family, choice.k, choice.seed
    model = None
    if choice.sample is not None:  # swept on a sample: fitted from it, shares for every call
        assert choice.sweep_id is not None
        rows = load_sample_rows(ws.sweeps_dir / str(choice.sweep_id), choice.sample)
        step(f"fitting {fam} K={kk} from the sweep's sample of {len(rows):,} calls", 1)
        model = fit_on_every_call(fam, kk, seed, settings.sweep, corpus.counts.tocsr(), rows)
    else:
        step(f"fitting {fam} K={kk} on {corpus.n_docs:,} transcripts", 1)
    fitted = fit_version(ws, corpus, family=fam, k=kk, seed=seed, prep_hash=prep.hash, model=model)
    step("writing the version", 3)
    extra: dict[str, Any] = {"cell": choice.cell, "sweep_id": choice.sweep_id, "fit_key": key}
    if choice.sample is not None:
        extra["sample"] = {
            name: v
            for name, v in choice.sample.items()
            if name in ("n", "seed", "by", "rows", "calls")
        }
    if choice.sweep_id is None:
        extra["fitted_without_sweep"] = True
    n = write_version(ws, fitted, extra_info=extra)
    step("done", 5)
    version = load_version(ws, n)
    return PublishResult(
        version=n,
        family=fam,
        k=kk,
        seed=seed,
        cell=choice.cell,
        sweep_id=choice.sweep_id,
        fit_seconds=float(fitted.info["fit_seconds"]),
        themes=version.summary(lam=settings.view.relevance_lambda),
        sample_calls=None if choice.sample is None else int(choice.sample["n"]),
    )
