"""What the records share: a read-only JSON object and the conversions of recorded values."""

from __future__ import annotations

import json
from collections.abc import Iterable
from typing import Any, NoReturn

__all__ = ["EMPTY", "ReadOnlyDict", "document", "ints", "opt_float", "opt_int", "opt_str"]


class ReadOnlyDict(dict[str, Any]):
    """A JSON object read from the store: a ``dict`` (JSON-ready as it is) that refuses
    changes. Its values are the JSON values as read; copy with ``dict(...)`` to change it."""

    __slots__ = ()

    def _refuse(self, *args: Any, **kwargs: Any) -> NoReturn:
        raise TypeError("a store record is read-only: copy it with dict(...) to change it")

    __setitem__ = __delitem__ = __ior__ = _refuse
    clear = pop = popitem = setdefault = update = _refuse

    def __reduce__(self) -> tuple[Any, ...]:
        return (type(self), (dict(self),))

    def __hash__(self) -> int:  # type: ignore[override]
        # read-only, so hashable like a tuple: when its values are
        return hash(frozenset(self.items()))


#: The empty document (the default of every record's ``info``).
EMPTY = ReadOnlyDict()


def document(text: str | None) -> ReadOnlyDict:
    """A stored JSON object (a column holding JSON text), read-only."""
    return ReadOnlyDict(json.loads(text)) if text else EMPTY


def opt_int(value: Any) -> int | None:
    """``int(value)``, None staying None."""
    return None if value is None else int(value)


def opt_float(value: Any) -> float | None:
    """``float(value)``, None staying None."""
    return None if value is None else float(value)


def opt_str(value: Any) -> str | None:
    """``str(value)``, None staying None."""
    return None if value is None else str(value)


def ints(values: Iterable[Any] | None) -> tuple[int, ...]:
    """A recorded list of integers as a tuple (None: empty)."""
    return tuple(int(v) for v in values or ())
