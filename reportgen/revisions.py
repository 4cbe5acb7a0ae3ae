"""Design records in git: a project's source commit, revision history and changes.

Used by the report (source line, revision history table, "changes since the
previous revision") and by ``reportgen diff``. Outside a git repository every
function returns an empty answer; nothing breaks.
"""

from __future__ import annotations

import tempfile
from dataclasses import dataclass
from pathlib import Path

from . import gitinfo
from .diffing import diff_reports, diff_values
from .errors import InputError, ReportgenError


@dataclass
class Side:
    """One side of a comparison: a label, the raw inputs and the computed results (or the errors)."""

    label: str
    inputs: dict | None
    results: dict | None
    problems: list[str]


def compute_folder(folder: Path, label: str) -> Side:
    """Load and compute a project folder without rendering anything."""
    from . import design, results
    from .project import load_project

    try:
        project = load_project(folder, folder.parent)
        data = results.to_dict(design.compute(project))
        return Side(label, project.raw, data, [])
    except InputError as exc:
        return Side(label, None, None, [p.message for p in exc.problems])


def side_at(folder: Path, rev: str | None) -> Side:
    """The project as it was at ``rev`` (a commit, or a project.revision label); None: working copy."""
    if rev is None:
        return compute_folder(folder, "working copy")
    commit = gitinfo.resolve_rev(folder, rev)
    if commit is None:
        entry = gitinfo.find_revision(folder, rev)
        commit = entry.id if entry else None
    if commit is None:
        raise ReportgenError(f"no commit or project revision '{rev}' for {folder}")
    with tempfile.TemporaryDirectory(prefix="reportgen-rev-") as tmp:
        dest = Path(tmp) / folder.name
        files = gitinfo.materialize(commit, folder, dest)
        if not files:
            return Side(rev, None, None, [f"the project did not exist at {rev}"])
        side = compute_folder(dest, rev)
    side.label = f"{rev[:12]}" if len(rev) >= 12 else rev
    return side


def default_base(folder: Path) -> str | None:
    """The revision a working copy is compared with: the last commit when the folder has local
    changes, otherwise the commit before it."""
    hist = gitinfo.history(folder, limit=2)
    if not hist:
        return None
    if gitinfo.folder_dirty(folder):
        return hist[0].id
    return hist[1].id if len(hist) > 1 else None


IGNORE = ("reportgen_version", "calculations", "results_version")


def compare(a: Side, b: Side) -> dict:
    """Changes of inputs and results from ``a`` to ``b``, JSON-ready."""
    out: dict = {"from": a.label, "to": b.label, "inputs": [], "results": [], "checks": [],
                 "problems": {"from": a.problems, "to": b.problems}}
    if a.inputs is not None and b.inputs is not None:
        out["inputs"] = [c.as_dict() for c in diff_values(_plain(a.inputs), _plain(b.inputs))]
    if a.results is not None and b.results is not None:
        rd = diff_reports(a.results, b.results, ignore=IGNORE)
        out["results"] = [c.as_dict() for c in rd.changes]
        out["checks"] = [t.as_dict() for t in rd.transitions]
    return out


def _plain(x):
    """YAML data with dates as text, for diffing."""
    if isinstance(x, dict):
        return {str(k): _plain(v) for k, v in x.items()}
    if isinstance(x, list):
        return [_plain(v) for v in x]
    if hasattr(x, "isoformat"):
        return x.isoformat()
    return x


def text(diff: dict) -> str:
    """Readable lines for a terminal."""
    from .diffing import Change, Transition, describe

    lines = [f"changes from {diff['from']} to {diff['to']}"]
    for side in ("from", "to"):
        for p in diff["problems"][side]:
            lines.append(f"  ({side}) input problem: {p}")
    groups = (("inputs", "inputs"), ("results", "results"))
    for key, title in groups:
        if diff[key]:
            lines.append(f"{title}:")
            for c in diff[key]:
                lines.append("  " + describe(Change(c["path"], c["kind"], c["before"], c["after"])))
    if diff["checks"]:
        lines.append("checks:")
        for t in diff["checks"]:
            lines.append("  " + describe(Transition(t["name"], t["before"], t["after"])))
    if len(lines) == 1:
        lines.append("  no changes")
    return "\n".join(lines) + "\n"


def report_context(folder: Path, current_inputs: dict, current_results: dict) -> dict:
    """What a project's page shows about its git record."""
    info = gitinfo.source_info(folder)
    if info is None:
        return {"source": None, "history": [], "changes": None}
    hist = [h.as_dict() for h in gitinfo.history(folder, limit=20)]
    changes = None
    base = default_base(folder)
    if base is not None:
        try:
            a = side_at(folder, base)
            b = Side("this revision", current_inputs, current_results, [])
            changes = compare(a, b)
            changes["from"] = base[:10]
        except ReportgenError:
            changes = None
    return {"source": info, "history": hist, "changes": changes}
