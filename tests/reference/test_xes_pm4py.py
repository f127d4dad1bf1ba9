"""XES written by pm4py, a general-purpose process-mining library (PyPI ``pm4py``, test only).

The same log built as a pandas frame is written by ``pm4py.write_xes`` and read back by gapfinder:
identical cases, events, timestamps and order within each case. A second log declares a classifier
of two keys through pm4py's own ``EventLog`` classifiers.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pytest

from gapfinder.sources import open_telemetry
from gapfinder.workspace import connect_memory

pm4py = pytest.importorskip("pm4py")
pytestmark = pytest.mark.filterwarnings("ignore")  # pm4py announces its licence with a warning


def _frame(cases: int = 200) -> pd.DataFrame:
    activities = ["register", "check stock", "reserve", "pay deposit", "collect", "return"]
    rows = []
    start = pd.Timestamp("2026-02-01T08:00:00Z")
    for case in range(cases):
        length = 2 + (case * 7) % 5
        for step in range(length):
            rows.append(
                {
                    "case:concept:name": f"loan-{case:04d}",
                    "concept:name": activities[(case + step * 3) % len(activities)],
                    "time:timestamp": start + pd.Timedelta(minutes=case * 13, seconds=step * 41),
                    "org:resource": f"desk-{case % 3}",
                    "lifecycle:transition": "complete",
                }
            )
    return pd.DataFrame(rows)


def test_pm4py_written_log_reads_back_identically(tmp_path: Path) -> None:
    frame = _frame()
    path = tmp_path / "loans.xes"
    pm4py.write_xes(pm4py.convert_to_event_log(frame), str(path))
    con = connect_memory()
    opened = open_telemetry(con, [path])
    read = con.execute("SELECT session_id, event, epoch_us(ts) FROM mapped_source ORDER BY session_id, ts").fetchall()
    expected = sorted(
        (
            (r["case:concept:name"], r["concept:name"], int(r["time:timestamp"].value // 1000))
            for _, r in frame.iterrows()
        ),
        key=lambda t: (t[0], t[2]),
    )
    assert read == expected
    assert opened.notes[0].startswith(f"XES: 200 traces, {len(frame)} events")
    opened.close()


def test_pm4py_read_of_our_fixture_agrees() -> None:
    """pm4py's own reader sees the same cases and events in our invented fixture as gapfinder does."""
    fixture = Path(__file__).resolve().parent.parent.parent / "sample_telemetry" / "xes" / "permits.xes"
    theirs = pm4py.read_xes(str(fixture))
    con = connect_memory()
    from gapfinder.sources.feature_keys import FeatureKeys

    open_telemetry(con, [fixture], feature_keys=FeatureKeys(template="{concept:name}"))
    ours = con.execute("SELECT event FROM mapped_source ORDER BY ts").fetchall()
    assert [r[0] for r in ours] == list(theirs.sort_values("time:timestamp")["concept:name"])
    assert len(theirs) == 5
