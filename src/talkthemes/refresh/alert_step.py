"""The refresh's alert step: what the alert judgements need from the store and the models,
and three example sentences per alert.

* :func:`alert_rules` — the thresholds: the ``[refresh] alert_*`` settings, each of which a
  caller may override for one run (``Workspace.refresh(alerts=...)``);
* :func:`previous_leads` — each transcript's lead theme under the previous version: read
  from its shares for the transcripts it was trained on, inferred with its saved model
  (:class:`talkthemes.assign.ShareModel`, on text prepared the version's way) for the others;
* :func:`term_counts` — each term's token count in the new and in the earlier transcripts;
* :func:`not_a_theme_ids` — the theme ids marked "not a theme" (the one place that reads the
  mark, so alerts follow whatever the curation stores);
* :func:`alert_inputs` — those three, read once per refresh (:class:`AlertInputs`): the
  room check (:mod:`talkthemes.refresh.room`) judges up to two fits on them and the alert
  step the one published;
* :func:`alert_examples` — for each alert, three sentences from different new transcripts the
  theme leads that carry its terms most (docs/methods_alerts.md, "Example sentences").
"""

from __future__ import annotations

import logging
import re
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import scipy.sparse as sp

from talkthemes.assign import ShareModel
from talkthemes.config import RefreshSettings, settings_from_dict
from talkthemes.errors import ConfigError, NotReadyError
from talkthemes.prepare.frozen import PrepApplier, PrepSpec
from talkthemes.prepare.scrub import scrub
from talkthemes.store import Store
from talkthemes.store.curation import merge_root
from talkthemes.versions.alert_rules import AlertRules, Periods
from talkthemes.versions.alerts import judge_alerts
from talkthemes.versions.align import Alignment
from talkthemes.versions.drift import ThemeSide
from talkthemes.versions.fit import FittedVersion
from talkthemes.versions.load import Version
from talkthemes.workspace import Workspace

__all__ = [
    "ALERT_SETTINGS",
    "AlertInputs",
    "alert_examples",
    "alert_inputs",
    "alert_rules",
    "alerts_of",
    "best_sentences",
    "not_a_theme_ids",
    "previous_leads",
    "split_sentences",
    "term_counts",
]

#: Candidate transcripts read per alert (those with the largest share of the theme).
CANDIDATES = 12
#: Transcripts prepared and inferred at a time under the previous version.
_CHUNK = 2000
#: Longest example sentence shown, in characters.
WIDTH = 240
_SENTENCE_END = re.compile(r"(?<=[.!?])\s+")

log = logging.getLogger(__name__)

#: The names an alert setting goes by in ``alerts=`` overrides: its ``[refresh]`` name
#: without the ``alert_`` prefix (``new_min_calls`` for ``alert_new_min_calls``).
ALERT_SETTINGS = tuple(
    name.removeprefix("alert_")
    for name in RefreshSettings.model_fields
    if name.startswith("alert_")
)


def alert_rules(
    settings: RefreshSettings, overrides: Mapping[str, Any] | None = None
) -> AlertRules:
    """The alert thresholds of one run: ``[refresh] alert_*`` settings, with overrides.

    Parameters
    ----------
    settings : RefreshSettings
        The workspace's ``[refresh]`` settings.
    overrides : mapping, optional
        Setting name without its ``alert_`` prefix (:data:`ALERT_SETTINGS`) → value, for
        this run only; each value is checked like the setting in ``talkthemes.toml``.

    Raises
    ------
    ConfigError
        An unknown name (the message lists the known ones) or a value not allowed.
    """
    if not overrides:
        return AlertRules.from_settings(settings)
    unknown = sorted(str(k) for k in overrides if k not in ALERT_SETTINGS)
    if unknown:
        raise ConfigError(
            f"alert settings: unknown {', '.join(unknown)} (known: {', '.join(ALERT_SETTINGS)})"
        )
    merged = {**settings.model_dump(), **{f"alert_{k}": v for k, v in overrides.items()}}
    checked = settings_from_dict({"refresh": merged}, source="alert settings")
    return AlertRules.from_settings(checked.refresh)


def previous_leads(
    ws: Workspace, previous: Version, spec: PrepSpec, doc_ids: Sequence[str]
) -> np.ndarray:
    """Each transcript's lead theme (row of ``previous``) under the previous version.

    Returns
    -------
    ndarray of int (len(doc_ids),)
        -1 for a transcript none of whose words the previous version knows, and for every
        transcript it was not trained on when its model state is missing (a version
        written before states were kept: the split test then reads earlier transcripts
        only).
    """
    own = {d: i for i, d in enumerate(previous.doc_ids)}
    lead = previous.lead()
    out = np.full(len(doc_ids), -1, dtype=np.int64)
    others: list[str] = []
    for k, d in enumerate(doc_ids):
        i = own.get(d)
        if i is None:
            others.append(d)
        else:
            out[k] = lead[i]
    if not others:
        return out
    try:
        model = ShareModel.from_version(previous)
    except NotReadyError as exc:  # a version written before model states were kept
        log.warning("split test on earlier transcripts only: %s", exc)
        return out
    applier = PrepApplier(spec)
    where = {d: k for k, d in enumerate(doc_ids)}
    for start in range(0, len(others), _CHUNK):
        with ws.store() as store:
            applied = applier.apply(store.turns_for(others[start : start + _CHUNK]))
        shares = model.shares(applied.counts.tocsr())
        for d, row, known in zip(applied.doc_ids, shares, applied.known, strict=True):
            out[where[d]] = int(np.argmax(row)) if known > 0 else -1
    return out


