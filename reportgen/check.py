"""``reportgen check``: is the built site current, complete and free of failing checks?

Writes nothing. Exit 0 when every project's outputs are present, match the
manifest and were built from the current inputs, and no design check fails
(with ``fail_on="warn"``, no check warns either); exit 1 otherwise, with one
line per finding.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from .build import Options, find_projects, input_hash, template_dirs, template_inputs
from .errors import InputError
from .manifest import Manifest
from .project import load_project

RANK = {"pass": 0, "warn": 1, "fail": 2}


@dataclass
class CheckReport:
    findings: list[str] = field(default_factory=list)
    projects: int = 0

    @property
    def ok(self) -> bool:
        return not self.findings


def check_site(src: Path, out: Path, options: Options | None = None, fail_on: str = "fail") -> CheckReport:
    options = options or Options()
    src, out = Path(src), Path(out)
    rep = CheckReport()
    warnings: list[str] = []
    manifest = Manifest.load(out, on_warning=warnings.append)
    rep.findings += [f"manifest: {w}" for w in warnings]
    tmpl = template_inputs(template_dirs(src, options))
    folders = find_projects(src)
    rep.projects = len(folders)
    names = {f.name for f in folders}
    for folder in folders:
        name = folder.name
        rec = manifest.get(name)
        try:
            load_project(folder)
        except InputError as exc:
            rep.findings += [f"{name}: bad input: {p}" for p in exc.problems]
            continue
        if rec is None:
            rep.findings.append(f"{name}: missing: never built into {out}")
            continue
        outs = manifest.check(name, out / name)
        rep.findings += [f"{name}: {m}" for m in outs.messages(name)]
        if rec.input_hash != input_hash(folder, tmpl, options):
            rep.findings.append(f"{name}: stale: inputs changed since the last build")
        for ch in rec.summary.get("checks", []):
            if RANK.get(ch["status"], 0) >= RANK[fail_on]:
                rep.findings.append(f"{name}: check {ch['id']} {ch['status']}: {ch['message']}")
    for name in manifest.names():
        if name not in names:
            rep.findings.append(f"{name}: stale: outputs of a project that no longer exists")
    if not (out / "index.html").is_file():
        rep.findings.append("index.html: missing")
    return rep
