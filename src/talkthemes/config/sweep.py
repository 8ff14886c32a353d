"""[sweep] settings: the grid of topic counts, the models, the workers."""

from __future__ import annotations

from typing import Literal

from pydantic import Field

from talkthemes.config._section import _Section

__all__ = ["SweepSettings"]


class SweepSettings(_Section):
    """[sweep] The grid of topic models and their metrics."""

    k: str = Field(
        "4:30:2", description="Topic counts: 'start:stop:step' (inclusive) or '5,10,15'."
    )
    families: list[Literal["lda", "nmf"]] = Field(
        default_factory=lambda: ["lda", "nmf"], description="Model families to sweep."
    )
    seeds: int = Field(3, ge=1, description="Random seeds per (family, K) cell.")
    topn: int = Field(10, ge=2, description="Top terms per topic used by coherence.")
    stability_topn: int = Field(
        20, ge=2, description="Top terms compared between seeds by stability (Greene et al. 2014)."
    )
    diversity_topn: int = Field(
        25, ge=2, description="Top terms counted by topic diversity (Dieng et al. 2020)."
    )
    heldout_share: float = Field(
        0.1, ge=0, lt=1, description="Share of transcripts held out for LDA perplexity."
    )
    subsample: float = Field(
        0.8,
        gt=0,
        le=1,
        description=(
            "Each seed fits on its own random share of the training transcripts, so stability "
            "measures how themes hold up when the data changes (Greene et al. 2014); 1 = all."
        ),
    )
    sample: int = Field(
        0,
        ge=0,
        description=(
            "Calls a sweep fits on: a stratified random sample (by month and segment fields) "
            "of this many calls; 0 = every call, unless auto_sample_above switches a sample on."
        ),
    )
    auto_sample_above: int = Field(
        200_000,
        ge=0,
        description=(
            "With sample = 0, a prep of more calls than this is swept on a sample of "
            "auto_sample calls; 0 = never."
        ),
    )
    auto_sample: int = Field(
        100_000, ge=1, description="Calls in the automatic sample (see auto_sample_above)."
    )
    sample_seed: int = Field(0, ge=0, description="Seed of the sweep's sample.")
    sample_publish_passes: int = Field(
        2,
        ge=1,
        description=(
            "Publishing an LDA cell swept on a sample: most online passes over every call "
            "after the fit on the sample (fewer when the per-word bound converges)."
        ),
    )
    lda_passes: int = Field(
        50,
        ge=1,
        description=(
            "Most LDA passes over the corpus; training stops earlier once the per-word bound "
            "converges (lda_bound_tol)."
        ),
    )
    lda_bound_tol: float = Field(
        3e-4,
        ge=0,
        lt=1,
        description=(
            "LDA stops after a pass that changed the per-word bound of the training corpus by "
            "less than this share of its value (Hoffman, Blei & Bach 2010); 0 = always run "
            "lda_passes."
        ),
    )
    lda_starts: int = Field(
        6,
        ge=1,
        description=(
            "LDA random starts per fit: each runs lda_start_passes passes and only the one "
            "with the highest per-word bound is trained to convergence."
        ),
    )
    lda_start_passes: int = Field(
        2, ge=1, description="Passes each LDA start runs before the best one is kept."
    )
    lda_iterations: int = Field(50, ge=1, description="LDA per-document E-step iterations.")
    lda_chunksize: int = Field(
        0, ge=0, description="LDA documents per online update; 0 = about ten updates per pass."
    )
    lda_alpha: Literal["symmetric", "asymmetric", "auto"] = Field(
        "auto", description="LDA alpha: 'symmetric', 'asymmetric' or 'auto' (learned)."
    )
    lda_eta: Literal["symmetric", "auto"] = Field(
        "symmetric", description="LDA eta: 'symmetric' (1/K) or 'auto'."
    )
    nmf_loss: Literal["frobenius", "kullback-leibler"] = Field(
        "frobenius", description="NMF loss: 'frobenius' (cd solver) or 'kullback-leibler' (mu)."
    )
    nmf_max_iter: int = Field(400, ge=1, description="NMF iteration limit.")
    nmf_dtype: Literal["float32", "float64"] = Field(
        "float32",
        description=(
            "Precision NMF fits in (the TF-IDF matrix and the factors): float32 is about "
            "1.3-1.5x faster; results are stored as float64 either way."
        ),
    )
    nmf_tol: float = Field(
        1e-3,
        gt=0,
        lt=1,
        description=(
            "NMF stops when the error fell by less than this share of the starting error since "
            "the previous check (every 10 iterations; scikit-learn's tol)."
        ),
    )
    rank_by: Literal["c_npmi", "c_v", "c_uci", "u_mass"] = Field(
        "c_npmi",
        description=(
            "Coherence measure the recommendation ranks K by (NPMI tracks human ratings best "
            "in Lau et al. 2014)."
        ),
    )
    stability_min: float = Field(
        0.6,
        ge=0,
        le=1,
        description="K whose seed-to-seed stability is below this is not recommended.",
    )
    catch_all_ratio: float = Field(
        2.5,
        ge=0,
        description=(
            "A K at which one theme leads more than this many times an even share (1/K) of "
            "the transcripts, and more than catch_all_share, is set aside as a catch-all; "
            "0 = no check."
        ),
    )
    catch_all_share: float = Field(
        0.35,
        ge=0,
        le=1,
        description=(
            "The smallest share of transcripts a catch-all theme leads, whatever K (at a "
            "large K the largest true reason alone leads many times 1/K)."
        ),
    )
    scheduler: str = Field("", description="Dask scheduler address; empty = a local cluster.")
    workers: int = Field(0, ge=0, description="Local cluster workers; 0 = one per core.")
    scheduler_timeout: float = Field(
        10.0,
        gt=0,
        description="Seconds to wait for the Dask scheduler at 'scheduler' to answer.",
    )
    min_calls_per_theme: int = Field(
        5,
        ge=1,
        description=(
            "K may not exceed the training calls divided by this (nor the terms, nor the calls "
            "one cell fits on): a theme must be able to lead a few calls on average."
        ),
    )
    worker_memory_gb: float = Field(
        8.0,
        gt=0,
        description=(
            "Memory one model fit may use (GiB; per Dask worker). A sweep or publish whose "
            "estimated need is larger is refused before it starts."
        ),
    )
    publish_seed: int = Field(
        0,
        ge=0,
        description="Seed of the model 'publish --k K --family F' fits when no sweep holds it.",
    )
