"""``talkthemes refresh``: retrain as transcripts arrive, keeping theme identities.

One run (the caller holds the workspace lock):

1. **ingest** the given paths, or ``[refresh] inbox`` (a relative inbox is relative to the
   workspace folder). A file named ``manifest.csv``, ``manifest.parquet`` or
   ``manifest.jsonl`` at the top of an ingested folder is read as that folder's manifest.
2. **nothing new?** The transcripts the current version knows are its training transcripts
   and those its prep excluded; when the store holds no other, the run stops here with
   "nothing new to do" and changes nothing (a second run is a no-op).
3. **prepare**: by default the vocabulary is rebuilt on all transcripts
   (:func:`~talkthemes.prepare.run.run_prepare`); with ``[refresh] vocabulary = "frozen"``
   every transcript is prepared with the current version's settings, boilerplate
   sentences, phrases and vocabulary (:class:`~talkthemes.frozen.PrepApplier`).
4. **coherence check**: the current version's themes are scored (C_NPMI, sliding window
   of 10) on the new transcripts and on an equally large random sample of its own
   training transcripts, both prepared the version's way; when the score on the new ones
   is lower by more than ``[refresh] resweep_coherence_drop``, K is chosen again. Fewer
   than :data:`MIN_NEW_FOR_CHECK` new transcripts are too few to judge, and the check is
   skipped.
5. **fit** the published family at the published K with the published seed on all
   transcripts — or, with ``resweep`` (asked for, or from the check), run the ``[sweep]``
   grid for that family and fit its recommended K.
6. **calibrate** the same-theme cut-off from ``[refresh] calibration_seeds`` more fits of
   the same family and K (other seeds, each on a random ``[sweep] subsample`` of the
   transcripts), and **align** the new themes to the current version's
   (:mod:`talkthemes.align`): a matched theme keeps its id, label and note (carried), an
   unmatched new theme gets a new id (new), an unmatched old theme is recorded as retired;
   near-ties are flagged as possible splits and merges.
7. **write** the version in full — with ``drift.json``, ``drift.md`` and ``drift.png``
   (:mod:`talkthemes.drift`) — and make it current in one transaction together with the
   refresh's log row (:func:`~talkthemes.versions.write_version`); then old versions
   beyond ``[refresh] keep_versions`` are removed (never the current one).

A run killed at any point leaves the previous version current: everything before the
last transaction is either committed whole (ingested transcripts, a prep) or invisible (a
version folder under a temporary name). The next run marks the killed run's log row
``interrupted`` and starts over.

Test hook: with the environment variable ``TALKTHEMES_TEST_PAUSE_AT`` set to a stage name
(see :data:`PAUSE_STAGES`), the run sleeps at that stage (``TALKTHEMES_TEST_PAUSE_SECONDS``,
default 120) after logging a warning, so a test can kill it exactly there.
"""

from __future__ import annotations

import datetime as dt
import json
import logging
import os
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from talkthemes.errors import InputError, NotReadyError
from talkthemes.workspace import Workspace

__all__ = [
    "MIN_NEW_FOR_CHECK",
    "PAUSE_STAGES",
    "RefreshResult",
    "coherence_check",
    "refresh",
]

log = logging.getLogger(__name__)

#: ``progress(done_steps, total_steps, what)``
ProgressFn = Callable[[int, int, str], None]

#: Fewer new (usable) transcripts than this skip the coherence check.
MIN_NEW_FOR_CHECK = 20

PAUSE_ENV = "TALKTHEMES_TEST_PAUSE_AT"
PAUSE_SECONDS_ENV = "TALKTHEMES_TEST_PAUSE_SECONDS"
#: Stages where the test hook can pause a run, in order.
PAUSE_STAGES = (
    "ingested",
    "prepared",
    "fitted",
    "version-files",
    "version-folder",
    "version-current",
)
_STEPS = 7


