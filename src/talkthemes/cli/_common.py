"""What every command shares, written once: the app, errors → exit codes, the consoles,
the common options, the workspace, the writer lock, the progress bar, JSON, safe printing.

Conventions (``docs/operations.md``, "Exit codes"): every command takes ``--workspace``;
commands that report take ``--json`` and then print exactly one JSON document on stdout,
with progress and warnings on stderr; exit codes 0 done, 2 usage or settings error, 3 done
but some inputs rejected, 4 an alert asked for occurred, 1 unexpected.

Every string that came from a user or an input (labels, notes, metadata, file names,
transcript ids, terms, reasons) is printed as a rich :class:`~rich.text.Text` built by
:func:`line` or :func:`cell`, never inside a markup string: no ``[red]`` or ``[link=…]`` in
it is read as markup, and control characters are shown as ``?``
(:func:`talkthemes.text.terminal_text`).
"""

from __future__ import annotations

import json
import logging
import os
import sys
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Annotated, Any

import typer
from rich.console import Console
from rich.text import Text
from typer.core import TyperGroup

from talkthemes import Workspace
from talkthemes.api.progress import rich_progress
from talkthemes.errors import InputError, NotReadyError, TalkthemesError
from talkthemes.progress import Progress, silent
from talkthemes.text import terminal_text
from talkthemes.workspace import resolve_workspace

__all__ = [
    "LANGUAGE_KINDS",
    "JsonOpt",
    "LanguageOpt",
    "WaitOpt",
    "WorkspaceOpt",
    "app",
    "cell",
    "check_output",
    "emit_json",
    "err",
    "line",
    "lock",
    "open_workspace",
    "out",
    "progress_bar",
    "say",
    "waiting",
    "writing",
]

#: Exit code when the reader of stdout went away (``talkthemes themes | head``): what a
#: shell reports for a command stopped by SIGPIPE (128 + 13).
BROKEN_PIPE_EXIT = 141


class _Console(Console):
    """A rich console that stops quietly with :data:`BROKEN_PIPE_EXIT` on a broken pipe."""

    def on_broken_pipe(self) -> None:
        """Silence the output and stop (rich's default stops with exit code 1)."""
        self.quiet = True
        _quiet_stdout()
        raise SystemExit(BROKEN_PIPE_EXIT)


# Consoles. Emoji shortcodes (``:warning:``) are off: they would rewrite user text too.
out = _Console(emoji=False, highlight=False)  # results
err = _Console(stderr=True, soft_wrap=True, emoji=False, highlight=False)  # progress, messages

_state: dict[str, bool] = {"debug": False}


class _Group(TyperGroup):
    """Turns talkthemes errors into one line on stderr and the documented exit code.

    Usage errors found while parsing options (bad value, missing option or argument,
    unknown option) are the exceptions of the click that typer bundles, all derived from
    :class:`typer.TyperException`: they pass through, and typer prints click's message and
    exits 2.
    """

    def invoke(self, ctx: Any) -> Any:
        try:
            return super().invoke(ctx)
        except (typer.Exit, typer.Abort, typer.TyperException):
            raise
        except TalkthemesError as exc:
            if _state["debug"]:
                raise
            say(f"talkthemes: {exc}")
            raise typer.Exit(exc.exit_code) from None
        except KeyboardInterrupt:
            say("talkthemes: interrupted; finished work is kept")
            raise typer.Exit(130) from None
        except BrokenPipeError:
            # The reader of stdout went away (``talkthemes themes | head``): stop quietly,
            # as command-line tools do, and keep the interpreter's last flush from failing.
            _quiet_stdout()
            raise typer.Exit(BROKEN_PIPE_EXIT) from None
        except Exception as exc:
            if _state["debug"]:
                raise
            say(
                f"talkthemes: unexpected error: {type(exc).__name__}: {exc} "
                "(run with --debug for the traceback)"
            )
            raise typer.Exit(1) from None


