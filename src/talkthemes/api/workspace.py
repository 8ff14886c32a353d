"""The public entry point: :class:`Workspace`, exported as ``talkthemes.Workspace``."""

from __future__ import annotations

import os

from talkthemes.workspace import WorkspaceDir, resolve_workspace

from .calls import CallsMixin
from .curating import CuratingMixin
from .languages import LanguagesMixin
from .reading import ReadingMixin
from .records import RecordsMixin
from .tokens import TokensMixin
from .writing import WritingMixin

__all__ = ["Workspace"]


class Workspace(
    WritingMixin,
    CuratingMixin,
    RecordsMixin,
    TokensMixin,
    CallsMixin,
    LanguagesMixin,
    ReadingMixin,
):
    """A talkthemes workspace, from Python: the API the command line, the viewer and the
    service are faces of.

    Open one with :meth:`open` (or make one with :meth:`create`), then::

        ws.ingest(paths)  →  ws.prepare()  →  ws.sweep(k="4:16:2")  →  ws.publish(...)
        ws.themes(), ws.shares(), ws.label(theme_id, "…"), ws.assign(texts), ws.refresh()
        ws.themes_sheet("themes.csv")  →  (a person fills labels)  →  ws.label_from(...)
        ws.ingest_records(records), ws.theme_calls(theme_id), ws.add_token("crm")

    ======================  ========================================================  ========
    method                  does                                                      lock
    ======================  ========================================================  ========
    ``ingest``              read transcripts and manifests into the store             writer
    ``prepare``             run the preprocessing chain into a cached prep            writer
    ``sweep``               fit and score a grid of K × family × seed; recommend K    writer
    ``publish``             refit one choice on every transcript as the next version  writer
    ``make_current``        make a kept version current again                         writer
    ``refresh``             ingest, retrain, keep identities, report drift, publish   writer
    ``assign_files``        shares of transcripts in files, written to a table        if store
    ``label``               a theme's label, note or hidden (not a theme) flag        —
    ``mark_not_a_theme``    mark a theme not a theme (noise), or a theme again        —
    ``merge``               merge a theme into another (one theme, one id)            —
    ``unmerge``             undo merges                                               —
    ``label_from``          labels and notes from a themes spreadsheet, all or none   —
    ``curation_log``        every curation action, newest first                       —
    ``themes_sheet``        write the themes spreadsheet to label them in             —
    ``status``              what the workspace holds, where each stage stands         —
    ``current_version``     the current version's number (None before a publish)      —
    ``version``             a published version, loaded read-only                     —
    ``themes``              a version's themes (DataFrame)                            —
    ``evidence_sentences``  each theme's evidence sentences, personal data masked     —
    ``unthemed``            a version's unthemed group: count, share, reasons         —
    ``shares``              every transcript's shares (DataFrame)                     —
    ``export``              the shares as CSV or Parquet                              —
    ``recommendation``      the latest sweep's recommended K                          —
    ``assign``              shares of new texts, frames or files (DataFrame)          —
    ``ingest_records``      store transcripts sent as records, outcome per record     writer
    ``assign_records``      shares of records, with the version that answered         —
    ``versions``            the versions kept                                         —
    ``theme_calls``         a theme's calls, page by page, metadata filters           —
    ``call``                one call: shares, metadata, turns (masked on request)     —
    ``add_token``           issue an access token of the HTTP service                 —
    ``tokens``              the service's access tokens (never the tokens)            —
    ``revoke_token``        revoke an access token                                    —
    ``check_token``         the active token a presented token is, or None            —
    ``languages``           each language of the calls and where it is themed         —
    ``main_language``       this workspace's own language, ``[prepare] lang``         —
    ``language``            the workspace theming one language (a lane, or this)      —
    ``languages_themed``    the main language and each lane, as workspaces            —
    ``sync_languages``      bring the language lanes up to date                       writer
    ======================  ========================================================  ========

    Writers take the workspace's single-writer lock themselves: with ``wait=False`` (the
    default) a busy workspace raises :class:`~talkthemes.WorkspaceBusyError`; with
    ``wait=True`` they wait, calling ``on_wait(message)`` once. :meth:`hold` keeps the lock
    across several calls. Long methods report through ``progress=`` (any callable
    ``progress(done, total, what)``; :func:`talkthemes.rich_progress` and
    :func:`talkthemes.tqdm_progress` draw bars). Nothing is printed; every method returns a
    dataclass, a DataFrame or a :class:`~talkthemes.Version`, and raises only errors of the
    :class:`~talkthemes.TalkthemesError` tree. Readers are safe to call from several threads.

    Sweeps, large ingests and refreshes start worker processes: a script calling them needs
    the ``if __name__ == "__main__":`` guard.

    Parameters
    ----------
    folder : WorkspaceDir
        The folder; use :meth:`open` or :meth:`create` rather than this constructor.
    created : bool
        True when :meth:`create` made the workspace in this call.

    Attributes
    ----------
    root : Path
        The folder.
    created : bool
    folder : WorkspaceDir
        The layer under this API (paths, store, lock), for domain functions.
    """

    @classmethod
    def open(cls, path: str | os.PathLike[str] | None = None) -> Workspace:
        """Open an existing workspace.

        Parameters
        ----------
        path : path, optional
            The folder; default ``$TALKTHEMES_WORKSPACE``, else ``./talkthemes-work``.

        Raises
        ------
        NotReadyError
            When the folder holds no workspace (no ``talkthemes.toml`` and no store): a
            mistyped path is refused rather than made into a new, empty workspace.
        """
        folder = WorkspaceDir(resolve_workspace(path))
        folder.require()
        return cls(folder)

    @classmethod
    def create(cls, path: str | os.PathLike[str] | None = None) -> Workspace:
        """Create a workspace (a commented ``talkthemes.toml`` with every default and an
        empty store), or open it when it exists: nothing existing is overwritten.

        Parameters
        ----------
        path : path, optional
            The folder; default ``$TALKTHEMES_WORKSPACE``, else ``./talkthemes-work``.

        Returns
        -------
        Workspace
            With ``created`` True when something was made.

        Raises
        ------
        InputError
            When the path exists and is not a folder.
        """
        folder = WorkspaceDir(resolve_workspace(path))
        created = folder.init()
        return cls(folder, created=created)
