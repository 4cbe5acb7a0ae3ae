"""Load a project folder: read ``project.yaml``, validate it, locate every problem.

``load_project`` returns a :class:`Project` (the validated model plus where it
came from) or raises :class:`reportgen.errors.InputError` listing every
problem as ``file:line:col: message``.
"""

from __future__ import annotations

import difflib
import typing
from dataclasses import dataclass
from pathlib import Path

from pydantic import BaseModel, ValidationError

from . import schema, yamlload
from .errors import InputError, Problem

PROJECT_FILE = "project.yaml"


@dataclass(frozen=True)
class Project:
    """A validated project and its origin."""

    name: str  # folder name: the output path component
    folder: Path
    file: Path
    display: str  # the file as shown in messages
    model: schema.ProjectFile
    raw: dict  # the loaded YAML data (for diffs of inputs)
    locations: yamlload.Locations


def display_path(path: Path, base: Path | None = None) -> str:
    base = Path(base) if base else Path.cwd()
    try:
        return str(path.resolve().relative_to(base.resolve()))
    except ValueError:
        return str(path)


def load_project(folder: Path, display_base: Path | None = None) -> Project:
    folder = Path(folder)
    file = folder / PROJECT_FILE
    display = display_path(file, display_base)
    try:
        data_bytes = file.read_bytes()
    except FileNotFoundError:
        raise InputError([Problem(display, 1, 1, f"no {PROJECT_FILE} in this folder")]) from None
    except OSError as exc:
        raise InputError([Problem(display, 1, 1, f"cannot read file: {exc.strerror}")]) from None
    data, locs = yamlload.load(data_bytes, display)
    return validate(data, locs, folder, file, display)


def validate(data, locs: yamlload.Locations, folder: Path, file: Path, display: str) -> Project:
    if not isinstance(data, dict):
        raise InputError([Problem(display, 1, 1, "a project file is a mapping of keys (format, project, "
                                                 "system, loads, correction)")])
    fmt = data.get("format")
    if fmt is not None and fmt not in schema.FORMATS:
        raise InputError([locs.problem(("format",), f"format {fmt!r} is not known to this version "
                                       f"of reportgen (it reads format {', '.join(map(str, schema.FORMATS))})")])
    try:
        model = schema.ProjectFile.model_validate(data)
    except ValidationError as exc:
        raise InputError(problems_from(exc, locs)) from None
    return Project(folder.name, folder, file, display, model, data, locs)


# --------------------------------------------------------------------------- error mapping


def problems_from(exc: ValidationError, locs: yamlload.Locations) -> list[Problem]:
    problems = []
    for err in exc.errors(include_url=False):
        loc = tuple(err["loc"])
        problems.append(_problem(err, loc, locs))
    return problems


def dotted(loc: tuple) -> str:
    out = ""
    for part in loc:
        if isinstance(part, int):
            out += f"[{part}]"
        else:
            out += ("." if out else "") + str(part)
    return out or "the top level"


def _problem(err: dict, loc: tuple, locs: yamlload.Locations) -> Problem:
    kind = err["type"]
    where = dotted(loc)
    if kind == "extra_forbidden":
        key = loc[-1]
        allowed = _allowed_keys(loc[:-1])
        hint = ""
        close = difflib.get_close_matches(str(key), allowed, n=1, cutoff=0.6)
        if close:
            hint = f" (did you mean '{close[0]}'?)"
        parent = dotted(loc[:-1])
        msg = f"unknown key '{key}' in {parent}{hint}; allowed keys: {', '.join(allowed)}"
        return locs.problem(loc, msg, at_key=True)
    if kind == "missing":
        parent = dotted(loc[:-1])
        return locs.problem(loc[:-1], f"missing required key '{loc[-1]}' in {parent}")
    msg = err["msg"]
    if kind in ("quantity", "fraction", "range", "exactly_one"):
        return locs.problem(loc, f"{where}: {msg}")
    if kind in ("string_too_long", "too_long"):
        n = err.get("ctx", {}).get("max_length")
        unit = "characters" if isinstance(err.get("input"), str) else "items"
        return locs.problem(loc, f"{where}: too long (at most {n} {unit})")
    if kind in ("string_too_short", "too_short"):
        n = err.get("ctx", {}).get("min_length")
        if n == 1:
            return locs.problem(loc, f"{where}: must not be empty")
        return locs.problem(loc, f"{where}: too short (at least {n})")
    if kind == "literal_error":
        return locs.problem(loc, f"{where}: {msg.replace('Input should be', 'must be')} (got {err['input']!r})")
    msg = msg.replace("Input should be", "must be").replace("Value error, ", "")
    return locs.problem(loc, f"{where}: {msg}")


def _allowed_keys(loc: tuple) -> list[str]:
    model = _model_at(loc)
    if model is None:
        return []
    return list(model.model_fields)


def _model_at(loc: tuple):
    cur: typing.Any = schema.ProjectFile
    for part in loc:
        cur = _unwrap(cur)
        if isinstance(part, int):
            args = typing.get_args(cur)
            if not args:
                return None
            cur = args[0]
            continue
        if not (isinstance(cur, type) and issubclass(cur, BaseModel)):
            return None
        field = cur.model_fields.get(part)
        if field is None:
            return None
        cur = field.annotation
    cur = _unwrap(cur)
    return cur if isinstance(cur, type) and issubclass(cur, BaseModel) else None


def _unwrap(tp):
    while True:
        origin = typing.get_origin(tp)
        if origin is typing.Union:
            args = [a for a in typing.get_args(tp) if a is not type(None)]
            tp = args[0]
            continue
        if origin is typing.Annotated:
            tp = typing.get_args(tp)[0]
            continue
        return tp


# --------------------------------------------------------------------------- data files


def shared_roots(project: Project) -> list[Path]:
    """Folders a project may read data files from: its own folder, then the folder holding the
    projects (where shared catalogs live, e.g. ``catalog: ../catalog.yaml``)."""
    return [project.folder, project.folder.parent]


def resolve_data_file(project: Project, rel: object, yaml_path: tuple, *, shared: bool = False,
                      suffixes: tuple[str, ...] = ()) -> tuple[Path, str]:
    """Resolve a file named in project.yaml; return (path, name to show in messages).

    The name must be relative; it must resolve (symlinks followed) inside the project folder,
    or with ``shared`` inside the folder holding the projects. Anything else is an InputError
    located at ``yaml_path``.
    """
    from .fsutil import is_within

    def bad(msg: str) -> InputError:
        return InputError([project.locations.problem(yaml_path, msg)])

    if not isinstance(rel, str) or not rel.strip():
        raise bad("a file name is needed here, relative to the project folder")
    if "\x00" in rel or rel.startswith(("/", "\\")) or (len(rel) > 1 and rel[1] == ":"):
        raise bad(f"'{rel}': file names must be relative to the project folder, not absolute")
    if suffixes and not rel.lower().endswith(suffixes):
        raise bad(f"'{rel}': expected a {' or '.join(suffixes)} file")
    path = project.folder / rel
    roots = shared_roots(project) if shared else [project.folder]
    if not any(is_within(path, r) for r in roots):
        where = "the project folder or the folder holding the projects" if shared else "the project folder"
        raise bad(f"'{rel}' is outside {where}; refused")
    if not path.is_file():
        raise bad(f"'{rel}': no such file beside {PROJECT_FILE}")
    return path, display_path(path)
