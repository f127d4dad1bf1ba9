"""The one-shot main job: profile → suite → patterns → gaps → plan → export → Markdown summary.

``run_pipeline`` is what ``gapfinder run`` calls. Everything lands in one output folder: the
workspace, the plan as JSON and CSV, pytest and Gherkin skeletons, and ``summary.md``, a page a
test lead can paste into a pull request or a wiki.
"""

from __future__ import annotations

import dataclasses
import os
import shutil
import tempfile
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from gapfinder.errors import ConfigError, InputError
from gapfinder.export import STEPS_MAP, export_plan
from gapfinder.gaps import GapOptions, find_gaps, unused_tests
from gapfinder.patterns import MiningOptions, mine_workspace
from gapfinder.plan import PlanOptions, make_plan, plan_gap_options
from gapfinder.quoting import markdown_code, markdown_text
from gapfinder.report.markdown import decision_of, privacy_note, rejected_rows_text
from gapfinder.report.markdown import markdown_path as _path
from gapfinder.report.markdown import percent as _pct
from gapfinder.safe_io import check_target, write_files
from gapfinder.suite import SuiteOptions, load_suite, read_suite
from gapfinder.usage_profile import ProfileOptions, profile_telemetry
from gapfinder.workspace import StageRecord, Workspace, memory_limit_share, stage_clock

__all__ = ["PipelineResult", "render_summary_markdown", "run_pipeline"]

# DuckDB's share of the memory limit in the stages after profile: gap evidence holds about 0.7 GB of
# arrays in Python at 10M high-entropy events; with DuckDB at the whole limit beside them `run` peaked
# at 3.4 GiB under a 2.5 GiB limit, while `gaps` at 1.5 GB instead of 2.5 GB took no longer.
LATER_STAGES_MEMORY_SHARE = 0.6


@dataclass
class PipelineResult:
    """Where everything went and the figures of the summary."""

    out: Path
    workspace: Path
    files: list[str] = field(default_factory=list)
    summary: dict[str, Any] = field(default_factory=dict)
    kept: list[str] = field(default_factory=list)  # skeletons edited since an earlier run, left as they were


def run_pipeline(
    telemetry: Sequence[str | os.PathLike[str]],
    tests: Sequence[str | os.PathLike[str]],
    out: str | os.PathLike[str],
    *,
    profile: ProfileOptions | None = None,
    suite: SuiteOptions | None = None,
    plan: PlanOptions | None = None,
    mining: MiningOptions | None = None,
    top: int = 10,
    min_users: int = 5,
    force: bool = False,
    progress: Callable[[str], None] | None = None,
) -> PipelineResult:
    """Run the whole job into ``out`` (created when missing) and return what it wrote."""
    say = progress or (lambda _m: None)
    folder = Path(out)
    if folder.exists() and not folder.is_dir():
        raise ConfigError(f"--out {folder}: exists and is not a folder")
    read_suite(tests, suite or SuiteOptions())  # bad test sources fail now, before any work is written
    try:
        folder.mkdir(parents=True, exist_ok=True)
        # Everything is made in a staging folder inside OUT first; only when every stage worked and
        # no skeleton would overwrite a different file does it move into place. A failure leaves
        # OUT as it was.
        staging = Path(tempfile.mkdtemp(prefix=".gapfinder-run-", dir=folder))
    except OSError as exc:
        raise InputError(f"--out {folder}: cannot write there ({exc.strerror})") from None
    try:
        previous_pytest = folder / "pytest"
        if previous_pytest.is_dir():
            # the skeletons of an earlier run, perhaps implemented since: export merges into them
            shutil.copytree(previous_pytest, staging / "pytest", symlinks=True, ignore=_only_python_files)
        previous_map = folder / "gherkin" / STEPS_MAP
        if previous_map.is_file() and not previous_map.is_symlink():
            (staging / "gherkin").mkdir()
            shutil.copyfile(previous_map, staging / "gherkin" / STEPS_MAP)
        result = _run_into(staging, telemetry, tests, profile, suite, plan, mining, top, min_users, say, force)
        outputs = {name: (staging / name).read_bytes() for name in result.files}
        for name, content in list(outputs.items()):
            existing = folder / name
            if name in _ALWAYS_REPLACED or not existing.is_file() or force or existing.read_bytes() == content:
                continue
            # a skeleton edited since the last run is someone's work: keep it and say so
            del outputs[name]
            result.kept.append(name)
        result.files = [name for name in result.files if name in outputs]
        by_folder: dict[Path, dict[str, bytes]] = {}
        for name, content in outputs.items():
            by_folder.setdefault((folder / name).parent, {})[Path(name).name] = content
        os.replace(staging / "workspace.duckdb", check_target(folder, "workspace.duckdb", option="--out"))
        for target_folder, files in sorted(by_folder.items()):
            write_files(target_folder, files, option="--out")
    finally:
        shutil.rmtree(staging, ignore_errors=True)
    final = folder / "workspace.duckdb"
    result.summary["profile"]["workspace"] = str(final)
    return PipelineResult(folder, final, result.files, result.summary, kept=result.kept)


