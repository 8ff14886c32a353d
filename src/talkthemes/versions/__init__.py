"""Published versions: load, publish, export and prune them; align and compare versions.

- :mod:`~talkthemes.versions.load` — :class:`Version` and :func:`load_version`;
- :mod:`~talkthemes.versions.publish` — choose a sweep cell and publish it;
- :mod:`~talkthemes.versions.fit` and :mod:`~talkthemes.versions.write` — fit a version's
  model on every transcript, write the folder and make it current;
- :mod:`~talkthemes.versions.export` — every transcript's shares as CSV or Parquet;
- :mod:`~talkthemes.versions.prune` — keep the newest versions, remove leftovers;
- :mod:`~talkthemes.versions.naming` — the name a theme is shown by: its label, or its
  suggested name;
- :mod:`~talkthemes.versions.evidence` and :mod:`~talkthemes.versions.evidence_build` —
  each theme's evidence sentences, chosen when a version is written, and
  :mod:`~talkthemes.versions.evidence_shown` — them as shown, personal data masked;
- :mod:`~talkthemes.versions.curation` — merged themes shown as one, and what a refresh
  carried of the curation;
- :mod:`~talkthemes.versions.spreadsheet` — the themes spreadsheet to label in;
- :mod:`~talkthemes.versions.call_terms` — a call's terms as a version counted them;
- :mod:`~talkthemes.versions.align`, :mod:`~talkthemes.versions.drift` and
  :mod:`~talkthemes.versions.drift_markdown` — theme identity across versions and the
  drift report of a refresh;
- :mod:`~talkthemes.versions.alerts`, :mod:`~talkthemes.versions.alert_rules`,
  :mod:`~talkthemes.versions.alert_stats` and
  :mod:`~talkthemes.versions.alerts_markdown` — a refresh's alerts: new themes that are
  really new, risers and fallers, each explained.

Only the newest ``[refresh] keep_versions`` versions are kept, and always the current one.
"""

from __future__ import annotations