def _checkpoint(stage: str) -> None:
    """The test hook: sleep at ``stage`` when ``TALKTHEMES_TEST_PAUSE_AT`` names it."""
    if os.environ.get(PAUSE_ENV) == stage:
        seconds = float(os.environ.get(PAUSE_SECONDS_ENV, "120"))
        log.warning("refresh paused at stage %s for %.0f s (%s)", stage, seconds, PAUSE_ENV)
        time.sleep(seconds)


@dataclass
class RefreshResult:
    """What :func:`refresh` did.

    Attributes
    ----------
    status : str
        ``published`` or ``nothing_new``.
    previous_version : int
    version : int or None
        The version published.
    new_transcripts : int
        Stored transcripts the previous version did not know.
    ingest : dict or None
        The ingest report (JSON form).
    counts : dict
        Themes ``carried``, ``new`` and ``retired``.
    new_themes : list of dict
        ``theme_id`` and ``top_terms`` of each new theme.
    """

    status: str
    previous_version: int
    version: int | None = None
    new_transcripts: int = 0
    ingest: dict[str, Any] | None = None
    alert_on_new: bool = False
    family: str | None = None
    k: int | None = None
    resweep: bool = False
    resweep_reason: str | None = None
    coherence: dict[str, Any] | None = None
    threshold: dict[str, Any] | None = None
    counts: dict[str, int] = field(default_factory=dict)
    new_themes: list[dict[str, Any]] = field(default_factory=list)
    retired_themes: list[dict[str, Any]] = field(default_factory=list)
    drift_files: list[str] = field(default_factory=list)
    seconds: float = 0.0

    @property
    def rejected(self) -> int:
        """Inputs the ingest step rejected."""
        return len((self.ingest or {}).get("rejects", []))

    @property
    def exit_code(self) -> int:
        """4 when asked to alert and a new theme appeared; else 3 when some inputs were
        rejected; else 0 (published, or nothing new to do)."""
        if self.alert_on_new and self.counts.get("new", 0) > 0:
            return 4
        return 3 if self.rejected else 0

    def to_json(self) -> dict[str, Any]:
        return {
            "status": self.status,
            "exit_code": self.exit_code,
            "previous_version": self.previous_version,
            "version": self.version,
            "new_transcripts": self.new_transcripts,
            "family": self.family,
            "k": self.k,
            "resweep": self.resweep,
            "resweep_reason": self.resweep_reason,
            "coherence_check": self.coherence,
            "threshold": self.threshold,
            "counts": self.counts,
            "new_themes": self.new_themes,
            "retired_themes": self.retired_themes,
            "drift_files": self.drift_files,
            "seconds": round(self.seconds, 2),
            "ingest": self.ingest,
        }


# -- inputs -------------------------------------------------------------------------------
def _ingest_paths(ws: Workspace, paths: Sequence[Path] | None) -> list[Path]:
    if paths:
        return [Path(p) for p in paths]
    inbox = ws.settings().refresh.inbox.strip()
    if not inbox:
        return []
    folder = Path(inbox).expanduser()
    if not folder.is_absolute():
        folder = ws.root / folder
    if not folder.is_dir():
        raise InputError(f"[refresh] inbox = {inbox!r}: {folder} is not a folder")
    return [folder]


def _known_ids(version: Any, spec: Any) -> set[str]:
    return set(version.doc_ids) | {t for t, _ in spec.excluded}


