"""Dates in table and manifest columns, normalised to ISO 8601."""

from __future__ import annotations

import datetime as dt
import re
from collections.abc import Sequence

from talkthemes.calls.model import Warning_
from talkthemes.ingest.tables.files import RawTable

__all__ = ["date_column_values", "date_order", "normalise_date"]


_ISO_DATE = re.compile(r"\d{4}-\d{2}-\d{2}")
_HAS_TIME = re.compile(r"\d{1,2}:\d{2}")
_NUMERIC_DATE = re.compile(
    r"(\d{1,4})([/.\-])(\d{1,2})\2(\d{1,4})"
    r"(?:[ T,]+(\d{1,2}):(\d{2})(?::(\d{2})(?:[.,](\d{1,6}))?)?\s*([AaPp][Mm])?)?"
)
_NAMED_FORMATS = (
    "%d %B %Y", "%d %b %Y", "%B %d, %Y", "%b %d, %Y", "%B %d %Y", "%b %d %Y",
    "%d-%b-%Y", "%a, %d %b %Y %H:%M:%S", "%a %d %b %Y",
)  # fmt: skip


def date_order(values: Sequence[str | None]) -> tuple[str, bool]:
    """Day/month order for numeric dates such as ``03/04/2024`` in one column.

    Parameters
    ----------
    values : sequence of str or None
        The column's values.

    Returns
    -------
    order : str
        ``"dmy"`` when some value has a first part over 12, else ``"mdy"``.
    ambiguous : bool
        True when some value needed the order but no value settled it (both parts ≤ 12
        everywhere), so ``"mdy"`` is an assumption worth a warning.
    """
    needs = dmy = mdy = False
    for v in values:
        if not v:
            continue
        m = _NUMERIC_DATE.match(v.strip())
        if m is None or len(m.group(1)) == 4 or m.group(2) == ".":
            continue
        needs = True
        a, b = int(m.group(1)), int(m.group(3))
        dmy |= a > 12
        mdy |= b > 12
    if dmy and not mdy:
        return "dmy", False
    return "mdy", needs and not mdy and not dmy


def _year(text: str) -> int:
    year = int(text)
    return year + 2000 if len(text) <= 2 else year


def normalise_date(value: str, order: str = "mdy") -> str | None:
    """A date (or date and time) as ISO 8601, or None when it cannot be read.

    Accepted: ISO 8601 dates and date-times (``2024-03-01``, ``2024-03-01T10:15:00Z``,
    ``2024-03-01 10:15``); numeric dates ``2024/03/01``, ``01.03.2024`` (dots: day first),
    ``03/01/2024`` (slashes or dashes: order given by ``order``, from :func:`date_order`),
    each optionally followed by ``hh:mm[:ss] [am|pm]``; English month names
    (``1 March 2024``, ``Mar 1, 2024``).

    Parameters
    ----------
    value : str
        The value as written.
    order : {"mdy", "dmy"}
        How to read numeric dates whose year comes last and whose separator is ``/``
        or ``-``.

    Returns
    -------
    str or None
        ``YYYY-MM-DD`` when only a date is given; the full ISO date-time (with its offset,
        when one is given) when a time is given.

    Examples
    --------
    >>> normalise_date("2024-03-01"), normalise_date("01.03.2024 14:05")
    ('2024-03-01', '2024-03-01T14:05:00')
    >>> normalise_date("03/01/2024"), normalise_date("03/01/2024", "dmy")
    ('2024-03-01', '2024-01-03')
    """
    v = value.strip()
    if not v:
        return None
    if _ISO_DATE.match(v):
        try:
            parsed = dt.datetime.fromisoformat(v[:-1] + "+00:00" if v.endswith("Z") else v)
        except ValueError:
            return None
        return parsed.isoformat() if _HAS_TIME.search(v) else parsed.date().isoformat()
    m = _NUMERIC_DATE.fullmatch(v)
    if m is not None:
        a, sep, b, c = m.group(1), m.group(2), m.group(3), m.group(4)
        try:
            if len(a) == 4:
                day = dt.date(int(a), int(b), int(c))
            elif sep == "." or order == "dmy":
                day = dt.date(_year(c), int(b), int(a))
            else:
                day = dt.date(_year(c), int(a), int(b))
            if m.group(5) is None:
                return day.isoformat()
            hour = int(m.group(5))
            ampm = (m.group(9) or "").lower()
            if ampm:
                if not 1 <= hour <= 12:
                    return None
                hour = hour % 12 + (12 if ampm == "pm" else 0)
            frac = m.group(8) or ""
            moment = dt.datetime(
                day.year, day.month, day.day, hour, int(m.group(6)), int(m.group(7) or 0),
                int(frac.ljust(6, "0")) if frac else 0,
            )  # fmt: skip
            return moment.isoformat()
        except ValueError:
            return None
    for fmt in _NAMED_FORMATS:
        try:
            parsed = dt.datetime.strptime(v, fmt)
        except ValueError:
            continue
        return parsed.isoformat() if "%H" in fmt else parsed.date().isoformat()
    return None


def date_column_values(
    table: RawTable, col: int, rows: Sequence[int]
) -> tuple[dict[int, str], list[Warning_]]:
    """Normalise the dates of one column over some rows.

    Parameters
    ----------
    table : RawTable
    col : int
        The date column.
    rows : sequence of int
        Row indices to read (the day/month order is decided over these rows).

    Returns
    -------
    dates : dict of int to str
        ISO dates by row index, for the values that could be read.
    warnings : list of Warning_
        One per unreadable value (with its row), plus one when day/month order was assumed.
    """
    values = [table.rows[r][col] for r in rows]
    order, ambiguous = date_order(values)
    name = table.columns[col]
    warnings: list[Warning_] = []
    if ambiguous:
        warnings.append(
            Warning_(
                table.source,
                f"column {name!r}: numeric dates with day and month both ≤ 12 only; "
                "read as month/day/year",
            )
        )
    out: dict[int, str] = {}
    for r, v in zip(rows, values, strict=True):
        if v is None:
            continue
        iso = normalise_date(v, order)
        if iso is None:
            n = table.numbers[r]
            warnings.append(
                Warning_(
                    table.source,
                    f"{table.where(n)}: date {v!r} in column {name!r} not understood; left out",
                    row=n,
                )
            )
        else:
            out[r] = iso
    return out, warnings
