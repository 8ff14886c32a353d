"""The public API as a user meets it: every name in ``talkthemes.__all__`` imports, has its
own docstring and is named in docs/api.md; the exception tree has one root and is drawn;
``import talkthemes`` stays light."""

from __future__ import annotations

import inspect
import re
import subprocess
import sys
from pathlib import Path

import pytest

import talkthemes as tt

DOC = (Path(__file__).resolve().parents[2] / "docs" / "api.md").read_text(encoding="utf-8")
ERRORS = (
    "ConfigError", "DiskFullError", "InputError", "NotReadyError", "StoreError",
    "WorkspaceBusyError",
)  # fmt: skip
HEAVY = ["pandas", "numpy", "scipy", "sklearn", "gensim", "dask", "distributed", "altair",
         "streamlit", "spacy", "numba"]  # fmt: skip


def _own_doc(obj: object) -> str:
    """The docstring written for ``obj`` (not a dataclass's generated signature)."""
    doc = inspect.getdoc(obj) or ""
    name = getattr(obj, "__name__", "")
    return "" if doc.startswith(f"{name}(") else doc


@pytest.mark.parametrize("name", sorted(tt.__all__))
def test_every_public_name_imports_and_is_documented(name: str) -> None:
    value = getattr(tt, name)
    assert value is not None
    assert f"`{name}`" in DOC, f"{name} is not named in docs/api.md"
    if name != "__version__":
        assert _own_doc(value), f"{name} has no docstring of its own"


def test_the_star_import_gives_exactly_all() -> None:
    ns: dict[str, object] = {}
    exec("from talkthemes import *", ns)
    assert set(ns) - {"__builtins__"} == set(tt.__all__)


def _public_methods() -> list[str]:
    return sorted(
        name
        for name, member in inspect.getmembers(tt.Workspace)
        if not name.startswith("_") and (callable(member) or isinstance(member, property))
    )


@pytest.mark.parametrize("name", _public_methods())
def test_every_workspace_method_has_numpydoc_and_a_mention(name: str) -> None:
    member = inspect.getattr_static(tt.Workspace, name)
    func = member.fget if isinstance(member, property) else getattr(tt.Workspace, name)
    doc = _own_doc(func)
    assert doc, name
    assert f"`{name}`" in DOC or f"`{name}(" in DOC, f"Workspace.{name} not in docs/api.md"
    params = [p for p in inspect.signature(func).parameters if p not in ("self", "cls")]
    if len(params) > 1:  # the numpydoc sections of a method with options
        assert "Parameters\n----------" in doc, name
    for p in params:
        if p in ("options", "wait", "on_wait"):  # described once, under **options / hold
            continue
        assert re.search(rf"\b{p}\b", doc), f"Workspace.{name}: parameter {p} undocumented"


def test_the_workspace_method_table_lists_every_method() -> None:
    table = tt.Workspace.__doc__ or ""
    listed = set(re.findall(r"^    ``(\w+)``", table, re.M))
    methods = set(_public_methods()) - {"open", "create", "hold", "settings", "root", "folder"}
    assert listed == methods


def test_errors_share_one_root_and_the_tree_is_drawn() -> None:
    for name in ERRORS:
        error = getattr(tt, name)
        assert issubclass(error, tt.TalkthemesError)
        assert re.search(rf"[├└]── {name}\b", tt.__doc__ or ""), name
        assert re.search(rf"[├└]── {name}\b", DOC), name
    raised = {
        cls.__name__
        for cls in tt.TalkthemesError.__subclasses__()
        if cls.__module__ == "talkthemes.errors"
    }
    assert raised == set(ERRORS)  # every subclass is public and drawn


def test_import_stays_light() -> None:
    """``import talkthemes`` and the Workspace class load none of the heavy libraries; a
    result type does, on first access."""
    code = (
        "import sys, talkthemes as tt; tt.Workspace; tt.Status; tt.Progress; "
        f"print([m for m in {HEAVY!r} if m in sys.modules]); tt.SweepResult; "
        "print('pandas' in sys.modules)"
    )
    res = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert res.stdout.split("\n")[:2] == ["[]", "True"]


def test_deferred_names_are_the_real_objects() -> None:
    from talkthemes.sweep.run import SweepResult
    from talkthemes.versions.load import Version

    assert tt.SweepResult is SweepResult and tt.Version is Version
    assert set(dir(tt)) >= set(tt.__all__)
    with pytest.raises(AttributeError, match="no attribute 'Nope'"):
        tt.Nope  # noqa: B018
