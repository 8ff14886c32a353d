"""The names a theme is shown by: its label, or its suggested name until it is labelled.

A **suggested name** is built from the theme's most relevant terms (docs/methods.md,
"Suggested names"; relevance after Sievert & Shirley 2014, docs/methods_metrics.md, "Term
relevance"):

1. The theme's terms are ranked by relevance at λ (0.6 by default) and the first
   ``pool`` of them are the candidates (terms a ``skip`` rule refuses are left out).
2. The name leads with a *phrase* (a joined collocation such as ``direct_debit``) when one
   is among the candidates — the most relevant one — and otherwise with the most
   relevant term; a second part follows: the most relevant other candidate that shares no
   word stem with the lead (so never "direct debit · debit").
3. Names are chosen theme by theme, the largest theme first, and each must differ from
   every name chosen before (and from ``taken``): two names differ when their sets of
   word stems differ. A theme whose first choice is taken tries the next second part,
   then the next lead; when every pair is taken it adds a third part; as a last resort
   it ends with a number.

The parts are written with spaces for underscores, joined by " · ", the first letter in
upper case: ``Direct debit · refund``.

References
----------
Sievert, C., Shirley, K. E. (2014). Proc. Workshop on Interactive Language Learning,
Visualization, and Interfaces (ACL 2014), pp. 63–70.
"""

from __future__ import annotations

from collections.abc import Callable, Collection, Iterator, Sequence

import numpy as np

from talkthemes.errors import InputError
from talkthemes.metrics.relevance import relevance

__all__ = ["display_name", "name_key", "stem", "suggest_names", "theme_name"]

#: Candidate terms per theme (the most relevant ones).
POOL = 12
_VOWELS = frozenset("aeiouy")


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


def display_name(label: str | None, suggested: str) -> str:
    """The name a theme is shown by: its label, else its suggested name.

    Screens mark the second case as *suggested* (the caller knows which it is: the label
    is blank).
    """
    if label is not None and label.strip():
        return label.strip()
    return suggested


def stem(word: str) -> str:
    """A crude stem for comparing words inside names (``charges`` and ``charging`` →
    ``charg``): lower case, one plural, verb or adverb ending removed, a doubled final
    consonant and a final ``e`` dropped."""
    w = word.lower()
    for suffix, repl in (("ies", "y"), ("ing", ""), ("ed", ""), ("ly", ""), ("es", ""), ("s", "")):
        if w.endswith(suffix) and len(w) - len(suffix) >= 3:
            if suffix == "s" and w.endswith("ss"):
                continue
            w = w[: -len(suffix)] + repl
            break
    if len(w) > 3 and w[-1] == w[-2] and w[-1] not in _VOWELS:
        w = w[:-1]
    if len(w) > 3 and w.endswith("e"):
        w = w[:-1]
    return w


def _stems(term: str) -> frozenset[str]:
    return frozenset(stem(p) for p in term.split("_") if p)


def name_key(name: str) -> frozenset[str]:
    """What makes two names the same: their sets of word stems (case and order ignored)."""
    words = [w for part in name.replace("·", " ").split() for w in [part.strip(" ,.;:()")] if w]
    return frozenset(stem(w) for w in words)


def _write(parts: Sequence[str]) -> str:
    text = " · ".join(p.replace("_", " ") for p in parts)
    return text[:1].upper() + text[1:]


def _candidates(terms: Sequence[str]) -> Iterator[list[str]]:
    """Names for one theme in the order of preference (see the module notes)."""
    phrases = [t for t in terms if "_" in t]
    leads = phrases[:1] + [t for t in terms if t not in phrases[:1]]
    for lead in leads:
        seen = _stems(lead)
        for other in terms:
            if other != lead and not (_stems(other) & seen):
                yield [lead, other]
    for lead in leads:  # every pair is taken: three parts
        seen = set(_stems(lead))
        parts = [lead]
        for other in terms:
            if other not in parts and not (_stems(other) & seen):
                parts.append(other)
                seen |= _stems(other)
                if len(parts) == 3:
                    yield list(parts)
                    parts.pop()
                    seen = set(_stems(lead))
                    for p in parts[1:]:
                        seen |= _stems(p)
    if leads:
        yield [leads[0]]


def suggest_names(
    topic_terms: np.ndarray,
    marginal: np.ndarray,
    vocabulary: Sequence[str],
    *,
    lam: float = 0.6,
    pool: int = POOL,
    order: Sequence[int] | None = None,
    taken: Collection[str] = (),
    skip: Callable[[str], bool] | None = None,
) -> list[str]:
    """A short, readable, distinct name for every theme (see the module notes).

    Parameters
    ----------
    topic_terms : ndarray of float, shape (K, V)
        Topic–term distributions φ.
    marginal : ndarray of float, shape (V,)
        Corpus term distribution p(w).
    vocabulary : sequence of str
        The V terms; phrases joined by ``_``.
    lam : float
        Relevance weight λ in [0, 1].
    pool : int
        Candidate terms per theme.
    order : sequence of int, optional
        Rows in the order they choose (default: by row); pass the rows by decreasing
        size so the largest themes get their first choice.
    taken : collection of str
        Names the new ones must differ from (e.g. the other themes' names when one merged
        theme is named).
    skip : callable, optional
        ``skip(term) -> bool``: terms never used in a name (e.g. person names).

    Returns
    -------
    list of str
        One name per row of ``topic_terms``, in row order.

    Raises
    ------
    InputError
        When the vocabulary does not fit the matrix, or a theme has no term with weight.

    References
    ----------
    Sievert, C., Shirley, K. E. (2014). Proc. ACL 2014 Workshop on Interactive Language
    Learning, Visualization, and Interfaces, pp. 63–70.
    """
    phi = np.asarray(topic_terms, dtype=np.float64)
    if phi.ndim != 2 or phi.shape[1] != len(vocabulary):
        raise InputError(
            f"suggest_names: {len(vocabulary)} terms for topic terms of shape {phi.shape}"
        )
    rel = relevance(phi, marginal, lam)
    k = phi.shape[0]
    rows = list(range(k)) if order is None else [int(r) for r in order]
    if sorted(rows) != list(range(k)):
        raise InputError(f"suggest_names: order must list each of the {k} rows once")
    used = {name_key(t) for t in taken}
    names: dict[int, str] = {}
    for row in rows:
        ranked = np.lexsort((np.arange(phi.shape[1]), -phi[row], -rel[row]))
        terms: list[str] = []
        for j in ranked.tolist():
            if phi[row, j] <= 0 or len(terms) >= pool:
                break
            term = str(vocabulary[j])
            if skip is not None and skip(term):
                continue
            terms.append(term)
        if not terms:
            raise InputError(f"suggest_names: theme row {row} has no term to be named by")
        chosen = None
        for parts in _candidates(terms):
            text = _write(parts)
            if name_key(text) not in used:
                chosen = text
                break
        if chosen is None:  # the last resort: a number makes it distinct
            base = _write(terms[:2])
            i = 2
            while name_key(f"{base} {i}") in used:
                i += 1
            chosen = f"{base} {i}"
        used.add(name_key(chosen))
        names[row] = chosen
    return [names[r] for r in range(k)]
