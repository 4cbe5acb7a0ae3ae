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


def cmd_build(args) -> int:
    from .build import Options, build

    opts = Options(templates=tuple(Path(t) for t in (args.templates or [])), pdf=not args.no_pdf,
                   pdf_variant=args.pdf_variant)
    outcomes = build(Path(args.src), Path(args.out), opts, log=(lambda *a: None) if args.quiet else print)
    if any(not o.ok for o in outcomes):
        if not args.quiet:
            pass
        return 2
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

    p = sub.add_parser("build", help="build the HTML/PDF/JSON site for every project under SRC")
    p.add_argument("src")
    p.add_argument("--out", required=True, help="output folder")
    p.add_argument("--templates", action="append", help="a folder of template overrides (repeatable)")
    p.add_argument("--no-pdf", action="store_true", help="skip PDF output")
    p.add_argument("--pdf-variant", choices=["pdf/a-3b"], help="archival PDF variant")
    p.add_argument("--quiet", action="store_true")
    p.set_defaults(func=cmd_build)

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


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
