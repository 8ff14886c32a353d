"""The refresh run: retrain as transcripts arrive, keeping theme identities.

One run (the caller holds the workspace lock):

1. **ingest** the given paths, or ``[refresh] inbox`` (a relative inbox is relative to the
   workspace folder). A file named ``manifest.csv``, ``manifest.parquet`` or
   ``manifest.jsonl`` in an ingested folder is read as a manifest, as ingest reads it.
2. **nothing new?** The transcripts the current version knows are its training transcripts
   and those its prep excluded; when the store holds no other, the run stops here with
   "nothing new to do" and changes nothing (a second run is a no-op).
3. **prepare**: by default the vocabulary is rebuilt on all transcripts
   (:func:`~talkthemes.prepare.run.run_prepare`); with ``[refresh] vocabulary = "frozen"``
   every transcript is prepared with the current version's settings, boilerplate
   sentences, phrases and vocabulary (:class:`~talkthemes.prepare.frozen.PrepApplier`).
4. **coherence check** (:mod:`talkthemes.refresh.coherence`): when the current themes'
   C_NPMI on the new transcripts is lower than on earlier ones by more than
   ``[refresh] resweep_coherence_drop``, K is chosen again.
5. **fit** the published family at the published K with the published seed on all
   transcripts — or, with ``resweep`` (asked for, or from the check), run the ``[sweep]``
   grid for that family and fit its recommended K.
6. **calibrate** the same-theme cut-off from ``[refresh] calibration_seeds`` more fits of
   the same family and K (other seeds, each on a random ``[sweep] subsample`` of the
   transcripts), and **align** the new themes to the current version's
   (:mod:`talkthemes.versions.align`): a matched theme keeps its id, label and note (carried), an
   unmatched new theme gets a new id (new), an unmatched old theme is recorded as retired;
   near-ties are flagged as possible splits and merges. Themes are aligned as fitted
   (merged themes apart), so merges carry by id like labels; the drift report lists the
   curated themes it could not carry (:mod:`talkthemes.versions.curation`). Without a
   re-sweep, when no theme of the fit is judged new, K + 1 (up to ``[refresh]
   new_theme_room``) is fitted too and published if a theme there is judged new
   (:mod:`talkthemes.refresh.room`).
7. **judge the alerts** (:mod:`talkthemes.refresh.alert_step`, docs/methods_alerts.md):
   which new themes are really new (mass, not a split, new words, not marked not a theme),
   which carried themes rose or fell significantly; each with three example sentences;
   then **write** the version in full — with ``drift.json``, ``drift.md`` and ``drift.png``
   (:mod:`talkthemes.refresh.drift_step`) — and make it current in one transaction together with the
   refresh's log row (:func:`~talkthemes.versions.write.write_version`); then old versions
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

import logging
import time
from collections.abc import Callable, Mapping, Sequence
from pathlib import Path
from typing import Any

import numpy as np

from talkthemes.errors import InputError, NotReadyError
from talkthemes.ingest.run import ingest
from talkthemes.languages.lanes import themed_languages
from talkthemes.prepare.corpus import PreparedCorpus
from talkthemes.prepare.frozen import PrepSpec, build_frozen_prep, load_prep_spec
from talkthemes.prepare.run import run_prepare
from talkthemes.progress import Progress, report
from talkthemes.refresh.alert_step import alert_inputs, alert_rules
from talkthemes.refresh.calibration import calibration_fits
from talkthemes.refresh.coherence import coherence_check
from talkthemes.refresh.drift_step import DriftPng, drift_files, drift_of, theme_plan
from talkthemes.refresh.result import RefreshResult
from talkthemes.refresh.room import Fit, fit_at, make_room
from talkthemes.sweep.run import load_current_prep, run_sweep
from talkthemes.testhook import pause_at
from talkthemes.versions.alert_rules import AlertRules
from talkthemes.versions.align import align_themes, calibrate_threshold
from talkthemes.versions.curation import curation_of
from talkthemes.versions.fit import fit_version
from talkthemes.versions.load import Version, load_version
from talkthemes.versions.prune import remove_leftovers
from talkthemes.versions.publish import find_cell
from talkthemes.versions.write import write_version
from talkthemes.workspace import Workspace

__all__ = ["PAUSE_STAGES", "RefreshResult", "refresh"]

log = logging.getLogger(__name__)

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
    """The test hook (:mod:`talkthemes.testhook`) at one of :data:`PAUSE_STAGES`."""
    pause_at(stage, "refresh")


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


# -- the run ------------------------------------------------------------------------------
def _resweep_fit(ws: Workspace, family: str, prep_hash: str) -> tuple[int, int, str]:
    """Run the [sweep] grid for ``family`` on the current prep; its recommended K and seed."""
    result = run_sweep(ws, families=[family])
    rec = result.recommendations.get(family)
    if rec is None:
        raise NotReadyError(f"the re-sweep gave no recommendation for {family}")
    _, chosen = find_cell(ws, prep_hash, result.sweep_id, k=rec.k, family=family, cell=None)
    return int(rec.k), int(chosen["seed"]), str(chosen["cell"])


def refresh(
    ws: Workspace,
    *,
    ingest_paths: Sequence[Path] | None = None,
    manifests: Sequence[Path] = (),
    resweep: bool = False,
    alert_on_new: bool = False,
    alert_on_rise: bool = False,
    alerts: Mapping[str, Any] | None = None,
    progress: Progress | None = None,
    drift_png: DriftPng | None = None,
) -> RefreshResult:
    """Ingest, retrain, align to the current version, write drift, publish (module notes).

    Parameters
    ----------
    ws : Workspace
    ingest_paths : sequence of Path, optional
        Files and folders to ingest; ``[refresh] inbox`` when omitted.
    manifests : sequence of Path
        Metadata tables (besides the ``manifest.*`` files in ingested folders).
    resweep : bool
        Choose K again with the ``[sweep]`` grid.
    alert_on_new : bool
        Make :attr:`RefreshResult.exit_code` 4 when a new theme is alerted (every piece of
        evidence held; docs/methods_alerts.md).
    alert_on_rise : bool
        Make :attr:`RefreshResult.exit_code` 4 when a carried theme rose significantly.
    alerts : mapping, optional
        Alert thresholds for this run, overriding the ``[refresh] alert_*`` settings: each
        named without its ``alert_`` prefix (``{"new_min_calls": 20}``;
        :func:`talkthemes.refresh.alert_step.alert_rules`). The drift report records the
        thresholds used.
    progress : Progress, optional
        ``progress(done, total, what)``.
    drift_png : callable, optional
        ``drift_png(report) -> bytes``, the drift chart as PNG (see
        :func:`talkthemes.refresh.drift_step.drift_files`).

    Returns
    -------
    RefreshResult

    Raises
    ------
    NotReadyError
        When no version is published yet.
    ConfigError
        An alert override with an unknown name or a value not allowed (nothing is done).
    """
    t0 = time.perf_counter()
    rules = alert_rules(ws.settings().refresh, alerts)

    def step(i: int, what: str) -> None:
        log.info("refresh: %s", what)
        report(progress, i, _STEPS, what)

    with ws.store() as store:
        if store.current_version() is None:
            raise NotReadyError(
                "no version published yet: run 'talkthemes publish' first (refresh builds on it)"
            )
    current = load_version(ws, fold=False)  # themes as fitted: merges carry by id
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
        alert_on_rise=alert_on_rise,
        family=str(current.info["family"]),
        k=current.k,
    )
    try:
        _run(
            ws, result, current, spec, paths, list(manifests), resweep, rules, step, refresh_id,
            drift_png,
        )  # fmt: skip
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
    current: Version,
    spec: PrepSpec,
    paths: list[Path],
    manifests: list[Path],
    resweep: bool,
    rules: AlertRules,
    step: Callable[[int, str], None],
    refresh_id: int,
    drift_png: DriftPng | None,
) -> None:
    # Deferred on purpose: talkthemes.models loads gensim and scikit-learn (about a second).
    from talkthemes.models.factory import make_model

    settings = ws.settings()
    rs = settings.refresh
    # 1. ingest
    if paths:
        step(0, "ingesting " + ", ".join(map(str, paths)))
        ingested = ingest(ws, paths, manifests=manifests)  # and the manifests in the folders
        result.ingest = ingested.to_json()
    _checkpoint("ingested")
    # 2. anything new?
    known = _known_ids(current, spec)
    with ws.store() as store:
        themed = store.transcript_ids(themed_languages(settings.prepare))
        new_ids = [t for t in themed if t not in known]
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
        prep_hash = prep.hash
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
    step(4, f"calibrating the same-theme cut-off ({rs.calibration_seeds} more fits)")
    sets = [
        fitted.topic_terms,
        *calibration_fits(ws, counts, family, k, seed, rs.calibration_seeds),
    ]
    calibration = calibrate_threshold(sets, rs.match_percentile)
    result.threshold = calibration.to_json()
    _checkpoint("fitted")
    # 6. align (and make room for a new theme: refresh/room.py)
    step(5, "aligning themes to version " + str(current.n))
    alignment = align_themes(
        current.topic_terms,
        current.vocabulary,
        fitted.topic_terms,
        fitted.vocabulary,
        threshold=calibration.threshold,
        margin=rs.tie_margin,
    )
    new_set = set(new_ids)
    is_new = np.array([d in new_set for d in corpus.doc_ids], dtype=bool)
    inputs = alert_inputs(ws, current, spec, corpus.doc_ids, is_new, corpus.counts)
    if not result.resweep and rs.new_theme_room > 0:
        step(5, f"aligning themes to version {current.n}; room for a new theme up to "
                f"K={k + rs.new_theme_room}")  # fmt: skip
        refit = fit_at(ws, corpus, current, settings, family=family, seed=seed,
                       prep_hash=prep_hash, threshold=calibration.threshold)  # fmt: skip
        chosen, decision = make_room(
            ws, current, Fit(k, model, fitted, alignment), inputs=inputs, refit=refit,
            rules=rules, room=rs.new_theme_room,
        )  # fmt: skip
        result.room = decision.to_json()
        k, fitted, alignment = chosen.k, chosen.fitted, chosen.alignment
    result.k = k
    with ws.store() as store:
        fresh = iter(store.reserve_theme_ids(int(alignment.new.size)))
    theme_ids = [
        int(current.theme_ids[i]) if i >= 0 else next(fresh) for i in alignment.matched_old.tolist()
    ]
    # 7. write
    step(6, "judging alerts, writing the version and its drift report")
    drift = drift_of(
        ws, current, fitted, alignment, calibration, theme_ids, corpus, inputs, rules
    )  # fmt: skip
    drift["curation"] = curation_of(ws, current.theme_ids, theme_ids, drift["retired"])
    drift["room"] = result.room
    alerts = drift["alerts"]
    plan = theme_plan(drift)

    summary = {
        "new_transcripts": len(new_ids),
        "counts": drift["counts"],
        "new_theme_ids": [t["theme_id"] for t in drift["themes"] if t["status"] == "new"],
        "retired_theme_ids": [t["theme_id"] for t in drift["retired"]],
        "alerts": {k: alerts[k] for k in ("new", "rise", "fall")},
        "resweep": result.resweep,
        "resweep_reason": result.resweep_reason,
        "room": result.room,
        "same_theme_cutoff": calibration.threshold,
        "rejected": result.rejected,
        "curation": {
            **drift["curation"]["counts"],
            "not_carried_theme_ids": [e["theme_id"] for e in drift["curation"]["not_carried"]],
        },
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
                "room": result.room,
            },
            **extra,
        },
        extra_files=drift_files(drift, drift_png),
        refresh_id=refresh_id,
        refresh_info=lambda n, ids: summary,
        checkpoint=_checkpoint,
    )
    folder = ws.versions_dir / str(n)
    result.status = "published"
    result.version = n
    result.counts = drift["counts"]
    result.new_themes = list(alerts["new_themes"])
    result.risers = [t for t in alerts["changes"] if t["alert"] and t["direction"] == "rise"]
    result.fallers = [t for t in alerts["changes"] if t["alert"] and t["direction"] == "fall"]
    result.retired_themes = [
        {"theme_id": t["theme_id"], "name": t["name"]} for t in drift["retired"]
    ]
    drawn = ("drift.json", "drift.md", *(("drift.png",) if drift_png is not None else ()))
    result.drift_files = [str(folder / f) for f in drawn]
    result.curation = drift["curation"]
