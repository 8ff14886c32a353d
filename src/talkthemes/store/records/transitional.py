"""Transitional: dict-style access to store records, for code written before typed records.

Until store rows became records they were dicts. So that code written against those dicts
(on branches developed alongside) keeps working once merged, every record also answers
``record["key"]``, ``record.get("key", default)``, ``"key" in record``, ``record.keys()``
and ``record.items()`` with what that dict held: its columns and the keys of its JSON
document, merged as the store merged them (each record's ``_legacy_dict``). Records stay
immutable: changing what these return changes nothing stored or held.

Nothing in the repository uses this interface; ``tests/test_records.py`` runs pipeline
tests with it switched off, and ``TALKTHEMES_STRICT_RECORDS=1`` switches it off for a
whole test run. To remove it: delete this module, ``DictAccess`` from the records' bases
and every ``_legacy_dict`` method in :mod:`talkthemes.store.records`.
"""

from __future__ import annotations

from collections.abc import ItemsView, KeysView
from typing import Any

__all__ = ["DictAccess"]


class DictAccess:
    """Transitional mapping interface of a record (see the module notes)."""

    __slots__ = ()

    # transitional: dict-style access for code written before typed records
    def _legacy_dict(self) -> dict[str, Any]:
        """The dict the store returned for this record before records were typed."""
        raise NotImplementedError

    # transitional: dict-style access for code written before typed records
    def __getitem__(self, key: str) -> Any:
        return self._legacy_dict()[key]

    # transitional: dict-style access for code written before typed records
    def get(self, key: str, default: Any = None) -> Any:
        """Transitional: ``dict.get`` on the record's former dict."""
        return self._legacy_dict().get(key, default)

    # transitional: dict-style access for code written before typed records
    def __contains__(self, key: object) -> bool:
        return key in self._legacy_dict()

    # transitional: dict-style access for code written before typed records
    def keys(self) -> KeysView[str]:
        """Transitional: the record's former dict's keys."""
        return self._legacy_dict().keys()

    # transitional: dict-style access for code written before typed records
    def items(self) -> ItemsView[str, Any]:
        """Transitional: the record's former dict's items."""
        return self._legacy_dict().items()
