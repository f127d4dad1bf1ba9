"""One local Spark session (local[2]) per test run, for the Spark engine's differential tests.

Without Java or pyspark these tests skip with the reason; with GAPFINDER_REQUIRE_SPARK=1 (set by
.ci/run) they fail instead, so CI never passes them silently.
"""

from __future__ import annotations

import os
import shutil
import warnings
from collections.abc import Iterator
from typing import Any

import pytest


def _unavailable(reason: str) -> None:
    if os.environ.get("GAPFINDER_REQUIRE_SPARK") == "1":
        pytest.fail(f"the Spark engine tests need {reason}")
    pytest.skip(f"the Spark engine tests need {reason} (pip install -e '.[spark]' and Java 17+)")


@pytest.fixture(scope="session")
def spark() -> Iterator[Any]:
    if shutil.which("java") is None:
        _unavailable("a Java runtime")
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            from pyspark.sql import SparkSession
    except ImportError:
        _unavailable("pyspark")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        session = (
            SparkSession.builder.master("local[2]")
            .appName("gapfinder-tests")
            .config("spark.ui.enabled", "false")
            .config("spark.sql.shuffle.partitions", "4")
            .config("spark.default.parallelism", "2")
            .config("spark.driver.memory", "1g")
            .getOrCreate()
        )
    session.sparkContext.setLogLevel("ERROR")
    yield session
    session.stop()
