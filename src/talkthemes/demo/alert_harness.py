"""Measuring refresh alerts on planted corpora: a published history, then a next batch.

The scenario is the invented rail operator's customer line of :mod:`talkthemes.demo.planted`.
Four months of calls (January to April 2027) with the first ``reasons`` call reasons of the
bank are ingested, prepared and published (``family`` at ``k``, as ``publish`` fits it).
Then one more month (May 2027) arrives and ``refresh`` runs, through the product's own
:func:`talkthemes.refresh.run.refresh`, in one of four cases:

* ``nothing`` — the batch has the same reasons in the same proportions;
* ``new`` — a reason the history never had (bank reason ``new_reason``, *Cancelled train
  and alternative travel* by default) leads ``new_share`` of the batch's regular calls;
* ``rise`` — one old reason (``rise_reason``, *Season ticket renewal* by default) leads
  ``rise_factor`` times its earlier share of the calls;
* ``both`` — the two at once.

The other reasons keep their relative proportions. Both months are planted with exact
quotas (:attr:`talkthemes.demo.planted.PlantedSpec.exact`), so every run's batch has the
shares asked for; what varies between seeds is the text and the models. Scored per run
(:func:`score_run`):

* whether any alert was raised (a new theme alerted, or a riser);
* for the new reason, over the batch's calls: the **precision**, the share of the calls led
  by alerted new themes that are about the new reason (their lead or their second reason;
  ``precision_lead`` counts the lead reason only), and the **recall**, the share of the
  calls whose lead reason is the new one that an alerted new theme leads;
* a **rise caught**: a riser whose batch calls are mostly of the rising reason;
* a **split reported as new**: an alerted new theme whose batch calls are mostly of an old
  reason; a **false riser**: a riser whose calls are mostly of another reason.

``bench/alerts.py`` prints the table over several seeds; ``tests/refresh/test_alert_harness.py``
runs a fast subset.
"""

from __future__ import annotations

import datetime as dt
import shutil
from collections import Counter
from collections.abc import Mapping
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import numpy as np

from talkthemes.demo.harness import build_workspace
from talkthemes.demo.planted import (
    PlantedFiles,
    PlantedSpec,
    planted_reasons,
    read_truth,
    write_planted,
)
from talkthemes.errors import InputError
from talkthemes.refresh.run import refresh
from talkthemes.versions.fit import fit_version
from talkthemes.versions.load import load_version
from talkthemes.versions.write import write_version
from talkthemes.workspace import Workspace

__all__ = [
    "CASES",
    "AlertScenario",
    "build_history",
    "run_case",
    "score_run",
    "with_settings",
    "write_batch",
]

#: The four kinds of next batch.
CASES = ("nothing", "new", "rise", "both")


