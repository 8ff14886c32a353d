"""A version's themes as the sections list them: names, coverage, map position, words.

A theme is shown by its label, or by its three top terms until it is labelled. Labels
change at any time (the viewer edits them), so names are worked out from the labels as
they are now, every time; only the top terms are cached per loaded version.
"""

from __future__ import annotations

import pandas as pd

from talkthemes.versions.load import Version
from talkthemes.versions.naming import theme_name
from talkthemes.view.theme_map import ThemeLayout

__all__ = ["theme_names", "theme_table", "with_names"]


def theme_table(version: Version, layout: ThemeLayout, *, lam: float = 0.6) -> pd.DataFrame:
    """One row per theme of a version, in the version's row order.

    Columns: ``theme_id, position, name, label, note, hidden, status, coverage,
    mean_share, x, y, top_terms`` (eight terms by relevance at ``lam``, as text).
    """
    names = theme_names(version)
    cov, mean = version.coverage(), version.mean_share()
    rows = []
    for i, t in enumerate(version.themes):
        rows.append(
            {
                "theme_id": t.theme_id,
                "position": i,
                "name": names[i],
                "label": t.label,
                "note": t.note,
                "hidden": t.hidden,
                "status": t.status,
                "coverage": float(cov[i]),
                "mean_share": float(mean[i]),
                "x": float(layout.x[i]),
                "y": float(layout.y[i]),
                "top_terms": ", ".join(
                    w.replace("_", " ") for w in version.top_terms(i, 8, lam=lam)
                ),
            }
        )
    return pd.DataFrame(rows)


def theme_names(version: Version) -> list[str]:
    """Each theme's display name: its label, or its three top terms until labelled.

    The same names as ``Version.names()``; the top terms are worked out once per loaded
    version (kept in the version's private cache), the labels are read each time.
    """
    cache = getattr(version, "_cache", None)
    top3 = cache.get("view.top3") if cache is not None else None
    if top3 is None:
        top3 = [version.top_terms(i, 3) for i in range(version.k)]
        if cache is not None:
            cache["view.top3"] = top3
    return [theme_name(t.label, top3[i]) for i, t in enumerate(version.themes)]


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
