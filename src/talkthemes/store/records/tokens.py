"""Records of the service's access tokens (``tokens`` table)."""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["TokenRecord"]


@dataclass(frozen=True, slots=True)
class TokenRecord:
    """An access token of the HTTP service, as stored: never the token itself.

    Attributes
    ----------
    id : int
        The row.
    name : str
        Who or what holds it (``crm``, ``nightly-refresh``); unique among active tokens.
    key_id : str
        The public part of the token that finds its row (the token starts with it).
    scope : str
        ``read`` or ``write``.
    salt : bytes
        The salt of :attr:`digest`.
    digest : bytes
        The salted hash of the token's secret part.
    kdf : str
        How :attr:`digest` was derived, e.g. ``scrypt:n=16384,r=8,p=1``.
    created_at : str
    revoked_at : str or None
        When it was revoked; None while it is active.
    """

    id: int
    name: str
    key_id: str
    scope: str
    salt: bytes
    digest: bytes
    kdf: str
    created_at: str
    revoked_at: str | None = None

    @property
    def active(self) -> bool:
        """True until the token is revoked."""
        return self.revoked_at is None

    @classmethod
    def from_row(
        cls,
        rid: int,
        name: str,
        key_id: str,
        scope: str,
        salt: bytes,
        digest: bytes,
        kdf: str,
        created_at: str,
        revoked_at: str | None,
    ) -> TokenRecord:
        """Build from ``id, name, key_id, scope, salt, digest, kdf, created_at,
        revoked_at``."""
        return cls(
            id=int(rid),
            name=str(name),
            key_id=str(key_id),
            scope=str(scope),
            salt=bytes(salt),
            digest=bytes(digest),
            kdf=str(kdf),
            created_at=str(created_at),
            revoked_at=None if revoked_at is None else str(revoked_at),
        )
