"""Transition and k-path counts against an independent pandas computation."""

from __future__ import annotations

import tempfile
from pathlib import Path

import duckdb
import pandas as pd
from hypothesis import given, settings
from hypothesis import strategies as st

from gapfinder.paths import list_kpaths
from gapfinder.sessions import SessionOptions
from gapfinder.usage_profile import ProfileOptions, profile_telemetry
from tests.helpers import at, write_events

MAX_K = 4


def pandas_kpaths(rows: list[tuple[str, int, str]]) -> dict[tuple[str, ...], tuple[int, int, int]]:
    """Sessions split at gaps > 60 s; frame with START/END; windows via shift()."""
    df = pd.DataFrame(rows, columns=["user", "ts", "event"]).sort_values(["user", "ts", "event"], kind="stable")
    new = (df.groupby("user")["ts"].diff().fillna(10**9) > 60).astype(int)
    df["session"] = df["user"] + "#" + new.groupby(df["user"]).cumsum().astype(str)
    framed = []
    for session, part in df.groupby("session", sort=True):
        steps = ["START", *part["event"].tolist(), "END"]
        framed += [(session, part["user"].iloc[0], i, e) for i, e in enumerate(steps)]
    f = pd.DataFrame(framed, columns=["session", "user", "pos", "event"])
    out: dict[tuple[str, ...], tuple[int, int, int]] = {}
    for k in range(2, MAX_K + 1):
        cols = [f.groupby("session")["event"].shift(-j) for j in range(k)]
        w = pd.concat([f[["session", "user"]], *[c.rename(f"e{j}") for j, c in enumerate(cols)]], axis=1).dropna()
        keys = [f"e{j}" for j in range(k)]
        g = w.groupby(keys).agg(occ=("session", "size"), sessions=("session", "nunique"), users=("user", "nunique"))
        for key, r in g.iterrows():
            out[tuple(key)] = (int(r["occ"]), int(r["sessions"]), int(r["users"]))
    return out


def gapfinder_kpaths(ws: Path) -> dict[tuple[str, ...], tuple[int, int, int]]:
    con = duckdb.connect(str(ws), read_only=True)
    listing = list_kpaths(con, min_k=2, max_k=MAX_K, min_users=1)
    con.close()
    return {tuple(r["path"]): (r["occurrences"], r["sessions"], r["users"]) for r in listing.rows}


rows_strategy = st.lists(
    st.tuples(
        st.sampled_from(["ann", "bob", "cy", "dee"]),
        st.integers(min_value=0, max_value=500),
        st.sampled_from(["a", "b", "c"]),
    ),
    min_size=1,
    max_size=50,
)


@settings(max_examples=50, deadline=None)
@given(rows=rows_strategy)
def test_kpath_counts_match_pandas(rows: list[tuple[str, int, str]]) -> None:
    with tempfile.TemporaryDirectory() as tmp:
        path = write_events(Path(tmp) / "e.parquet", [(u, at(t), e) for u, t, e in rows])
        ws = Path(tmp) / "ws.duckdb"
        options = ProfileOptions(sessions=SessionOptions(idle_minutes=1.0, flag_automated=False), max_k=MAX_K)
        profile_telemetry([path], ws, options, min_users=1)
        assert gapfinder_kpaths(ws) == pandas_kpaths(rows)


def test_privacy_floor_hides_rare_paths_and_counts_them(profiled: Path) -> None:
    con = duckdb.connect(str(profiled), read_only=True)
    everything = list_kpaths(con, min_k=2, max_k=2, min_users=1)
    floored = list_kpaths(con, min_k=2, max_k=2, min_users=3)
    con.close()
    assert all(r["users"] >= 3 for r in floored.rows)
    assert len(floored.rows) + floored.suppressed_count == len(everything.rows)
    assert floored.suppressed_count > 0