# -- preparing -----------------------------------------------------------------------------
def coherence_check(
    ws: Workspace,
    version: Any,
    spec: Any,
    new_ids: Sequence[str],
    *,
    drop: float,
    seed: int = 0,
) -> dict[str, Any]:
    """C_NPMI of a version's themes on new transcripts versus on its own transcripts.

    Both sets are prepared the version's way; the earlier set is a seeded random sample of
    the version's training transcripts as large as the new set (so both scores rest on as
    much text). ``triggered`` is True when the score on the new transcripts is lower by more
    than ``drop``.

    Returns
    -------
    dict
        ``checked`` (False when too few new transcripts), ``new``, ``earlier`` (mean
        C_NPMI over the themes scored in both sets), ``difference`` (earlier − new),
        ``themes_compared``, ``n``, ``drop``, ``triggered``.
    """
    from talkthemes.frozen import PrepApplier
    from talkthemes.metrics.coherence import build_reference, score
    from talkthemes.models.base import top_terms

    applier = PrepApplier(spec)
    with ws.store() as store:
        new = applier.apply(store.turns_for(list(new_ids)))
        usable = new.known >= spec.settings.min_tokens
        n = int(usable.sum())
        if n < MIN_NEW_FOR_CHECK or not version.doc_ids:
            return {"checked": False, "n": n, "drop": drop, "triggered": False}
        rng = np.random.default_rng([seed, 20100601])
        pick = rng.choice(len(version.doc_ids), size=min(n, len(version.doc_ids)), replace=False)
        earlier = applier.apply(store.turns_for([version.doc_ids[i] for i in sorted(pick)]))
    topn = int(version.info.get("topn", 10))
    tops = top_terms(version.topic_terms, min(topn, version.topic_terms.shape[1]))

    def npmi(applied: Any, rows: np.ndarray) -> np.ndarray:
        ref = build_reference(
            applied.tokens, applied.offsets, applied.counts, np.unique(tops), windows=(10,),
            rows=rows,
        )  # fmt: skip
        return np.asarray(score(ref, tops, "c_npmi").per_topic, dtype=np.float64)

    # a small sample often misses a top word; the check handles that (below), so the
    # coherence module's warning about it is not passed on
    quiet = logging.getLogger("talkthemes.metrics.coherence")
    level = quiet.level
    quiet.setLevel(logging.ERROR)
    try:
        on_new = npmi(new, np.flatnonzero(usable))
        on_earlier = npmi(earlier, np.arange(len(earlier.doc_ids)))
    finally:
        quiet.setLevel(level)
    # a theme whose top word never occurs in one of the sets has no score there: compare
    # the themes scored in both
    both = np.isfinite(on_new) & np.isfinite(on_earlier)
    if not both.any():
        return {"checked": False, "n": n, "drop": drop, "triggered": False}
    mean_new, mean_earlier = float(on_new[both].mean()), float(on_earlier[both].mean())
    diff = mean_earlier - mean_new
    return {
        "checked": True,
        "measure": "c_npmi",
        "new": round(mean_new, 6),
        "earlier": round(mean_earlier, 6),
        "difference": round(diff, 6),
        "themes_compared": int(both.sum()),
        "n": n,
        "drop": drop,
        "triggered": bool(diff > drop),
    }


# -- the run ------------------------------------------------------------------------------
def _resweep_fit(ws: Workspace, family: str, prep_hash: str) -> tuple[int, int, str]:
    """Run the [sweep] grid for ``family`` on the current prep; its recommended K and seed."""
    from talkthemes.sweep import run_sweep
    from talkthemes.versions import _find_cell

    result = run_sweep(ws, families=[family])
    rec = result.recommendations.get(family)
    if rec is None:
        raise NotReadyError(f"the re-sweep gave no recommendation for {family}")
    _, chosen = _find_cell(ws, prep_hash, result.sweep_id, k=rec.k, family=family, cell=None)
    return int(rec.k), int(chosen["seed"]), str(chosen["cell"])


def _calibration_fits(
    ws: Workspace, counts: Any, family: str, k: int, seed: int, n: int
) -> list[np.ndarray]:
    from talkthemes.sweep import make_model, subsample_rows

    settings = ws.settings().sweep
    rows_all = np.arange(counts.shape[0])
    out = []
    for i in range(n):
        s = seed + 1 + i
        rows = subsample_rows(rows_all, settings.subsample, s)
        out.append(
            make_model(family, k, s, settings).fit(counts[rows], shares=False).result_.topic_terms
        )
    return out


