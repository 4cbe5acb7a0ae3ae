"""The build: every ``*/project.yaml`` under SRC to HTML, PDF and JSON under DIR.

Order of one project's build (compute everything, then write):
  1. load and validate ``project.yaml``           (reportgen.project)
  2. compute the design                           (reportgen.design → reportgen.calc)
  3. make figures, HTML, PDF and JSON in memory / a staging folder (reportgen.render)
  4. publish the staging folder in place of the old outputs, as a whole
A project with bad input stops at 1 or 2: its problems are reported and its
earlier outputs stay as they were. The site index is written last, from the
``results.json`` of every published project.
"""

from __future__ import annotations

import os
import shutil
from dataclasses import dataclass, field
from pathlib import Path

from . import __version__
from .errors import InputError, ReportgenError
from .project import PROJECT_FILE, Project, load_project

STATE_DIR = ".reportgen"


@dataclass
class Options:
    templates: tuple[Path, ...] = ()
    pdf: bool = True
    pdf_variant: str | None = None


@dataclass
class Outcome:
    name: str
    ok: bool
    problems: list[str] = field(default_factory=list)
    worst: str = "pass"
    skipped: bool = False


def find_projects(src: Path) -> list[Path]:
    """Project folders: SRC itself when it holds project.yaml, else its subfolders that do, sorted."""
    src = Path(src)
    if (src / PROJECT_FILE).is_file():
        return [src]
    return sorted(p.parent for p in src.glob(f"*/{PROJECT_FILE}") if p.is_file())


def build_date(project: Project) -> str:
    """The date printed in outputs: the project's date, else SOURCE_DATE_EPOCH, else 1970-01-01."""
    if project.model.project.date:
        return project.model.project.date.isoformat()
    epoch = os.environ.get("SOURCE_DATE_EPOCH")
    import datetime as dt

    try:
        return dt.datetime.fromtimestamp(int(epoch or 0), dt.timezone.utc).date().isoformat()
    except ValueError:
        return "1970-01-01"


def render_project(project: Project, stage: Path, options: Options) -> "object":
    """Compute and write one project's outputs into the empty folder ``stage``."""
    from . import design as design_mod
    from . import results
    from .render import figures, templating

    d = design_mod.compute(project)
    data = results.to_dict(d)
    fig_dir = stage / "figures"
    fig_dir.mkdir(parents=True)
    svgs = {
        "triangle": figures.power_triangle(d.total_s_va.real, d.total_s_va.imag, d.after.q_after_var,
                                           d.sizing.q_installed_var),
        "phasors": figures.phasor_diagram(d.phasors, d.phases),
    }
    for key, make in d.figures.items():
        svgs[key] = make(d)
    fig_paths = {}
    for key, svg in svgs.items():
        (fig_dir / f"{key}.svg").write_text(svg, encoding="utf-8")
        fig_paths[key] = f"figures/{key}.svg"
    date = build_date(project)
    ctx = dict(d=d, r=data, figures=fig_paths,
               build={"version": __version__, "date": date, "source": None})
    html = templating.render("report.html", options.templates, root="../", inline_css=None, **ctx)
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
        from markupsafe import Markup

        from .render import pdf

        css = (templating_asset("style.css", options.templates)).read_text(encoding="utf-8")
        html_pdf = templating.render("report.html", options.templates, root="", inline_css=Markup(css), **ctx)
        pdf.write_pdf(html_pdf, stage, stage / f"{project.name}.pdf", title=project.model.project.title,
                      date_iso=date + "T00:00:00+00:00", variant=options.pdf_variant)
    return d


def templating_asset(name: str, user_dirs: tuple[Path, ...]) -> Path:
    from .render.templating import builtin_templates

    for d in (*user_dirs, builtin_templates()):
        p = Path(d) / "assets" / name
        if p.is_file():
            return p
    raise ReportgenError(f"template asset {name} not found")


def publish(stage: Path, final: Path) -> None:
    """Put ``stage`` in place of ``final`` as a whole (old set or new set, never a mix)."""
    old = final.with_name(f".{final.name}.old")
    if old.exists():
        shutil.rmtree(old)
    if final.exists():
        os.replace(final, old)
    os.replace(stage, final)
    if old.exists():
        shutil.rmtree(old)


def build_one(folder: Path, out: Path, options: Options, display_base: Path | None = None) -> Outcome:
    name = folder.name
    try:
        project = load_project(folder, display_base)
        stage = out / STATE_DIR / "stage" / f"{name}.{os.getpid()}"
        if stage.exists():
            shutil.rmtree(stage)
        stage.parent.mkdir(parents=True, exist_ok=True)
        try:
            d = render_project(project, stage, options)
            publish(stage, out / name)
        finally:
            if stage.exists():
                shutil.rmtree(stage, ignore_errors=True)
        return Outcome(name, True, worst=d.worst_status)
    except InputError as exc:
        return Outcome(name, False, [str(p) for p in exc.problems], worst="fail")


def write_assets(out: Path, options: Options) -> None:
    (out / "assets").mkdir(parents=True, exist_ok=True)
    for name in ("style.css", "table.js"):
        try:
            src = templating_asset(name, options.templates)
        except ReportgenError:
            continue
        data = src.read_bytes()
        dest = out / "assets" / name
        if not dest.exists() or dest.read_bytes() != data:
            dest.write_bytes(data)


def write_index(out: Path, options: Options) -> None:
    import json

    from .render import templating

    rows = []
    for res in sorted(out.glob("*/results.json")):
        try:
            data = json.loads(res.read_text(encoding="utf-8"))
        except (OSError, ValueError):
            continue
        rows.append({"dir": res.parent.name, "r": data, "bom": (res.parent / "bom.csv").is_file()})
    html = templating.render("index.html", options.templates, root="", rows=rows,
                             build={"version": __version__})
    (out / "index.html").write_text(html, encoding="utf-8")


def build(src: Path, out: Path, options: Options | None = None, log=print) -> list[Outcome]:
    options = options or Options()
    src, out = Path(src), Path(out)
    out.mkdir(parents=True, exist_ok=True)
    folders = find_projects(src)
    if not folders:
        raise ReportgenError(f"no */{PROJECT_FILE} under {src}")
    outcomes = []
    for folder in folders:
        o = build_one(folder, out, options)
        outcomes.append(o)
        if o.ok:
            log(f"built {o.name} [{o.worst}]")
        else:
            for line in o.problems:
                log(line)
    write_assets(out, options)
    write_index(out, options)
    return outcomes
