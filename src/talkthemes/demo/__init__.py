"""The invented demo scenario: six months of calls to a regional water and power utility.

Every name in it is invented: the utility (Tallowmere Water and Power), its three contact
centre sites, the agents, the callers, the streets and the towns. Account numbers, phone
numbers (555-01xx), e-mail addresses (``example.com`` / ``example.org``, reserved by
RFC 2606) and the Luhn-valid card-like numbers are made up so that the scrub step has
something to find.

The package is split by responsibility:

- :mod:`~talkthemes.demo.scenario`: the calendar, the call reasons and the phrase banks
  (``talkthemes/data/demo_scenario.json``);
- :mod:`~talkthemes.demo.slots` and :mod:`~talkthemes.demo.builder`: slot values,
  disfluency and the call builder;
- :mod:`~talkthemes.demo.calls`: the stream of calls (:func:`iter_demo_calls`, in memory,
  for benchmarks);
- :mod:`~talkthemes.demo.render`: ``.txt`` and WebVTT rendering;
- :mod:`~talkthemes.demo.writer`: :func:`write_demo`, the corpus in mixed formats with a
  manifest and the answer key ``truth.csv`` outside the folder that gets ingested;
- :mod:`~talkthemes.demo.planted`: planted corpora with a known answer for the quality
  harness (a different invented scenario), and :mod:`~talkthemes.demo.harness`, which runs
  them through the product and scores the themes (``bench/quality.py``);
  :mod:`~talkthemes.demo.alert_harness` publishes a planted history and refreshes it with
  a next batch (nothing new, a new reason, a rise, both) to score the alerts
  (``bench/alerts.py``).

One ``random.Random(seed)`` stream composes the demo calls, so a (size, seed) pair always
gives the same corpus. ``languages=("en", "es")`` adds the utility's Spanish line (its own
phrase banks, ``talkthemes/data/demo_scenario_es.json``, and its own stream): a quarter of
the calls, with ids starting ``ES-``; the English calls stay exactly as they were.
"""

from __future__ import annotations
