"""Presentation: terminal tables (rich), one self-contained HTML page, and Markdown."""

from gapfinder.report.effort_table import render_effort
from gapfinder.report.families_table import render_families
from gapfinder.report.html import render_html
from gapfinder.report.markdown import render_markdown
from gapfinder.report.terminal import (
    render_alignment,
    render_audit,
    render_coverage,
    render_gaps,
    render_paths,
    render_plan,
    render_profile,
    render_suite,
    render_unused,
    summary_rows,
)

__all__ = [
    "render_alignment",
    "render_audit",
    "render_coverage",
    "render_effort",
    "render_families",
    "render_gaps",
    "render_html",
    "render_markdown",
    "render_paths",
    "render_plan",
    "render_profile",
    "render_suite",
    "render_unused",
    "summary_rows",
]
