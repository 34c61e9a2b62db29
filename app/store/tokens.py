"""Session ids and the secret edit and view tokens: making them, hashing them, checking them.

Only hashes are kept; a token itself is never stored or logged here.
"""

from __future__ import annotations

import hashlib
import hmac
import secrets

#: 16 random bytes (128 bits) make an id nobody can guess; 32 bytes for the tokens, which
#: grant access on their own.
ID_BYTES = 16
TOKEN_BYTES = 32


def new_id() -> str:
    return secrets.token_urlsafe(ID_BYTES)


def new_token() -> str:
    return secrets.token_urlsafe(TOKEN_BYTES)


def token_hash(token: str) -> str:
    """SHA-256 of the token. A fast hash is enough: the token has 256 random bits, so
    there is nothing to guess from a leaked hash (unlike a password)."""
    return hashlib.sha256(token.encode("utf-8")).hexdigest()


def matches(token: str | None, stored_hash: str) -> bool:
    """True when the token hashes to stored_hash, compared in constant time."""
    if not isinstance(token, str) or not token:
        return False
    return hmac.compare_digest(token_hash(token), stored_hash)
