"""Writing the demo corpus: call files, per-turn CSV parts, manifests and the answer key."""

from __future__ import annotations

import contextlib
import csv
import io
import json
import logging
import shutil
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from talkthemes.demo.calls import iter_demo_calls, language_sizes
from talkthemes.demo.records import DemoCall, DemoFiles
from talkthemes.demo.render import render_txt, render_vtt
from talkthemes.demo.scenario import (
    FIRST_DAY,
    FORMATS,
    LANGUAGES,
    LAST_DAY,
    PRICE_CHANGE_MONTH,
    STORM_WEEK,
    month_key,
)
from talkthemes.errors import InputError
from talkthemes.workspace import atomic_dir, atomic_write_text

__all__ = ["CSV_CALLS_PER_FILE", "LANGUAGES", "write_demo"]

logger = logging.getLogger(__name__)
_MANIFEST_COLUMNS = ("call_id", "date", "queue", "site", "duration_s", "channel")
_TURN_COLUMNS = ("call_id", "speaker", "start", "text")
_TRUTH_COLUMNS = ("call_id", "date", "location", "format", "kind", "primary_reason",
                  "secondary_reason", "detail")  # fmt: skip

CSV_CALLS_PER_FILE = 5000


class _Sink:
    """One output folder (``exports`` or ``inbox``): call files, ``turns*.csv``, manifest."""

    def __init__(self, root: Path, stack: contextlib.ExitStack) -> None:
        self.root, self.stack = root, stack
        self.manifest: list[tuple[str, ...]] = []
        self.counts = dict.fromkeys(FORMATS, 0)
        self.turns: Any = None
        self.turns_file: Any = None
        self.months: set[str] = set()

    def add(self, call: DemoCall) -> None:
        month = month_key(call.date)
        if call.format == "csv":
            if self.counts["csv"] % CSV_CALLS_PER_FILE == 0:  # a new part, under size limits
                part = self.counts["csv"] // CSV_CALLS_PER_FILE + 1
                name = "turns.csv" if part == 1 else f"turns-{part:03d}.csv"
                if self.turns_file is not None:
                    self.turns_file.close()
                self.turns_file = self.stack.enter_context(
                    (self.root / name).open("w", encoding="utf-8", newline="")
                )
                self.turns = csv.writer(self.turns_file, lineterminator="\n")
                self.turns.writerow(_TURN_COLUMNS)
            self.turns.writerows((call.call_id, t.speaker, f"{t.start:.1f}", t.text)
                                 for t in call.turns)  # fmt: skip
        else:
            folder = self.root / "calls" / month
            if month not in self.months:
                folder.mkdir(parents=True, exist_ok=True)
                self.months.add(month)
            text = render_txt(call) if call.format == "txt" else render_vtt(call)
            (folder / f"{call.call_id}.{call.format}").write_text(
                text, encoding="utf-8", newline="\n"
            )
        self.counts[call.format] += 1
        self.manifest.append((call.call_id, call.date.isoformat(), call.queue, call.site,
                              str(call.duration_s), call.channel))  # fmt: skip

    def finish(self) -> None:
        with (self.root / "manifest.csv").open("w", encoding="utf-8", newline="") as fh:
            writer = csv.writer(fh, lineterminator="\n")
            writer.writerow(_MANIFEST_COLUMNS)
            writer.writerows(self.manifest)


def _csv_text(header: Sequence[str], rows: list[tuple[str, ...]]) -> str:
    buffer = io.StringIO()
    csv.writer(buffer, lineterminator="\n").writerows([header, *rows])
    return buffer.getvalue()


def _check_out_dir(out_dir: Path) -> None:
    if not out_dir.exists():
        return
    if not out_dir.is_dir():
        raise InputError(f"{out_dir}: not a folder; the demo needs an empty or new folder")
    marker = out_dir / "demo.json"
    if any(out_dir.iterdir()) and not marker.is_file():
        raise InputError(
            f"{out_dir}: folder is not empty and holds no earlier demo output (demo.json); "
            "choose an empty or new folder"
        )