# Regenerated on every run: the summary, the plan's data files, and the registry and steps map,
# which keep every earlier step (export merges new steps into them).
_ALWAYS_REPLACED = frozenset(
    {
        "summary.md",
        "gapfinder_plan.json",
        "gapfinder_plan.csv",
        "pytest/gapfinder_steps.py",
        "gherkin/gapfinder_steps.yaml",
    }
)


def _only_python_files(folder: str, names: list[str]) -> list[str]:
    """shutil.copytree's ignore: copy the .py files of the folder itself, nothing else."""
    return [n for n in names if not n.endswith(".py") or os.path.islink(os.path.join(folder, n))]


def _run_into(
    folder: Path,
    telemetry: Sequence[str | os.PathLike[str]],
    tests: Sequence[str | os.PathLike[str]],
    profile: ProfileOptions | None,
    suite: SuiteOptions | None,
    plan: PlanOptions | None,
    mining: MiningOptions | None,
    top: int,
    min_users: int,
    say: Callable[[str], None],
    force: bool = False,
) -> PipelineResult:
    workspace = folder / "workspace.duckdb"
    say("profiling telemetry")
    profile_summary = profile_telemetry(telemetry, workspace, profile or ProfileOptions(), min_users=min_users)
    # The later stages hold arrays in Python beside DuckDB (gap evidence: one row per candidate and
    # distinct path, 12M at 10M high-entropy events), so DuckDB gets part of the limit there.
    with Workspace(workspace, memory_limit=memory_limit_share(LATER_STAGES_MEMORY_SHARE)) as ws:
        say("reading the suite")
        suite_summary = load_suite(ws, tests, suite or SuiteOptions())
        say("mining journeys")
        mined = mine_workspace(ws, mining or MiningOptions())
        say("ranking gaps")
        ranking_began = stage_clock()
        plan_options = plan or PlanOptions(min_users=min_users)
        wanted = GapOptions(top=top, min_users=min_users, tz=plan_options.tz)
        for_plan = plan_gap_options(plan_options)
        # Gap evidence is the heaviest step after profiling: computed once for the listing and the
        # plan when both search the same pool (ranks do not move with `top`, so each takes a prefix).
        shared = wanted.pool_size() == for_plan.pool_size() and dataclasses.replace(
            wanted, top=1
        ) == dataclasses.replace(for_plan, top=1)
        if shared:
            found = find_gaps(ws, dataclasses.replace(wanted, top=max(top, plan_options.candidates)))
            gaps = {**found, "gaps": found["gaps"][:top]}
        else:
            found = None
            gaps = find_gaps(ws, wanted)
        unused = unused_tests(ws, min_users=min_users)
        # Gap ranking writes no table; its row in `runs` says how long it took.
        ranking = StageRecord(
            "gaps",
            inputs=[str(workspace)],
            parameters={
                "top": top,
                "min_users": min_users,
                "pool": wanted.pool_size(),
                "shared_with_plan": bool(shared),
            },
            row_counts={"gaps": len(gaps["gaps"]), "unused_tests": len(unused["unused"])},
            began=ranking_began,
        )
        with ws.stage(ranking):
            pass
        ws.forget_derived("sequences")  # the plan reads the k-paths kept for gap ranking, not the paths
        say("planning scenarios")
        planned = make_plan(ws, plan_options, gaps=found)
    files: list[str] = []
    if planned["scenarios"]:
        say("exporting skeletons")
        for fmt, sub in (("pytest", "pytest"), ("gherkin", "gherkin"), ("json", "."), ("csv", ".")):
            exported = export_plan(planned, folder / sub, as_format=fmt, force=force or fmt != "pytest")
            files += [str(Path(sub) / f) if sub != "." else f for f in exported.files]
    summary = {
        "profile": profile_summary,
        "suite": suite_summary,
        "patterns": {"found": len(mined.patterns), "min_support_sessions": mined.min_support_sessions},
        "gaps": gaps,
        "unused": unused,
        "plan": planned,
    }
    write_files(folder, {"summary.md": render_summary_markdown(summary)}, option="--out")
    files.append("summary.md")
    return PipelineResult(folder, workspace, sorted(files), summary)


