"""Settings for a workspace, read from ``talkthemes.toml``.

Every default lives here and only here. ``init`` writes a commented file listing each
setting with its default; a setting left out of the file keeps its default. Invalid
settings fail at load with one message naming the key, the value and what is allowed.
"""

from __future__ import annotations

import codecs
import tomllib
from pathlib import Path
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field, ValidationError, field_validator

from talkthemes.errors import ConfigError

__all__ = [
    "IngestSettings",
    "PrepareSettings",
    "RefreshSettings",
    "ServiceSettings",
    "Settings",
    "SweepSettings",
    "ViewSettings",
    "load_settings",
    "render_settings",
]

SETTINGS_FILE = "talkthemes.toml"


class _Section(BaseModel):
    model_config = ConfigDict(extra="forbid", validate_assignment=True)


class IngestSettings(_Section):
    """[ingest] Reading transcript files and tables."""

    max_file_mb: float = Field(
        50.0, gt=0, description="Files larger than this (in MB) are rejected unread."
    )
    encoding_fallback: str = Field(
        "cp1252",
        description=(
            "Text that is not valid UTF-8 (nor UTF-16 with a byte-order mark) is decoded with "
            "this codec instead; bytes it cannot map become U+FFFD and the file gets a warning."
        ),
    )
    agent_labels: list[str] = Field(
        default_factory=lambda: [
            "agent",
            "advisor",
            "adviser",
            "rep",
            "representative",
            "operator",
            "csr",
            "associate",
            "specialist",
            "support",
            "staff",
            "interviewer",
            "host",
        ],
        description=(
            "Speaker labels read as the agent role. Matched case-insensitively against the "
            "label's first word, ignoring trailing digits and punctuation ('Agent 2' → agent)."
        ),
    )
    customer_labels: list[str] = Field(
        default_factory=lambda: [
            "customer",
            "caller",
            "client",
            "member",
            "user",
            "guest",
            "patient",
            "respondent",
            "participant",
            "interviewee",
        ],
        description="Speaker labels read as the customer role (same matching as agent_labels).",
    )
    id_column: str = Field("", description="Transcript id column in tables; empty = detect.")
    text_column: str = Field("", description="Text column in tables; empty = detect.")
    speaker_column: str = Field(
        "", description="Speaker column in per-turn tables; empty = detect."
    )
    start_column: str = Field(
        "", description="Turn start time column in per-turn tables; empty = detect."
    )
    manifest_key_column: str = Field(
        "",
        description="Column of a manifest holding the transcript id or file name; empty = detect.",
    )
    date_column: str = Field(
        "", description="Column holding the call date (tables and manifests); empty = detect."
    )
    follow_symlinks: bool = Field(
        True, description="Follow symbolic links inside folders (loops are detected and skipped)."
    )
    reexport_min_words: int = Field(
        25,
        ge=1,
        description=(
            "A call whose text equals a stored call's under another id is a likely re-export "
            "only with at least this many words and no conflicting metadata "
            "(reexport_fields); shorter texts (a caller who hangs up) are stored as "
            "different calls and reported as 'same text as <id>'."
        ),
    )
    reexport_action: Literal["skip", "keep"] = Field(
        "skip",
        description="What ingest does with a likely re-export: skip it (reported) or keep it.",
    )
    reexport_fields: list[str] = Field(
        default_factory=lambda: ["date", "duration", "agent"],
        description=(
            "Metadata that tells two calls apart: a field whose name contains one of these "
            "words (date, call_duration, agent_id...) with different values on the two "
            "calls means they are different calls, not a re-export."
        ),
    )

    @field_validator("encoding_fallback")
    @classmethod
    def _known_codec(cls, value: str) -> str:
        try:
            codecs.lookup(value)
        except LookupError:
            raise ValueError(f"unknown text encoding {value!r} (e.g. cp1252, latin-1)") from None
        return value


Roles = Literal["all", "customer", "agent"]


