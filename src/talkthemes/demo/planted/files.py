"""Writing a planted corpus: ``.txt`` transcripts and a manifest to ingest, and the answer key."""

from __future__ import annotations

import contextlib
import csv
import io
import json
from dataclasses import asdict, dataclass
from pathlib import Path

from talkthemes.demo.planted.bank import (
    KINDS,
    TRUTH_COLUMNS,
    PlantedCall,
    PlantedSpec,
    planted_reasons,
)
from talkthemes.demo.planted.compose import iter_planted_calls
from talkthemes.errors import InputError
from talkthemes.workspace import atomic_dir, atomic_write_text

__all__ = ["PlantedFiles", "read_truth", "render_planted_txt", "write_planted"]


def render_planted_txt(call: PlantedCall) -> str:
    """A call as a ``.txt`` transcript: one ``Agent:`` or ``Customer:`` line per turn."""
    return "".join(f"{role.capitalize()}: {text}\n" for role, text in call.turns)


@dataclass(frozen=True, slots=True)
class PlantedFiles:
    """Where :func:`write_planted` put things.

    Attributes
    ----------
    root : Path
    exports : Path
        The folder to ingest: ``calls/*.txt`` and ``manifest.csv``.
    manifest : Path
        ``exports/manifest.csv`` (``call_id, date``).
    truth : Path
        ``root/truth.csv``, the answer key (never ingested).
    counts : dict of str to int
        Calls per kind.
    """

    root: Path
    exports: Path
    manifest: Path
    truth: Path
    counts: dict[str, int]


def _csv_text(rows: list[tuple[str, ...]]) -> str:
    buffer = io.StringIO()
    csv.writer(buffer, lineterminator="\n").writerows(rows)
    return buffer.getvalue()


def write_planted(out_dir: Path, spec: PlantedSpec) -> PlantedFiles:
    """Write a planted corpus: transcripts and a manifest to ingest, and the answer key.

    Layout::

        out_dir/exports/calls/<call_id>.txt   Agent:/Customer: lines
        out_dir/exports/manifest.csv          call_id, date
        out_dir/truth.csv                     call_id, date, kind, detail, reason,
                                              secondary_reason, words (never ingested)
        out_dir/planted.json                  the spec, reason labels and counts

    Parameters
    ----------
    out_dir : Path
        A new or empty folder, or one holding earlier planted output (it is replaced).
    spec : PlantedSpec

    Returns
    -------
    PlantedFiles

    Raises
    ------
    InputError
        When ``out_dir`` holds something other than planted output.
    """
    out_dir = Path(out_dir)
    if out_dir.exists() and (
        not out_dir.is_dir()
        or (any(out_dir.iterdir()) and not (out_dir / "planted.json").is_file())
    ):
        raise InputError(
            f"{out_dir}: not an empty folder nor earlier planted output (planted.json); "
            "choose an empty or new folder"
        )
    truth: list[tuple[str, ...]] = [TRUTH_COLUMNS]
    manifest: list[tuple[str, ...]] = [("call_id", "date")]
    counts = dict.fromkeys(KINDS, 0)
    with contextlib.ExitStack() as stack:
        exports = stack.enter_context(atomic_dir(out_dir / "exports"))
        (exports / "calls").mkdir()
        for call in iter_planted_calls(spec):
            (exports / "calls" / f"{call.call_id}.txt").write_text(
                render_planted_txt(call), encoding="utf-8", newline="\n"
            )
            manifest.append((call.call_id, call.date.isoformat()))
            truth.append((call.call_id, call.date.isoformat(), call.kind, call.detail,
                          call.reason, call.secondary, str(call.word_count)))  # fmt: skip
            counts[call.kind] += 1
        atomic_write_text(exports / "manifest.csv", _csv_text(manifest))
    atomic_write_text(out_dir / "truth.csv", _csv_text(truth))
    info = {"generator": "talkthemes.demo.planted", "spec": asdict(spec),
            "reasons": planted_reasons(spec.reasons), "counts": counts}  # fmt: skip
    atomic_write_text(out_dir / "planted.json", json.dumps(info, indent=2, default=str) + "\n")
    root = out_dir / "exports"
    return PlantedFiles(out_dir, root, root / "manifest.csv", out_dir / "truth.csv", counts)


def read_truth(path: Path) -> list[dict[str, str]]:
    """Read ``truth.csv`` back: one dict per call with the :data:`TRUTH_COLUMNS`."""
    with Path(path).open(encoding="utf-8", newline="") as fh:
        return list(csv.DictReader(fh))
