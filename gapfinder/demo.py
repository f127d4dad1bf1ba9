"""The invented demo scenario: telemetry of a community tool-library app and its test suite.

Members of a (fictional) neighbourhood tool library search the catalogue, view a tool, reserve
it, pick a pick-up slot, pay a deposit by card or voucher (card payments sometimes fail), collect
it, extend the loan, return it, report damage and rate it; plus sign-up, login, notifications and
settings. Six months of sessions are generated from journey templates with optional steps and
detours; in the second quarter a new feature (joining a waitlist for a tool that is out) rolls out
with app version 5.0. One automated account loops through the catalogue. The demo's test suite
covers some journeys and misses several common ones; ``manifest.json`` records what was planted
so later stages can be checked against it. Everything is vectorized with numpy: no Python loop
over events or sessions.
"""

from __future__ import annotations

import itertools
import json
import os
import shutil
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq

from gapfinder.errors import ConfigError

__all__ = ["FEATURES", "JOURNEYS", "SUITE", "DemoResult", "Journey", "generate_demo"]

FEATURES: tuple[str, ...] = (
    "sign_up",
    "login",
    "search_catalogue",
    "view_tool",
    "reserve_tool",
    "pick_slot",
    "pay_deposit_card",
    "pay_deposit_voucher",
    "collect_tool",
    "extend_loan",
    "return_tool",
    "report_damage",
    "rate_tool",
    "open_notifications",
    "change_settings",
    "delete_account",
    "join_waitlist",
)
_CODE = {name: i for i, name in enumerate(FEATURES)}

START_DATE = np.datetime64("2026-01-01T00:00:00", "us")
SECOND_QUARTER = np.datetime64("2026-04-01T00:00:00", "us")
END_DATE = np.datetime64("2026-07-01T00:00:00", "us")


@dataclass(frozen=True)
class Journey:
    """A journey template: steps with the chance each is taken, and its share per quarter."""

    name: str
    steps: tuple[tuple[str, float], ...]
    share_q1: float
    share_q2: float
    tested_by: str | None = None
    signature: tuple[str, str] | None = None  # the transition that marks this journey


JOURNEYS: tuple[Journey, ...] = (
    Journey(
        "browse",
        (("login", 1), ("search_catalogue", 1), ("view_tool", 1), ("view_tool", 0.35)),
        0.30,
        0.26,
        tested_by="test_browse_catalogue",
    ),
    Journey(
        "reserve_pay_card",
        (
            ("login", 1),
            ("search_catalogue", 1),
            ("view_tool", 1),
            ("reserve_tool", 1),
            ("pick_slot", 1),
            ("pay_deposit_card", 1),
        ),
        0.16,
        0.15,
        tested_by="test_reserve_and_pay_by_card",
    ),
    Journey(
        "reserve_pay_voucher",
        (
            ("login", 1),
            ("search_catalogue", 1),
            ("view_tool", 1),
            ("reserve_tool", 1),
            ("pick_slot", 1),
            ("pay_deposit_voucher", 1),
        ),
        0.08,
        0.08,
        signature=("pick_slot", "pay_deposit_voucher"),
    ),
    Journey(
        "card_fails_then_voucher",
        (
            ("login", 1),
            ("search_catalogue", 1),
            ("view_tool", 1),
            ("reserve_tool", 1),
            ("pick_slot", 1),
            ("pay_deposit_card", 1),
            ("pay_deposit_voucher", 1),
        ),
        0.035,
        0.035,
        signature=("pay_deposit_card", "pay_deposit_voucher"),
    ),
    Journey(
        "collect",
        (("login", 1), ("open_notifications", 1), ("collect_tool", 1)),
        0.10,
        0.09,
        tested_by="test_collect_tool",
    ),
    Journey(
        "extend_loan",
        (("login", 1), ("open_notifications", 1), ("extend_loan", 1)),
        0.07,
        0.07,
        signature=("open_notifications", "extend_loan"),
    ),
    Journey(
        "return_and_rate",
        (("login", 1), ("return_tool", 1), ("rate_tool", 1)),
        0.10,
        0.09,
        tested_by="test_return_and_rate",
    ),
    Journey(
        "return_with_damage",
        (("login", 1), ("return_tool", 1), ("report_damage", 1)),
        0.045,
        0.045,
        signature=("return_tool", "report_damage"),
    ),
    Journey(
        "sign_up",
        (("sign_up", 1), ("login", 1), ("search_catalogue", 1), ("view_tool", 0.7)),
        0.06,
        0.05,
        tested_by="test_sign_up",
    ),
    Journey("settings", (("login", 1), ("change_settings", 1)), 0.048, 0.043, tested_by="test_change_settings"),
    Journey(
        "delete_account",
        (("login", 1), ("change_settings", 1), ("delete_account", 1)),
        0.002,
        0.002,
        tested_by="test_delete_account",
    ),
    Journey(
        "join_waitlist",
        (("login", 1), ("search_catalogue", 1), ("view_tool", 1), ("join_waitlist", 1)),
        0.0,
        0.08,
        signature=("view_tool", "join_waitlist"),
    ),
)

