"""The HTTP service's access tokens: names, scopes and salted hashes, never the tokens."""

from __future__ import annotations

import sqlite3

from talkthemes.errors import InputError
from talkthemes.store._base import StoreBase, now_iso
from talkthemes.store.records import TokenRecord

__all__ = ["TokensMixin"]

_COLUMNS = "id, name, key_id, scope, salt, digest, kdf, created_at, revoked_at"


class TokensMixin(StoreBase):
    """Access tokens: one row per token ever issued; revoking one keeps its row."""

    def add_token(
        self, name: str, *, key_id: str, scope: str, salt: bytes, digest: bytes, kdf: str
    ) -> TokenRecord:
        """Record a new token (its salted hash only).

        Raises
        ------
        InputError
            When an active token already has this name (revoke it first).
        """
        try:
            with self.transaction() as c:
                cur = c.execute(
                    "INSERT INTO tokens(name, key_id, scope, salt, digest, kdf, created_at) "
                    "VALUES (?,?,?,?,?,?,?)",
                    (name, key_id, scope, salt, digest, kdf, now_iso()),
                )
                row = c.execute(
                    f"SELECT {_COLUMNS} FROM tokens WHERE id = ?", (cur.lastrowid,)
                ).fetchone()
        except sqlite3.IntegrityError:
            raise InputError(
                f"a token named {name!r} is active already: revoke it first "
                f"('talkthemes token revoke {name}') or choose another name"
            ) from None
        return TokenRecord.from_row(*row)

    def tokens(self, *, revoked: bool = False) -> list[TokenRecord]:
        """Active tokens by name (with ``revoked``, revoked ones too, after them)."""
        sql = f"SELECT {_COLUMNS} FROM tokens"
        if not revoked:
            sql += " WHERE revoked_at IS NULL"
        sql += " ORDER BY revoked_at IS NOT NULL, name, id"
        return [TokenRecord.from_row(*row) for row in self._conn.execute(sql)]

    def token_by_key(self, key_id: str) -> TokenRecord | None:
        """The token whose public part is ``key_id`` (revoked or not), or None."""
        row = self._conn.execute(
            f"SELECT {_COLUMNS} FROM tokens WHERE key_id = ?", (key_id,)
        ).fetchone()
        return None if row is None else TokenRecord.from_row(*row)

    def revoke_token(self, name: str) -> TokenRecord | None:
        """Revoke the active token named ``name``; None when there is none."""
        with self.transaction() as c:
            row = c.execute(
                f"SELECT {_COLUMNS} FROM tokens WHERE name = ? AND revoked_at IS NULL", (name,)
            ).fetchone()
            if row is None:
                return None
            c.execute("UPDATE tokens SET revoked_at = ? WHERE id = ?", (now_iso(), row[0]))
            row = c.execute(f"SELECT {_COLUMNS} FROM tokens WHERE id = ?", (row[0],)).fetchone()
        return TokenRecord.from_row(*row)