def _reading_line(reading: dict[str, Any]) -> str:
    """How the telemetry was read: format, conventions used, and what the feature keys did."""
    from gapfinder.sources.feature_keys import describe_feature_keys

    parts = [
        f"Telemetry: {reading.get('rows_read', 0):,} rows of {reading.get('format', '')} ({reading.get('label', '')})"
    ]
    if reading.get("rejected"):
        parts.append(f"rows left out: {rejected_rows_text(reading['rejected'])}")
    parts += list(reading.get("notes") or [])
    if reading.get("feature_keys"):
        parts.append(describe_feature_keys(reading["feature_keys"]))
    return markdown_text("; ".join(parts) + ".")


def _suite_line(suite: dict[str, Any]) -> str:
    left_out = ", ".join(f"{n:,} {reason}" for reason, n in sorted((suite.get("left_out") or {}).items()))
    return (
        f"Suite: {suite['counted_test_count']:,} of {suite['test_count']:,} tests count as exercising"
        + (f" (left out: {left_out})" if left_out else "")
        + f"; {suite['mapped_step_count']:,} steps mapped to field events, {suite['unmapped_step_count']:,} unmapped."
    )


def _plan_section(plan: dict[str, Any]) -> list[str]:
    """Next sprint's scenarios, first on the page: what to test next and why."""
    lines = [
        f"## Next sprint: {len(plan['scenarios'])} new scenario(s), budget {plan['budget']} {plan['cost']}",
        "",
        f"Objective: field occurrences of untested {plan['objective']}; the plan adds {_pct(plan['gain_share'])} "
        f"of them. Guarantee: {plan['guarantee']}.",
        "",
        "| # | scenario | steps | adds | closes gaps | why |",
        "|---|---|---|---|---|---|",
    ]
    for s in plan["scenarios"]:
        lines.append(
            f"| {s['scenario']} | {_path(s['path'])} | {s['steps']} | {_pct(s['gain_share'])} | "
            f"{', '.join('#' + str(g) for g in s['gaps'])} | {markdown_text(s['reason'])} |"
        )
    lines += [
        "",
        "Skeletons: `pytest/` (steps in `gapfinder_steps.py`), `gherkin/`, `gapfinder_plan.json`, "
        "`gapfinder_plan.csv`.",
        "",
    ]
    return lines


