"""Deferred imports of the heavy domain modules, written once.

``import talkthemes`` and ``talkthemes --help`` must not load numpy, pandas, scipy, gensim,
scikit-learn or Dask (``tests/cli/test_structure.py`` and ``tests/api/test_surface.py``
check it), and most domain modules import some of them. So each API module names the domain
modules it uses once, at its top, in this pattern::

    if TYPE_CHECKING:  # type checkers and readers see the real module
        from talkthemes.sweep import run as sweep_run
    else:  # at run time it is imported on first use
        sweep_run = deferred("talkthemes.sweep.run")

and calls ``sweep_run.run_sweep(...)``. The first attribute access imports the module
(:func:`importlib.import_module`, which holds Python's import lock, so threads may race to
it safely); later ones find it in :data:`sys.modules`.
"""

from __future__ import annotations

import importlib
from typing import Any

__all__ = ["Deferred", "deferred"]


class Deferred:
    """A module imported when one of its attributes is first read.

    Parameters
    ----------
    name : str
        The module's dotted name.
    """

    __slots__ = ("_name",)

    def __init__(self, name: str) -> None:
        self._name = name

    def __getattr__(self, attr: str) -> Any:
        return getattr(importlib.import_module(self._name), attr)

    def __repr__(self) -> str:
        return f"<deferred module {self._name!r}>"


def deferred(name: str) -> Any:
    """A stand-in for module ``name`` that imports it on first use (see the module notes)."""
    return Deferred(name)
