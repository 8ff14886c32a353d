"""A version in memory with a known answer, for the view tests.

Six transcripts ``t0…t5`` and three themes with ids 11, 12, 13: t0–t2 are led by theme 11,
t3–t4 by 12, t5 by 13; metadata with dates (t5 has none), a queue, a duration and a
free-text reference (one of which starts a spreadsheet formula).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from talkthemes.store.records import ThemeRecord
from talkthemes.versions.load import Version


def make_version(
    doc_topics: np.ndarray,
    *,
    topic_terms: np.ndarray | None = None,
    vocabulary: list[str] | None = None,
    labels: list[str] | None = None,
    hidden: list[bool] | None = None,
) -> Version:
    """A version in memory: D transcripts ``t0…``, K themes with ids 11, 12, …"""
    d, k = doc_topics.shape
    vocabulary = vocabulary or ["bill", "pay", "power", "outage", "meter", "read"]
    if topic_terms is None:
        topic_terms = np.full((k, len(vocabulary)), 0.01)
        for i in range(k):
            topic_terms[i, (2 * i) % len(vocabulary)] = 1.0
            topic_terms[i, (2 * i + 1) % len(vocabulary)] = 0.5
        topic_terms /= topic_terms.sum(axis=1, keepdims=True)
    themes = [
        ThemeRecord(
            theme_id=11 + i,
            position=i,
            status="new",
            label=(labels or [""] * k)[i],
            hidden=(hidden or [False] * k)[i],
        )
        for i in range(k)
    ]
    return Version(
        n=1,
        folder=Path("."),
        info={},
        themes=themes,
        vocabulary=vocabulary,
        doc_ids=[f"t{i}" for i in range(d)],
        topic_terms=np.asarray(topic_terms, dtype=np.float64),
        doc_topics=np.asarray(doc_topics, dtype=np.float64),
    )


# Six transcripts, three themes: t0–t2 led by theme 11, t3–t4 by 12, t5 by 13.
SHARES = np.array(
    [
        [0.9, 0.1, 0.0],
        [0.6, 0.3, 0.1],
        [0.7, 0.2, 0.1],
        [0.2, 0.8, 0.0],
        [0.4, 0.5, 0.1],
        [0.1, 0.2, 0.7],
    ]
)
META = {
    "t0": {"date": "2026-05-04", "queue": "billing", "duration_s": "100", "ref": "a-1"},
    "t1": {"date": "2026-05-05", "queue": "faults", "duration_s": "200", "ref": "b-2"},
    "t2": {"date": "2026-05-12", "queue": "billing", "duration_s": "300", "ref": "=cmd()"},
    "t3": {"date": "2026-06-01", "queue": "faults", "duration_s": "400", "ref": "c-3"},
    "t4": {"date": "2026-06-02", "queue": "billing", "duration_s": "500", "ref": "d-4"},
    "t5": {"queue": "moves", "duration_s": "600", "ref": "e-5"},
}
