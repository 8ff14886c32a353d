"""Working on the corpus's token stream in pieces, so memory stays bounded at any size.

The corpus phase of ``prepare`` holds every transcript's kept tokens as one stream (about
150 million tokens for a million calls). A pass that needs several temporary arrays per
token (pairs for phrases, rows and columns for the counts) goes over it in pieces of whole
units — sentences, runs or transcripts — of at most :data:`CHUNK_TOKENS` tokens, so its
temporaries stay near 250 MB however long the corpus is, and the result is the same as in
one piece.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

__all__ = ["CHUNK_TOKENS", "unit_chunks"]

#: Tokens handled at a time (their temporaries: about 60 bytes a token).
CHUNK_TOKENS = 4_000_000


def unit_chunks(
    lengths: NDArray[np.integer], max_tokens: int | None = None
) -> list[tuple[int, int, int, int]]:
    """Cut a stream of units into pieces of whole units of at most ``max_tokens`` tokens
    (a longer unit is a piece of its own): ``(first token, end token, first unit, end
    unit)`` per piece (``max_tokens`` defaults to :data:`CHUNK_TOKENS`). Pairs never span
    units, so each piece can be worked on alone."""
    max_tokens = max_tokens or CHUNK_TOKENS
    lengths = np.asarray(lengths, dtype=np.int64)
    ends = np.cumsum(lengths)
    out = []
    unit, token = 0, 0
    while unit < lengths.size:
        stop = int(np.searchsorted(ends, token + max_tokens, side="right"))
        stop = max(stop, unit + 1)
        end = int(ends[stop - 1])
        out.append((token, end, unit, stop))
        unit, token = stop, end
    return out
