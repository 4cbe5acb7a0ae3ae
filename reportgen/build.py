"""The build: every ``*/project.yaml`` under SRC to HTML, PDF and JSON under DIR.

One build, in order:
  1. take the output folder's lock, settle any publish a killed build left half-done;
  2. plan: hash every input of every project (its folder, the shared files beside
     the projects, the templates in use, options, reportgen's version, its git
     commit); a project whose hash matches the manifest is skipped;
  3. build the rest, in parallel processes (``--jobs``), each project:
       load and validate → compute → figures, HTML, PDF, JSON into a staging folder
       → publish the staging folder in place of the old outputs, as a whole;
     a project with bad input stops before writing; its earlier outputs stay;
  4. remove outputs of projects that no longer exist; save the manifest;
     write the site index from the manifest.
Nothing here depends on wall-clock time, the order of completion, or where
the folders are, so the same inputs give the same bytes.
"""

from __future__ import annotations

import os
import shutil
import sys
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path

from . import __version__
from .errors import InputError, ReportgenError
from .fsutil import STATE_DIR, BuildLock, atomic_write_text, recover, staged
from .manifest import Manifest, ProjectRecord, folder_files, hash_inputs, output_hashes
from .project import PROJECT_FILE, Project, load_project

MANIFEST_FORMAT_NOTE = "inputs: project folder, shared files beside the projects, templates, options, version, git commit"


@dataclass(frozen=True)
class Options:
    templates: tuple[Path, ...] = ()  # user template folders, searched before the built-in ones
    pdf: bool = True
    pdf_variant: str | None = None
    force: bool = False
    jobs: int | None = None  # None: the CPU count
    git: bool = True  # read the projects' git record (commit, history, changes)

    def fingerprint(self) -> dict:
        return {"pdf": self.pdf, "pdf_variant": self.pdf_variant, "git": self.git}


@dataclass
class Outcome:
    name: str
    ok: bool
    problems: list[str] = field(default_factory=list)
    worst: str = "pass"
    skipped: bool = False
    record: ProjectRecord | None = None


@dataclass
class BuildResult:
    outcomes: list[Outcome]
    removed: list[str]

    @property
    def ok(self) -> bool:
        return all(o.ok for o in self.outcomes)


# --------------------------------------------------------------------------- inputs


def find_projects(src: Path) -> list[Path]:
    """Project folders: SRC itself when it holds project.yaml, else its subfolders that do, sorted."""
    src = Path(src)
    if (src / PROJECT_FILE).is_file():
        return [src]
    return sorted(p.parent for p in src.glob(f"*/{PROJECT_FILE}") if p.is_file())


def template_dirs(src: Path, options: Options) -> tuple[Path, ...]:
    """User template folders: ``--templates`` when given, else ``templates/`` beside the projects."""
    if options.templates:
        return tuple(Path(t).resolve() for t in options.templates)
    beside = Path(src) / "templates"
    if (Path(src) / PROJECT_FILE).is_file():
        beside = Path(src).parent / "templates"
    return (beside.resolve(),) if beside.is_dir() else ()


def shared_files(folder: Path) -> list[Path]:
    """Files beside the project folders (shared catalogs and the like), not in subfolders."""
    parent = folder.parent
    return sorted(p for p in parent.iterdir() if p.is_file() and not p.name.startswith("."))


_CODE_HASH: str | None = None


def code_hash() -> str:
    """A hash of reportgen's own source, so a changed program rebuilds even at the same version."""
    global _CODE_HASH
    if _CODE_HASH is None:
        from .manifest import hash_files

        pkg = Path(__file__).resolve().parent
        _CODE_HASH = hash_files(sorted(p for p in pkg.rglob("*.py") if "__pycache__" not in p.parts), pkg)
    return _CODE_HASH


def input_hash(folder: Path, tmpl: dict[str, Path], options: Options) -> str:
    from . import gitinfo

    files = {f"project/{p.relative_to(folder).as_posix()}": p for p in folder_files(folder)}
    files.update({f"shared/{p.name}": p for p in shared_files(folder)})
    files.update(tmpl)
    extra = {"reportgen": __version__, "code": code_hash(), "options": options.fingerprint(),
             "source_date_epoch": os.environ.get("SOURCE_DATE_EPOCH")}
    if options.git:
        extra["git"] = gitinfo.source_info(folder)
    return hash_inputs(files, extra)


def template_inputs(dirs: tuple[Path, ...]) -> dict[str, Path]:
    from .render.templating import builtin_templates

    out: dict[str, Path] = {}
    for i, d in enumerate((*dirs, builtin_templates())):
        tag = "builtin" if i == len(dirs) else f"user{i}"
        for p in sorted(d.rglob("*")):
            if p.is_file() and "__pycache__" not in p.parts:
                out[f"template/{tag}/{p.relative_to(d).as_posix()}"] = p
    return out


