"""Calls in more than one language: each call's language, and a language lane per language
with enough calls (docs/languages.md).

- :mod:`~talkthemes.languages.settle` — detect and settle each call's language;
- :mod:`~talkthemes.languages.lanes` — which languages are themed where, and the lanes:
  derived workspaces under ``<workspace>/languages/<code>/`` holding copies of their calls.
"""
