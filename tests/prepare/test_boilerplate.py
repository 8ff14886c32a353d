"""Boilerplate: sentence splitting, stable keys, document frequency of keys."""

from __future__ import annotations

import subprocess
import sys

import numpy as np

from talkthemes.prepare.boilerplate import find_boilerplate, sentence_key, split_sentences


def test_split_sentences():
    text = "Hello there. How are you?  Fine!\nNext line… and more e.g. this 3.5 thing"
    assert [p.strip() for p in split_sentences(text)] == [
        "Hello there",
        "How are you",
        "Fine",
        "Next line",
        "and more e",
        "g",
        "this 3",
        "5 thing",
    ]
    assert split_sentences("") == []
    assert split_sentences("...\n\n") == []


def test_keys_are_stable_across_processes_and_never_zero():
    key = sentence_key("thank you for calling")
    code = (
        "from talkthemes.prepare.boilerplate import sentence_key as k; "
        "print(k('thank you for calling'))"
    )
    other = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert int(other.stdout) == key
    assert key != 0
    assert sentence_key("thank you for calling ") != key


def test_find_boilerplate_counts_transcripts_not_occurrences():
    # doc 0 says A twice; A is in 3 of 4 docs, B in 1, C in 2; key 0 is never counted
    docs = np.array([0, 0, 0, 1, 1, 2, 3, 3])
    keys = np.array([11, 11, 0, 11, 22, 33, 33, 11], dtype=np.int64)
    k, df = find_boilerplate(docs, keys, 4, 0.5)
    assert k.tolist() == [11, 33] and df.tolist() == [3, 2]
    k, df = find_boilerplate(docs, keys, 4, 0.75)
    assert k.tolist() == [11] and df.tolist() == [3]


def test_one_transcript_is_never_boilerplate():
    docs = np.array([0, 1])
    keys = np.array([5, 6], dtype=np.int64)
    k, _ = find_boilerplate(docs, keys, 2, 0.01)
    assert k.size == 0


def test_share_zero_switches_off():
    k, df = find_boilerplate(np.array([0, 1]), np.array([5, 5], dtype=np.int64), 2, 0.0)
    assert k.size == 0 and df.size == 0
