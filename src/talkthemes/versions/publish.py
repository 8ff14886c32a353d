"""Publishing a sweep cell: the chosen family and K refitted on every transcript, as a
new version whose themes are all new (docs/methods.md, "Publishing").
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import pandas as pd

from talkthemes.errors import ConfigError, InputError, NotReadyError
from talkthemes.prepare.corpus import PreparedCorpus
from talkthemes.progress import Progress, report
from talkthemes.sweep.run import load_current_prep
from talkthemes.sweep.scoring import seed_agreement
from talkthemes.versions.fit import fit_version
from talkthemes.versions.load import load_version
from talkthemes.versions.write import write_version
from talkthemes.workspace import Workspace

__all__ = ["PublishResult", "find_cell", "pick_cell", "publish"]


@dataclass
class PublishResult:
    """What ``publish`` did."""

    version: int
    family: str
    k: int
    seed: int
    cell: str
    sweep_id: int | None
    fit_seconds: float
    themes: list[dict[str, Any]]

    def to_json(self) -> dict[str, Any]:
        return {
            "version": self.version,
            "family": self.family,
            "k": self.k,
            "seed": self.seed,
            "cell": self.cell,
            "sweep_id": self.sweep_id,
            "fit_seconds": self.fit_seconds,
            "themes": self.themes,
        }


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
) -> tuple[dict[str, Any], pd.Series]:
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
            cells = pd.DataFrame(store.cells(sid))
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
            if sweep["prep_hash"] != prep_hash:
                raise NotReadyError(
                    f"sweep {sid} was run on an older prep: run 'talkthemes sweep' again first"
                )
            return sweep, chosen
    if last_error is not None:
        raise last_error
    raise NotReadyError("no finished sweep cell yet: run 'talkthemes sweep' first")


def publish(
    ws: Workspace,
    *,
    k: int | None = None,
    family: str | None = None,
    cell: str | None = None,
    sweep_id: int | None = None,
    progress: Progress | None = None,
) -> PublishResult:
    """Fit the chosen cell's model on every eligible transcript and publish it as a version.

    Every theme of a version published this way is new. The caller holds the workspace
    lock. ``progress(done, total, step)`` is called at each step (total 5).
    """

    def step(name: str, i: int) -> None:
        report(progress, i, 5, name)

    prep, prep_folder = load_current_prep(ws)
    sweep, chosen = find_cell(ws, prep["hash"], sweep_id, k=k, family=family, cell=cell)
    settings = ws.settings()
    step("loading the prep", 0)
    corpus = PreparedCorpus.load(prep_folder)
    fam, kk, seed = str(chosen["family"]), int(chosen["k"]), int(chosen["seed"])
    step(f"fitting {fam} K={kk} on {corpus.n_docs:,} transcripts", 1)
    fitted = fit_version(ws, corpus, family=fam, k=kk, seed=seed, prep_hash=prep["hash"])
    step("writing the version", 3)
    n = write_version(
        ws, fitted, extra_info={"cell": str(chosen["cell"]), "sweep_id": int(sweep["id"])}
    )
    step("done", 5)
    version = load_version(ws, n)
    return PublishResult(
        version=n,
        family=fam,
        k=kk,
        seed=seed,
        cell=str(chosen["cell"]),
        sweep_id=int(sweep["id"]),
        fit_seconds=float(fitted.info["fit_seconds"]),
        themes=version.summary(lam=settings.view.relevance_lambda),
    )