@dataclass(frozen=True)
class AlertScenario:
    """A published history and the next batch (see the module notes).

    Attributes
    ----------
    reasons : int
        Reasons of the history: the first ones of the bank.
    history_calls, batch_calls : int
        Calls in the four months of history and in the next month.
    new_reason : int
        Bank position (0-based) of the reason that appears in the batch; ≥ ``reasons``.
    new_share : float
        Its share of the batch's regular calls (as lead reason).
    rise_reason : int
        Bank position of the old reason that rises; < ``reasons``.
    rise_factor : float
        Its share in the batch over its share in the history.
    family : str
    k : int
        The published model.
    settings : dict
        ``{section: {key: value}}`` for the workspace's ``talkthemes.toml``.
    """

    reasons: int = 6
    history_calls: int = 2400
    batch_calls: int = 900
    new_reason: int = 6
    new_share: float = 0.13
    rise_reason: int = 2
    rise_factor: float = 1.5
    family: str = "nmf"
    k: int = 8
    settings: dict[str, dict[str, Any]] | None = None

    def __post_init__(self) -> None:
        if not self.reasons <= self.new_reason < len(planted_reasons()):
            raise InputError(f"new_reason must be a bank reason from {self.reasons} on")
        if not 0 <= self.rise_reason < self.reasons:
            raise InputError(f"rise_reason must be one of the first {self.reasons} reasons")
        base = self.history_shares()[self.rise_reason]
        if not 0 < self.new_share < 1 or self.new_share + self.rise_factor * base >= 1:
            raise InputError("new_share and rise_factor leave no room for the other reasons")

    def history_spec(self, seed: int) -> PlantedSpec:
        """The four months of history (January to April 2027)."""
        return PlantedSpec(
            reasons=self.reasons, calls=self.history_calls, seed=seed,
            first_day=dt.date(2027, 1, 1), days=120, prefix="AV", exact=True,
        )  # fmt: skip

    def history_shares(self) -> np.ndarray:
        """Each reason's expected share of lead reasons in the history."""
        w = np.asarray(PlantedSpec(reasons=self.reasons).reason_weights())
        return w / w.sum()

    def batch_shares(self, case: str) -> np.ndarray:
        """Each reason's expected share of lead reasons in the batch (``new_reason`` last
        when it appears)."""
        if case not in CASES:
            raise InputError(f"case must be one of {', '.join(CASES)}, got {case!r}")
        s = self.history_shares()
        rise = case in ("rise", "both")
        new = self.new_share if case in ("new", "both") else 0.0
        target = self.rise_factor * s[self.rise_reason] if rise else s[self.rise_reason]
        others = np.ones(s.size, dtype=bool)
        others[self.rise_reason] = False
        out = s.copy()
        out[others] = s[others] * (1 - new - target) / s[others].sum()
        out[self.rise_reason] = target
        return np.append(out, new) if new else out

    def batch_spec(self, case: str, seed: int) -> PlantedSpec:
        """The next month (May 2027) for ``case``; call ids ``B<seed>-…``."""
        shares = self.batch_shares(case)
        reasons = self.reasons
        if case in ("new", "both"):
            # the bank's reasons up to the new one; those in between get a negligible weight
            reasons = self.new_reason + 1
            shares = np.concatenate(
                [shares[:-1], np.full(reasons - self.reasons - 1, 1e-9), shares[-1:]]
            )
        return PlantedSpec(
            reasons=reasons, calls=self.batch_calls, seed=10_000 + seed,
            weights=tuple(float(x) for x in shares), first_day=dt.date(2027, 5, 1), days=31,
            prefix=f"B{seed}", exact=True,
        )  # fmt: skip

    @property
    def new_key(self) -> str:
        return list(planted_reasons())[self.new_reason]

    @property
    def rise_key(self) -> str:
        return list(planted_reasons())[self.rise_reason]


def build_history(root: Path, scenario: AlertScenario, seed: int) -> Workspace:
    """Write, ingest, prepare and publish the history under ``root`` (version 1)."""
    pw = build_workspace(root, scenario.history_spec(seed), settings=scenario.settings)
    ws = pw.workspace
    with ws.lock("alerts"):
        fitted = fit_version(
            ws, pw.corpus, family=scenario.family, k=scenario.k, seed=0, prep_hash=pw.prep_hash
        )
        write_version(ws, fitted)
    return ws


def write_batch(
    root: Path, scenario: AlertScenario, case: str, seed: int
) -> tuple[PlantedFiles, list[dict[str, str]]]:
    """Write the next month of ``case`` under ``root``: the folder to ingest and its truth."""
    files = write_planted(Path(root), scenario.batch_spec(case, seed))
    return files, read_truth(files.truth)


def run_case(
    history: Workspace, root: Path, scenario: AlertScenario, case: str, seed: int
) -> tuple[dict[str, Any], Workspace, list[dict[str, str]]]:
    """Copy the history's workspace to ``root/ws``, write the batch of ``case`` and refresh
    (asking for both alerts).

    Returns
    -------
    doc : dict
        What ``refresh --json`` prints (:meth:`RefreshResult.to_json`).
    ws : Workspace
        The refreshed copy.
    truth : list of dict
        The batch's answer key.
    """
    root = Path(root)
    ws = Workspace(root / "ws")
    shutil.copytree(history.root, ws.root)
    files, truth = write_batch(root / "batch", scenario, case, seed)
    with ws.lock("alerts"):
        result = refresh(ws, ingest_paths=[files.exports], alert_on_new=True, alert_on_rise=True)
    return result.to_json(), ws, truth


def _majority(calls: list[str], reason_of: dict[str, str]) -> str:
    counts = Counter(reason_of.get(c, "") for c in calls)
    return counts.most_common(1)[0][0] if counts else ""


