"""``prepare --explain``: what each step of a prepare removed or joined, as terminal tables.

The report comes from the public API's result (:meth:`talkthemes.PrepareResult.to_json`,
the document ``prepare --json`` prints), so the names the names step removed arrive masked
unless the workspace allows its original text; the keys of the report are described in
:mod:`talkthemes.prepare.explain`. :func:`explain_rows` makes the one row per step,
:func:`render_explain` prints it and the tables that follow (boilerplate sentences, names,
lemma checks, phrases, excluded transcripts).
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from typing import TYPE_CHECKING, Any

from rich.markup import escape
from rich.table import Table

if TYPE_CHECKING:  # pragma: no cover
    from rich.console import Console

    from talkthemes import PrepareResult

__all__ = ["explain_rows", "render_explain"]

#: How each way of finding a name reads in the step row.
_NAME_SOURCES = {
    "cue": "at cues",
    "known": "names of the call",
    "suspect": "suspects",
    "capitalised": "capitalised",
}


def _n(value: Any) -> str:
    return f"{int(value):,}"


def _table(
    console: Console, title: str, columns: Sequence[str], rows: Iterable[Sequence[str]]
) -> None:
    """Print one table; a column whose name ends in ``>`` is right-aligned (the ``>`` is
    not shown). Cells are printed as given: escape what came from the data."""
    table = Table(title=title)
    for col in columns:
        right = col.endswith(">")
        table.add_column(col.removesuffix(">"), justify="right" if right else "left")
    for row in rows:
        table.add_row(*row)
    console.print(table)


def explain_rows(explain: dict[str, Any]) -> list[dict[str, str]]:
    """One row per step: what it removed or joined.

    Parameters
    ----------
    explain : dict
        The chain's report.

    Returns
    -------
    list of dict
        Keys ``step``, ``removed`` (words or tokens removed, or joined for phrases),
        ``emptied`` (transcripts left with nothing by this step) and ``details``.
    """
    rows: list[dict[str, str]] = []
    r = explain["roles"]
    rows.append(
        {
            "step": "roles",
            "removed": f"{_n(r['words_removed'])} words",
            "emptied": _n(r["emptied"]),
            "details": f"roles = {r['setting']}: {_n(r['turns_dropped'])} of "
            f"{_n(r['turns'])} turns dropped",
        }
    )
    s = explain["scrub"]
    kinds = ", ".join(f"{k} {_n(v)}" for k, v in s["removed"].items() if v)
    rows.append(
        {
            "step": "scrub",
            "removed": f"{_n(s['words_removed'])} words",
            "emptied": _n(s["emptied"]),
            "details": (kinds or "nothing found") if s["enabled"] else "off",
        }
    )
    names = explain.get("names")
    if names is not None:
        rows.append(_names_row(names))
    b = explain["boilerplate"]
    rows.append(
        {
            "step": "boilerplate",
            "removed": f"{_n(b['words_removed'])} words",
            "emptied": _n(b["emptied"]),
            "details": f"{len(b['sentences'])} sentences in ≥ {b['min_share']:.0%} of "
            f"transcripts; {_n(b['sentences_removed'])} occurrences dropped"
            if b["min_share"] > 0
            else "off",
        }
    )
    lem = explain["lemmas"]
    checks = []
    hw = lem.get("headwords")
    if hw and hw["checked"]:
        checks.append(f"{_n(hw['kept'])} of {_n(hw['checked'])} headwords kept as said")
    names = lem.get("names")
    if names and names["tokens"]:
        checks.append(f"{_n(names['tokens'])} name tokens kept as written")
    if lem.get("exceptions"):
        checks.append(f"{_n(len(lem['exceptions']))} exceptions")
    rows.append(
        {
            "step": "lemmas",
            "removed": "0",
            "emptied": "0",
            "details": f"{lem['path']} ({lem['lang']}): {_n(lem['tokens_lemmatised'])} kept "
            f"tokens changed form; {_n(lem['terms'])} distinct terms"
            + "".join(f"; {c}" for c in checks),
        }
    )
    f = explain["filter"]
    reasons = ", ".join(f"{k} {_n(v)}" for k, v in f["removed"].items() if v)
    rows.append(
        {
            "step": "filter",
            "removed": f"{_n(f['tokens_removed'])} tokens",
            "emptied": _n(f["emptied"]),
            "details": f"{reasons}; {_n(f['tokens_kept'])} tokens kept",
        }
    )
    p = explain["phrases"]
    rows.append(
        {
            "step": "phrases",
            "removed": f"{_n(p['tokens_joined'])} pairs joined",
            "emptied": "0",
            "details": f"{_n(p['phrases'])} phrases" if p["enabled"] else "off",
        }
    )
    v = explain["vocabulary"]
    cuts = ", ".join(f"{k.replace('_', ' ')} {_n(n)}" for k, n in v["removed"].items() if n)
    rows.append(
        {
            "step": "vocabulary",
            "removed": f"{_n(v['tokens_out_of_vocabulary'])} tokens out of vocabulary",
            "emptied": _n(v["emptied"]),
            "details": f"{_n(v['before'])} → {_n(v['after'])} terms"
            + (f" (removed: {cuts})" if cuts else ""),
        }
    )
    m = explain["min_tokens"]
    rows.append(
        {
            "step": "min_tokens",
            "removed": f"{_n(m['excluded'])} transcripts",
            "emptied": "",
            "details": f"fewer than {m['setting']} vocabulary tokens",
        }
    )
    return rows


def _names_row(names: dict[str, Any]) -> dict[str, str]:
    if not names.get("enabled"):
        return {"step": "names", "removed": "0 tokens", "emptied": "0", "details": "off"}
    found = ", ".join(
        f"{_NAME_SOURCES.get(k, k)} {_n(v)}" for k, v in names.get("removed", {}).items() if v
    )
    kept = len(names.get("kept_as_words", []))
    return {
        "step": "names",
        "removed": f"{_n(names['tokens_removed'])} tokens",
        "emptied": _n(names.get("emptied", 0)),
        "details": f"{_n(names.get('distinct', 0))} names"
        + (f" ({found})" if found else "")
        + f"; {_n(kept)} kept where used as words",
    }


def render_explain(
    console: Console,
    result: PrepareResult,
    *,
    max_excluded: int = 20,
    original_text: bool = False,
) -> None:
    """Print what each step of a prepare did as tables.

    Parameters
    ----------
    console : rich.console.Console
    result : PrepareResult
        What ``Workspace.prepare`` returned; its report is read from
        :meth:`~talkthemes.PrepareResult.to_json`, as ``prepare --json`` prints it.
    max_excluded : int
        Excluded transcripts listed by id (the rest are counted).
    original_text : bool
        Show the names the names step removed (``[view] original_text``); masked otherwise
        (in its list of names and in the boilerplate sentences).
    """
    explain = result.to_json(original_text=original_text)["explain"]
    t = explain["transcripts"]
    steps = Table(
        title=f"prepare: {_n(t['read'])} transcripts read, {_n(t['usable'])} used, "
        f"{_n(t['excluded'])} excluded"
    )
    steps.add_column("step")
    steps.add_column("removed", justify="right")
    steps.add_column("transcripts emptied", justify="right")
    steps.add_column("details")
    for row in explain_rows(explain):
        steps.add_row(row["step"], row["removed"], row["emptied"], escape(row["details"]))
    console.print(steps)

    sentences = explain["boilerplate"]["sentences"]
    if sentences:
        _table(
            console,
            "boilerplate sentences dropped",
            ["sentence (normalised)", "transcripts>", "share>"],
            ([escape(s["sentence"]), _n(s["transcripts"]), f"{s['share']:.1%}"]
             for s in sentences),
        )  # fmt: skip

    _render_names(console, explain.get("names") or {}, original_text)
    _render_lemmas(console, explain["lemmas"])

    top = explain["phrases"].get("top", [])
    if top:
        _table(
            console,
            f"{len(top)} most frequent phrases",
            ["phrase", "count>", "NPMI>"],
            ([escape(p["phrase"]), _n(p["count"]), f"{p['npmi']:.3f}"] for p in top),
        )

    excluded = explain.get("excluded", [])
    if excluded:
        rows = [[escape(e["id"]), escape(e["reason"])] for e in excluded[:max_excluded]]
        if len(excluded) > max_excluded:
            rows.append([f"… and {_n(len(excluded) - max_excluded)} more", ""])
        title = f"{_n(len(excluded))} transcripts excluded from training"
        _table(console, title, ["transcript", "reason"], rows)


def _render_lemmas(console: Console, lem: dict[str, Any]) -> None:
    """The lemma checks: headwords decided by the corpus, exceptions, names."""
    hw = lem.get("headwords") or {}
    if hw.get("decisions"):
        _table(
            console,
            f"headwords: the table's lemma against the word as said "
            f"(kept when said ≥ {hw['ratio']:g}× as often)",
            ["word", "table's lemma", "used", "word said>", "lemma said>"],
            (
                [
                    escape(d["word"]),
                    escape(d["table"]),
                    "kept as said" if d["lemma"] == d["word"] else escape(d["lemma"]),
                    _n(d["said"]),
                    _n(d["table_said"]),
                ]
                for d in hw["decisions"]
            ),
        )
    if lem.get("exceptions"):
        _table(
            console,
            "your lemma exceptions ([prepare] lemma_exceptions)",
            ["word", "lemma", "said>"],
            ([escape(e["word"]), escape(e["lemma"]), _n(e["count"])] for e in lem["exceptions"]),
        )
    names = lem.get("names") or {}
    if names.get("top"):
        _table(
            console,
            "names kept as written (not lemmatised)",
            ["name", "table's lemma", "count>"],
            ([escape(n["name"]), escape(n["table"]), _n(n["count"])] for n in names["top"]),
        )


def _render_names(console: Console, names: dict[str, Any], original_text: bool) -> None:
    """The names step: the names removed (masked already unless allowed), the words it left
    alone."""
    if names.get("top"):
        how = "" if original_text else " (masked: [view] original_text = true shows them)"
        _table(
            console,
            f"people's names removed, most frequent{escape(how)}",
            ["name", "tokens>"],
            ([escape(t["name"]), _n(t["count"])] for t in names["top"]),
        )
    if names.get("kept_as_words"):
        _table(
            console,
            f"names kept where used as words (in ≥ {names.get('min_docs', 0)} "
            "transcripts outside names)",
            ["word", "transcripts>"],
            ([escape(t["word"]), _n(t["transcripts"])] for t in names["kept_as_words"]),
        )
    if names.get("ordinary"):
        _table(
            console,
            "first names kept as ordinary words",
            ["word", "tokens>"],
            ([escape(t["word"]), _n(t["count"])] for t in names["ordinary"]),
        )