def build_date(project: Project) -> str:
    """The date printed in outputs: the project's date, else SOURCE_DATE_EPOCH, else 1970-01-01."""
    if project.model.project.date:
        return project.model.project.date.isoformat()
    import datetime as dt

    try:
        epoch = int(os.environ.get("SOURCE_DATE_EPOCH") or 0)
        return dt.datetime.fromtimestamp(epoch, dt.timezone.utc).date().isoformat()
    except (ValueError, OverflowError, OSError):
        return "1970-01-01"


# --------------------------------------------------------------------------- one project


def asset_path(name: str, user_dirs: tuple[Path, ...]) -> Path:
    from .render.templating import builtin_templates

    for d in (*user_dirs, builtin_templates()):
        p = Path(d) / "assets" / name
        if p.is_file():
            return p
    raise ReportgenError(f"template asset {name} not found")


def render_project(project: Project, stage: Path, options: Options, user_dirs: tuple[Path, ...] = ()):
    """Compute and write one project's outputs into the empty folder ``stage``; return the Design."""
    from markupsafe import Markup

    from . import design as design_mod
    from . import results
    from .render import figures, templating

    d = design_mod.compute(project)
    data = results.to_dict(d)
    git = {"source": None, "history": [], "changes": None}
    if options.git:
        from . import revisions

        git = revisions.report_context(project.folder, project.raw, data)
    svgs = {
        "triangle": figures.power_triangle(d.total_s_va.real, d.total_s_va.imag, d.after.q_after_var,
                                           d.sizing.q_installed_var),
        "phasors": figures.phasor_diagram(d.phasors, d.phases),
    }
    for key, make in d.figures.items():
        svgs[key] = make(d)
    fig_dir = stage / "figures"
    fig_dir.mkdir(parents=True, exist_ok=True)
    fig_paths = {}
    for key, svg in sorted(svgs.items()):
        (fig_dir / f"{key}.svg").write_text(svg, encoding="utf-8")
        fig_paths[key] = f"figures/{key}.svg"
    date = build_date(project)
    ctx = dict(d=d, r=data, figures=fig_paths, git=git,
               build={"version": __version__, "date": date, "pdf": options.pdf})
    html = templating.render("report.html", user_dirs, root="../", **ctx)
    (stage / "index.html").write_text(html, encoding="utf-8")
    (stage / "results.json").write_text(results.dumps(data), encoding="utf-8")
    for rel, content in sorted(d.files.items()):
        target = stage / rel
        target.parent.mkdir(parents=True, exist_ok=True)
        if isinstance(content, bytes):
            target.write_bytes(content)
        else:
            target.write_text(content, encoding="utf-8")
    if options.pdf:
        from .render import pdf

        css = asset_path("style.css", user_dirs).read_text(encoding="utf-8")
        html_pdf = templating.render("report.html", user_dirs, root="", inline_css=Markup(css), for_pdf=True, **ctx)
        pdf.write_pdf(html_pdf, stage, stage / f"{project.name}.pdf", title=project.model.project.title,
                      date_iso=date + "T00:00:00+00:00", variant=options.pdf_variant)
    return d, data


def summary_of(d, data: dict) -> dict:
    """What the site index and ``check`` need of a project, kept in the manifest."""
    p, c = data["project"], data["correction"]
    return {
        "title": p["title"], "client": p["client"], "revision": p["revision"], "date": p["date"],
        "pf_before": data["total"]["pf"], "pf_after": c["pf_after"], "leading_after": c["leading_after"],
        "q_installed_var": c["q_installed_var"],
        "checks": [{"id": ch["id"], "status": ch["status"], "message": ch["message"]} for ch in data["checks"]],
        "has_bom_csv": "bom.csv" in d.files, "has_pdf": True,
    }


def build_one(folder: Path, out: Path, options: Options, user_dirs: tuple[Path, ...], in_hash: str,
              display_base: Path | None = None) -> Outcome:
    """Build one project and publish it; bad input leaves its earlier outputs as they were."""
    name = folder.name
    try:
        project = load_project(folder, display_base)
        final = out / name
        with staged(final) as stage:
            d, data = render_project(project, stage, options, user_dirs)
            outputs = output_hashes(stage)
        summary = summary_of(d, data)
        summary["has_pdf"] = options.pdf
        return Outcome(name, True, worst=d.worst_status,
                       record=ProjectRecord(in_hash, outputs, d.worst_status, summary))
    except InputError as exc:
        return Outcome(name, False, [str(p) for p in exc.problems], worst="fail")


def _worker(args) -> Outcome:
    folder, out, options, user_dirs, in_hash, display_base = args
    return build_one(folder, out, options, user_dirs, in_hash, display_base)


# --------------------------------------------------------------------------- the site