def render_summary_markdown(summary: dict[str, Any]) -> str:
    """The one-page Markdown summary of a run (coverage, gaps, plan, unused tests, privacy)."""
    profile, suite, gaps, plan, unused = (summary[k] for k in ("profile", "suite", "gaps", "plan", "unused"))
    sessions = profile["sessions"]
    reading = profile["reading"]
    lines = [
        "# Test coverage against real usage",
        "",
        f"{sessions['count']:,} sessions of {sessions['users']:,} users ({reading.get('first_ts', '')[:10]} to "
        f"{reading.get('last_ts', '')[:10]}), against {suite['test_count']} tests with {suite['step_count']} steps. "
        f"Automated traffic left out: {profile['automated']['users']} account(s), {profile['automated']['sessions']:,} "
        "sessions.",
        "",
        _reading_line(reading),
        "",
        _suite_line(suite),
        "",
    ]
    lines += _plan_section(plan)
    lines += [
        "## Coverage now and after the plan",
        "",
        "Share of field sessions' items that the tests exercise (strict: contiguous runs).",
        "",
        "| metric | now, by sessions | after the plan | now, distinct items |",
        "|---|---|---|---|",
    ]
    for metric, figures in plan["coverage"].items():
        lines.append(
            f"| {metric} | {_pct(figures['before'])} | {_pct(figures['after'])} "
            f"| {_pct(figures['before_unweighted'])} |"
        )
    lines += [
        "",
        f"## The {len(gaps['gaps'])} untested paths most worth a test",
        "",
        "Score: lower bound of the 95 % interval of the share of sessions, times an error risk factor (1–4).",
        "",
        "| # | path | sessions | users | share (95 % interval) | errors on its steps | trend | in the plan |",
        "|---|---|---|---|---|---|---|---|",
    ]
    for g in gaps["gaps"]:
        lines.append(
            f"| {g['rank']} | {_path(g['path'])} | {g['sessions']:,} | {g['users']:,} | {_pct(g['share'])} "
            f"({100 * g['share_low']:.1f}–{100 * g['share_high']:.1f}) | {_pct(g['error_rate'])} "
            f"| {g['trend']['label']} | {markdown_text(decision_of(plan, g['rank'], g['path']))} |"
        )
    lines += ["", f"{gaps['suppressed']:,} candidate paths held back: fewer than {gaps['min_users']} users.", ""]
    if unused.get("not_read"):
        lines += [
            f"## Tests not read ({len(unused['not_read'])})",
            "",
            "Their steps match no field event, so what they exercise is unknown; they are not judged rare.",
            "Map the steps with `--steps-map` or `--aliases` (`gapfinder align` suggests events), or record a test "
            "run's telemetry (`--events`).",
            "",
            "| test | steps | unmapped |",
            "|---|---|---|",
        ]
        for r in unused["not_read"][:30]:
            lines.append(f"| {markdown_code(r['test_id'])} | {r['steps']} | {r['unmapped_steps']} |")
        if len(unused["not_read"]) > 30:
            lines.append(f"| … and {len(unused['not_read']) - 30} more | | |")
        lines.append("")
    lines += ["## Tests the field rarely takes", ""]
    if unused["unused"]:
        lines += ["| test | journey | sessions | share |", "|---|---|---|---|"]
        for r in unused["unused"]:
            counts = (
                (f"{r['sessions']:,}", f"{100 * r['share']:.2f} %")
                if r["sessions"] is not None
                else (f"fewer than {unused['min_users']} users", "")
            )
            lines.append(f"| {markdown_code(r['test_id'])} | {_path(r['path'])} | {counts[0]} | {counts[1]} |")
        lines += ["", "Candidates to run less often, not to delete."]
    else:
        lines.append(f"None: every test's journey is in more than {_pct(unused['max_share'])} of sessions.")
    lines += [
        "",
        "## Privacy",
        "",
        privacy_note(gaps["min_users"], bool(reading.get("pseudonymized"))),
        "",
    ]
    return "\n".join(lines)
