"""Automated-traffic scores against the modified z-score computed with numpy.

Reference: the modified z-score 0.6745 (x - median) / MAD of Iglewicz & Hoaglin, "How to Detect and
Handle Outliers" (ASQC, 1993), here on the logarithm of each per-user statistic, with numpy's
``median`` as the reference implementation of the median (and of the MAD, the median of absolute
deviations from it).
"""

from __future__ import annotations

import duckdb
import numpy as np

from gapfinder.sql import run


def test_scores_and_typical_values_equal_numpy() -> None:
    rng = np.random.default_rng(3)
    users = 400
    sessions_per_user = rng.integers(1, 8, size=users)
    sessions_per_user[:3] = [300, 2, 40]  # a few far-out users
    rows = []
    for user, n in enumerate(sessions_per_user.tolist()):
        for s in range(n):
            events = int(rng.integers(1, 30)) if user else 200
            start = 1_700_000_000_000_000 + (user * 1000 + s) * 3_600_000_000
            minutes = int(rng.integers(1, 20))
            rows.append((user, events, start, start + minutes * 60_000_000))
    con = duckdb.connect()
    con.execute("SET TimeZone = 'UTC'")
    con.execute(
        "CREATE TEMP TABLE raw_sessions (user_key INTEGER, event_count INTEGER, started_at TIMESTAMPTZ, "
        "ended_at TIMESTAMPTZ)"
    )
    con.executemany(
        "INSERT INTO raw_sessions VALUES (?, ?, make_timestamp(?)::TIMESTAMPTZ, make_timestamp(?)::TIMESTAMPTZ)", rows
    )
    # keep every user and statistic: the thresholds let everything through
    run(con, "create_automated_users", min_robust_z=-1e9, min_ratio=0.0, min_events=0)
    got = con.execute("SELECT user_key, statistic, value, typical_value, robust_z FROM automated_users").fetchall()

    per_user: dict[int, list[tuple[int, float, float]]] = {}
    for user, events, start, end in rows:
        per_user.setdefault(user, []).append((events, start, end))
    keys = sorted(per_user)
    sessions = np.array([len(per_user[u]) for u in keys], dtype=float)
    events = np.array([sum(e for e, _, _ in per_user[u]) for u in keys], dtype=float)
    minutes = np.array([max(sum(b - a for _, a, b in per_user[u]) / 60e6, 1.0) for u in keys])
    expected = {"sessions": sessions, "events per session": events / sessions, "events per minute": events / minutes}
    assert len(got) == 3 * users
    for statistic, values in expected.items():
        logs = np.log(values)
        median_log = np.median(logs)
        mad_log = np.median(np.abs(logs - median_log))
        z = 0.6745 * (logs - median_log) / mad_log
        for user_key, stat, value, typical, robust_z in got:
            if stat != statistic:
                continue
            i = keys.index(user_key)
            assert np.isclose(value, values[i], rtol=1e-12)
            assert np.isclose(typical, np.median(values), rtol=1e-12)
            assert np.isclose(robust_z, z[i], rtol=1e-9, atol=1e-12)
