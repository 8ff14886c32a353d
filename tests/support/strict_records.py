"""Switch off the records' transitional dict-style access (``record["key"]``, ``.get`` …).

Code written after the store's rows became typed records reads their attributes; with the
transitional interface switched off, any ``record["key"]`` left over raises at once and
names the record type and key. ``tests/test_records.py`` runs pipelines this way;
``TALKTHEMES_STRICT_RECORDS=1`` runs every test this way (see ``tests/conftest.py``).
"""

from __future__ import annotations

from typing import Any

import pytest

from talkthemes.store.records.transitional import DictAccess

#: The transitional methods of every record.
TRANSITIONAL = ("__getitem__", "get", "__contains__", "keys", "items")


class DictStyleAccessError(AssertionError):
    """A store record was read like the dict it used to be."""


def switch_off(monkeypatch: pytest.MonkeyPatch) -> None:
    """Make every transitional method of every record raise :class:`DictStyleAccessError`."""
    for name in TRANSITIONAL:

        def refuse(self: Any, *args: Any, _name: str = name, **kwargs: Any) -> Any:
            what = f"{type(self).__name__}.{_name}{args!r}"
            raise DictStyleAccessError(f"dict-style access to a store record: {what}")

        monkeypatch.setattr(DictAccess, name, refuse)
