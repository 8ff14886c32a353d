"""Access tokens of the HTTP service: issue, list, revoke, check.

A token reads ``tt_<key id>_<secret>``: the key id (12 hex digits) finds the token's row,
the secret (32 random bytes, URL-safe base64) proves it. The store keeps only a salted
hash of the secret (:func:`hashlib.scrypt`, n = 2^14, r = 8, p = 1; Percival & Josefsson,
RFC 7914), so a copy of the workspace holds no usable token; a token is shown once, when
it is made. Checking compares in constant time (:func:`hmac.compare_digest`). The scrypt
derivation costs some tens of milliseconds, so a token checked once is remembered for the
life of this object as a keyed hash of its secret (HMAC-SHA-256 with a key drawn at
start-up): later checks cost a look-up of the row — which sees a revocation at once — and
one HMAC. See ``docs/service.md``, "Tokens".
"""

from __future__ import annotations

import base64
import hashlib
import hmac
import re
import secrets
import threading

from talkthemes.errors import ConfigError, InputError

from ._base import WorkspaceBase
from .results import NewToken, TokenInfo

__all__ = ["SCOPES", "TokensMixin", "parse_token"]

#: The scopes a token may have: ``read`` (GET endpoints and assign), ``write`` (also
#: ingest, labels and refresh).
SCOPES = ("read", "write")

_PREFIX = "tt_"
_KEY_HEX = 12
_SECRET_BYTES = 32
_SALT_BYTES = 16
_SCRYPT = {"n": 2**14, "r": 8, "p": 1}
_KDF = "scrypt:n=16384,r=8,p=1"
_NAME = re.compile(r"[A-Za-z0-9][A-Za-z0-9._-]{0,63}")
_TOKEN = re.compile(rf"{_PREFIX}([0-9a-f]{{{_KEY_HEX}}})_([A-Za-z0-9_-]{{43}})")


def parse_token(token: str) -> tuple[str, str] | None:
    """``(key id, secret)`` of a token of our shape, else None."""
    m = _TOKEN.fullmatch(token)
    return None if m is None else (m.group(1), m.group(2))


def _derive(secret: str, salt: bytes, kdf: str) -> bytes:
    if kdf != _KDF:  # the one derivation so far; a later one is told apart by this string
        raise ConfigError(f"unknown token hash {kdf!r}: upgrade talkthemes")
    return hashlib.scrypt(secret.encode("ascii"), salt=salt, dklen=32, **_SCRYPT)


class TokensMixin(WorkspaceBase):
    """``add_token``, ``tokens``, ``revoke_token``, ``check_token`` (see the module notes)."""

    _checked_lock = threading.Lock()

    def _checked(self) -> tuple[bytes, dict[int, bytes]]:
        """This object's HMAC key and the tokens it has checked (row id → keyed hash)."""
        with self._checked_lock:
            state = self.__dict__.get("_token_state")
            if state is None:
                state = self.__dict__["_token_state"] = (secrets.token_bytes(32), {})
        return state

    def add_token(self, name: str, scope: str = "read") -> NewToken:
        """Issue an access token for the HTTP service; only its salted hash is stored.

        Parameters
        ----------
        name : str
            Who holds it (``crm``, ``nightly-refresh``): letters, digits, ``.``, ``_``,
            ``-``, up to 64 characters, unique among active tokens.
        scope : {'read', 'write'}
            ``read``: the GET endpoints and assign; ``write``: also ingest, labels and
            refresh.

        Returns
        -------
        NewToken
            The token itself (``token``), to hand over now: it cannot be shown again.

        Raises
        ------
        ConfigError
            An unknown scope or a name of other characters.
        InputError
            When an active token has this name already.
        """
        if scope not in SCOPES:
            raise ConfigError(f"--scope {scope!r}: choose read or write")
        if not _NAME.fullmatch(name):
            raise ConfigError(
                f"token name {name!r}: use letters, digits, '.', '_' or '-' (at most 64, "
                "starting with a letter or digit)"
            )
        key_id = secrets.token_hex(_KEY_HEX // 2)
        secret = base64.urlsafe_b64encode(secrets.token_bytes(_SECRET_BYTES)).decode()[:43]
        salt = secrets.token_bytes(_SALT_BYTES)
        digest = _derive(secret, salt, _KDF)
        with self._dir.store() as store:
            row = store.add_token(
                name, key_id=key_id, scope=scope, salt=salt, digest=digest, kdf=_KDF
            )
        return NewToken(info=TokenInfo.of(row), token=f"{_PREFIX}{key_id}_{secret}")

    def tokens(self, *, revoked: bool = False) -> list[TokenInfo]:
        """The service's access tokens (never the tokens themselves).

        Parameters
        ----------
        revoked : bool
            List revoked tokens too (after the active ones).

        Returns
        -------
        list of TokenInfo
        """
        with self._dir.store() as store:
            return [TokenInfo.of(r) for r in store.tokens(revoked=revoked)]

    def revoke_token(self, name: str) -> TokenInfo:
        """Revoke the active token named ``name``: the service refuses it from the next
        request on (its row is kept, marked revoked).

        Parameters
        ----------
        name : str

        Returns
        -------
        TokenInfo
            The token as revoked.

        Raises
        ------
        InputError
            When no active token has this name (the message lists the active ones).
        """
        with self._dir.store() as store:
            row = store.revoke_token(name)
            if row is None:
                names = ", ".join(t.name for t in store.tokens()) or "none"
                raise InputError(f"no active token named {name!r} (active: {names})")
        return TokenInfo.of(row)

    def check_token(self, token: str) -> TokenInfo | None:
        """The active token ``token`` is, or None (unknown, revoked or malformed).

        Thread-safe; compares in constant time. A token checked once is remembered as a
        keyed hash, so later checks skip the slow derivation (see the module notes).

        Parameters
        ----------
        token : str
            As presented (``tt_<key id>_<secret>``).

        Returns
        -------
        TokenInfo or None
        """
        parts = parse_token(token)
        if parts is None:
            return None
        key_id, secret = parts
        with self._dir.store() as store:
            row = store.token_by_key(key_id)
        if row is None or not row.active:
            return None
        key, checked = self._checked()
        keyed = hmac.new(key, secret.encode("ascii"), hashlib.sha256).digest()
        known = checked.get(row.id)
        if known is not None and hmac.compare_digest(known, keyed):
            return TokenInfo.of(row)
        if not hmac.compare_digest(_derive(secret, row.salt, row.kdf), row.digest):
            return None
        with self._checked_lock:
            checked[row.id] = keyed
        return TokenInfo.of(row)
