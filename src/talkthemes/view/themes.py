"""A version's themes as the sections list them: names, coverage, map position, words.

A theme is shown by its label, or by its suggested name until it is labelled. Labels
change at any time (the viewer edits them), so names are worked out from the labels as
they are now, every time; the suggested names are stored with the version.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from talkthemes.metrics.prominence import boilerplate_like
from talkthemes.privacy import name_term
from talkthemes.text import percent
from talkthemes.versions.load import Version
from talkthemes.view.tables import table_coverage, table_mean_share
from talkthemes.view.theme_map import ThemeLayout

__all__ = [
    "boilerplate_advice",
    "map_frame",
    "shown_terms",
    "term_rows",
    "theme_names",
    "theme_table",
    "with_names",
]


def theme_table(version: Version, layout: ThemeLayout, *, lam: float = 0.6) -> pd.DataFrame:
    """One row per theme of a version, in the version's row order.

    Columns: ``theme_id, position, name, label, labelled, note, hidden, status, coverage,
    mean_share, boilerplate_like, x, y, top_terms`` (eight terms by relevance at ``lam``,
    as text). ``boilerplate_like`` marks a theme with a large average share that almost
    never leads a transcript (:func:`talkthemes.metrics.prominence.boilerplate_like`):
    suggested for hiding as noise unless it is hidden already. Coverage and mean share come
    from the version's viewer tables when the viewer has opened them.
    """
    names = theme_names(version)
    cov, mean = table_coverage(version), table_mean_share(version)
    suggest = boilerplate_like(cov, mean)
    rows = []
    for i, t in enumerate(version.themes):
        rows.append(
            {
                "theme_id": t.theme_id,
                "position": i,
                "name": names[i],
                "label": t.label,
                "labelled": bool(str(t.label or "").strip()),
                "note": t.note,
                "hidden": t.hidden,
                "status": t.status,
                "coverage": float(cov[i]),
                "mean_share": float(mean[i]),
                "boilerplate_like": bool(suggest[i]),
                "x": float(layout.x[i]),
                "y": float(layout.y[i]),
                "top_terms": ", ".join(
                    w.replace("_", " ") for w in shown_terms(version, i, 8, lam)
                ),
            }
        )
    return pd.DataFrame(rows)


def boilerplate_advice(row: pd.Series | dict) -> str:
    """The suggestion shown on a boilerplate-like theme's card and tile (plain text)."""
    return (
        f"Looks like boilerplate: it takes {percent(row['mean_share'])} of the average "
        f"transcript but leads only {percent(row['coverage'])} of them, like phrases said "
        "in every call. Consider hiding it as noise."
    )


def shown_terms(version: Version, position: int, n: int = 10, lam: float = 1.0) -> list[str]:
    """A theme's ``n`` top terms at ``lam`` as screens show them: person names left out.

    Terms holding a first name (:func:`talkthemes.privacy.name_term`, e.g. an agent's
    name said in every greeting) are personal data; they are skipped and the next terms
    take their place, unless the version's preparation decided they are words
    (:func:`talkthemes.privacy.prep_words`: ``[prepare] not_names``, first names the
    corpus uses as words).
    """
    return term_rows(version, position, n=n, lam=lam)["term"].tolist()


def term_rows(version: Version, position: int, *, n: int = 20, lam: float = 0.6) -> pd.DataFrame:
    """``Version.term_table`` of a theme without person-name terms (see :func:`shown_terms`)."""
    table = version.term_table(position, n=n + 25, lam=lam)
    words = _prep_words(version)
    keep = ~table["term"].map(lambda t: name_term(t, words=words)).astype(bool)
    out = table[keep].head(n).reset_index(drop=True)
    out["rank"] = range(1, len(out) + 1)
    return out


def _prep_words(version: Version) -> frozenset[str]:
    """The words the version's preparation kept though they are first names."""
    return version.prep_words()


def theme_names(version: Version) -> list[str]:
    """Each theme's display name: its label, or its suggested name until labelled.

    The same names as ``Version.names()``: the suggested names are stored with the
    version, the labels are read each time.
    """
    return version.names()


def with_names(frame: pd.DataFrame, version: Version) -> pd.DataFrame:
    """Refresh ``name`` and ``hidden`` of a per-theme frame from the version's labels.

    Frames keyed by ``theme_id`` are cached by the viewer; labels change at any time.
    """
    names = dict(zip(version.theme_ids, theme_names(version), strict=True))
    hidden = {t.theme_id: t.hidden for t in version.themes}
    out = frame.copy()
    out["name"] = out["theme_id"].map(names).astype(str)
    out["hidden"] = out["theme_id"].map(hidden).astype(bool)
    return out


def map_frame(table: pd.DataFrame, trends: pd.DataFrame | None = None) -> pd.DataFrame:
    """The theme table with each theme's trend, as the theme map takes it.

    ``trends`` is :func:`talkthemes.view.over_time.theme_trends` (``theme_id, trend,
    change``); themes without one are ``"steady"``.
    """
    cols = ["theme_id", "x", "y", "coverage", "name", "labelled", "hidden", "boilerplate_like"]
    out = table[cols].copy()
    if trends is not None and not trends.empty:
        by_id = trends.set_index("theme_id")
        out["trend"] = out["theme_id"].map(by_id["trend"]).fillna("steady")
        out["change"] = out["theme_id"].map(by_id["change"])
    else:
        out["trend"], out["change"] = "steady", np.nan
    return out