def _excerpt(turns: Sequence[tuple[str, str]], scrub_on: bool, width: int = 200) -> str:
    """The start of a transcript's customer turns (all turns when none is labelled so),
    scrubbed of personal data when the prep scrubs."""
    from talkthemes.prepare.scrub import scrub

    spoken = [t for role, t in turns if role == "customer"] or [t for _, t in turns]
    text = " ".join(" ".join(spoken).split())
    if scrub_on:
        text = scrub(text)[0]
    text = " ".join(text.split())
    return text if len(text) <= width else text[: width - 1].rstrip() + "…"


def refresh(
    ws: Workspace,
    *,
    ingest_paths: Sequence[Path] | None = None,
    manifests: Sequence[Path] = (),
    resweep: bool = False,
    alert_on_new: bool = False,
    progress: ProgressFn | None = None,
) -> RefreshResult:
    """Ingest, retrain, align to the current version, write drift, publish (module notes).

    Parameters
    ----------
    ws : Workspace
    ingest_paths : sequence of Path, optional
        Files and folders to ingest; ``[refresh] inbox`` when omitted.
    manifests : sequence of Path
        Metadata tables (besides ``manifest.*`` at the top of ingested folders).
    resweep : bool
        Choose K again with the ``[sweep]`` grid.
    alert_on_new : bool
        Make :attr:`RefreshResult.exit_code` 4 when a new theme appears.
    progress : callable, optional
        ``progress(done, total, what)``.

    Returns
    -------
    RefreshResult

    Raises
    ------
    NotReadyError
        When no version is published yet.
    """
    t0 = time.perf_counter()
    from talkthemes.frozen import load_prep_spec
    from talkthemes.versions import load_version, remove_leftovers

    def step(i: int, what: str) -> None:
        log.info("refresh: %s", what)
        if progress:
            progress(i, _STEPS, what)

    with ws.store() as store:
        if store.current_version() is None:
            raise NotReadyError(
                "no version published yet: run 'talkthemes publish' first (refresh builds on it)"
            )
    current = load_version(ws)
    spec = load_prep_spec(ws, current)
    paths = _ingest_paths(ws, ingest_paths)
    remove_leftovers(ws)  # of runs killed before their commit
    with ws.store() as store:
        refresh_id = store.start_refresh(
            current.n, {"paths": [str(p) for p in paths], "resweep_asked": resweep}
        )
    result = RefreshResult(
        status="running",
        previous_version=current.n,
        alert_on_new=alert_on_new,
        family=str(current.info["family"]),
        k=current.k,
    )
    try:
        _run(ws, result, current, spec, paths, list(manifests), resweep, step, refresh_id)
    except BaseException as exc:
        with ws.store() as store:
            store.finish_refresh(
                refresh_id, "failed", {"error": f"{type(exc).__name__}: {exc}"[:500]}
            )
        raise
    result.seconds = time.perf_counter() - t0
    return result