def term_counts(counts: Any, is_new: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Token count of every term in the new transcripts and in the earlier ones."""
    m = sp.csr_matrix(counts)
    is_new = np.asarray(is_new, dtype=bool)
    new = np.asarray(m[np.flatnonzero(is_new)].sum(axis=0)).ravel()
    earlier = np.asarray(m[np.flatnonzero(~is_new)].sum(axis=0)).ravel()
    return new.astype(np.int64), earlier.astype(np.int64)


def not_a_theme_ids(store: Store, version: int) -> set[int]:
    """Theme ids of a version marked "not a theme" (``label --not-a-theme``, the hidden flag,
    kept per theme id, so carried themes keep it); a theme merged into one so marked counts
    as marked too (:func:`talkthemes.store.curation.merge_root`)."""
    themes = store.themes(version)
    hidden = {t.theme_id for t in themes if t.hidden}
    merges = store.theme_merges()
    return {t.theme_id for t in themes if merge_root(merges, t.theme_id) in hidden} | hidden


def split_sentences(text: str) -> list[str]:
    """Sentences of a turn: split after ``.``, ``!`` or ``?`` followed by white space."""
    return [s for s in (p.strip() for p in _SENTENCE_END.split(" ".join(text.split()))) if s]


def _shown(sentence: str, scrub_on: bool) -> str:
    text = " ".join((scrub(sentence)[0] if scrub_on else sentence).split())
    return text if len(text) <= WIDTH else text[: WIDTH - 1].rstrip() + "…"


def best_sentences(
    turns: Iterable[tuple[str, Sequence[tuple[str, str]]]],
    applier: PrepApplier,
    weights: np.ndarray,
    *,
    n: int = 3,
    scrub_on: bool = True,
) -> list[dict[str, str]]:
    """Up to ``n`` sentences, each from a different transcript, that carry a theme most.

    A sentence's score is Σ_v c_v·φ_v over its prepared terms (the theme's term weights
    ``weights`` times the term's count once prepared like the version's transcripts, so
    boilerplate sentences score 0). The customer's sentences are preferred: a transcript's
    agent sentences are used only when none of its customer sentences scores above 0. Each
    transcript gives its best sentence; the ``n`` best transcripts are kept, best first,
    skipping a sentence whose words (ignoring case) were already picked from another one.

    Returns
    -------
    list of dict
        ``transcript_id`` and ``sentence`` (scrubbed of personal data when ``scrub_on``,
        at most :data:`WIDTH` characters; escaped by each face when shown).
    """
    rows: list[tuple[str, str, str, str]] = []  # (key, transcript, role, sentence)
    for tid, spoken in turns:
        for t, (role, text) in enumerate(spoken):
            for s, sentence in enumerate(split_sentences(text)):
                rows.append((f"{tid}\x1f{t}\x1f{s}", tid, role, sentence))
    if not rows:
        return []
    applied = applier.apply([(key, [(role, sentence)]) for key, _, role, sentence in rows])
    scores = np.asarray(applied.counts @ np.asarray(weights, dtype=np.float64)).ravel()
    score_of = dict(zip(applied.doc_ids, scores, strict=True))
    best: dict[str, tuple[bool, float, str]] = {}
    for key, tid, role, sentence in rows:
        customer = role == "customer"
        score = float(score_of.get(key, 0.0))
        if score <= 0:
            continue
        current = best.get(tid)
        if current is None or (customer, score) > (current[0], current[1]):
            best[tid] = (customer, score, sentence)
    picked: list[dict[str, str]] = []
    seen: set[str] = set()
    for tid, (_, _, sentence) in sorted(best.items(), key=lambda kv: (-kv[1][0], -kv[1][1], kv[0])):
        shown = _shown(sentence, scrub_on)
        key = " ".join(shown.lower().split())
        if key in seen:  # the same words said in another call add nothing
            continue
        seen.add(key)
        picked.append({"transcript_id": tid, "sentence": shown})
        if len(picked) == n:
            break
    return picked


def alert_examples(
    ws: Workspace,
    spec: PrepSpec,
    topic_terms: np.ndarray,
    doc_topics: np.ndarray,
    doc_ids: Sequence[str],
    is_new: np.ndarray,
    columns: Mapping[int, Sequence[int]],
    *,
    scrub_on: bool,
    n: int = 3,
) -> dict[int, list[dict[str, str]]]:
    """Example sentences for each alerted theme (see :func:`best_sentences`).

    Parameters
    ----------
    spec : PrepSpec
        The new version's prep (sentences are prepared its way).
    topic_terms, doc_topics, doc_ids, is_new
        The new version's arrays and which transcripts are new.
    columns : mapping of int to sequence of int
        Theme id → its columns (a carried theme's with the splits counted with it); the
        first column's term weights score the sentences.

    Returns
    -------
    dict of int to list of dict
        Theme id → up to ``n`` sentences from new transcripts it leads.
    """
    if not columns:
        return {}
    theta = np.asarray(doc_topics)
    lead = np.argmax(theta, axis=1)
    is_new = np.asarray(is_new, dtype=bool)
    applier = PrepApplier(spec)
    out: dict[int, list[dict[str, str]]] = {}
    with ws.store() as store:
        for tid, cols in columns.items():
            share = theta[:, list(cols)].sum(axis=1)
            rows = np.flatnonzero(is_new & np.isin(lead, list(cols)))
            rows = rows[np.lexsort((rows, -share[rows]))][:CANDIDATES]
            turns = store.turns_for([doc_ids[r] for r in rows.tolist()])
            out[tid] = best_sentences(
                turns, applier, np.asarray(topic_terms[cols[0]]), n=n, scrub_on=scrub_on
            )
    return out


@dataclass(frozen=True, eq=False)
class AlertInputs:
    """What the alert judgements read besides a fit, the same for every fit of one refresh.

    Worked out once (:func:`alert_inputs`): the room check judges up to two fits and the
    alert step the one published, all on the same transcripts.

    Attributes
    ----------
    is_new : ndarray of bool
        Per transcript of the refreshed corpus: whether the current version did not know it.
    previous_lead : ndarray of int
        Its lead theme (row) under the current version (:func:`previous_leads`).
    term_new, term_earlier : ndarray of int
        Each term's token count in the new and in the earlier transcripts.
    not_a_theme : frozenset of int
        Theme ids marked "not a theme" (:func:`not_a_theme_ids`).
    """

    is_new: np.ndarray
    previous_lead: np.ndarray
    term_new: np.ndarray
    term_earlier: np.ndarray
    not_a_theme: frozenset[int]

    def judge(
        self,
        sides: tuple[ThemeSide, ThemeSide],
        alignment: Alignment,
        doc_topics: Any,
        rules: AlertRules,
    ) -> dict[str, Any]:
        """:func:`talkthemes.versions.alerts.judge_alerts` of one fit (its shares)."""
        theta = np.asarray(doc_topics)
        periods = Periods(
            lead=np.argmax(theta, axis=1) if len(theta) else np.zeros(0, dtype=np.int64),
            is_new=self.is_new,
            previous_lead=self.previous_lead,
            term_new=self.term_new,
            term_earlier=self.term_earlier,
        )
        return judge_alerts(*sides, alignment, periods, rules, self.not_a_theme)


def alert_inputs(
    ws: Workspace,
    previous: Version,
    previous_spec: PrepSpec,
    doc_ids: Sequence[str],
    is_new: np.ndarray,
    counts: Any,
) -> AlertInputs:
    """:class:`AlertInputs` of a refreshed corpus (``doc_ids``, ``counts``) against the
    current version ``previous``."""
    term_new, term_earlier = term_counts(counts, is_new)
    with ws.store() as store:
        blocked = frozenset(not_a_theme_ids(store, previous.n))
    return AlertInputs(
        is_new=np.asarray(is_new, dtype=bool),
        previous_lead=previous_leads(ws, previous, previous_spec, doc_ids),
        term_new=term_new,
        term_earlier=term_earlier,
        not_a_theme=blocked,
    )


def alerts_of(
    ws: Workspace,
    fitted: FittedVersion,
    alignment: Alignment,
    sides: tuple[ThemeSide, ThemeSide],
    inputs: AlertInputs,
    rules: AlertRules,
) -> dict[str, Any]:
    """The alert block of a refresh's drift report (:func:`talkthemes.versions.alerts.
    judge_alerts`), each alert with its example sentences (``examples``)."""
    new = sides[1]
    theta = np.asarray(fitted.doc_topics)
    is_new = inputs.is_new
    block = inputs.judge(sides, alignment, theta, rules)
    col_of = {int(t): j for j, t in enumerate(new.theme_ids)}
    columns: dict[int, list[int]] = {}
    for t in block["new_themes"]:
        if t["alert"]:
            columns[t["theme_id"]] = [col_of[t["theme_id"]]]
    for t in block["changes"]:
        if t["alert"]:
            columns[t["theme_id"]] = [col_of[t["theme_id"]]] + [col_of[c] for c in t["includes"]]
    spec = PrepSpec.from_prep_info(fitted.prep_info, fitted.vocabulary)
    scrub_on = bool(fitted.info["prepare_settings"].get("scrub", True))
    examples = alert_examples(
        ws, spec, fitted.topic_terms, theta, fitted.doc_ids, is_new, columns, scrub_on=scrub_on
    )
    for t in [*block["new_themes"], *block["changes"]]:
        if t["theme_id"] in examples:
            t["examples"] = examples[t["theme_id"]]
    return block