# The demo's test suite: (test id, steps). Two tests exercise paths members rarely or never take.
SUITE: tuple[tuple[str, tuple[str, ...]], ...] = (
    ("test_browse_catalogue", ("login", "search_catalogue", "view_tool", "view_tool")),
    (
        "test_reserve_and_pay_by_card",
        ("login", "search_catalogue", "view_tool", "reserve_tool", "pick_slot", "pay_deposit_card"),
    ),
    ("test_collect_tool", ("login", "open_notifications", "collect_tool")),
    ("test_return_and_rate", ("login", "return_tool", "rate_tool")),
    ("test_sign_up", ("sign_up", "login", "search_catalogue", "view_tool")),
    ("test_change_settings", ("login", "change_settings")),
    ("test_delete_account", ("login", "change_settings", "delete_account")),
    ("test_voucher_from_notifications", ("login", "open_notifications", "pay_deposit_voucher")),
)

# Detours inserted between two steps of any journey: (event, chance per session).
DETOURS: tuple[tuple[str, float], ...] = (("open_notifications", 0.06), ("change_settings", 0.02))

# Chance that an event fails, by event; the rest fail at BASE_ERROR_RATE.
BASE_ERROR_RATE = 0.004
ERROR_RATES = {"pay_deposit_card": 0.05, "pay_deposit_voucher": 0.02, "pick_slot": 0.008}
# On Android with app 5.0 slot picking fails far more often (a planted segment effect).
SEGMENT_ERROR = {"event": "pick_slot", "platform": "android", "app_version": "5.0", "rate": 0.06}

PLATFORMS = (("ios", 0.45), ("android", 0.40), ("web", 0.15))
BOT_LOOP = ("search_catalogue", "view_tool")
BOT_EVENTS_PER_SESSION = 300


@dataclass(frozen=True)
class DemoResult:
    """Where the demo was written and what it holds."""

    out: Path
    field_files: list[Path]
    suite_file: Path
    manifest_file: Path
    event_count: int
    session_count: int
    user_count: int
    staging_files: list[Path] = field(default_factory=list)


CHUNK_SESSIONS = 250_000  # sessions whose events are made at once (about 2.3M events)


def _expected_length(journey: Journey) -> float:
    return sum(p for _, p in journey.steps) + sum(p for _, p in DETOURS)