def _run(
    ws: Workspace,
    result: RefreshResult,
    current: Any,
    spec: Any,
    paths: list[Path],
    manifests: list[Path],
    resweep: bool,
    step: Callable[[int, str], None],
    refresh_id: int,
) -> None:
    from talkthemes.align import align_themes, calibrate_threshold
    from talkthemes.assign import folder_manifests
    from talkthemes.frozen import build_frozen_prep
    from talkthemes.ingest.run import ingest
    from talkthemes.prepare.corpus import PreparedCorpus
    from talkthemes.prepare.run import run_prepare
    from talkthemes.sweep import load_current_prep, make_model
    from talkthemes.versions import fit_version, write_version

    settings = ws.settings()
    rs = settings.refresh
    # 1. ingest
    if paths:
        step(0, "ingesting " + ", ".join(map(str, paths)))
        report = ingest(ws, paths, manifests=[*manifests, *folder_manifests(paths)])
        result.ingest = report.to_json()
    _checkpoint("ingested")
    # 2. anything new?
    known = _known_ids(current, spec)
    with ws.store() as store:
        new_ids = [t for t in store.transcript_ids() if t not in known]
    result.new_transcripts = len(new_ids)
    if not new_ids:
        result.status = "nothing_new"
        with ws.store() as store:
            store.finish_refresh(
                refresh_id,
                "nothing_new",
                {"new_transcripts": 0, "rejected": result.rejected},
            )
        return
    # 3. prepare
    step(1, f"preparing ({rs.vocabulary} vocabulary), {len(new_ids):,} new transcripts")
    if rs.vocabulary == "frozen":
        prep_hash, prep_folder = build_frozen_prep(ws, current, spec)
    else:
        run_prepare(ws)
        prep, prep_folder = load_current_prep(ws)
        prep_hash = prep["hash"]
    corpus = PreparedCorpus.load(prep_folder)
    counts = corpus.counts.tocsr()
    _checkpoint("prepared")
    # 4. coherence check
    family, k, seed = result.family or "lda", current.k, int(current.info.get("seed", 0))
    if resweep:
        result.resweep, result.resweep_reason = True, "asked for (--resweep)"
    else:
        step(2, "checking the current themes' coherence on the new transcripts")
        check = coherence_check(ws, current, spec, new_ids, drop=rs.resweep_coherence_drop)
        result.coherence = check
        if check["triggered"]:
            result.resweep = True
            result.resweep_reason = (
                f"C_NPMI on the new transcripts ({check['new']:.3f}) is {check['difference']:.3f} "
                f"below that on earlier ones ({check['earlier']:.3f}), more than "
                f"resweep_coherence_drop = {rs.resweep_coherence_drop}"
            )
    # 5. fit
    extra: dict[str, Any] = {}
    if result.resweep:
        step(3, f"re-sweeping K for {family}")
        k, seed, cell = _resweep_fit(ws, family, prep_hash)
        extra["cell"] = cell
    step(3, f"fitting {family} K={k} on {corpus.n_docs:,} transcripts")
    model = make_model(family, k, seed, settings.sweep).fit(counts)
    fitted = fit_version(
        ws, corpus, family=family, k=k, seed=seed, prep_hash=prep_hash, model=model
    )
    result.k = k
    step(4, f"calibrating the same-theme cut-off ({rs.calibration_seeds} more fits)")
    sets = [
        fitted.topic_terms,
        *_calibration_fits(ws, counts, family, k, seed, rs.calibration_seeds),
    ]
    calibration = calibrate_threshold(sets, rs.match_percentile)
    result.threshold = calibration.to_json()
    _checkpoint("fitted")
    # 6. align
    step(5, "aligning themes to version " + str(current.n))
    alignment = align_themes(
        current.topic_terms,
        current.vocabulary,
        fitted.topic_terms,
        fitted.vocabulary,
        threshold=calibration.threshold,
        margin=rs.tie_margin,
    )
    with ws.store() as store:
        fresh = iter(store.reserve_theme_ids(int(alignment.new.size)))
    theme_ids = [
        int(current.theme_ids[i]) if i >= 0 else next(fresh) for i in alignment.matched_old.tolist()
    ]
    # 7. write
    step(6, "writing the version and its drift report")
    report = _drift(ws, current, fitted, alignment, calibration, theme_ids, new_ids, corpus)
    plan = _theme_plan(report)

    def extra_files(folder: Path, n: int, ids: list[int]) -> None:
        from talkthemes.charts import drift_chart
        from talkthemes.drift import drift_frame, render_markdown
        from talkthemes.render import chart_png

        report["version"] = n
        (folder / "drift.json").write_text(
            json.dumps(report, indent=1, ensure_ascii=False), encoding="utf-8"
        )
        (folder / "drift.md").write_text(render_markdown(report), encoding="utf-8")
        (folder / "drift.png").write_bytes(chart_png(drift_chart(drift_frame(report))))

    summary = {
        "new_transcripts": len(new_ids),
        "counts": report["counts"],
        "new_theme_ids": [t["theme_id"] for t in report["themes"] if t["status"] == "new"],
        "retired_theme_ids": [t["theme_id"] for t in report["retired"]],
        "resweep": result.resweep,
        "resweep_reason": result.resweep_reason,
        "same_theme_cutoff": calibration.threshold,
        "rejected": result.rejected,
    }
    n = write_version(
        ws,
        fitted,
        plan=plan,
        extra_info={
            "refresh": {
                "refresh_id": refresh_id,
                "previous_version": current.n,
                "new_transcripts": len(new_ids),
                "same_theme_cutoff": calibration.to_json(),
                "resweep": result.resweep,
                "resweep_reason": result.resweep_reason,
                "coherence_check": result.coherence,
            },
            **extra,
        },
        extra_files=extra_files,
        refresh_id=refresh_id,
        refresh_info=lambda n, ids: summary,
        checkpoint=_checkpoint,
    )
    folder = ws.versions_dir / str(n)
    result.status = "published"
    result.version = n
    result.counts = report["counts"]
    result.new_themes = [
        {"theme_id": t["theme_id"], "top_terms": t["top_terms"]}
        for t in report["themes"]
        if t["status"] == "new"
    ]
    result.retired_themes = [
        {"theme_id": t["theme_id"], "name": t["name"]} for t in report["retired"]
    ]
    result.drift_files = [str(folder / f) for f in ("drift.json", "drift.md", "drift.png")]


