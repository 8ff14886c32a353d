"""Unit tests for talkthemes.metrics.diversity."""

from __future__ import annotations

import numpy as np
import pytest

from talkthemes.errors import InputError
from talkthemes.metrics.diversity import topic_diversity


def test_disjoint_topics_have_diversity_one() -> None:
    topics = np.arange(12).reshape(3, 4)
    assert topic_diversity(topics, topn=4) == 1.0


def test_identical_topics_have_diversity_one_over_k() -> None:
    topics = np.tile(np.arange(5), (4, 1))
    assert topic_diversity(topics, topn=5) == pytest.approx(1 / 4)


def test_only_the_first_topn_words_count() -> None:
    # the first two columns are disjoint; the later ones repeat across topics
    topics = np.array([[0, 1, 9, 8], [2, 3, 9, 8]])
    assert topic_diversity(topics, topn=2) == 1.0
    assert topic_diversity(topics, topn=4) == pytest.approx(6 / 8)


def test_bad_input_is_refused() -> None:
    with pytest.raises(InputError, match="fewer than topn=25"):
        topic_diversity(np.arange(20).reshape(2, 10))
    with pytest.raises(InputError, match="2-D integer"):
        topic_diversity(np.array([[0.5, 1.5]]), topn=1)
    with pytest.raises(InputError, match="at least 1"):
        topic_diversity(np.array([[0, 1]]), topn=0)