class PrepareSettings(_Section):
    """[prepare] The preprocessing chain."""

    lang: str = Field("en", description="Language code of the transcripts (spaCy language).")
    roles: Roles = Field(
        "all",
        description=(
            "Turns kept: 'all', 'customer' (customer and unlabelled turns) or 'agent' "
            "(agent and unlabelled turns)."
        ),
    )
    scrub: bool = Field(
        True,
        description=(
            "Remove e-mail addresses, URLs, phone and card numbers, long numbers and "
            "redaction tags."
        ),
    )
    boilerplate_min_share: float = Field(
        0.15,
        ge=0,
        le=1,
        description=(
            "A normalised sentence found in at least this share of transcripts is script "
            "boilerplate and is dropped. 0 switches the step off."
        ),
    )
    boilerplate_min_words: int = Field(
        3, ge=1, description="Sentences shorter than this many words are never boilerplate."
    )
    pipeline: str = Field(
        "",
        description=(
            "Empty: fast path with spaCy's lookup lemma table and stop words. Otherwise the "
            "name of an "
            "installed spaCy pipeline to run instead (enables the part-of-speech filter)."
        ),
    )
    pos_keep: list[str] = Field(
        default_factory=lambda: ["NOUN", "PROPN", "VERB", "ADJ"],
        description="Parts of speech kept when a spaCy pipeline is configured.",
    )
    names: bool = Field(
        True,
        description=(
            "Keep capitalised words that do not start a sentence (and names of several "
            "capitalised words) as written, lower-cased, instead of lemmatising them "
            "(Wales stays wales). Off for languages that capitalise every noun."
        ),
    )
    drop_names: bool = Field(
        True,
        description=(
            "Keep people's names out of the vocabulary: names in speaker labels, names a cue "
            "introduces or addresses ('my name is ...', 'thanks, ...'), and first names from "
            "a first-name list that are not ordinary words (bill, grace stay where used as "
            "words)."
        ),
    )
    not_names: list[str] = Field(
        default_factory=list,
        description="Words never removed as names (a product that shares a first name).",
    )
    lemma_keep_ratio: float = Field(
        2.0,
        ge=0,
        description=(
            "A word the lemma table maps to another word, although it is a dictionary word "
            "itself (number -> numb), keeps its own form when it is said at least this many "
            "times as often as the table's lemma (each with its own inflections). "
            "0 follows the table."
        ),
    )
    lemma_exceptions: dict[str, str] = Field(
        default_factory=dict,
        description=(
            'Your own lemmas, word as said -> lemma, e.g. { lost = "lost", data = '
            '"data" }; they win over the table and the check above.'
        ),
    )
    min_token_length: int = Field(3, ge=1, description="Shorter tokens are dropped.")
    fillers: bool = Field(
        True, description="Drop the shipped list of conversational fillers and back-channels."
    )
    extra_stop_words: list[str] = Field(
        default_factory=list, description="Your own stop words, added to spaCy's and the fillers."
    )
    phrases: bool = Field(True, description="Join collocations (gensim Phrases, NPMI scoring).")
    phrase_threshold: float = Field(
        0.5, gt=-1, le=1, description="NPMI a word pair must exceed to be joined."
    )
    phrase_min_count: int = Field(
        10, ge=1, description="A pair must occur this often to be joined."
    )
    vocab_min_docs: int = Field(5, ge=1, description="Drop terms found in fewer transcripts.")
    vocab_max_doc_share: float = Field(
        0.5, gt=0, le=1, description="Drop terms found in a larger share of transcripts."
    )
    vocab_max_size: int = Field(20000, ge=10, description="Keep at most this many terms.")
    min_tokens: int = Field(
        20,
        ge=1,
        description="Transcripts with fewer tokens in the vocabulary are excluded from training.",
    )
    batch_size: int = Field(1000, ge=1, description="Transcripts read from the store per batch.")
    n_process: int = Field(0, ge=0, description="Worker processes for the chain; 0 = one per core.")

    @field_validator("lemma_exceptions")
    @classmethod
    def _one_word_each(cls, value: dict[str, str]) -> dict[str, str]:
        out = {}
        for word, lemma in value.items():
            if not (word.strip().isalpha() and lemma.strip().isalpha()):
                raise ValueError(f"{word!r} = {lemma!r}: each side must be one word of letters")
            out[word.strip().lower()] = lemma.strip().lower()
        return out


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


class ViewSettings(_Section):
    """[view] The viewer and report."""

    host: str = Field("127.0.0.1", description="Address the viewer binds to.")
    port: int = Field(8501, ge=1, le=65535, description="Port the viewer listens on.")
    relevance_lambda: float = Field(
        0.6, ge=0, le=1, description="Default λ for term relevance (Sievert & Shirley 2014)."
    )
    original_text: bool = Field(
        False,
        description=(
            "Show transcripts as they were ingested, personal data included, in the viewer, "
            "the report and exports. Off: e-mail addresses, numbers, names and street "
            "addresses are masked (set it only where everyone who opens them may see them)."
        ),
    )