def _quiet_stdout() -> None:
    """Point file descriptor 1 at the null device (its reader is gone)."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError):  # no real descriptor (a test runner's buffer)
        pass


app = typer.Typer(
    cls=_Group,
    name="talkthemes",
    help="Topic and theme discovery for transcript corpora.",
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
)


@app.callback()
def _main(
    debug: Annotated[bool, typer.Option("--debug", help="Show tracebacks and debug logs.")] = False,
) -> None:
    _state["debug"] = debug
    logging.basicConfig(
        level=logging.DEBUG if debug else logging.WARNING,
        format="%(levelname)s %(name)s: %(message)s",
        stream=sys.stderr,
    )
    if not debug:  # libraries' progress chatter is not for users; our own warnings are
        for noisy in ("gensim", "distributed", "tornado", "bokeh", "streamlit"):
            logging.getLogger(noisy).setLevel(logging.ERROR)


# -- options shared by the commands ---------------------------------------------------------
WorkspaceOpt = Annotated[
    Path | None,
    typer.Option(
        "--workspace",
        "-w",
        help="Workspace folder (else $TALKTHEMES_WORKSPACE, else ./talkthemes-work).",
        show_default=False,
    ),
]
JsonOpt = Annotated[bool, typer.Option("--json", help="Print one JSON document on stdout.")]
LanguageOpt = Annotated[
    str | None,
    typer.Option(
        "--language",
        help="The themes of this language (its lane); default the workspace's [prepare] lang.",
        show_default=False,
    ),
]
WaitOpt = Annotated[
    bool, typer.Option("--wait", help="Wait for another command holding the workspace.")
]


# -- printing -----------------------------------------------------------------------------
Part = str | tuple[str, str] | Text


def line(*parts: Part) -> Text:
    """One line of output as rich text: no part is ever read as markup.

    A ``str`` part is shown literally (control characters as ``?``); a ``(text, style)``
    tuple is shown in a style of ours; a :class:`~rich.text.Text` is appended as it is.
    """
    result = Text()
    for part in parts:
        if isinstance(part, Text):
            result.append_text(part)
        elif isinstance(part, tuple):
            result.append(terminal_text(part[0]), style=part[1])
        else:
            result.append(terminal_text(part))
    return result


def say(*parts: Part, console: Console | None = None, soft_wrap: bool | None = None) -> None:
    """Print :func:`line` of ``parts`` (on stderr unless another console is given).

    ``soft_wrap=True`` keeps the line whole (a command to copy must not be broken by
    wrapping); by default the console's own setting applies.
    """
    (console or err).print(line(*parts), soft_wrap=soft_wrap)


def cell(value: Any, style: str = "") -> Text:
    """A table cell showing ``value`` literally (tables read plain strings as markup).

    A tab becomes one space: a cell's width is measured before a tab would be expanded.
    """
    return Text(terminal_text(value).replace("\t", " "), style=style)


def _json_value(value: Any) -> Any:
    """The JSON form of a value ``json`` does not know: its ``to_json()`` (a store record,
    a result), else its text (a path)."""
    to_json = getattr(value, "to_json", None)
    return to_json() if callable(to_json) else str(value)


def emit_json(doc: Any) -> None:
    """Print ``doc`` as the command's one JSON document on stdout."""
    sys.stdout.write(json.dumps(doc, indent=2, ensure_ascii=False, default=_json_value) + "\n")
    sys.stdout.flush()


# -- progress -------------------------------------------------------------------------------
@contextmanager
def progress_bar(label: str, *, enabled: bool = True) -> Iterator[Progress]:
    """A rich progress bar on stderr, yielded as a :class:`talkthemes.progress.Progress`.

    :func:`talkthemes.api.progress.rich_progress`: a total of 0 shows a bar without an end
    (``3/?``); ``what`` (often a file name) is shown literally, shortened from the left to
    40 characters; the bar appears at the first report.
    """
    if not enabled:
        yield silent
        return
    with rich_progress(label, console=err) as update:
        yield update


