"""Command line: parse flags, call the library, print, exit with the right code.

Exit codes: 0 success; 1 a build or check failed; 2 bad input (every problem
printed as ``file:line:col: message``).
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from . import __version__
from .errors import InputError, ReportgenError


def _project_folder(arg: str) -> Path:
    p = Path(arg)
    return p.parent if p.name.endswith((".yaml", ".yml")) else p


def cmd_calc(args) -> int:
    from . import design, results
    from .project import load_project

    project = load_project(_project_folder(args.project))
    d = design.compute(project)
    data = results.to_dict(d)
    if args.json:
        sys.stdout.write(results.dumps(data))
        return 0
    from .render.fmt import kvar, pf, qty

    out = [f"{d.model.project.title}  ({d.v_v:g} V, {d.phases}-phase, {d.f_hz:g} Hz)", ""]
    w = max(len(l["name"]) for l in data["loads"] + [data["total"]])
    fmt_row = "{:<%d}  {:>12}  {:>13}  {:>12}  {:>14}  {:>10}" % w
    out.append(fmt_row.format("load", "P", "Q", "S", "PF", "I"))
    for l in data["loads"] + [data["total"]]:
        out.append(fmt_row.format(l["name"], qty(l["p_w"], "W"), qty(l["q_var"], "var"), qty(l["s_va"], "VA"),
                                  pf(l["pf"], l["leading"]), qty(l["current_a"], "A")))
    c = data["correction"]
    out += ["", f"target PF {c['target_pf']:.3f}: {kvar(c['q_required_var'])} needed, "
                f"{kvar(c['q_installed_var'])} installed "
                + ("(" + ", ".join(f"{u['count']} x " + (qty(u["c_f"], "F") if u.get("c_f") else kvar(u["q_rated_var"]))
                               for u in c["units"]) + ")"
                   if c["units"] else ""),
            f"after: PF {pf(c['pf_after'], c['leading_after'])}, S {qty(c['s_after_va'], 'VA')}, "
            f"I {qty(c['current_after_a'], 'A')}, feeder loss -{c['loss_reduction_fraction'] * 100:.1f} %", ""]
    for ch in data["checks"]:
        out.append(f"[{ch['status']}] {ch['id']}: {ch['message']}")
    print("\n".join(out).replace("\u00a0", " ").replace("\u2009", " "))
    return 0


def _options(args):
    from .build import Options

    return Options(templates=tuple(Path(t) for t in (getattr(args, "templates", None) or [])),
                   pdf=not getattr(args, "no_pdf", False), pdf_variant=getattr(args, "pdf_variant", None),
                   force=getattr(args, "force", False), jobs=getattr(args, "jobs", None))


def cmd_build(args) -> int:
    from .build import build

    result = build(Path(args.src), Path(args.out), _options(args), log=print, quiet=args.quiet)
    if not args.quiet:
        built = sum(1 for o in result.outcomes if o.ok and not o.skipped)
        skipped = sum(1 for o in result.outcomes if o.skipped)
        failed = sum(1 for o in result.outcomes if not o.ok)
        print(f"{built} built, {skipped} up to date, {failed} failed, {len(result.removed)} removed")
    return 0 if result.ok else 2


def cmd_check(args) -> int:
    from .check import check_site

    rep = check_site(Path(args.src), Path(args.out), _options(args), fail_on=args.fail_on)
    for line in rep.findings:
        print(line)
    if rep.ok:
        print(f"{rep.projects} project(s) up to date; no check at or above '{args.fail_on}'")
        return 0
    return 1


def cmd_diff(args) -> int:
    import json

    from . import revisions

    revs = args.revs
    if len(revs) > 2:
        raise ReportgenError("diff takes at most two revisions before the project")
    folder = _project_folder(args.project)
    if not (folder / "project.yaml").is_file():
        raise ReportgenError(f"no project.yaml in {folder}")
    if len(revs) == 0:
        base = revisions.default_base(folder)
        if base is None:
            raise ReportgenError(f"{folder}: no earlier commit to compare with (is it in a git repository?)")
        a, b = revisions.side_at(folder, base), revisions.side_at(folder, None)
    elif len(revs) == 1:
        a, b = revisions.side_at(folder, revs[0]), revisions.side_at(folder, None)
    else:
        a, b = revisions.side_at(folder, revs[0]), revisions.side_at(folder, revs[1])
    diff = revisions.compare(a, b)
    if args.json:
        sys.stdout.write(json.dumps(diff, indent=2, sort_keys=True, default=str) + "\n")
    else:
        sys.stdout.write(revisions.text(diff))
    return 0


def cmd_init(args) -> int:
    import datetime as dt

    from .scaffold import new_project

    folder = new_project(Path(args.parent), args.name, dt.date.today().isoformat())
    print(f"created {folder / 'project.yaml'}; build it with: reportgen build {args.parent} --out site")
    return 0


def cmd_serve(args) -> int:
    from .serve import serve

    out = Path(args.out) if args.out else Path(args.src).resolve().parent / "site"
    serve(Path(args.src), out, _options(args), port=args.port)
    return 0


def cmd_schema(args) -> int:
    import json

    from .schema import json_schema

    sys.stdout.write(json.dumps(json_schema(), indent=2, sort_keys=True) + "\n")
    return 0


def parser() -> argparse.ArgumentParser:
    ap = argparse.ArgumentParser(prog="reportgen", description="Power-factor-correction design reports "
                                 "from YAML project files.")
    ap.add_argument("--version", action="version", version=f"reportgen {__version__}")
    sub = ap.add_subparsers(dest="command", required=True)

    p = sub.add_parser("calc", help="compute one project and print a summary or JSON")
    p.add_argument("project", help="a project folder or its project.yaml")
    p.add_argument("--json", action="store_true", help="print the results as JSON (SI units)")
    p.set_defaults(func=cmd_calc)

    def site_flags(p, out_required=True):
        p.add_argument("src", help="a folder of project folders (or one project folder)")
        p.add_argument("--out", required=out_required, help="output folder")
        p.add_argument("--templates", action="append",
                       help="a folder of template overrides (repeatable; default: templates/ beside the projects)")
        p.add_argument("--no-pdf", action="store_true", help="skip PDF output")
        p.add_argument("--pdf-variant", choices=["pdf/a-3b"], help="archival PDF variant")

    p = sub.add_parser("build", help="build the HTML/PDF/JSON site for every project under SRC")
    site_flags(p)
    p.add_argument("--force", action="store_true", help="rebuild every project, changed or not")
    p.add_argument("--jobs", type=int, default=None, help="parallel processes (default: the CPU count)")
    p.add_argument("--quiet", action="store_true", help="print only problems")
    p.set_defaults(func=cmd_build)

    p = sub.add_parser("check", help="exit 1 if any output is stale or missing or any design check fails")
    site_flags(p)
    p.add_argument("--fail-on", choices=["fail", "warn"], default="fail", help="lowest check status that fails")
    p.set_defaults(func=cmd_check)

    p = sub.add_parser("diff", help="what changed in inputs and results between two revisions")
    p.add_argument("revs", nargs="*", metavar="REV", help="commits or project.revision labels (default: the "
                   "previous commit and the working copy)")
    p.add_argument("project")
    p.add_argument("--json", action="store_true")
    p.set_defaults(func=cmd_diff)

    p = sub.add_parser("init", help="create a new project folder with a commented project.yaml")
    p.add_argument("name")
    p.add_argument("--parent", default=".", help="where to create it (default: here)")
    p.set_defaults(func=cmd_init)

    p = sub.add_parser("serve", help="build, serve on 127.0.0.1, rebuild on change")
    site_flags(p, out_required=False)
    p.add_argument("--port", type=int, default=8000)
    p.set_defaults(func=cmd_serve, force=False, jobs=None)

    p = sub.add_parser("schema", help="print the JSON Schema of project.yaml")
    p.set_defaults(func=cmd_schema)
    return ap


def main(argv: list[str] | None = None) -> int:
    args = parser().parse_args(argv)
    try:
        return args.func(args)
    except InputError as exc:
        print(exc.show(), file=sys.stderr)
        return exc.exit_code
    except ReportgenError as exc:
        print(f"reportgen: {exc.show()}", file=sys.stderr)
        return exc.exit_code
    except KeyboardInterrupt:
        return 130
    except Exception as exc:  # a bug: say so in one line, never a traceback
        print(f"reportgen: internal error: {type(exc).__name__}: {exc} (please report it with the project "
              "file that caused it)", file=sys.stderr)
        return 70


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
