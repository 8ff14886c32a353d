"""Turning the bytes of an input file into text: size limit, binary check, encoding, newlines.

Every text reader (``.txt``, ``.vtt``, ``.csv``, ``.jsonl``) goes through :func:`load_text`,
so the rules are the same for all of them:

1. A file larger than ``max_file_mb`` (1 MB = 1,000,000 bytes) is rejected after a
   ``stat`` and never read into memory.
2. An empty file, or one holding only whitespace, is rejected.
3. A file that looks binary (:func:`looks_binary`) is rejected.
4. The encoding is chosen by :func:`decode_bytes`: a UTF-8 byte-order mark means
   ``utf-8-sig``; a UTF-32 or UTF-16 mark means that codec; text that decodes as UTF-8 is
   UTF-8; anything else is decoded with the fallback codec (``cp1252`` by default) with
   ``errors="replace"``, and the file gets a warning naming the codec.
5. Line endings (CRLF and lone CR) become ``\\n``.
"""

from __future__ import annotations

import codecs
import os
from pathlib import Path

from talkthemes.calls.model import Reject, Warning_
from talkthemes.config import IngestSettings
from talkthemes.errors import ConfigError, InputError

__all__ = [
    "BinaryInputError",
    "check_fallback",
    "decode_bytes",
    "load_text",
    "looks_binary",
    "max_bytes",
    "normalise_newlines",
    "oversize_reject",
]

_SAMPLE = 8192
#: Share of control bytes (other than tab, newline, CR, form feed, backspace, escape) above
#: which a sample is taken for binary. Common practice for "is this text" checks; no source.
_CONTROL_SHARE = 0.10
# Bytes that count as "text-like": everything except C0 controls and DEL, but with the
# whitespace controls and backspace/escape allowed back in.
_TEXTLIKE = bytes([8, 9, 10, 12, 13, 27, *range(0x20, 0x7F), *range(0x80, 0x100)])


class BinaryInputError(InputError):
    """The bytes of a text-format input look like a binary file."""


def max_bytes(settings: IngestSettings) -> int:
    """The size limit in bytes for ``settings.max_file_mb`` (1 MB = 1,000,000 bytes)."""
    return int(settings.max_file_mb * 1_000_000)


def oversize_reject(path: Path, size: int, settings: IngestSettings, fmt: str) -> Reject:
    """The reject for a file over the size limit."""
    return Reject(
        str(path),
        f"file is {size / 1_000_000:.1f} MB, over the limit of {settings.max_file_mb:g} MB "
        "(setting [ingest] max_file_mb); not read",
        fmt,
    )


def check_fallback(codec: str) -> None:
    """Raise :class:`ConfigError` when ``codec`` is not a codec Python knows.

    Raises
    ------
    ConfigError
        Naming the setting and the value.
    """
    try:
        codecs.lookup(codec)
    except LookupError:
        raise ConfigError(
            f"[ingest] encoding_fallback = {codec!r}: not a known text encoding "
            "(use a Python codec name such as 'cp1252' or 'latin-1')"
        ) from None


def looks_binary(data: bytes) -> bool:
    """Whether ``data`` looks like a binary file rather than text.

    The first 8 KB are checked: a NUL byte, or more than 10 % control bytes (other than
    tab, newline, carriage return, form feed, backspace and escape), means binary. Data
    starting with a UTF-16 or UTF-32 byte-order mark is text (those encodings contain NULs).

    Parameters
    ----------
    data : bytes
        The file's bytes (or at least its beginning).

    Returns
    -------
    bool
    """
    sample = data[:_SAMPLE]
    if not sample:
        return False
    if sample.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE, codecs.BOM_UTF32_BE)):
        return False
    if b"\x00" in sample:
        return True
    controls = len(sample.translate(None, _TEXTLIKE))
    return controls > _CONTROL_SHARE * len(sample)


def _bomless_utf16(data: bytes) -> str | None:
    """Codec name when ``data`` looks like UTF-16 without a byte-order mark, else None.

    Mostly-Latin UTF-16 text has a NUL in at least every other code unit's high byte, all on
    the same side, and decodes to text without control characters.
    """
    sample = data[:_SAMPLE]
    sample = sample[: len(sample) - len(sample) % 2]
    half = len(sample) // 2
    if half < 4:
        return None
    even_nuls = sample[0::2].count(0)
    odd_nuls = sample[1::2].count(0)
    if odd_nuls >= 0.5 * half and even_nuls == 0:
        codec = "utf-16-le"
    elif even_nuls >= 0.5 * half and odd_nuls == 0:
        codec = "utf-16-be"
    else:
        return None
    text = sample.decode(codec, errors="replace")
    controls = sum(1 for ch in text if ch < " " and ch not in "\t\n\r\f")
    return codec if controls <= 0.01 * len(text) else None


