"""Pseudonyms are HMAC-SHA256 (RFC 2104), computed inside DuckDB.

Source: RFC 4231, "Identifiers and Test Vectors for HMAC-SHA-224, HMAC-SHA-256, HMAC-SHA-384,
and HMAC-SHA-512" (Nystrom, 2005), section 4: test cases 2 and 6 for HMAC-SHA-256. Also checked
against Python's standard-library hmac module on arbitrary (non-ASCII) ids.
"""

from __future__ import annotations

import hashlib
import hmac

import duckdb
import pytest

from gapfinder.privacy import hmac_pads

SQL = "SELECT sha256($outer::BLOB || unhex(sha256($inner::BLOB || encode($message))))"


def sql_hmac(key: bytes, message: str) -> str:
    inner, outer = hmac_pads(key)
    con = duckdb.connect()
    row = con.execute(SQL, {"inner": inner, "outer": outer, "message": message}).fetchone()
    assert row is not None
    return str(row[0])


@pytest.mark.parametrize(
    ("key", "message", "expected"),
    [
        # RFC 4231 test case 2: key "Jefe", data "what do ya want for nothing?"
        (b"Jefe", "what do ya want for nothing?", "5bdcc146bf60754e6a042426089575c75a003f089d2739839dec58b964ec3843"),
        # RFC 4231 test case 6: 131-byte key of 0xaa (longer than the block: hashed first)
        (
            b"\xaa" * 131,
            "Test Using Larger Than Block-Size Key - Hash Key First",
            "60e431591ee0b67f0d8a26aacbf5b77f8e0bc6213728c5140546040f0ee37f54",
        ),
    ],
)
def test_rfc4231_vectors(key: bytes, message: str, expected: str) -> None:
    assert sql_hmac(key, message) == expected


@pytest.mark.parametrize("user_id", ["m000123", "ünïcødé-ユーザー", "", "a" * 500])
def test_matches_standard_library(user_id: str) -> None:
    key = b"a-project-secret-of-some-length"
    assert sql_hmac(key, user_id) == hmac.new(key, user_id.encode(), hashlib.sha256).hexdigest()
