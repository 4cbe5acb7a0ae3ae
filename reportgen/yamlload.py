"""Safe YAML loading that remembers where every key and value came from.

The result is plain data (dicts, lists, scalars) for validation, plus a
:class:`Locations` index from a path such as ``("loads", 0, "meter", "power")``
to its 1-based line and column, so every later error can say
``project.yaml:14:14: ...``.

Only the YAML safe subset is constructed (no Python objects). Duplicate keys,
merge keys, excessive nesting and alias expansion beyond a node budget are
refused, so an alias bomb fails fast in bounded memory.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import yaml

from .errors import InputError, Problem

MAX_BYTES = 1_000_000
MAX_DEPTH = 40
MAX_NODES = 200_000

Path_ = tuple  # a path into the data: keys and list indices

#: the only YAML tags a project file may use (the YAML 1.1 core types reportgen reads)
SAFE_TAGS = frozenset("tag:yaml.org,2002:" + t for t in
                      ("str", "int", "float", "bool", "null", "map", "seq", "timestamp", "merge"))


@dataclass
class Locations:
    """Where each value (and each mapping key) of a document starts."""

    file: str
    values: dict[tuple, tuple[int, int]] = field(default_factory=dict)
    keys: dict[tuple, tuple[int, int]] = field(default_factory=dict)

    def of_value(self, path: tuple) -> tuple[int, int]:
        """Position of the value at ``path``, or of its nearest present ancestor."""
        p = tuple(path)
        while p:
            if p in self.values:
                return self.values[p]
            p = p[:-1]
        return self.values.get((), (1, 1))

    def of_key(self, path: tuple) -> tuple[int, int]:
        """Position of the key that names ``path`` (falls back to the value)."""
        p = tuple(path)
        if p in self.keys:
            return self.keys[p]
        return self.of_value(p)

    def problem(self, path: tuple, message: str, *, at_key: bool = False) -> Problem:
        line, col = self.of_key(path) if at_key else self.of_value(path)
        return Problem(self.file, line, col, message)


def _pos(node: yaml.Node) -> tuple[int, int]:
    return node.start_mark.line + 1, node.start_mark.column + 1


class _Converter:
    def __init__(self, loader: yaml.SafeLoader, locs: Locations):
        self.loader = loader
        self.locs = locs
        self.nodes = 0
        self.problems: list[Problem] = []

    def convert(self, node: yaml.Node, path: tuple, depth: int):
        self.nodes += 1
        if self.nodes > MAX_NODES:
            raise _Abort(Problem(self.locs.file, *_pos(node),
                                 f"document too large: more than {MAX_NODES} values "
                                 "(alias expansion?); refused"))
        if depth > MAX_DEPTH:
            raise _Abort(Problem(self.locs.file, *_pos(node),
                                 f"nesting deeper than {MAX_DEPTH} levels; refused"))
        self.locs.values.setdefault(path, _pos(node))
        if node.tag not in SAFE_TAGS:
            self.problems.append(Problem(self.locs.file, *_pos(node),
                                         f"the YAML tag '{node.tag}' is not allowed in a project file"))
            return None
        if isinstance(node, yaml.MappingNode):
            out: dict = {}
            for knode, vnode in node.value:
                if knode.tag == "tag:yaml.org,2002:merge":
                    self.problems.append(Problem(self.locs.file, *_pos(knode),
                                                 "merge keys ('<<') are not supported; write the keys out"))
                    continue
                if not isinstance(knode, yaml.ScalarNode):
                    self.problems.append(Problem(self.locs.file, *_pos(knode),
                                                 "a key must be a plain name or number"))
                    continue
                key = self.loader.construct_object(knode)
                if not isinstance(key, (str, int)) or isinstance(key, bool):
                    key = str(knode.value)
                if key in out:
                    first = self.locs.keys.get(path + (key,), (0, 0))
                    self.problems.append(Problem(self.locs.file, *_pos(knode),
                                                 f"duplicate key '{key}' (first given on line {first[0]})"))
                    continue
                self.locs.keys[path + (key,)] = _pos(knode)
                out[key] = self.convert(vnode, path + (key,), depth + 1)
            return out
        if isinstance(node, yaml.SequenceNode):
            return [self.convert(v, path + (i,), depth + 1) for i, v in enumerate(node.value)]
        try:
            return self.loader.construct_object(node)
        except yaml.constructor.ConstructorError as exc:
            self.problems.append(Problem(self.locs.file, *_pos(node), f"cannot read value: {exc.problem}"))
            return None


def _reader_problem(file: str, text: str, exc: "yaml.reader.ReaderError") -> Problem:
    pos = exc.position if isinstance(exc.position, int) else 0
    line = text[:pos].count("\n") + 1
    col = pos - (text.rfind("\n", 0, pos) + 1) + 1
    return Problem(file, line, col, f"character U+{exc.character:04X} is not allowed in a YAML file")


class _Abort(Exception):
    def __init__(self, problem: Problem):
        self.problem = problem


def load(text: str | bytes, file: str) -> tuple[object, Locations]:
    """Parse one YAML document; return (data, locations) or raise InputError."""
    if isinstance(text, bytes):
        if len(text) > MAX_BYTES:
            raise InputError([Problem(file, 1, 1, f"file is larger than {MAX_BYTES // 1000} kB; refused")])
        if b"\x00" in text:
            line = text[: text.index(b"\x00")].count(b"\n") + 1
            raise InputError([Problem(file, line, 1, "file contains binary data (NUL byte)")])
        try:
            text = text.decode("utf-8")
        except UnicodeDecodeError as exc:
            line = text[: exc.start].count(b"\n") + 1
            raise InputError([Problem(file, line, 1, "file is not UTF-8 text")]) from None
    if len(text) > MAX_BYTES:
        raise InputError([Problem(file, 1, 1, f"file is larger than {MAX_BYTES // 1000} kB; refused")])
    if "\x00" in text:
        line = text[: text.index("\x00")].count("\n") + 1
        raise InputError([Problem(file, line, 1, "file contains binary data (NUL byte)")])
    locs = Locations(file)
    try:
        loader = yaml.SafeLoader(text)
    except yaml.reader.ReaderError as exc:
        raise InputError([_reader_problem(file, text, exc)]) from None
    try:
        node = loader.get_single_node()
        if node is None:
            raise InputError([Problem(file, 1, 1, "file is empty")])
        conv = _Converter(loader, locs)
        data = conv.convert(node, (), 0)
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        line, col = (mark.line + 1, mark.column + 1) if mark else (1, 1)
        msg = exc.problem or "YAML syntax error"
        if exc.context:
            msg = f"{exc.context}: {msg}" if "while" not in exc.context else f"{msg} ({exc.context})"
        raise InputError([Problem(file, line, col, f"YAML syntax error: {msg}")]) from None
    except yaml.reader.ReaderError as exc:
        raise InputError([_reader_problem(file, text, exc)]) from None
    except yaml.YAMLError as exc:
        raise InputError([Problem(file, 1, 1, f"YAML error: {exc}")]) from None
    except _Abort as abort:
        raise InputError([abort.problem]) from None
    except RecursionError:
        raise InputError([Problem(file, 1, 1, "nesting too deep; refused")]) from None
    finally:
        loader.dispose()
    if conv.problems:
        raise InputError(conv.problems)
    return data, locs
