"""Planted corpora: invented calls whose true reasons are known, for measuring theme quality.

The scenario is not the demo's: it is the customer line of *Ambry Vale Railways*, an
invented regional train operator (every name in it is made up). Its phrase bank
(``talkthemes/data/planted_scenario.json``) holds 18 call reasons in a fixed order, each with
several openings, caller details, agent explanations, question-and-answer pairs and reason
vocabulary, and a list of related reasons that share words with it (refunds, delay claims and
cancellations; the app and the online account; ticket machines, parking and penalty fares),
so the task is not trivially separable. A corpus with ``reasons = n`` uses the first ``n``.

Around the reason talk, a regular call carries agent boilerplate (greeting, recording notice,
identity check, hold, closing, survey notice; switched off with ``boilerplate=False``),
small talk shared by all reasons, and caller disfluency (fillers, repetitions, false starts).
A share of regular calls adds a second reason (half the time a related one). A few percent
are short calls that carry no reason: silent lines, wrong numbers, dropped calls and small
talk. Optional ASR-like noise swaps homophones, transposes letters, drops and doubles words.

:func:`write_planted` writes ``.txt`` transcripts (``Agent:``/``Customer:`` lines) and a
manifest with dates that ingest reads, and the answer key ``truth.csv`` outside the folder
that gets ingested: call id → kind, true reason, second reason (or none). One
``random.Random(seed)`` stream drives everything, so a spec always gives the same files.

The package: :mod:`~talkthemes.demo.planted.bank` (phrase bank, spec, call record),
:mod:`~talkthemes.demo.planted.compose` (the calls), :mod:`~talkthemes.demo.planted.files`
(rendering and writing).
"""

from __future__ import annotations

from talkthemes.demo.planted.bank import (
    KINDS,
    MAX_REASONS,
    SHORT_KINDS,
    TRUTH_COLUMNS,
    PlantedCall,
    PlantedSpec,
    load_bank,
    planted_reasons,
)
from talkthemes.demo.planted.compose import iter_planted_calls
from talkthemes.demo.planted.files import (
    PlantedFiles,
    read_truth,
    render_planted_txt,
    write_planted,
)

__all__ = [
    "KINDS",
    "MAX_REASONS",
    "SHORT_KINDS",
    "TRUTH_COLUMNS",
    "PlantedCall",
    "PlantedFiles",
    "PlantedSpec",
    "iter_planted_calls",
    "load_bank",
    "planted_reasons",
    "read_truth",
    "render_planted_txt",
    "write_planted",
]