class ServiceSettings(_Section):
    """[service] The HTTP service ('talkthemes serve')."""

    host: str = Field(
        "127.0.0.1",
        description=(
            "Address the service binds to. Anything but this machine (127.0.0.1, ::1, "
            "localhost) needs at least one token and a TLS proxy in front."
        ),
    )
    port: int = Field(8600, ge=1, le=65535, description="Port the service listens on.")
    threads: int = Field(
        8, ge=1, le=256, description="Requests answered at once (the worker pool's threads)."
    )
    max_body_mb: float = Field(
        20.0, gt=0, description="Request bodies larger than this (in MB) are refused (413)."
    )
    max_items: int = Field(
        1000, ge=1, description="Transcripts one assign or ingest request may carry."
    )
    page_size: int = Field(50, ge=1, description="Calls per page when a request names none.")
    max_page_size: int = Field(1000, ge=1, description="The most calls one page may hold.")
    call_text: Literal["none", "masked", "original"] = Field(
        "none",
        description=(
            "What GET /v1/calls/{id} tells of a call's words: 'none' (shares and metadata "
            "only), 'masked' (its turns with e-mail addresses, numbers, names and street "
            "addresses masked) or 'original' (as ingested; only where every token holder may "
            "read them)."
        ),
    )
    jobs_kept: int = Field(
        100, ge=1, description="Finished jobs the service remembers for GET /v1/jobs/{id}."
    )


class Settings(_Section):
    """All settings of a workspace."""

    ingest: IngestSettings = Field(default_factory=IngestSettings)
    prepare: PrepareSettings = Field(default_factory=PrepareSettings)
    sweep: SweepSettings = Field(default_factory=SweepSettings)
    refresh: RefreshSettings = Field(default_factory=RefreshSettings)
    view: ViewSettings = Field(default_factory=ViewSettings)
    service: ServiceSettings = Field(default_factory=ServiceSettings)


def _format_validation(err: ValidationError, source: str) -> str:
    first = err.errors()[0]
    loc = [str(p) for p in first["loc"]]
    key = f"[{loc[0]}] {'.'.join(loc[1:])}" if len(loc) > 1 else loc[0] if loc else "?"
    value = first.get("input")
    if first["type"] == "extra_forbidden":
        return f"{source}: unknown setting {key}"
    return f"{source}: {key} = {value!r}: {first['msg']}"


def load_settings(path: Path | None) -> Settings:
    """Read settings from a TOML file, filling every missing key with its default.

    Parameters
    ----------
    path : Path or None
        The ``talkthemes.toml`` file. ``None`` or a missing file gives the defaults.

    Returns
    -------
    Settings

    Raises
    ------
    ConfigError
        When the file is not valid TOML or a value is not allowed.
    """
    if path is None or not path.exists():
        return Settings()
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise ConfigError(f"{path}: not valid TOML: {exc}") from None
    return settings_from_dict(data, source=str(path))


def settings_from_dict(data: dict[str, Any], source: str = "settings") -> Settings:
    """Validate a nested dict (as read from TOML) into :class:`Settings`."""
    try:
        return Settings.model_validate(data)
    except ValidationError as exc:
        raise ConfigError(_format_validation(exc, source)) from None


def _toml_value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int | float):
        return repr(value)
    if isinstance(value, str):
        return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(value, list):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        items = ", ".join(f"{_toml_value(str(k))} = {_toml_value(v)}" for k, v in value.items())
        return "{ " + items + " }" if items else "{}"
    raise TypeError(f"cannot write {type(value).__name__} to TOML")


def render_settings(settings: Settings | None = None) -> str:
    """Render settings as a commented TOML document (every key, with its description).

    A key whose value is the default is written commented out (``# key = value``), so it
    keeps following the default of the installed talkthemes when a later release changes
    it; a value that differs from the default is written as a setting.

    Parameters
    ----------
    settings : Settings, optional
        Values to write; the defaults when omitted.

    Returns
    -------
    str
        TOML text that :func:`load_settings` reads back to the same settings.
    """
    defaults = Settings()
    settings = settings or defaults
    lines = [
        "# talkthemes workspace settings.",
        "# Every setting is listed with its current default, commented out: remove the '# '",
        "# in front of 'key = value' and change the value to set it for this workspace.",
        "",
    ]
    for section_name, section_field in Settings.model_fields.items():
        section = getattr(settings, section_name)
        doc = (type(section).__doc__ or "").strip().splitlines()[0]
        lines.append(f"# {doc}")
        lines.append(f"[{section_name}]")
        for name, field in type(section).model_fields.items():
            if field.description:
                lines.append(f"# {field.description}")
            value = getattr(section, name)
            pinned = value != getattr(getattr(defaults, section_name), name)
            lines.append(f"{'' if pinned else '# '}{name} = {_toml_value(value)}")
        lines.append("")
        del section_field
    return "\n".join(lines)