# -- the workspace ----------------------------------------------------------------------------
def open_workspace(
    path: Path | None,
    *,
    create: bool = False,
    create_flag: str | None = None,
    language: str | None = None,
) -> Workspace:
    """The workspace named by ``--workspace`` (or the environment, or the default).

    Only ``init`` creates a workspace, or a command given its ``--create`` flag: a mistyped
    path is refused instead of becoming a new, empty workspace
    (:meth:`talkthemes.Workspace.open`).

    Parameters
    ----------
    path : Path, optional
        The ``--workspace`` value.
    create : bool
        Create the workspace when it does not exist (the command's ``--create`` was given).
    create_flag : str, optional
        The command's flag that would create it, named in the message.
    language : str, optional
        The ``--language`` value: the workspace theming that language (its lane).

    Raises
    ------
    NotReadyError
        When there is no workspace at that path and ``create`` is false (exit 2).
    """
    root = resolve_workspace(path)
    try:
        ws = Workspace.open(root)
    except NotReadyError as exc:
        if not create:
            if create_flag:
                raise NotReadyError(f"{exc}, or give {create_flag}") from None
            raise
        ws = Workspace.create(root)
    return ws.language(language)


def waiting(message: str) -> None:
    """What a writer says when it starts waiting for the workspace (``--wait``)."""
    say(message, "; waiting…")


def lock(ws: Workspace, command: str, wait: bool) -> Any:
    """The workspace's writer lock for ``command``, held across several API calls; with
    ``wait``, say so and wait (the API's writer methods take it themselves)."""
    return ws.hold(command, wait=wait, on_wait=waiting)


# -- output files -----------------------------------------------------------------------------
def check_output(path: Path, option: str, *, folder: bool = False) -> Path:
    """Refuse an output path that cannot be written, before any work is done.

    The nearest existing folder on the way to ``path`` must accept a new file (tried by
    creating and removing an empty temporary file there: the same thing the atomic writers
    do); a file output must not be an existing folder, a folder output not an existing
    file.

    Raises
    ------
    InputError
        Naming the option, the path and the operating system's reason (exit 2).
    """
    target = Path(path).expanduser()
    if not folder and target.is_dir():
        raise InputError(f"{option} {target}: is a folder; give a file name")
    if folder and target.exists() and not target.is_dir():
        raise InputError(f"{option} {target}: exists and is not a folder")
    probe = target if folder else target.parent
    while not probe.exists() and probe != probe.parent:
        probe = probe.parent
    if not probe.is_dir():
        raise InputError(f"{option} {target}: {probe} is not a folder")
    try:
        fd, name = tempfile.mkstemp(dir=probe, prefix=".talkthemes-probe-")
    except OSError as exc:
        raise InputError(f"{option} {target}: cannot write there: {_reason(exc)}") from None
    os.close(fd)
    os.unlink(name)
    return target


@contextmanager
def writing(path: Path, option: str) -> Iterator[None]:
    """Turn an operating-system error about writing ``path`` into a usage error (exit 2).

    Only errors about ``path``, a temporary file beside it or a folder on the way to it are
    turned; any other error passes unchanged.
    """
    target = Path(path).expanduser().absolute()
    try:
        yield
    except OSError as exc:
        names = [Path(n).absolute() for n in (exc.filename, exc.filename2) if n]
        if not any(n == target or n.parent == target.parent or n in target.parents for n in names):
            raise
        raise InputError(f"{option} {path}: cannot write it: {_reason(exc)}") from None


def _reason(exc: OSError) -> str:
    return exc.strerror or str(exc)


#: How each kind of language is themed (``LanguageState.kind``), as status, ingest and
#: prepare --explain print it; a lane is described with its folder and version instead.
LANGUAGE_KINDS = {
    "main": "themed here",
    "undecided": "undecided: themed with the main language",
    "too_few": "too few calls for themes ([prepare.languages] min_calls)",
    "no_chain": "not themed: no chain for this language",
    "unsettled": "not settled yet: run talkthemes prepare",
}


def each_language(ws: Workspace, language: str | None) -> list[tuple[str, Workspace]]:
    """The workspaces a command without ``--language`` works on: the main language and each
    lane (``[(code, workspace), ...]``); with ``--language``, that language's only."""
    if language is not None:
        lane = ws.language(language)
        return [(lane.main_language(), lane)]
    return ws.languages_themed()


def language_heading(code: str, lane: Workspace, several: bool) -> None:
    """A heading naming the language, when a command prints several languages."""
    if several:
        say(("Language " + code, "bold"), f" ({lane.root})", console=out)
