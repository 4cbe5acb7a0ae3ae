"""The Jinja2 environment: template search path, filters and Markdown.

Templates are looked up in order: user folders (``--templates DIR`` or a
``templates/`` folder beside the projects), then the built-in templates.
A user template can extend the built-in one it replaces with the ``base/``
prefix, e.g. ``{% extends "base/report.html" %}``.
"""

from __future__ import annotations

from functools import lru_cache
from pathlib import Path

from markupsafe import Markup

from . import fmt, formula


def builtin_templates() -> Path:
    """The built-in templates: inside the installed package, or the source tree's ``templates/``."""
    here = Path(__file__).resolve().parent.parent
    packaged = here / "templates"
    if packaged.is_dir():
        return packaged
    return here.parent / "templates"


def template_files(user_dirs: tuple[Path, ...] = ()) -> list[Path]:
    """Every template file that a render may read (for build hashes), sorted."""
    files = []
    for d in (*user_dirs, builtin_templates()):
        if d.is_dir():
            files += [p for p in sorted(d.rglob("*")) if p.is_file() and "__pycache__" not in p.parts]
    return files


@lru_cache(maxsize=1)
def _markdown():
    from markdown_it import MarkdownIt

    md = MarkdownIt("commonmark", {"html": False, "linkify": False, "typographer": False})
    safe = ("http:", "https:", "mailto:", "#")

    def validate_link(url: str) -> bool:
        u = url.strip().lower()
        return u.startswith(safe) or (":" not in u.split("/")[0])

    md.validateLink = validate_link
    return md


def markdown(text: str | None) -> Markup:
    if not text:
        return Markup("")
    return Markup(_markdown().render(text))


@lru_cache(maxsize=8)
def environment(user_dirs: tuple[Path, ...] = ()):
    import jinja2

    builtin = builtin_templates()
    search = [str(d) for d in user_dirs if d.is_dir()] + [str(builtin)]
    loader = jinja2.ChoiceLoader([
        jinja2.FileSystemLoader(search),
        jinja2.PrefixLoader({"base": jinja2.FileSystemLoader(str(builtin))}),
    ])
    env = jinja2.Environment(loader=loader, autoescape=True, undefined=jinja2.StrictUndefined,
                             trim_blocks=True, lstrip_blocks=True, keep_trailing_newline=True)
    env.filters.update({
        "qty": fmt.qty, "num": fmt.num, "kvar": fmt.kvar, "pf": fmt.pf, "cplx": fmt.cplx,
        "md": markdown, "pct": lambda x, sig=3: f"{fmt.num(x * 100, sig)} %",
    })
    env.globals.update({
        "formula": formula.formula_html, "substituted": formula.substituted_html,
        "result": formula.result_html, "is_note": formula.is_note, "symbol": lambda s: Markup(formula.symbol(s)),
    })
    return env


def render(template: str, user_dirs: tuple[Path, ...] = (), **context) -> str:
    return environment(tuple(user_dirs)).get_template(template).render(**context)
