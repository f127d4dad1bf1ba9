"""Timing one child process, shared by the benchmarks that run stages in fresh processes."""

from __future__ import annotations

import subprocess
import time


def timed(cmd: list[str]) -> tuple[float, float]:
    """(seconds, peak RSS in GB) of one child process; exits with its stderr's tail if it fails."""
    start = time.perf_counter()
    done = subprocess.run(["/usr/bin/time", "-f", "%M", *cmd], capture_output=True, text=True)
    seconds = time.perf_counter() - start
    if done.returncode != 0:
        raise SystemExit(f"{' '.join(cmd[:3])} failed: {done.stderr[-1500:]}")
    return seconds, int(done.stderr.strip().splitlines()[-1]) / 1024 / 1024