def normalise_newlines(text: str) -> str:
    """Turn CRLF and lone CR line endings into ``\\n``."""
    if "\r" not in text:
        return text
    return text.replace("\r\n", "\n").replace("\r", "\n")


def decode_bytes(data: bytes, source: str, fallback: str) -> tuple[str, list[Warning_]]:
    """Decode the bytes of a text file, choosing the encoding as described in the module.

    Parameters
    ----------
    data : bytes
        The whole file.
    source : str
        The file's name, used in warnings and errors.
    fallback : str
        Codec for text that is not valid UTF-8 (``IngestSettings.encoding_fallback``).

    Returns
    -------
    text : str
        The decoded text without byte-order mark, with ``\\n`` line endings.
    warnings : list of Warning_
        One warning when the fallback codec (or BOM-less UTF-16) was used.

    Raises
    ------
    BinaryInputError
        When the data looks binary (:func:`looks_binary`).
    ConfigError
        When ``fallback`` is not a known codec.
    """
    warnings: list[Warning_] = []
    if data.startswith(codecs.BOM_UTF8):
        text = data.decode("utf-8-sig", errors="replace")
    elif data.startswith((codecs.BOM_UTF32_LE, codecs.BOM_UTF32_BE)):
        text = data.decode("utf-32", errors="replace")
    elif data.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        text = data.decode("utf-16", errors="replace")
    else:
        utf16 = _bomless_utf16(data) if b"\x00" in data[:_SAMPLE] else None
        if utf16 is not None:
            text = data.decode(utf16, errors="replace")
            warnings.append(
                Warning_(source, f"no byte-order mark; decoded as {utf16} (NUL byte pattern)")
            )
        elif looks_binary(data):
            raise BinaryInputError(f"{source}: looks binary, not text")
        else:
            try:
                text = data.decode("utf-8")
            except UnicodeDecodeError as exc:
                check_fallback(fallback)
                text = data.decode(fallback, errors="replace")
                warnings.append(
                    Warning_(
                        source,
                        f"not valid UTF-8 (first bad byte at offset {exc.start}); decoded as "
                        f"{fallback}, unmappable bytes replaced by U+FFFD",
                    )
                )
    if text.startswith("\ufeff"):
        text = text[1:]
    return normalise_newlines(text), warnings


def load_text(
    path: Path, settings: IngestSettings, fmt: str
) -> tuple[str | None, list[Reject | Warning_]]:
    """Read a text input once, applying the size limit, binary check and decoding.

    Parameters
    ----------
    path : Path
        The file.
    settings : IngestSettings
        For ``max_file_mb`` and ``encoding_fallback``.
    fmt : str
        The format name used in rejects (``txt``, ``vtt``, ``csv``, ``jsonl``).

    Returns
    -------
    text : str or None
        The decoded text, or None when the file was rejected.
    notes : list of Reject or Warning_
        At most one Reject (then ``text`` is None) and any decoding warnings.
    """
    source = str(path)
    limit = max_bytes(settings)
    try:
        with open(path, "rb") as fh:
            size = os.fstat(fh.fileno()).st_size
            if size > limit:
                return None, [oversize_reject(path, size, settings, fmt)]
            # Ask for the stat size (+1 to notice growth): asking for the limit would
            # allocate a buffer of that size for every file.
            data = fh.read(size + 1)
            if len(data) > size:  # grew since stat, or a special file reporting size 0
                data += fh.read(limit + 1 - len(data))
    except FileNotFoundError:
        return None, [Reject(source, "file does not exist", fmt)]
    except IsADirectoryError:
        return None, [Reject(source, "is a folder, not a file", fmt)]
    except PermissionError:
        return None, [Reject(source, "cannot be read: permission denied", fmt)]
    except OSError as exc:
        return None, [Reject(source, f"cannot be read: {exc.strerror or exc}", fmt)]
    if len(data) > limit:  # grew between stat and read, or a special file
        return None, [oversize_reject(path, len(data), settings, fmt)]
    if not data:
        return None, [Reject(source, "empty file (0 bytes)", fmt)]
    try:
        text, warnings = decode_bytes(data, source, settings.encoding_fallback)
    except BinaryInputError:
        return None, [Reject(source, "looks binary (NUL or control bytes), not text", fmt)]
    if not text or text.isspace():
        return None, [Reject(source, "contains only whitespace", fmt)]
    return text, list(warnings)
