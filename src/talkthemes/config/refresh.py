"""[refresh] settings: refreshing versions, drift and alerts."""

from __future__ import annotations

from typing import Literal

from pydantic import Field

from talkthemes.config._section import _Section

__all__ = ["RefreshSettings"]


class RefreshSettings(_Section):
    """[refresh] Scheduled retraining as transcripts arrive."""

    inbox: str = Field("", description="Folder ingested by 'refresh' when no path is given.")
    vocabulary: Literal["rebuild", "frozen"] = Field(
        "rebuild", description="'rebuild' the vocabulary on all data, or keep it 'frozen'."
    )
    resweep_coherence_drop: float = Field(
        0.1,
        ge=0,
        description=(
            "Re-sweep K when the published model's C_NPMI on new data falls by more than this."
        ),
    )
    keep_versions: int = Field(
        5, ge=1, description="Versions kept on disk (the current one always)."
    )
    match_percentile: float = Field(
        5.0,
        gt=0,
        lt=50,
        description=(
            "Same-theme cut-off: midway between the (100 - this) percentile of distances "
            "between matched themes of fits with different seeds and the (this) percentile "
            "of distances between unmatched themes."
        ),
    )
    calibration_seeds: int = Field(
        2,
        ge=1,
        le=20,
        description=(
            "Extra fits (other seeds, each on a random subsample) of the published model "
            "used to calibrate the same-theme cut-off."
        ),
    )
    tie_margin: float = Field(
        0.05,
        ge=0,
        le=1,
        description=(
            "A theme within this distance of its best match to two or more themes of the "
            "other version is flagged as a possible split or merge."
        ),
    )
    new_theme_room: int = Field(
        1,
        ge=0,
        le=5,
        description=(
            "When the refit at the published K has no theme the alert rules call new, also "
            "fit K+1 (up to K+this) and publish the first fit that has one; 0 = keep K."
        ),
    )
    # alerts (docs/methods_alerts.md)
    alert_new_min_calls: int = Field(
        10, ge=1, description="A new theme alerts only if it leads at least this many new calls."
    )
    alert_new_min_share: float = Field(
        0.03,
        ge=0,
        le=1,
        description="A new theme alerts only if it leads at least this share of the new calls.",
    )
    alert_split_lead_share: float = Field(
        0.5,
        gt=0,
        le=1,
        description=(
            "A new theme is a split of an old one when at least this share of its calls had "
            "that old theme as lead under the previous version (and the terms overlap)."
        ),
    )
    alert_split_term_overlap: float = Field(
        0.3,
        ge=0,
        le=1,
        description=(
            "A new theme is a split of an old one when at least this share of its 10 top "
            "terms are the old theme's (and most of its calls were the old theme's)."
        ),
    )
    alert_novel_term_ratio: float = Field(
        3.0,
        gt=1,
        description=(
            "A term is new when its rate in the new calls is at least this many times its "
            "rate in the earlier ones (and its log-likelihood ratio is high enough)."
        ),
    )
    alert_novel_term_llr: float = Field(
        10.83,
        ge=0,
        description=(
            "A term is new only if Dunning's log-likelihood ratio G² of its counts in the new "
            "and earlier calls is at least this (10.83: p < 0.001)."
        ),
    )
    alert_novel_min_score: float = Field(
        0.3,
        ge=0,
        le=1,
        description="A new theme alerts only if this share of its top-term weight is on new terms.",
    )
    alert_change_fdr: float = Field(
        0.01,
        gt=0,
        lt=1,
        description=(
            "Risers and fallers: Benjamini–Hochberg false discovery rate over the carried "
            "themes tested."
        ),
    )
    alert_change_min_ratio: float = Field(
        1.25,
        ge=1,
        description=(
            "Risers and fallers: the share in the new calls must be at least this many "
            "times the earlier share (or at most its inverse)."
        ),
    )
