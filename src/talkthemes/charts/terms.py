"""A theme's words ranked by relevance, with their weight in the theme and in the corpus."""

from __future__ import annotations

import altair as alt
import pandas as pd

from talkthemes.charts.style import (
    BLACK,
    BLUE,
    INK_SOFT,
    LINE_SOFT,
    PAPER,
    inline,
    look,
    require,
    require_finite,
)
from talkthemes.errors import InputError

__all__ = ["TERM_CAPTION", "term_chart"]

TERM_CAPTION = (
    "Words are ranked by relevance to the theme, most relevant at the top. The filled dot "
    "is how often the word is used in this theme, the ring how often it is used across all "
    "transcripts; ×3.2 means the word is 3.2 times as common in this theme."
)
"""Plain-language caption of :func:`term_chart` (also its subtitle)."""


def term_chart(terms: pd.DataFrame, name: str, *, width: int = 420) -> alt.LayerChart:
    """A theme's terms, ranked by relevance, with their weight in the theme and the corpus.

    Parameters
    ----------
    terms : pandas.DataFrame
        One row per term. Columns: ``term`` (str), ``relevance`` (Sievert & Shirley 2014,
        at the viewer's λ), ``weight`` (the term's probability in the theme, > 0),
        ``corpus_weight`` (its probability in the whole corpus, > 0), ``rank`` (1 = most
        relevant).
    name : str
        The theme's name (its label or top terms), used as the title.
    width : int
        Plot width in pixels; the height follows the number of terms.

    Returns
    -------
    altair.LayerChart
        One row per term, most relevant at the top, on a shared logarithmic axis of
        "share of all words": a filled blue dot at the term's weight in the theme, a black
        ring at its weight across all transcripts, a grey line joining them, and the lift
        (theme weight ÷ corpus weight) printed as "×3.2" beside the pair. The caption is
        :data:`TERM_CAPTION`.

    References
    ----------
    Sievert, C., Shirley, K. E. (2014). Proc. ACL 2014 Workshop on Interactive Language
    Learning, Visualization, and Interfaces, pp. 63–70 (term relevance).
    """
    require(terms, ("term", "relevance", "weight", "corpus_weight", "rank"), "term_chart", "terms")
    df = terms[["term", "relevance", "weight", "corpus_weight", "rank"]].copy()
    for col in ("weight", "corpus_weight"):
        require_finite(df, col, "term_chart")
        bad = df[col] <= 0
        if bad.any():
            row = df.index[bad.to_numpy().nonzero()[0][0]]
            raise InputError(
                f"term_chart: terms row {row!r} ({df.loc[row, 'term']!r}): {col} must be "
                "positive to sit on a logarithmic axis"
            )
    df = df.sort_values("rank", kind="stable").reset_index(drop=True)
    df["term"] = df["term"].astype(str)
    df["lift"] = df["weight"] / df["corpus_weight"]
    df["lift_text"] = [_lift_text(v) for v in df["lift"]]
    df["right"] = df[["weight", "corpus_weight"]].max(axis=1)
    order = df["term"].tolist()
    in_theme, in_corpus = "in this theme", "across all transcripts"
    long = pd.concat(
        [
            df.assign(where=in_theme, value=df["weight"]),
            df.assign(where=in_corpus, value=df["corpus_weight"]),
        ],
        ignore_index=True,
    )
    lo = float(df[["weight", "corpus_weight"]].min().min()) / 1.5
    hi = float(df["right"].max()) * 4.0
    scale = alt.Scale(type="log", domain=[lo, hi], nice=False)
    x_title = "How often the word is used (share of all words, log scale)"
    y = alt.Y(
        "term:N",
        sort=order,
        title=None,
        axis=alt.Axis(ticks=False, domain=False, labelFontSize=12, labelPadding=8, labelLimit=180),
    )
    tooltip = [
        alt.Tooltip("term:N", title="Word"),
        alt.Tooltip("rank:Q", title="Rank by relevance", format="d"),
        alt.Tooltip("relevance:Q", title="Relevance", format=".3f"),
        alt.Tooltip("weight:Q", title="Share of the theme's words", format=".2%"),
        alt.Tooltip("corpus_weight:Q", title="Share of all words", format=".3%"),
        alt.Tooltip("lift_text:N", title="Times as common in the theme"),
    ]
    joins = (
        alt.Chart(inline(df, "term_chart"))
        .mark_rule(color=LINE_SOFT, strokeWidth=2)
        .encode(
            y=y,
            x=alt.X("corpus_weight:Q", title=x_title, scale=scale, axis=alt.Axis(format="~%")),
            x2="weight:Q",
        )
    )
    which = alt.Scale(domain=[in_theme, in_corpus], range=[BLUE, BLACK])
    dots = (
        alt.Chart(inline(long, "term_chart"))
        .mark_point(size=80, strokeWidth=1.8, opacity=1)
        .encode(
            y=y,
            x=alt.X("value:Q", title=x_title, scale=scale, axis=alt.Axis(format="~%")),
            stroke=alt.Stroke("where:N", scale=which, legend=alt.Legend(title=None, orient="top")),
            fill=alt.Fill(
                "where:N",
                scale=alt.Scale(domain=[in_theme, in_corpus], range=[BLUE, PAPER]),
                legend=alt.Legend(title=None, orient="top"),
            ),
            tooltip=tooltip,
        )
    )
    lift = (
        alt.Chart(inline(df, "term_chart"))
        .mark_text(align="left", dx=10, fontSize=11, color=INK_SOFT)
        .encode(
            y=y,
            x=alt.X("right:Q", title=x_title, scale=scale, axis=alt.Axis(format="~%")),
            text="lift_text:N",
            tooltip=tooltip,
        )
    )
    return alt.layer(
        joins, dots, lift, width=width, height=max(60, 22 * len(df)), **look(name, TERM_CAPTION)
    )


def _lift_text(lift: float) -> str:
    if lift >= 10:
        return f"×{lift:,.0f}"
    if lift >= 0.1:
        return f"×{lift:.1f}"
    return f"×{lift:.2f}"
