"""Presentation: terminal tables (rich) now; HTML and Markdown reports later."""

from gapfinder.report.terminal import (
    render_alignment,
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
    "render_coverage",
    "render_gaps",
    "render_paths",
    "render_plan",
    "render_profile",
    "render_suite",
    "render_unused",
    "summary_rows",
]
