"""[prepare] settings: the preparation chain."""

from __future__ import annotations

from typing import Literal

from pydantic import Field, field_validator, model_validator

from talkthemes.config._section import _Section
from talkthemes.config.languages import LanguagesSettings

__all__ = ["PrepareSettings"]

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
    languages: LanguagesSettings = Field(
        default_factory=LanguagesSettings,
        description="The language of each call, and which languages get themes.",
    )

    @field_validator("lemma_exceptions")
    @classmethod
    def _one_word_each(cls, value: dict[str, str]) -> dict[str, str]:
        out = {}
        for word, lemma in value.items():
            if not (word.strip().isalpha() and lemma.strip().isalpha()):
                raise ValueError(f"{word!r} = {lemma!r}: each side must be one word of letters")
            out[word.strip().lower()] = lemma.strip().lower()
        return out

    @model_validator(mode="after")
    def _chains_valid(self) -> PrepareSettings:
        """Each ``[prepare.languages.<code>]`` table must make valid ``[prepare]`` settings."""
        for code in self.languages.chains:
            if code == self.lang:
                raise ValueError(
                    f"[prepare.languages.{code}]: {code} is the main language ([prepare] "
                    "lang); put its settings in [prepare] itself"
                )
            self.for_language(code)
        return self

    def for_language(self, code: str) -> PrepareSettings:
        """The ``[prepare]`` settings of a language lane: these, with ``lang = code`` and the
        ``[prepare.languages.<code>]`` table applied.

        Raises
        ------
        ValueError
            When the table sets a value that is not allowed.
        """
        base = self.model_dump(exclude={"languages"})
        table = self.languages.chains.get(code, {})
        try:
            return PrepareSettings.model_validate(
                {
                    **base,
                    **table,
                    "lang": code,
                    "languages": {**self.languages.model_dump(), "chains": {}},
                }
            )
        except ValueError as exc:
            first = exc.errors()[0] if hasattr(exc, "errors") else None
            if first is not None:
                where = ".".join(str(p) for p in first["loc"])
                raise ValueError(
                    f"[prepare.languages.{code}] {where} = {first.get('input')!r}: {first['msg']}"
                ) from None
            raise
