"""The name a theme is shown by, everywhere: its label, or its three top terms."""

from __future__ import annotations

from collections.abc import Sequence

from talkthemes.errors import InputError

__all__ = ["theme_name"]


def theme_name(label: str | None, top_terms: Sequence[str]) -> str:
    """The name a theme is shown by: its label, or its three top terms until labelled.

    Parameters
    ----------
    label : str or None
        The user's label; blank or ``None`` means not labelled yet.
    top_terms : sequence of str
        The theme's terms, most relevant first.

    Returns
    -------
    str
        ``label`` stripped, or the first three terms joined by ``" · "``, with the
        underscores of joined phrases (``late_fee``) shown as spaces.

    Raises
    ------
    InputError
        If the theme has neither a label nor any term.
    """
    if label is not None and label.strip():
        return label.strip()
    terms = [t.replace("_", " ") for t in top_terms[:3] if t]
    if not terms:
        raise InputError("theme_name: a theme needs a label or at least one top term")
    return " · ".join(terms)
