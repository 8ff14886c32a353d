"""``talkthemes prepare``: run the chain on a workspace's store, cached by a hash.

The prep hash covers everything that can change the result: the ``[prepare]`` settings
(except ``batch_size`` and ``n_process``, which only change how fast it runs), the set of
stored transcripts (:meth:`Store.corpus_fingerprint`), the versions of spaCy,
spacy-lookups-data, gensim and faker (:func:`library_versions`), the shipped fillers list of
the language, and
:data:`CHAIN_VERSION`. When ``prepared/<hash>/`` already exists, the run returns it at once
(``cached = True``) without reading a transcript.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import json
import logging
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import Any

from talkthemes.config import PrepareSettings
from talkthemes.errors import NotReadyError, StoreError
from talkthemes.languages.lanes import sync_lanes, themed_languages
from talkthemes.languages.settle import settle_languages
from talkthemes.prepare.chain import build_processor, prepare_corpus, worker_count
from talkthemes.prepare.corpus import FILES, PreparedCorpus, library_versions
from talkthemes.prepare.explain import masked_explain
from talkthemes.prepare.workers import start_workers
from talkthemes.progress import Progress, report
from talkthemes.workspace import Workspace, atomic_dir

__all__ = [
    "CHAIN_VERSION",
    "EXPLAIN_FILE",
    "PrepareResult",
    "compute_prep_hash",
    "load_current",
    "run_prepare",
]

logger = logging.getLogger(__name__)

#: Bumped whenever a change to the chain's code changes its output. "2": phrases join only
#: adjacent words; headword and name checks on lemmas. "3": people's names kept out of the
#: vocabulary (:mod:`talkthemes.prepare.names`).
CHAIN_VERSION = "3"
EXPLAIN_FILE = "explain.json"
#: Settings that change speed only, left out of the hash (``languages`` says which calls
#: are prepared, and the corpus fingerprint covers that).
_SPEED_ONLY = frozenset({"batch_size", "n_process", "languages"})


@dataclass
class PrepareResult:
    """What :func:`run_prepare` did.

    Attributes
    ----------
    prep_hash : str
    path : Path
        ``prepared/<hash>/``.
    summary : dict
        Counts (:meth:`PreparedCorpus.summary`).
    cached : bool
        True when an existing prep with the same hash was returned unchanged.
    explain : dict
        What each step removed or joined (see :mod:`talkthemes.prepare.explain`).
    """

    prep_hash: str
    path: Path
    summary: dict[str, Any]
    cached: bool
    explain: dict[str, Any] = field(default_factory=dict)

    def to_json(self, *, original_text: bool = False) -> dict[str, Any]:
        """The JSON document ``prepare --json`` prints.

        Parameters
        ----------
        original_text : bool
            Show the names the names step removed (``[view] original_text``); masked
            otherwise, as the screens mask a name
            (:func:`talkthemes.prepare.explain.masked_explain`).

        Returns
        -------
        dict
            ``prep`` (hash), ``cached``, ``path``, ``summary`` and ``explain``.
        """
        return {
            "prep": self.prep_hash,
            "cached": self.cached,
            "path": str(self.path),
            "summary": self.summary,
            "explain": self.explain if original_text else masked_explain(self.explain),
        }


def _fillers_digest(lang: str) -> str:
    path = resources.files("talkthemes").joinpath("data", f"fillers_{lang}.txt")
    data = path.read_bytes() if path.is_file() else b""
    return hashlib.sha256(data).hexdigest()[:16]


def hashed_settings(settings: PrepareSettings) -> dict[str, Any]:
    """The ``[prepare]`` settings that the hash covers (all but the speed-only ones)."""
    return {k: v for k, v in settings.model_dump().items() if k not in _SPEED_ONLY}


def compute_prep_hash(
    settings: PrepareSettings, corpus_fingerprint: str, versions: dict[str, str] | None = None
) -> str:
    """The prep hash (16 hex digits) of settings, transcript set and library versions.

    Parameters
    ----------
    settings : PrepareSettings
    corpus_fingerprint : str
        :meth:`Store.corpus_fingerprint`.
    versions : dict, optional
        Library versions; :func:`library_versions` when omitted.

    Returns
    -------
    str
    """
    doc = {
        "settings": hashed_settings(settings),
        "corpus": corpus_fingerprint,
        "versions": versions if versions is not None else library_versions(),
        "chain": CHAIN_VERSION,
        "fillers": _fillers_digest(settings.lang) if settings.fillers else "",
    }
    blob = json.dumps(doc, sort_keys=True, ensure_ascii=True).encode("ascii")
    return hashlib.sha256(blob).hexdigest()[:16]


def _complete(folder: Path) -> bool:
    return all((folder / name).is_file() for name in (*FILES, EXPLAIN_FILE))


def _db_info(corpus_info: dict[str, Any], path: Path) -> dict[str, Any]:
    keep = ("hash", "settings", "versions", "counts", "created_at", "chain_version")
    info = {k: corpus_info[k] for k in keep if k in corpus_info}
    info["path"] = str(path)
    return info


def run_prepare(
    workspace: Workspace, *, force: bool = False, progress: Progress | None = None
) -> PrepareResult:
    """Prepare the workspace's transcripts with its ``[prepare]`` settings.

    The caller holds the workspace lock. Files are written to a temporary folder and moved
    to ``prepared/<hash>/``; the store's record that makes it current comes last.

    Parameters
    ----------
    workspace : Workspace
    force : bool
        Run the chain even when a prep with the same hash exists.
    progress : Progress, optional
        ``progress(done, total, what)``, the stage as ``what``: ``languages`` (calls
        detected, only for calls stored before languages were), ``read`` (transcripts), then
        ``lemmas``, ``boilerplate``, ``phrases``, ``vocabulary`` and ``write``, each (0, 1)
        when it starts and (1, 1) when it ends.

    Returns
    -------
    PrepareResult

    Raises
    ------
    NotReadyError
        When the store holds no transcripts.
    InputError
        When too few terms or transcripts are left (the message names the setting).
    ConfigError
        When the language or pipeline cannot be used.
    """
    settings = workspace.settings().prepare
    languages = themed_languages(settings)
    with workspace.store() as store:
        # calls stored before languages were are detected now (a stage of its own)
        if settle_languages(workspace, store, progress=progress).detected:
            sync_lanes(workspace, store)
        total = store.count_transcripts(languages)
        fingerprint = store.corpus_fingerprint(languages)
        versions = library_versions()
        prep_hash = compute_prep_hash(settings, fingerprint, versions)
        final = workspace.prepared_dir / prep_hash
        if not force and _complete(final):
            try:
                info = json.loads((final / "prep.json").read_text(encoding="utf-8"))
                explain = json.loads((final / EXPLAIN_FILE).read_text(encoding="utf-8"))
            except (OSError, ValueError) as exc:
                raise StoreError(f"{final}: cannot read the cached prep: {exc}") from None
            current = store.current_prep()
            if current is None or current.hash != prep_hash:
                store.record_prep(prep_hash, _db_info(info, final.relative_to(workspace.root)))
            logger.info("prep %s is up to date", prep_hash)
            return PrepareResult(prep_hash, final, info.get("counts", {}), True, explain)
        if total == 0:
            if store.count_transcripts():
                raise NotReadyError(
                    f"the store holds no calls in {settings.lang} (this workspace's [prepare] "
                    "lang): see 'talkthemes status' for the languages and their lanes"
                )
            raise NotReadyError("the store holds no transcripts: run 'talkthemes ingest' first")

        start_workers(worker_count(settings, total))  # their start overlaps with ours
        processor = build_processor(settings)
        corpus, explain = prepare_corpus(
            lambda: store.iter_turn_batches(
                settings.batch_size, speakers=True, languages=languages
            ),
            settings,
            total=total,
            progress=progress,
            processor=processor,
        )
        corpus.info = {
            "hash": prep_hash,
            "created_at": dt.datetime.now().astimezone().isoformat(timespec="seconds"),
            "settings": settings.model_dump(),
            "versions": versions,
            "chain_version": CHAIN_VERSION,
            "corpus_fingerprint": fingerprint,
            "counts_dtype": "int32",
            **corpus.info,
        }
        report(progress, 0, 1, "write")
        with atomic_dir(final) as tmp:
            corpus.save(tmp)
            (tmp / EXPLAIN_FILE).write_text(
                json.dumps(explain, ensure_ascii=False, indent=1) + "\n", encoding="utf-8"
            )
        store.record_prep(prep_hash, _db_info(corpus.info, final.relative_to(workspace.root)))
        report(progress, 1, 1, "write")
        return PrepareResult(prep_hash, final, corpus.summary(), False, explain)


def load_current(workspace: Workspace, *, mmap: bool = True) -> PreparedCorpus:
    """Load the workspace's current prep.

    Raises
    ------
    NotReadyError
        When nothing has been prepared yet.
    """
    with workspace.store() as store:
        current = store.current_prep()
    if current is None:
        raise NotReadyError("nothing prepared yet: run 'talkthemes prepare' first")
    folder = Path(current.path or workspace.prepared_dir / current.hash)
    if not folder.is_absolute():
        folder = workspace.root / folder
    return PreparedCorpus.load(folder, mmap=mmap)