def _drift(
    ws: Workspace,
    current: Any,
    fitted: Any,
    alignment: Any,
    calibration: Any,
    theme_ids: list[int],
    new_ids: Sequence[str],
    corpus: Any,
) -> dict[str, Any]:
    """The drift report of the new version (its number is filled in when it is written)."""
    from talkthemes.drift import ThemeSide, best_examples, drift_report

    with ws.store() as store:
        labels = {t["theme_id"]: t["label"] for t in store.themes(current.n)}
    old_side = ThemeSide(
        current.theme_ids,
        [t["label"] for t in current.themes],
        np.asarray(current.topic_terms),
        current.vocabulary,
        current.coverage(),
    )
    theta = fitted.doc_topics
    coverage = np.bincount(np.argmax(theta, axis=1), minlength=fitted.k) / max(1, len(theta))
    new_side = ThemeSide(
        theme_ids,
        [labels.get(t, "") for t in theme_ids],
        np.asarray(fitted.topic_terms),
        fitted.vocabulary,
        coverage,
    )
    new_set = set(new_ids)
    is_new = np.array([d in new_set for d in corpus.doc_ids], dtype=bool)
    # excerpts of the transcripts shown for each new theme, scrubbed like the prep
    wanted = sorted(
        {
            e["transcript_id"]
            for j in alignment.new.tolist()
            for e in best_examples(theta[:, j], is_new, corpus.doc_ids)
        }
    )
    scrub_on = bool(fitted.info["prepare_settings"].get("scrub", True))
    with ws.store() as store:
        snippets = {t: _excerpt(turns, scrub_on) for t, turns in store.turns_for(wanted)}
    return drift_report(
        old_side,
        new_side,
        alignment,
        doc_topics=theta,
        doc_ids=corpus.doc_ids,
        is_new=is_new,
        version=None,
        previous_version=current.n,
        calibration=calibration.to_json(),
        snippets=snippets,
        created_at=dt.datetime.now().astimezone().isoformat(timespec="seconds"),
    )


def _theme_plan(report: dict[str, Any]) -> Any:
    """Theme ids, statuses and what each theme row and each retired theme records."""
    from talkthemes.versions import ThemePlan

    prev = report["previous_version"]
    keys = ("distance", "nearest_previous", "possible_split_of", "possible_merge_of")
    info = [
        {"previous_version": prev, **{k: t[k] for k in keys if t.get(k) is not None}}
        for t in report["themes"]
    ]
    retired = [
        {
            "theme_id": r["theme_id"],
            "info": {
                "previous_version": prev,
                **{k: r[k] for k in ("top_terms", "coverage_before", "nearest_new")},
            },
        }
        for r in report["retired"]
    ]
    return ThemePlan(
        [t["theme_id"] for t in report["themes"]],
        [t["status"] for t in report["themes"]],
        info,
        retired,
    )
