"""Privacy helpers: keyed pseudonyms for user ids and the small-cell floor.

Telemetry identifies people. gapfinder never prints or exports user ids; with a key it stores
only an HMAC-SHA256 of each id (RFC 2104), computed inside DuckDB from the padded key, and every
listing suppresses paths seen by fewer than ``DEFAULT_MIN_USERS`` distinct users (suppressing
small cells is common practice in publishing statistics about people).
"""

from __future__ import annotations

import hashlib
import os
from pathlib import Path

from gapfinder.errors import ConfigError

__all__ = ["DEFAULT_MIN_USERS", "hmac_pads", "read_key"]

DEFAULT_MIN_USERS = 5
_BLOCK = 64  # SHA-256 block size in bytes


def hmac_pads(key: bytes) -> tuple[bytes, bytes]:
    """(K xor ipad, K xor opad) for HMAC-SHA256, so that
    HMAC(K, m) = SHA256(opad_key || SHA256(ipad_key || m)) can be evaluated in SQL.

    Examples
    --------
    >>> import hmac
    >>> inner, outer = hmac_pads(b"key")
    >>> inside = hashlib.sha256(inner + b"m").digest()
    >>> hashlib.sha256(outer + inside).hexdigest() == hmac.new(b"key", b"m", "sha256").hexdigest()
    True
    """
    if len(key) > _BLOCK:
        key = hashlib.sha256(key).digest()
    key = key.ljust(_BLOCK, b"\x00")
    return bytes(b ^ 0x36 for b in key), bytes(b ^ 0x5C for b in key)


def read_key(*, env_var: str | None = None, key_file: str | None = None) -> bytes | None:
    """The pseudonymization key from an environment variable or a key file (None for neither)."""
    if env_var and key_file:
        raise ConfigError("give the pseudonymization key once: --key-env or --key-file, not both")
    if env_var:
        value = os.environ.get(env_var)
        if not value:
            raise ConfigError(f"--key-env {env_var}: the environment variable is not set or empty")
        return value.encode("utf-8")
    if key_file:
        try:
            data = Path(key_file).read_bytes().strip()
        except OSError as exc:
            raise ConfigError(f"--key-file {key_file}: cannot be read ({exc.strerror})") from None
        if len(data) < 16:
            raise ConfigError(f"--key-file {key_file}: the key is shorter than 16 bytes; use a longer one")
        return data
    return None
