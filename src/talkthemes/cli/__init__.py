"""The ``talkthemes`` command line: thin commands that parse, call the library, print.

One module per command group, each importing only the shared preamble (:mod:`._common`),
the shared tables (:mod:`._shared`) and the library:

=================  =====================================
``workspace.py``   ``init``, ``status``
``data.py``        ``ingest``, ``prepare``
``model.py``       ``sweep``, ``publish``
``themes.py``      ``themes``, ``label``, ``export``
``faces.py``       ``view``, ``report``, ``demo``
``refresh.py``     ``refresh``, ``assign``
``serve.py``       ``serve``, ``token`` (add, list, revoke)
=================  =====================================

The commands are registered here, in the order ``talkthemes --help`` lists them.
"""

from __future__ import annotations

from talkthemes.cli import data, faces, model, refresh, serve, themes, workspace
from talkthemes.cli._common import app

_COMMANDS = (
    ("init", workspace.init),
    ("ingest", data.ingest),
    ("status", workspace.status),
    ("prepare", data.prepare),
    ("sweep", model.sweep),
    ("publish", model.publish),
    ("themes", themes.themes),
    ("label", themes.label),
    ("export", themes.export),
    ("view", faces.view),
    ("report", faces.report),
    ("demo", faces.demo),
    ("refresh", refresh.refresh),
    ("assign", refresh.assign),
    ("serve", serve.serve),
)
for _name, _command in _COMMANDS:
    app.command(_name)(_command)
app.add_typer(serve.token_app, name="token")


def main() -> None:
    """Console entry point."""
    app()