def write_assets(out: Path, user_dirs: tuple[Path, ...]) -> None:
    for name in ("style.css", "table.js"):
        try:
            src = asset_path(name, user_dirs)
        except ReportgenError:
            continue
        dest = out / "assets" / name
        data = src.read_text(encoding="utf-8")
        if not dest.is_file() or dest.read_text(encoding="utf-8") != data:
            dest.parent.mkdir(parents=True, exist_ok=True)
            atomic_write_text(dest, data)


def write_index(out: Path, manifest: Manifest, user_dirs: tuple[Path, ...]) -> None:
    from .render import templating

    rows = []
    for name in manifest.names():
        rec = manifest.get(name)
        if rec is None or not (out / name / "index.html").is_file():
            continue
        s = dict(rec.summary)
        worst = rec.status or "pass"
        rows.append({"dir": name, "s": s, "worst": worst})
    html = templating.render("index.html", user_dirs, root="", rows=rows, build={"version": __version__})
    index = out / "index.html"
    if not index.is_file() or index.read_text(encoding="utf-8") != html:
        atomic_write_text(index, html)


class Progress:
    """A bar with the project's name on a terminal; one plain line per project otherwise."""

    def __init__(self, total: int, quiet: bool, log):
        self.quiet, self.log = quiet, log
        self.bar = None
        if not quiet and sys.stdout.isatty() and total > 1:
            from rich.progress import BarColumn, MofNCompleteColumn, Progress as Bar, TextColumn

            self.bar = Bar(TextColumn("[bold]building[/] {task.description}"), BarColumn(), MofNCompleteColumn(),
                           transient=True)
            self.task = self.bar.add_task("", total=total)
            self.bar.start()

    def advance(self, name: str) -> None:
        if self.bar is not None:
            self.bar.update(self.task, advance=1, description=name)

    def line(self, text: str) -> None:
        if self.quiet:
            return
        if self.bar is not None:
            self.bar.console.print(text, markup=False, highlight=False)
        else:
            self.log(text)

    def close(self) -> None:
        if self.bar is not None:
            self.bar.stop()


def build(src: Path, out: Path, options: Options | None = None, log=print, quiet: bool = False) -> BuildResult:
    """Build the site; see the module docstring for the order of work."""
    options = options or Options()
    src, out = Path(src), Path(out)
    folders = find_projects(src)
    if not folders:
        raise ReportgenError(f"no */{PROJECT_FILE} under {src}")
    names = [f.name for f in folders]
    dupes = sorted({n for n in names if names.count(n) > 1})
    if dupes:
        raise ReportgenError(f"two projects share the output name {dupes[0]}")
    out.mkdir(parents=True, exist_ok=True)
    user_dirs = template_dirs(src, options)
    display_base = Path.cwd()
    warn = (lambda msg: None) if quiet else (lambda msg: log(f"warning: {msg}"))
    with BuildLock(out, timeout_s=600.0, on_wait=(lambda m: None) if quiet else log):
        recover(out, on_warning=warn)
        manifest = Manifest.load(out, on_warning=warn)
        tmpl = template_inputs(user_dirs)
        plan, outcomes = [], {}
        for folder in folders:
            h = input_hash(folder, tmpl, options)
            if not options.force and manifest.is_current(folder.name, h, out / folder.name):
                outcomes[folder.name] = Outcome(folder.name, True, skipped=True,
                                                worst=manifest.get(folder.name).status or "pass")
            else:
                plan.append((folder, out, options, user_dirs, h, display_base))
        progress = Progress(len(plan), quiet, log)
        try:
            jobs = options.jobs or os.cpu_count() or 1
            if jobs > 1 and len(plan) > 1:
                import multiprocessing

                ctx = multiprocessing.get_context("fork" if sys.platform.startswith("linux") else "spawn")
                with ProcessPoolExecutor(max_workers=min(jobs, len(plan)), mp_context=ctx) as pool:
                    results = pool.map(_worker, plan)
                    for args, o in zip(plan, results):
                        outcomes[o.name] = o
                        progress.advance(o.name)
                        _report(o, progress)
            else:
                for args in plan:
                    o = _worker(args)
                    outcomes[o.name] = o
                    progress.advance(o.name)
                    _report(o, progress)
        finally:
            progress.close()
        for name, o in outcomes.items():
            if o.ok and o.record is not None:
                manifest.set(name, o.record)
        removed = []
        for name in manifest.names():
            if name not in outcomes:
                target = out / name
                if target.is_dir() and not target.is_symlink():
                    shutil.rmtree(target)
                manifest.remove(name)
                removed.append(name)
                progress.line(f"removed {name} (its project is gone)")
        manifest.save()
        write_assets(out, user_dirs)
        write_index(out, manifest, user_dirs)
    ordered = [outcomes[n] for n in sorted(outcomes)]
    return BuildResult(ordered, removed)


def _report(o: Outcome, progress: Progress) -> None:
    if o.ok:
        progress.line(f"built {o.name} [{o.worst}]")
    else:
        for line in o.problems:
            print(line, file=sys.stderr)
        progress.line(f"failed {o.name}: bad input; earlier outputs kept")
