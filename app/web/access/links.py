"""Share links: the data folder's link key, the session tokens sealed with it, and link text.

Never writes a token in the clear (the store keeps hashes; here only a sealed copy is made).
"""

from __future__ import annotations

import base64
import hashlib
import hmac
import os
import secrets
from pathlib import Path

from rankscope.store.tokens import TOKEN_BYTES
from rankscope.tables.errors import InputError

#: The key file, in the data folder beside the database (owner-only, like the folder).
KEY_FILE = "web.key"
KEY_BYTES = 32
ROLES = ("edit", "view")


def link_key(root: Path) -> bytes:
    """The data folder's link key, made on first use. The store keeps only hashes of the
    tokens; a copy sealed with this key, kept outside the database, lets the Share button
    show the links again. Several processes may race to make the key: the first complete
    file wins and everyone reads that one."""
    path = Path(root) / KEY_FILE
    if not path.exists():
        tmp = path.with_name(f".{KEY_FILE}.{secrets.token_hex(6)}")
        fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
        try:
            os.write(fd, secrets.token_bytes(KEY_BYTES))
            os.fsync(fd)
        finally:
            os.close(fd)
        try:
            os.link(tmp, path)  # atomic, and never replaces a key made first by another
        except FileExistsError:
            pass
        finally:
            tmp.unlink(missing_ok=True)
    key = path.read_bytes()
    if len(key) != KEY_BYTES:
        raise InputError("the link key file of the data folder is damaged", str(path),
                         "Delete it; sessions stay, but their links must then be kept by hand")
    return key


def _pad(key: bytes, session_id: str, role: str) -> bytes:
    # One pad per session and role from a keyed hash (HMAC-SHA256, RFC 2104): each pad
    # seals exactly one token, so XOR with it is a one-time pad.
    return hmac.new(key, f"rankscope link {role} {session_id}".encode(), hashlib.sha256).digest()


def _raw(token: str) -> bytes:
    raw = base64.urlsafe_b64decode(token + "=" * (-len(token) % 4))
    if len(raw) != TOKEN_BYTES:
        raise ValueError("a token of unexpected length")
    return raw


def _xor(a: bytes, b: bytes) -> bytes:
    return bytes(x ^ y for x, y in zip(a, b, strict=True))


def seal(key: bytes, session_id: str, edit_token: str, view_token: str) -> str:
    """The two tokens sealed with the key, as text to keep beside the session."""
    parts = [_xor(_raw(token), _pad(key, session_id, role))
             for role, token in zip(ROLES, (edit_token, view_token), strict=True)]
    return base64.urlsafe_b64encode(b"".join(parts)).decode("ascii")


def unseal(key: bytes, session_id: str, sealed: object) -> dict[str, str] | None:
    """{"edit": token, "view": token} from sealed text, or None when it is not readable.
    The caller checks the tokens against the store's hashes before showing them."""
    if not isinstance(sealed, str):
        return None
    try:
        raw = base64.urlsafe_b64decode(sealed.encode("ascii"))
    except (ValueError, UnicodeEncodeError):
        return None
    if len(raw) != TOKEN_BYTES * len(ROLES):
        return None
    out = {}
    for i, role in enumerate(ROLES):
        part = _xor(raw[i * TOKEN_BYTES:(i + 1) * TOKEN_BYTES], _pad(key, session_id, role))
        out[role] = base64.urlsafe_b64encode(part).rstrip(b"=").decode("ascii")
    return out


def link(base_url: str, session_id: str, token: str) -> str:
    """The address that opens the session with the token (then kept in a cookie)."""
    return f"{base_url.rstrip('/')}/s/{session_id}?t={token}"
