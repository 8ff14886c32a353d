"""Room for a new theme: a refresh that tries K + 1 when a new call reason has no theme.

A refresh refits the published model's family and K on all transcripts. When the new month
brings a call reason the earlier months did not have, and the published K already matches
the number of reasons (as a good recommendation does), the refit has no theme to spare: the
new reason is absorbed by its nearest theme, which then reads as a *riser*, and no new theme
is alerted. The planted-corpus harness shows it plainly (docs/methods_alerts.md, "Room for a
new theme").

So, when the refit at K holds no theme the alert rules call new, the refresh also fits
K + 1 (up to K + ``[refresh] new_theme_room``), aligns each fit to the current version with
the same cut-off and judges its new themes by the same four pieces of evidence (mass, not a
split, new words, not marked "not a theme"; :func:`talkthemes.versions.alerts.judge_alerts`).
The first fit that holds a theme judged new is published instead, and the drift report says
that K was raised and why. A batch with nothing new gives K + 1 fits whose extra theme is a
split or familiar, so K stays. The same-theme cut-off calibrated at K is used for every fit.
"""

from __future__ import annotations

import logging
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

from talkthemes.config import Settings
from talkthemes.prepare.corpus import PreparedCorpus
from talkthemes.refresh.alert_step import AlertInputs
from talkthemes.refresh.drift_step import theme_sides
from talkthemes.versions.alert_rules import AlertRules
from talkthemes.versions.align import Alignment, align_themes
from talkthemes.versions.fit import FittedVersion, fit_version
from talkthemes.versions.load import Version
from talkthemes.workspace import Workspace

__all__ = ["Fit", "RoomDecision", "fit_at", "make_room"]

log = logging.getLogger(__name__)


@dataclass
class Fit:
    """A refit of the corpus: the model, the fitted version and its alignment."""

    k: int
    model: Any
    fitted: FittedVersion
    alignment: Alignment


@dataclass
class RoomDecision:
    """What the room check decided.

    Attributes
    ----------
    published_k, k : int
        The published version's K, and the K this refresh publishes.
    tried : list of dict
        Each fit judged: ``k``, ``new_themes`` (themes no current theme continues) and
        ``alerted`` (how many of those the alert rules call new).
    """

    published_k: int
    k: int
    tried: list[dict[str, int]] = field(default_factory=list)

    @property
    def raised(self) -> bool:
        """Whether K was raised to make room for a new theme."""
        return self.k != self.published_k

    def sentence(self) -> str:
        """One line for the drift report and the command's output."""
        if self.raised:
            return (
                f"K raised from {self.published_k} to {self.k}: at K = {self.published_k} no "
                f"theme was new, at K = {self.k} a theme passed every alert check "
                "(a new call reason needed a theme of its own)"
            )
        extra = ", ".join(f"K = {t['k']}" for t in self.tried if t["k"] != self.published_k)
        if not extra:
            return f"K kept at {self.published_k}: a theme was already new at that K"
        return f"K kept at {self.published_k}: no theme was new at {extra} either"

    def to_json(self) -> dict[str, Any]:
        """``published_k``, ``k``, ``raised``, ``tried`` and ``text``."""
        return {
            "published_k": self.published_k,
            "k": self.k,
            "raised": self.raised,
            "tried": list(self.tried),
            "text": self.sentence(),
        }


def make_room(
    ws: Workspace,
    current: Version,
    base: Fit,
    *,
    inputs: AlertInputs,
    refit: Callable[[int], Fit],
    rules: AlertRules,
    room: int,
) -> tuple[Fit, RoomDecision]:
    """The fit to publish: ``base``, or a larger K when only that holds a new theme.

    Parameters
    ----------
    ws : Workspace
    current : Version
        The published version the refresh aligns to.
    base : Fit
        The refit at the published K.
    inputs : AlertInputs
        What the alert judgements read about the refreshed corpus, worked out once for
        every fit (:func:`talkthemes.refresh.alert_step.alert_inputs`).
    refit : callable
        ``refit(k) -> Fit``: fits the corpus at another K (same family and seed) and
        aligns it with the same-theme cut-off calibrated at the published K
        (:func:`fit_at`).
    rules : AlertRules
    room : int
        Most extra themes tried (``[refresh] new_theme_room``); 0 = no check.

    Returns
    -------
    fit : Fit
    decision : RoomDecision
    """
    decision = RoomDecision(published_k=base.k, k=base.k)
    if room <= 0:
        return base, decision

    def alerted(fit: Fit) -> int:
        sides = theme_sides(ws, current, fit.fitted, _provisional_ids(current, fit.alignment))
        count = len(inputs.judge(sides, fit.alignment, fit.fitted.doc_topics, rules)["new"])
        decision.tried.append(
            {"k": fit.k, "new_themes": int(fit.alignment.new.size), "alerted": count}
        )
        return count

    if alerted(base):
        return base, decision
    for k in range(base.k + 1, base.k + room + 1):
        candidate = refit(k)
        if alerted(candidate):
            decision.k = k
            log.info("refresh: K raised from %d to %d to make room for a new theme", base.k, k)
            return candidate, decision
    return base, decision


def _provisional_ids(current: Version, alignment: Alignment) -> list[int]:
    """Theme ids for judging a fit: carried ids, and ids past the current ones for new
    themes (never stored: the published fit's new themes get reserved ids)."""
    nxt = max((int(t) for t in current.theme_ids), default=0) + 1
    out = []
    for i in alignment.matched_old.tolist():
        if i >= 0:
            out.append(int(current.theme_ids[i]))
        else:
            out.append(nxt)
            nxt += 1
    return out


def fit_at(
    ws: Workspace,
    corpus: PreparedCorpus,
    current: Version,
    settings: Settings,
    *,
    family: str,
    seed: int,
    prep_hash: str,
    threshold: float,
) -> Callable[[int], Fit]:
    """``refit(k)``: the corpus fitted at K (the published family and seed) and aligned."""
    # Deferred on purpose: talkthemes.models loads gensim and scikit-learn (about a second).
    from talkthemes.models.factory import make_model

    counts = corpus.counts.tocsr()

    def refit(k: int) -> Fit:
        model = make_model(family, k, seed, settings.sweep).fit(counts)
        fitted = fit_version(
            ws, corpus, family=family, k=k, seed=seed, prep_hash=prep_hash, model=model
        )
        alignment = align_themes(
            current.topic_terms,
            current.vocabulary,
            fitted.topic_terms,
            fitted.vocabulary,
            threshold=threshold,
            margin=settings.refresh.tie_margin,
        )
        return Fit(k, model, fitted, alignment)

    return refit