def _journey_events(
    rng: np.random.Generator, journey: Journey, sessions: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(session index, order key, event code) of every event of these sessions of one journey."""
    n, length = len(sessions), len(journey.steps)
    chances = np.array([p for _, p in journey.steps])
    codes = np.array([_CODE[e] for e, _ in journey.steps])
    taken = rng.random((n, length)) < chances
    rows, cols = np.nonzero(taken)
    session_idx = [sessions[rows]]
    order = [cols * 2]
    events = [codes[cols]]
    for detour, chance in DETOURS:
        has = rng.random(n) < chance
        where = rng.integers(0, max(length - 1, 1), size=n)  # after step `where`, before the last
        session_idx.append(sessions[has])
        order.append(where[has] * 2 + 1)
        events.append(np.full(int(has.sum()), _CODE[detour]))
    return np.concatenate(session_idx), np.concatenate(order), np.concatenate(events)


def _block_events(
    rng: np.random.Generator,
    sessions: range,
    *,
    starts: np.ndarray,
    journey_of: np.ndarray,
    user_of: np.ndarray,
    platform_of_user: np.ndarray,
    versions: np.ndarray,
) -> dict[str, np.ndarray]:
    """Every event of a block of consecutive sessions, as integer codes (names only become the
    dictionaries of the Parquet columns, so memory and time stay linear in the events)."""
    first, stop = sessions.start, sessions.stop
    journeys = journey_of[first:stop]
    parts = [_journey_events(rng, j, np.nonzero(journeys == i)[0] + first) for i, j in enumerate(JOURNEYS)]
    sess = np.concatenate([p[0] for p in parts])
    order = np.concatenate([p[1] for p in parts])
    code = np.concatenate([p[2] for p in parts])
    sort = np.lexsort((order, sess))
    sess, code = sess[sort], code[sort]

    # Time within a session: gaps of about 20 s (exponential, 1 s to 10 min).
    gaps = np.clip(rng.exponential(20.0, size=len(sess)), 1.0, 600.0)
    opens = np.r_[True, sess[1:] != sess[:-1]]
    gaps[opens] = 0.0
    cum = np.cumsum(gaps)
    offsets = cum - np.maximum.accumulate(np.where(opens, cum, 0.0))
    ts = starts[sess] + (offsets * 1e6).astype("timedelta64[us]")

    # App version by date; members update with a lag; waitlist sessions need 5.0.
    lag_days = rng.exponential(12.0, size=stop - first).astype("timedelta64[D]").astype("timedelta64[us]")
    seen = starts[first:stop] - lag_days
    version = np.where(seen < np.datetime64("2026-03-01", "us"), 0, np.where(seen < SECOND_QUARTER, 1, 2))
    waitlist = next(i for i, j in enumerate(JOURNEYS) if j.name == "join_waitlist")
    version[journeys == waitlist] = 2
    local = sess - first

    # Outcomes: per-event error rates, the planted segment effect, and the forced card failure.
    rate = np.full(len(FEATURES), BASE_ERROR_RATE)
    for name, r in ERROR_RATES.items():
        rate[_CODE[name]] = r
    event_rate = rate[code]
    platform = platform_of_user[user_of[sess]]
    segment = (
        (code == _CODE[str(SEGMENT_ERROR["event"])])
        & (platform == [p for p, _ in PLATFORMS].index(str(SEGMENT_ERROR["platform"])))
        & (version[local] == list(versions).index(str(SEGMENT_ERROR["app_version"])))
    )
    event_rate[segment] = float(SEGMENT_ERROR["rate"])  # type: ignore[arg-type]
    is_error = rng.random(len(code)) < event_rate
    fails_first = next(i for i, j in enumerate(JOURNEYS) if j.name == "card_fails_then_voucher")
    is_error[(journey_of[sess] == fails_first) & (code == _CODE["pay_deposit_card"])] = True
    return {
        "user": user_of[sess].astype(np.int32),
        "ts": ts,
        "event": code.astype(np.int32),
        "app_version": version[local].astype(np.int32),
        "platform": platform.astype(np.int32),
        "outcome": is_error.astype(np.int32),
    }


class _MonthBlocks:
    """Blocks of events kept on disk per month (one ``.npz`` per month and block, in the order they
    were added) until every block is made."""

    def __init__(self, folder: Path) -> None:
        self.folder = folder
        self.parts: dict[str, list[Path]] = {}

    def add(self, columns: dict[str, np.ndarray]) -> None:
        self.folder.mkdir(parents=True, exist_ok=True)
        month = columns["ts"].astype("datetime64[M]")
        order = np.argsort(month, kind="stable")  # stable: rows keep their order within a month
        month = month[order]
        bounds = np.r_[0, np.nonzero(month[1:] != month[:-1])[0] + 1, len(month)]
        for lo, hi in itertools.pairwise(bounds):
            key = str(month[lo])
            path = self.folder / f"{key}-{len(self.parts.get(key, []))}.npz"
            payload: dict[str, Any] = {name: values[order[lo:hi]] for name, values in columns.items()}
            np.savez(path, **payload)
            self.parts.setdefault(key, []).append(path)

    def months(self) -> list[str]:
        return sorted(self.parts)

    def read(self, month: str) -> dict[str, np.ndarray]:
        loaded = [np.load(path) for path in self.parts[month]]
        try:
            return {name: np.concatenate([part[name] for part in loaded]) for name in loaded[0].files}
        finally:
            for part in loaded:
                part.close()

    def remove(self) -> None:
        shutil.rmtree(self.folder, ignore_errors=True)


def generate_demo(
    out: str | os.PathLike[str],
    *,
    events: int = 200_000,
    seed: int = 7,
    users_per_session: float = 0.2,
    as_format: str = "parquet",
) -> DemoResult:
    """Write field telemetry (hive-partitioned Parquet by month), the suite's traces and a manifest.

    Parameters
    ----------
    out: the folder to write (``field/``, ``tests/suite_traces.csv``, ``manifest.json``).
    events: about how many field events to generate (the automated account adds about 1 %).
    seed: the random seed; the same seed gives the same files.
    as_format: ``parquet`` (``field/month=YYYY-MM/events.parquet``), ``otlp`` (OpenTelemetry logs,
        ``field/logs-YYYY-MM.jsonl.gz``, one export request per line) or ``export`` (an analytics
        export, ``field/events-YYYY-MM.parquet``: generic ``screen_view`` events with a JSON
        ``properties`` column, tool ids inside URL-like names).
    """
    if as_format not in ("parquet", "otlp", "export"):
        raise ConfigError(f"--as {as_format!r}: use parquet, otlp or export")
    if events < 1_000:
        raise ConfigError(f"--events {events}: the demo needs at least 1000 events")
    rng = np.random.default_rng(seed)
    target = Path(out)
    field_dir = target / "field"
    if field_dir.exists() and any(field_dir.iterdir()):
        raise ConfigError(f"{field_dir} already holds Parquet files: choose an empty --out folder")

    # Sessions: start times uniform over six months, journeys by quarter.
    mean_q1 = sum(j.share_q1 * _expected_length(j) for j in JOURNEYS) / sum(j.share_q1 for j in JOURNEYS)
    session_count = int(events / mean_q1)
    span = (END_DATE - START_DATE).astype(np.int64)
    starts = START_DATE + rng.integers(0, span, size=session_count).astype("timedelta64[us]")
    in_q2 = starts >= SECOND_QUARTER
    q1 = np.array([j.share_q1 for j in JOURNEYS]) / sum(j.share_q1 for j in JOURNEYS)
    q2 = np.array([j.share_q2 for j in JOURNEYS]) / sum(j.share_q2 for j in JOURNEYS)
    journey_of = np.where(
        in_q2,
        rng.choice(len(JOURNEYS), size=session_count, p=q2),
        rng.choice(len(JOURNEYS), size=session_count, p=q1),
    )

    # Members: activity varies (gamma-distributed), but nobody comes near automated volumes.
    user_count = max(10, int(session_count * users_per_session))
    activity = rng.gamma(2.0, 1.0, size=user_count)
    user_of = rng.choice(user_count, size=session_count, p=activity / activity.sum())
    platform_of_user = rng.choice(len(PLATFORMS), size=user_count, p=[p for _, p in PLATFORMS])

    journey_of = journey_of.astype(np.int8)  # the same values, an eighth of the memory
    user_of = user_of.astype(np.int32)
    platform_of_user = platform_of_user.astype(np.int8)
    versions = np.array(["4.1", "4.2", "5.0"])
    platforms = np.array([p for p, _ in PLATFORMS])

    # Events are made a block of sessions at a time and kept per month on disk, so memory does not
    # grow with the number of events; one block (up to CHUNK_SESSIONS sessions) draws exactly what
    # one pass over all sessions did.
    spill = target / ".gapfinder-demo-blocks"
    if spill.is_symlink() or (spill.exists() and not spill.is_dir()):
        raise ConfigError(f"{spill} is in the way (a link or a file): remove it, or choose another --out folder")
    months = _MonthBlocks(spill)
    try:
        member_events = 0
        for first in range(0, session_count, CHUNK_SESSIONS):
            block = _block_events(
                rng,
                range(first, min(first + CHUNK_SESSIONS, session_count)),
                starts=starts,
                journey_of=journey_of,
                user_of=user_of,
                platform_of_user=platform_of_user,
                versions=versions,
            )
            member_events += len(block["event"])
            months.add(block)
        # The automated account: short fixed pauses, the same two screens over and over.
        bot_sessions = max(4, int(events * 0.01 / BOT_EVENTS_PER_SESSION))
        bot_days = np.sort(rng.choice(180, size=min(bot_sessions, 180), replace=False))
        bot_starts = START_DATE + (bot_days * 86_400 + 3 * 3600).astype("timedelta64[s]").astype("timedelta64[us]")
        steps = np.arange(BOT_EVENTS_PER_SESSION)
        bot_ts = (bot_starts[:, None] + (steps[None, :] * 2_000_000).astype("timedelta64[us]")).ravel()
        bot_event = np.tile(np.array([_CODE[name] for name in BOT_LOOP])[steps % 2], len(bot_starts))
        bot_n = len(bot_ts)
        bot_values = {
            "user": user_count,
            "app_version": list(versions).index("4.2"),
            "platform": list(platforms).index("web"),
            "outcome": 0,
        }
        months.add(
            {
                "ts": bot_ts,
                "event": bot_event.astype(np.int32),
                **{name: np.full(bot_n, value, dtype=np.int32) for name, value in bot_values.items()},
            }
        )
        labels = {
            # member ids are zero-padded, so their order is their number's order (the bot is the last)
            "user": np.char.add("m", np.char.zfill(np.arange(user_count + 1).astype(str), 6)),
            "event": np.array(FEATURES),
            "app_version": versions,
            "platform": platforms,
            "outcome": np.array(["ok", "error"]),
        }
        field_files = [_write_month(field_dir, month, months.read(month), labels) for month in months.months()]
    finally:
        months.remove()
    if as_format != "parquet":
        field_files = _rewrite_field(field_files, as_format)
    suite_file = _write_suite(target / "tests")
    staging_files = _write_staging_run(target / "staging_run")
    manifest = {
        "scenario": "community tool library (invented)",
        "seed": seed,
        "events_requested": events,
        "field_events": member_events + bot_n,
        "member_sessions": session_count,
        "members": user_count,
        "period": {"start": "2026-01-01", "end": "2026-06-30", "second_quarter_from": "2026-04-01"},
        "rolled_out_in_second_quarter": {"feature": "join_waitlist", "app_version": "5.0"},
        "untested_journeys": [
            {
                "journey": j.name,
                "path": [e for e, _ in j.steps],
                "signature_transition": list(j.signature),
                "share_q1": j.share_q1,
                "share_q2": j.share_q2,
            }
            for j in JOURNEYS
            if j.signature
        ],
        "tested_journeys": {j.name: j.tested_by for j in JOURNEYS if j.tested_by},
        "rarely_used_tests": ["test_delete_account", "test_voucher_from_notifications"],
        "automated_account": {
            "loop": list(BOT_LOOP),
            "loop_transition": [BOT_LOOP[1], BOT_LOOP[0]],
            "sessions": len(bot_starts),
            "events": int(bot_n),
            "seconds_between_events": 2,
        },
        "segment_effect": SEGMENT_ERROR,
        "error_rates": {"base": BASE_ERROR_RATE, **ERROR_RATES},
        "staging_run": {
            "events": "staging_run/events.parquet",
            "windows": "staging_run/pytest_run.ndjson",
            "test_module": STAGING_MODULE,
            "same_steps_as": "tests/suite_traces.csv",
        },
    }
    manifest_file = target / "manifest.json"
    manifest_file.write_text(json.dumps(manifest, indent=2, sort_keys=True) + "\n", encoding="utf-8")
    return DemoResult(
        out=target,
        field_files=field_files,
        suite_file=suite_file,
        manifest_file=manifest_file,
        staging_files=staging_files,
        event_count=member_events + bot_n,
        session_count=session_count + len(bot_starts),
        user_count=user_count + 1,
    )


def _dictionary(codes: np.ndarray, labels: np.ndarray) -> pa.DictionaryArray:
    """A dictionary column of the labels the codes use, in label order (codes renumbered)."""
    used = np.unique(codes)
    renumber = np.zeros(len(labels), dtype=np.int32)
    renumber[used] = np.arange(len(used), dtype=np.int32)
    return pa.DictionaryArray.from_arrays(pa.array(renumber[codes]), pa.array(labels[used].tolist()))


def _write_month(field_dir: Path, month: str, columns: dict[str, np.ndarray], labels: dict[str, np.ndarray]) -> Path:
    """One month's events, hive-partitioned, rows ordered by member and time, zstd-compressed."""
    order = np.lexsort((columns["ts"], columns["user"]))
    folder = field_dir / f"month={month}"
    folder.mkdir(parents=True, exist_ok=True)
    table = pa.table(
        {
            "user_id": _dictionary(columns["user"][order], labels["user"]).cast(pa.string()),
            "ts": pa.array(columns["ts"][order], type=pa.timestamp("us", tz="UTC")),
            "event": _dictionary(columns["event"][order], labels["event"]),
            "app_version": _dictionary(columns["app_version"][order], labels["app_version"]),
            "platform": _dictionary(columns["platform"][order], labels["platform"]),
            "outcome": _dictionary(columns["outcome"][order], labels["outcome"]),
        }
    )
    path = folder / "events.parquet"
    pq.write_table(table, path, compression="zstd", row_group_size=1_000_000)
    return path


def _rewrite_field(parquet_files: list[Path], as_format: str) -> list[Path]:
    """Rewrite each month's Parquet file as OTLP logs or an analytics export, then remove it."""
    from gapfinder.sql import run
    from gapfinder.workspace import connect_memory

    written = []
    con = connect_memory()
    try:
        for parquet in parquet_files:
            month = parquet.parent.name.partition("=")[2]
            if as_format == "otlp":
                target = parquet.parent.parent / f"logs-{month}.jsonl.gz"
            else:
                target = parquet.parent.parent / f"events-{month}.parquet"
            partial = target.with_name(target.name + ".partial")
            query = "write_demo_otlp_logs" if as_format == "otlp" else "write_demo_analytics_export"
            run(con, query, files=[str(parquet)], path=str(partial))
            os.replace(partial, target)
            parquet.unlink()
            parquet.parent.rmdir()
            written.append(target)
    finally:
        con.close()
    return written


STAGING_MODULE = "tests/test_library.py"
STAGING_START = np.datetime64("2026-07-01T09:00:00", "us")


def _write_staging_run(folder: Path) -> list[Path]:
    """The demo suite run against a staging build with telemetry on.

    The app emits its usual events (under a test account per test) while each test runs; the
    pytest plugin's run file records each test's window and outcome but no steps, as a suite that
    never calls ``record_step`` would. ``gapfinder suite pytest_run.ndjson --events events.parquet``
    then gives every test the steps of ``tests/suite_traces.csv``. Test accounts are invented."""
    folder.mkdir(parents=True, exist_ok=True)
    users, stamps, events, lines = [], [], [], []
    lines.append(json.dumps({"gapfinder_run": 1, "tests": len(SUITE), "writer": "gapfinder demo"}, sort_keys=True))
    clock = STAGING_START
    for n, (test, steps) in enumerate(SUITE, start=1):
        started = clock
        for step in steps:
            clock = clock + np.timedelta64(400, "ms")
            users.append(f"qa-{n:02d}")
            stamps.append(clock)
            events.append(step)
        clock = clock + np.timedelta64(300, "ms")
        epoch = np.datetime64("1970-01-01T00:00:00", "us")
        window = {
            "test_id": f"{STAGING_MODULE}::{test}",
            "outcome": "passed",
            "started": float((started - epoch) / np.timedelta64(1, "s")),
            "finished": float((clock - epoch) / np.timedelta64(1, "s")),
            "steps": [],
            "user_id": None,
            "session_id": None,
        }
        lines.append(json.dumps(window, sort_keys=True))
        clock = clock + np.timedelta64(2, "s")  # set-up of the next test: the app is idle
    table = pa.table(
        {
            "user_id": pa.array(users),
            "ts": pa.array(np.array(stamps, dtype="datetime64[us]"), type=pa.timestamp("us", tz="UTC")),
            "event": pa.array(events),
            "app_version": pa.array(["5.0-staging"] * len(events)),
            "platform": pa.array(["web"] * len(events)),
            "outcome": pa.array(["ok"] * len(events)),
        }
    )
    events_path = folder / "events.parquet"
    pq.write_table(table, events_path, compression="zstd")
    run_path = folder / "pytest_run.ndjson"
    run_path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return [events_path, run_path]


def _write_suite(folder: Path) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / "suite_traces.csv"
    lines = ["test_id,step_no,event"]
    lines += [f"{test},{i},{event}" for test, steps in SUITE for i, event in enumerate(steps, start=1)]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path
