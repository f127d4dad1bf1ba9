"""Synthetic session paths shaped like BENCHMARKS.md's workload, for the miner and profile benchmarks.

200 feature names with Zipf-like popularity, Markov-like transitions (each feature has a few
favoured successors), sessions of about 20 events. Vectorized with numpy: one step of all
sessions at a time, never a Python loop over events.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from gapfinder.mining import SequenceDatabase


def synthetic_sessions(
    session_count: int, *, feature_count: int = 200, mean_length: float = 20.0, seed: int = 1
) -> SequenceDatabase:
    """``session_count`` sessions, one sequence each (weights 1), as a SequenceDatabase."""
    rng = np.random.default_rng(seed)
    popularity = 1.0 / np.arange(1, feature_count + 1) ** 1.1
    popularity /= popularity.sum()
    favoured = rng.choice(feature_count, size=(feature_count, 4), p=popularity)
    matrix = np.tile(popularity * 0.4, (feature_count, 1))
    for j, share in enumerate((0.3, 0.15, 0.1, 0.05)):
        np.add.at(matrix, (np.arange(feature_count), favoured[:, j]), share)
    matrix /= matrix.sum(axis=1, keepdims=True)
    cumulative = np.cumsum(matrix, axis=1)
    lengths = np.maximum(1, rng.geometric(1.0 / mean_length, size=session_count)).astype(np.int64)
    max_length = int(min(lengths.max(), 4 * mean_length))
    lengths = np.minimum(lengths, max_length)
    steps = np.empty((max_length, session_count), dtype=np.int32)
    steps[0] = rng.choice(feature_count, size=session_count, p=popularity)
    for t in range(1, max_length):
        u = rng.random(session_count)
        steps[t] = _next_steps(steps[t - 1], u, cumulative)
    keep = np.arange(max_length)[:, None] < lengths[None, :]
    items = steps.T[keep.T].astype(np.int32)
    starts = np.zeros(session_count + 1, dtype=np.int64)
    np.cumsum(lengths, out=starts[1:])
    return SequenceDatabase(items, starts, np.ones(session_count, dtype=np.int64))


def _next_steps(previous: np.ndarray, u: np.ndarray, cumulative: np.ndarray) -> np.ndarray:
    """Each session's next feature: the first column of its previous feature's cumulative row that
    reaches its draw ``u`` (the count of entries below ``u``, capped at the last feature).

    Sessions are grouped by previous feature and each group searched in its own row, so memory stays
    linear in the number of sessions (indexing ``cumulative`` by session would take 200 floats each)."""
    feature_count = cumulative.shape[0]
    order = np.argsort(previous, kind="stable")
    bounds = np.searchsorted(previous[order], np.arange(feature_count + 1), side="left")
    out = np.empty_like(previous)
    for feature in range(feature_count):
        members = order[bounds[feature] : bounds[feature + 1]]
        if len(members):
            out[members] = np.searchsorted(cumulative[feature], u[members], side="left")
    return np.minimum(out, feature_count - 1)


def as_lists(db: SequenceDatabase) -> list[list[int]]:
    """Python lists for the reference package (one list per sequence, weights expanded)."""
    out: list[list[int]] = []
    items = db.items.tolist()
    for i, w in enumerate(db.weights.tolist()):
        seq = items[db.starts[i] : db.starts[i + 1]]
        out.extend([seq] * w)
    return out


def synthetic_telemetry(path: Path, events: int, *, seed: int = 1) -> Path:
    """Write about ``events`` events of synthetic sessions as telemetry (user_id, ts, event) to Parquet.

    Two sessions per user, an hour apart (so idle gaps split them), 20 s between events; users
    start at spread-out seconds of a 90-day window, so any size stays inside the years telemetry
    may carry (laid end to end, 50M events would have run to the year 2311)."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    db = synthetic_sessions(max(1, events // 20), seed=seed)
    lengths = np.diff(db.starts)
    session = np.repeat(np.arange(len(lengths)), lengths)
    position = np.arange(len(db.items)) - db.starts[session]
    user = (session // 2).astype(np.int32)
    window_s = 90 * 86_400
    user_start_s = (user.astype(np.int64) * 7_919) % window_s  # 7,919 is prime: users spread evenly
    offsets = (user_start_s + (session % 2) * 3_600) * 1_000_000 + position * 20_000_000
    ts = np.datetime64("2026-01-01", "us") + offsets.astype("timedelta64[us]")
    user_labels = pa.array([f"u{i:07d}" for i in range(int(user.max()) + 1)])
    names = pa.array([f"feature_{i:03d}" for i in range(int(db.items.max()) + 1)])
    table = pa.table(
        {
            "user_id": pa.DictionaryArray.from_arrays(pa.array(user), user_labels).cast(pa.string()),
            "ts": pa.array(ts, pa.timestamp("us", tz="UTC")),
            "event": pa.DictionaryArray.from_arrays(pa.array(db.items.astype(np.int32)), names),
        }
    )
    path.parent.mkdir(parents=True, exist_ok=True)
    pq.write_table(table, path)
    return path


def synthetic_suite(path: Path, tests: int = 40, *, seed: int = 2) -> Path:
    """A suite of ``tests`` test traces (test_id, step_no, event) walking the same synthetic chain,
    for the stage benchmarks on the high-entropy shape."""
    import csv

    db = synthetic_sessions(tests, seed=seed)
    path.parent.mkdir(parents=True, exist_ok=True)
    with path.open("w", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(["test_id", "step_no", "event"])
        for t in range(tests):
            steps = db.items[db.starts[t] : db.starts[t + 1]].tolist()
            for n, item in enumerate(steps, start=1):
                writer.writerow([f"test_{t:03d}", n, f"feature_{item:03d}"])
    return path


def write_telemetry(shape: str, folder: Path, events: int, gapfinder: str, *, with_suite: bool = False) -> Path:
    """Telemetry of ``shape`` (``demo``: `gapfinder demo`; ``entropy``: synthetic_telemetry) under
    ``folder``/field, and with ``with_suite`` a suite under ``folder``/tests for the entropy shape
    (the demo writes its own). Returns the field folder."""
    import subprocess

    if shape == "demo":
        subprocess.run(
            [gapfinder, "demo", "--out", str(folder), "--events", str(events), "--seed", "1"],
            check=True,
            capture_output=True,
        )
    else:
        synthetic_telemetry(folder / "field" / "events.parquet", events)
        if with_suite:
            synthetic_suite(folder / "tests" / "suite_traces.csv")
    return folder / "field"
