"""What the tests exercise: readers for test traces, catalogs, Gherkin, JUnit XML and OTLP.

``read_suite`` reads any mix of sources into ``TestTrace`` objects (test id, ordered step names);
``load_suite`` resolves step names to field events (``align.py``) and writes the ``suite_tests``
and ``suite_steps`` tables in one transaction. Step names that match no field event are kept (as
event id -1, so they break contiguity the way an unknown step does) and listed.
"""

from gapfinder.suite.model import ReaderReport, TestTrace
from gapfinder.suite.stage import SuiteOptions, load_suite, read_suite, summarize_suite

__all__ = ["ReaderReport", "SuiteOptions", "TestTrace", "load_suite", "read_suite", "summarize_suite"]
