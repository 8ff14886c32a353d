"""Files are parsed a few chunks ahead of the store, not all at once: results waiting to be
stored must not grow with the number of files (a million calls would not fit in memory)."""

from __future__ import annotations

import threading
import time
from concurrent.futures import ThreadPoolExecutor

from talkthemes.ingest.run import bounded_map


def test_results_in_order_with_a_bounded_number_in_flight() -> None:
    started = []
    lock = threading.Lock()

    def work(i: int) -> int:
        with lock:
            started.append(i)
        time.sleep(0.001 * (i % 3))  # finishing out of order
        return i * i

    taken = 0
    with ThreadPoolExecutor(max_workers=4) as pool:
        for item, result in bounded_map(pool, work, range(200), ahead=6):
            assert (item, result) == (taken, taken * taken)  # in order
            taken += 1
            time.sleep(0.002)  # a slow consumer, like the store
            with lock:
                # submitted but not yet taken: at most `ahead` (plus the one refilled)
                assert len(started) - taken <= 6, (len(started), taken)
    assert taken == 200 and sorted(started) == list(range(200))


def test_fewer_items_than_ahead_and_none() -> None:
    with ThreadPoolExecutor(max_workers=2) as pool:
        assert list(bounded_map(pool, str, [1, 2], ahead=10)) == [(1, "1"), (2, "2")]
        assert list(bounded_map(pool, str, [], ahead=3)) == []