def score_run(
    doc: Mapping[str, Any],
    ws: Workspace,
    truth: list[dict[str, str]],
    scenario: AlertScenario,
    case: str,
) -> dict[str, Any]:
    """Score one refresh against the batch's answer key (see the module notes).

    Parameters
    ----------
    doc : mapping
        What ``refresh --json`` printed for it.
    ws : Workspace
        The refreshed workspace.
    truth : list of dict
        The batch's answer key.

    Returns
    -------
    dict
        ``case``, ``alert`` (any new-theme alert or riser), ``new_alerts``, ``risers``,
        ``fallers``, ``precision``, ``precision_lead`` and ``recall`` of the new reason (None
        when it is not planted) and the counts behind them (``alerted_calls``,
        ``alerted_about_new``, ``alerted_led_by_new``), ``rise_caught`` (None when no rise
        is planted), ``split_as_new`` (alerted new themes whose calls are mostly an old
        reason), ``false_risers``, ``verdicts`` (the verdict of every new theme),
        ``new_reason_calls`` and ``rise_reason_calls``.
    """
    if doc["status"] != "published":
        raise InputError(f"the refresh did not publish ({doc['status']})")
    version = load_version(ws)
    reason_of = {r["call_id"]: r["reason"] for r in truth}
    lead_theme = np.asarray(version.theme_ids)[version.lead()]
    calls_of: dict[int, list[str]] = {}
    for d, t in zip(version.doc_ids, lead_theme.tolist(), strict=True):
        if d in reason_of:
            calls_of.setdefault(int(t), []).append(d)
    alerted = list(doc["alerts"]["new"])
    in_alerted = {c for t in alerted for c in calls_of.get(t, [])}
    new_calls = {c for c, r in reason_of.items() if r == scenario.new_key}
    about_new = new_calls | {
        r["call_id"] for r in truth if r["secondary_reason"] == scenario.new_key
    }
    planted_new = case in ("new", "both")
    precision = precision_lead = recall = None
    if planted_new:
        precision = len(in_alerted & about_new) / len(in_alerted) if in_alerted else 0.0
        precision_lead = len(in_alerted & new_calls) / len(in_alerted) if in_alerted else 0.0
        recall = len(in_alerted & new_calls) / len(new_calls) if new_calls else 0.0
    split_as_new = [
        t for t in alerted if _majority(calls_of.get(t, []), reason_of) != scenario.new_key
    ]
    risers = [int(t["theme_id"]) for t in doc["risers"]]

    def riser_reason(t: Mapping[str, Any]) -> str:
        ids = [int(t["theme_id"]), *map(int, t.get("includes", []))]
        return _majority([c for i in ids for c in calls_of.get(i, [])], reason_of)

    rise_reasons = [riser_reason(t) for t in doc["risers"]]
    planted_rise = case in ("rise", "both")
    rise_caught = (scenario.rise_key in rise_reasons) if planted_rise else None
    false_risers = [
        t for t, r in zip(risers, rise_reasons, strict=True)
        if not (planted_rise and r == scenario.rise_key)
    ]  # fmt: skip
    return {
        "case": case,
        "alert": bool(alerted or risers),
        "new_alerts": alerted,
        "risers": risers,
        "fallers": [int(t["theme_id"]) for t in doc["fallers"]],
        "precision": precision,
        "precision_lead": precision_lead,
        "recall": recall,
        "alerted_calls": len(in_alerted),
        "alerted_about_new": len(in_alerted & about_new),
        "alerted_led_by_new": len(in_alerted & new_calls),
        "rise_caught": rise_caught,
        "split_as_new": split_as_new,
        "false_risers": false_risers,
        "verdicts": {str(t["theme_id"]): t["verdict"] for t in doc["new_themes"]},
        "new_reason_calls": len(new_calls),
        "rise_reason_calls": sum(r == scenario.rise_key for r in reason_of.values()),
    }


def with_settings(scenario: AlertScenario, **refresh: Any) -> AlertScenario:
    """The scenario with more ``[refresh]`` settings."""
    settings = {k: dict(v) for k, v in (scenario.settings or {}).items()}
    settings.setdefault("refresh", {}).update(refresh)
    return replace(scenario, settings=settings)
