"""What a refresh's alert judgements read, and how they report a theme's share in two periods.

:class:`AlertRules` holds the thresholds (``[refresh] alert_*`` settings), :class:`Periods`
the transcripts of the new version split into new and earlier ones; :func:`share_growth`
compares a theme's share of the two with the Wilson interval of the new share, the Katz log
interval of their ratio and Newcombe's hybrid score interval of their difference
(:mod:`talkthemes.versions.alert_stats`; docs/methods_alerts.md, "Risers and fallers"). The
judgements themselves are in :mod:`talkthemes.versions.alerts`.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass
from typing import Any

import numpy as np

from talkthemes.errors import InputError
from talkthemes.versions.alert_stats import difference_interval, ratio_interval, wilson_interval

__all__ = ["AlertRules", "Periods", "percent", "rounded", "share_growth"]


@dataclass(frozen=True)
class AlertRules:
    """The thresholds of the alerts (``[refresh]`` settings, defaults in the config package).

    Attributes
    ----------
    new_min_calls : int
    new_min_share : float
    split_lead_share : float
    split_term_overlap : float
    novel_term_ratio : float
    novel_term_llr : float
    novel_min_score : float
    change_fdr : float
    change_min_ratio : float
    n_terms : int
        Top terms compared (split overlap, novelty).
    level : float
        Confidence level of the intervals.
    """

    new_min_calls: int
    new_min_share: float
    split_lead_share: float
    split_term_overlap: float
    novel_term_ratio: float
    novel_term_llr: float
    novel_min_score: float
    change_fdr: float
    change_min_ratio: float
    n_terms: int = 10
    level: float = 0.95

    @classmethod
    def from_settings(cls, refresh: Any) -> AlertRules:
        """From a :class:`talkthemes.config.RefreshSettings` (its ``alert_*`` fields)."""
        return cls(
            new_min_calls=int(refresh.alert_new_min_calls),
            new_min_share=float(refresh.alert_new_min_share),
            split_lead_share=float(refresh.alert_split_lead_share),
            split_term_overlap=float(refresh.alert_split_term_overlap),
            novel_term_ratio=float(refresh.alert_novel_term_ratio),
            novel_term_llr=float(refresh.alert_novel_term_llr),
            novel_min_score=float(refresh.alert_novel_min_score),
            change_fdr=float(refresh.alert_change_fdr),
            change_min_ratio=float(refresh.alert_change_min_ratio),
        )

    def to_json(self) -> dict[str, Any]:
        return asdict(self)


@dataclass(frozen=True, eq=False)
class Periods:
    """The transcripts of the new version, split into new and earlier ones.

    Attributes
    ----------
    lead : ndarray of int (D,)
        Lead theme (column of the new version) of each transcript.
    is_new : ndarray of bool (D,)
        Added since the previous version.
    previous_lead : ndarray of int (D,)
        Lead theme (row of the previous version) under the previous version; -1 when
        unknown (a transcript its model could not read).
    term_new, term_earlier : ndarray (V,)
        Token count of each term of the new vocabulary in the new and the earlier
        transcripts.
    """

    lead: np.ndarray
    is_new: np.ndarray
    previous_lead: np.ndarray
    term_new: np.ndarray
    term_earlier: np.ndarray

    def __post_init__(self) -> None:
        d = len(self.lead)
        if len(self.is_new) != d or len(self.previous_lead) != d:
            raise InputError(
                f"alerts: {d} lead themes, {len(self.is_new)} new-flags and "
                f"{len(self.previous_lead)} previous lead themes"
            )
        if len(self.term_new) != len(self.term_earlier):
            raise InputError("alerts: term counts of the two periods differ in length")

    @property
    def n_new(self) -> int:
        return int(np.count_nonzero(self.is_new))

    @property
    def n_earlier(self) -> int:
        return int(len(self.is_new) - self.n_new)


def rounded(x: Any, digits: int = 6) -> float | None:
    """``x`` rounded for a JSON document, ``None`` when it is not finite."""
    x = float(x)
    return round(x, digits) if np.isfinite(x) else None


def percent(x: float) -> str:
    """A fraction as a percentage with one decimal, for the evidence sentences."""
    return f"{100 * x:.1f}%"


def share_growth(x_new: int, n_new: int, x_old: int, n_old: int, level: float) -> dict[str, Any]:
    """Share among new and earlier transcripts, their ratio and difference with intervals."""
    out: dict[str, Any] = {
        "calls_new": int(x_new),
        "new_transcripts": int(n_new),
        "share_new": rounded(x_new / n_new) if n_new else None,
        "calls_earlier": int(x_old),
        "earlier_transcripts": int(n_old),
        "share_earlier": rounded(x_old / n_old) if n_old else None,
    }
    if n_new and n_old:
        lo, hi = wilson_interval(x_new, n_new, level)
        ratio, rlo, rhi = ratio_interval(x_new, n_new, x_old, n_old, level)
        diff, dlo, dhi = difference_interval(x_new, n_new, x_old, n_old, level)
        out.update(
            share_new_lo=rounded(lo),
            share_new_hi=rounded(hi),
            ratio=rounded(ratio),
            ratio_lo=rounded(rlo),
            ratio_hi=rounded(rhi),
            difference=rounded(diff),
            difference_lo=rounded(dlo),
            difference_hi=rounded(dhi),
        )
    return out
