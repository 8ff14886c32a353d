"""The public Python API behind ``import talkthemes as tt`` (see ``docs/api.md``).

- :mod:`~talkthemes.api.workspace` — :class:`~talkthemes.api.workspace.Workspace`, the entry
  point: open or create a workspace and run every stage on it;
- :mod:`~talkthemes.api.writing` and :mod:`~talkthemes.api.reading` — its methods that
  change the workspace (taking the writer lock) and those that read it (thread-safe);
- :mod:`~talkthemes.api.results` — the result types the API adds (status, label, export,
  curation, tokens); :mod:`~talkthemes.api.call_results` — the versions and calls it lists;
- :mod:`~talkthemes.api.inputs` — texts, frames and paths read for ``assign``;
- :mod:`~talkthemes.api.progress` — rich and tqdm bars for the one progress protocol;
- :mod:`~talkthemes.api._base`, :mod:`~talkthemes.api._cache`,
  :mod:`~talkthemes.api._choices` — the lock, loaded versions, look-ups in the store;
- :mod:`~talkthemes.api._deferred` — how the heavy domain modules are imported on first
  use, so that ``import talkthemes`` stays light.

The command line, the viewer and the service are faces over this layer: they parse, show
and answer; the work, the locks and the checks on the workspace happen here.
"""