def write_demo(
    out_dir: Path,
    *,
    size: int = 3000,
    seed: int = 7,
    hold_back_last_month: bool = False,
    languages: Sequence[str] = ("en",),
) -> DemoFiles:
    """Write the demo corpus: mixed-format exports, a manifest and the answer key.

    Layout::

        out_dir/exports/calls/<yyyy-mm>/<call_id>.txt|.vtt   (about half / a quarter)
        out_dir/exports/turns.csv      one row per turn: call_id, speaker, start, text
                                       (then turns-002.csv, ... every 5,000 such calls)
        out_dir/exports/manifest.csv   call_id, date, queue, site, duration_s, channel
        out_dir/inbox/...              October's calls, same layout, when held back
        out_dir/truth.csv              answer key for tests; never ingested or shown
        out_dir/demo.json              size, seed and counts of this run (and calls per
                                       language when not English only)

    With ``languages=("en", "es")`` a quarter of the calls are the Spanish line's (see
    :func:`~talkthemes.demo.calls.language_sizes`), in the same files, formats and manifest
    as the English ones; their ids start with ``ES-``. The manifest has no language column,
    on purpose: the language is for ingest to detect.

    Parameters
    ----------
    out_dir : Path
        A new or empty folder, or one holding earlier demo output (it is replaced).
    size : int
        Number of calls.
    seed : int
        Random seed; the same arguments always give byte-identical files.
    hold_back_last_month : bool
        Put the calls of October 2026 in ``out_dir/inbox`` instead of ``exports``, for
        the refresh demo.
    languages : sequence of str
        Lines of the demo: ``("en",)`` (the default, byte-identical to the English-only
        generator), ``("es",)`` or ``("en", "es")``.

    Returns
    -------
    DemoFiles

    Raises
    ------
    InputError
        When ``size`` is below 1, a language is not supported or ``out_dir`` holds
        something other than demo output.
    """
    out_dir = Path(out_dir)
    if size < 1:
        raise InputError(f"demo size must be at least 1 call, got {size}")
    sizes = language_sizes(size, languages)
    _check_out_dir(out_dir)
    truth: list[tuple[str, ...]] = []
    with contextlib.ExitStack() as stack:
        exports = _Sink(stack.enter_context(atomic_dir(out_dir / "exports")), stack)
        inbox = None
        if hold_back_last_month:
            inbox = _Sink(stack.enter_context(atomic_dir(out_dir / "inbox")), stack)
        for call in iter_demo_calls(size, seed, languages=languages):
            held = inbox is not None and month_key(call.date) == PRICE_CHANGE_MONTH
            (inbox if held and inbox is not None else exports).add(call)
            second = call.reasons[1] if len(call.reasons) > 1 else ""
            truth.append((call.call_id, call.date.isoformat(), "inbox" if held else "exports",
                          call.format, call.kind, call.reasons[0] if call.reasons else "",
                          second, call.detail))  # fmt: skip
        for sink in (exports, inbox):
            if sink is not None:
                sink.finish()
        # the stack closes turns.csv (entered last) before the folders are moved into place
    if not hold_back_last_month and (out_dir / "inbox").is_dir():
        shutil.rmtree(out_dir / "inbox")  # left by an earlier demo run that held it back
    atomic_write_text(out_dir / "truth.csv", _csv_text(_TRUTH_COLUMNS, truth))
    info = {"generator": "talkthemes.demo", "size": size, "seed": seed,
            "hold_back_last_month": hold_back_last_month, "first_day": FIRST_DAY.isoformat(),
            "last_day": LAST_DAY.isoformat(), "storm_week": [d.isoformat() for d in STORM_WEEK],
            "price_change_month": PRICE_CHANGE_MONTH, "exports": exports.counts,
            "inbox": inbox.counts if inbox else {}}  # fmt: skip
    if tuple(sizes) != ("en",):  # English-only output stays as it always was
        info["languages"] = sizes
    atomic_write_text(out_dir / "demo.json", json.dumps(info, indent=2) + "\n")
    logger.info("wrote %d demo calls to %s", size, out_dir)
    root = out_dir / "exports"
    return DemoFiles(
        root=out_dir, exports=root, manifest=root / "manifest.csv", truth=out_dir / "truth.csv",
        turns=root / "turns.csv" if exports.counts["csv"] else None,
        inbox=out_dir / "inbox" if inbox else None, counts=exports.counts,
        inbox_counts=inbox.counts if inbox else {},
    )  # fmt: skip
