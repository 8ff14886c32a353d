"""The refresh's drift step: the report of what moved, the theme plan, the drift files.

The report compares the new version's themes with the current version's
(:func:`talkthemes.versions.drift.drift_report`) with its alerts
(:func:`talkthemes.refresh.alert_step.alerts_of`); the plan says which rows carry which theme
id and which themes retire (:class:`talkthemes.versions.write.ThemePlan`); the files are
``drift.json``, ``drift.md`` (:mod:`talkthemes.versions.drift_markdown`) and ``drift.png``.
"""

from __future__ import annotations

import datetime as dt
import json
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

import numpy as np

from talkthemes.prepare.corpus import PreparedCorpus
from talkthemes.prepare.scrub import scrub
from talkthemes.refresh.alert_step import AlertInputs, alerts_of
from talkthemes.versions.alert_rules import AlertRules
from talkthemes.versions.alerts import with_alerts
from talkthemes.versions.align import Alignment, Calibration
from talkthemes.versions.curation import curation_markdown
from talkthemes.versions.drift import ThemeSide, best_examples, drift_report
from talkthemes.versions.drift_markdown import render_markdown
from talkthemes.versions.fit import FittedVersion
from talkthemes.versions.load import Version
from talkthemes.versions.write import ExtraFiles, ThemePlan, fitted_names
from talkthemes.workspace import Workspace

__all__ = ["DriftPng", "drift_files", "drift_of", "excerpt", "theme_plan", "theme_sides"]

#: ``drift_png(report) -> bytes``: the drift chart of a report as PNG.
DriftPng = Callable[[dict[str, Any]], bytes]


def excerpt(turns: Sequence[tuple[str, str]], scrub_on: bool, width: int = 200) -> str:
    """The start of a transcript's customer turns (all turns when none is labelled so),
    scrubbed of personal data when the prep scrubs."""
    spoken = [t for role, t in turns if role == "customer"] or [t for _, t in turns]
    text = " ".join(" ".join(spoken).split())
    if scrub_on:
        text = scrub(text)[0]
    text = " ".join(text.split())
    return text if len(text) <= width else text[: width - 1].rstrip() + "…"


def theme_sides(
    ws: Workspace, current: Version, fitted: FittedVersion, theme_ids: Sequence[int]
) -> tuple[ThemeSide, ThemeSide]:
    """The current version's themes and a new fit's, as drift and alerts compare them.

    ``theme_ids`` are the fit's theme ids by row (carried ids, and the ids new themes get);
    a carried id keeps its label.
    """
    with ws.store() as store:
        labels = {t.theme_id: t.label for t in store.themes(current.n)}
    old_side = ThemeSide(
        current.theme_ids,
        [t.label for t in current.themes],
        np.asarray(current.topic_terms),
        current.vocabulary,
        current.coverage(),
        suggested=current.suggested_names(),
    )
    theta = np.asarray(fitted.doc_topics)
    coverage = np.bincount(np.argmax(theta, axis=1), minlength=fitted.k) / max(1, len(theta))
    new_side = ThemeSide(
        list(theme_ids),
        [labels.get(int(t), "") for t in theme_ids],
        np.asarray(fitted.topic_terms),
        fitted.vocabulary,
        coverage,
        suggested=fitted_names(fitted, ws.settings().view.relevance_lambda),
    )
    return old_side, new_side


def drift_of(
    ws: Workspace,
    current: Version,
    fitted: FittedVersion,
    alignment: Alignment,
    calibration: Calibration,
    theme_ids: list[int],
    corpus: PreparedCorpus,
    inputs: AlertInputs,
    rules: AlertRules,
) -> dict[str, Any]:
    """The drift report of the new version (its number is filled in when it is written),
    with its ``alerts`` block (:func:`talkthemes.refresh.alert_step.alerts_of`);
    ``inputs`` says which transcripts are new, and what the alerts read about them."""
    old_side, new_side = theme_sides(ws, current, fitted, theme_ids)
    theta = fitted.doc_topics
    is_new = inputs.is_new
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
        snippets = {t: excerpt(turns, scrub_on) for t, turns in store.turns_for(wanted)}
    report = drift_report(
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
    alerts = alerts_of(ws, fitted, alignment, (old_side, new_side), inputs, rules)
    return with_alerts(report, alerts)


def theme_plan(report: dict[str, Any]) -> ThemePlan:
    """Theme ids, statuses and what each theme row and each retired theme records."""
    prev = report["previous_version"]
    keys = ("distance", "nearest_previous", "possible_split_of", "possible_merge_of",
            "verdict", "alert", "split_of", "change")  # fmt: skip
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


def drift_files(report: dict[str, Any], drift_png: DriftPng | None = None) -> ExtraFiles:
    """The writer of ``drift.json``, ``drift.md`` (and ``drift.png``) into a version folder.

    Parameters
    ----------
    report : dict
        The drift report; its ``version`` is set to the version's number when written.
    drift_png : callable, optional
        ``drift_png(report) -> bytes``, the PNG of the drift chart. The refresh draws
        nothing itself (it is domain code): the public API passes
        :func:`talkthemes.api.drift_picture.drift_png`; without one, no ``drift.png``.
    """

    def write(folder: Path, n: int, ids: list[int]) -> None:
        report["version"] = n
        (folder / "drift.json").write_text(
            json.dumps(report, indent=1, ensure_ascii=False), encoding="utf-8"
        )
        (folder / "drift.md").write_text(
            render_markdown(report) + curation_markdown(report), encoding="utf-8"
        )
        if drift_png is not None:
            (folder / "drift.png").write_bytes(drift_png(report))

    return write
