"""Presentation: terminal tables (rich) now; HTML and Markdown reports later."""

from gapfinder.report.terminal import render_paths, render_profile, summary_rows

__all__ = ["render_paths", "render_profile", "summary_rows"]
