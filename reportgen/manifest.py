"""Content hashes of build inputs and outputs, and the build manifest.

The manifest lives at ``DIR/.reportgen/manifest.json``. It is canonical JSON
(sorted keys, fixed indentation, no timestamps), so two builds of the same
inputs write byte-identical manifests. Per project it records:

* ``input_hash``: :func:`hash_inputs` over everything the report read
  (project files, shared catalogues, templates, reportgen version, options);
  a build is skipped when it is unchanged *and* the outputs verify;
* ``outputs``: relative path -> sha256 of every file of the published
  project folder, so ``reportgen check`` can find a modified, missing or
  unexpected output (:func:`check_outputs`);
* ``status``: the worst check status of the report (e.g. "pass", "warn",
  "fail");
* ``summary``: a free-form JSON-ready dict with the figures the index page
  shows, so the index can be rebuilt without recomputing projects.

A manifest that cannot be read or parsed, or has an unknown format, gives a
warning and an empty manifest: the next build simply rebuilds everything.
"""

from __future__ import annotations

import hashlib
import json
import math
import os
from dataclasses import dataclass, field
from pathlib import Path, PurePath
from typing import Any, Callable, Iterable, Mapping

from reportgen.fsutil import STATE_DIR, atomic_write_text

FORMAT = 1
MANIFEST_NAME = "manifest.json"
_CHUNK = 1 << 20

PathLike = str | os.PathLike


# ---------------------------------------------------------------------------
# hashing


def file_sha256(path: PathLike) -> str:
    """Hex sha256 of a file's bytes."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        while chunk := fh.read(_CHUNK):
            h.update(chunk)
    return h.hexdigest()


def _jsonable(obj: Any) -> Any:
    """Normalise ``obj`` for canonical JSON: Paths to POSIX strings, tuples to lists, sets sorted."""
    if isinstance(obj, Mapping):
        out = {}
        for k, v in obj.items():
            if not isinstance(k, str):
                raise TypeError(f"canonical JSON needs string keys, got {k!r}")
            out[k] = _jsonable(v)
        return out
    if isinstance(obj, (list, tuple)):
        return [_jsonable(v) for v in obj]
    if isinstance(obj, (set, frozenset)):
        return sorted((_jsonable(v) for v in obj), key=lambda v: json.dumps(v, sort_keys=True))
    if isinstance(obj, PurePath):
        return obj.as_posix()
    if isinstance(obj, float) and not math.isfinite(obj):
        raise ValueError(f"canonical JSON cannot hold {obj!r}")
    if obj is None or isinstance(obj, (str, int, float, bool)):
        return obj
    if hasattr(obj, "item") and callable(obj.item):  # numpy scalar, without importing numpy
        return _jsonable(obj.item())
    raise TypeError(f"cannot put {type(obj).__name__} into canonical JSON: {obj!r}")


def canonical_json(obj: Any, indent: int | None = None) -> str:
    """Deterministic JSON text: sorted keys, no NaN/Infinity, UTF-8 kept as is.

    With ``indent=None`` the text is compact (used for hashing); with an
    indent it is the readable form written to disk.
    """
    seps = (",", ":") if indent is None else (",", ": ")
    return json.dumps(_jsonable(obj), sort_keys=True, ensure_ascii=False, allow_nan=False,
                      separators=seps, indent=indent)


def _rel(path: PathLike, root: PathLike) -> str:
    p = Path(os.path.abspath(path))
    r = Path(os.path.abspath(root))
    try:
        return p.relative_to(r).as_posix()
    except ValueError:
        raise ValueError(f"{path} is not inside {root}") from None


def _frame(h: "hashlib._Hash", tag: bytes, name: str, digest: bytes) -> None:
    data = name.encode("utf-8")
    h.update(tag + len(data).to_bytes(8, "big") + data + digest)


def hash_files(paths: Iterable[PathLike], root: PathLike) -> str:
    """sha256 over (relative POSIX path, content sha256) of each file, in sorted path order.

    The result depends only on the files' names relative to ``root`` and their
    bytes: not on the order given, duplicates, mtimes, or where ``root`` is.
    A path outside ``root`` raises ValueError; a missing file raises
    FileNotFoundError (the caller said the build reads it).
    """
    entries = sorted({_rel(p, root): p for p in paths}.items())
    h = hashlib.sha256(b"reportgen-files-1\n")
    for rel, p in entries:
        _frame(h, b"F", rel, bytes.fromhex(file_sha256(p)))
    return h.hexdigest()


def hash_inputs(files: Mapping[str, PathLike] | Iterable[PathLike], extra: Mapping[str, Any] | None = None,
                *, root: PathLike | None = None) -> str:
    """One hash of everything a build reads.

    ``files`` is either a mapping ``{name: path}`` (names are what is hashed,
    e.g. ``{"project/project.yaml": ..., "template/report.html": ...}``, for
    files from several roots), or an iterable of paths hashed by their path
    relative to ``root`` (default: the deepest folder containing them all).
    ``extra`` is any JSON-ready dict (reportgen version, options, resolved
    config); it is hashed as canonical JSON, so key order does not matter.
    """
    if isinstance(files, Mapping):
        named = {str(k): v for k, v in files.items()}
    else:
        paths = [os.path.abspath(p) for p in files]
        if root is None:
            root = os.path.commonpath([os.path.dirname(p) for p in paths]) if paths else "."
        named = {_rel(p, root): p for p in paths}
    h = hashlib.sha256(b"reportgen-inputs-1\n")
    for name in sorted(named):
        _frame(h, b"F", name, bytes.fromhex(file_sha256(named[name])))
    _frame(h, b"X", canonical_json(extra or {}), b"")
    return h.hexdigest()


def folder_files(folder: PathLike, skip_hidden: bool = True) -> list[Path]:
    """Regular files under ``folder``, sorted; names starting with "." (``.git``, editor files) skipped."""
    base = Path(folder)
    out: list[Path] = []
    for dirpath, dirs, files in os.walk(base):
        if skip_hidden:
            dirs[:] = [d for d in dirs if not d.startswith(".")]
        dirs.sort()
        for f in sorted(files):
            if skip_hidden and f.startswith("."):
                continue
            p = Path(dirpath) / f
            if p.is_file() and not p.is_symlink():
                out.append(p)
    return sorted(out, key=lambda p: p.relative_to(base).as_posix())


def output_hashes(folder: PathLike) -> dict[str, str]:
    """relative POSIX path -> sha256 of every regular file under ``folder`` (symlinks skipped)."""
    base = Path(folder)
    out: dict[str, str] = {}
    for dirpath, dirs, files in os.walk(base):
        dirs.sort()
        for f in sorted(files):
            p = Path(dirpath) / f
            if p.is_symlink() or not p.is_file():
                continue
            out[p.relative_to(base).as_posix()] = file_sha256(p)
    return dict(sorted(out.items()))


@dataclass(frozen=True)
class OutputCheck:
    """Result of comparing a published folder with its recorded output hashes."""

    missing: tuple[str, ...] = ()
    modified: tuple[str, ...] = ()
    unexpected: tuple[str, ...] = ()

    @property
    def ok(self) -> bool:
        return not (self.missing or self.modified or self.unexpected)

    def messages(self, folder: str = "") -> list[str]:
        pre = f"{folder}/" if folder else ""
        return ([f"{pre}{p}: missing" for p in self.missing]
                + [f"{pre}{p}: modified since it was built" for p in self.modified]
                + [f"{pre}{p}: not produced by the build" for p in self.unexpected])

    def as_dict(self) -> dict:
        return {"missing": list(self.missing), "modified": list(self.modified),
                "unexpected": list(self.unexpected), "ok": self.ok}


def check_outputs(recorded: Mapping[str, str], folder: PathLike) -> OutputCheck:
    """Compare the files now in ``folder`` with ``recorded`` (relative path -> sha256)."""
    actual = output_hashes(folder) if Path(folder).is_dir() else {}
    missing = tuple(sorted(set(recorded) - set(actual)))
    unexpected = tuple(sorted(set(actual) - set(recorded)))
    modified = tuple(sorted(p for p in set(recorded) & set(actual) if recorded[p] != actual[p]))
    return OutputCheck(missing, modified, unexpected)


# ---------------------------------------------------------------------------
# the manifest


@dataclass(frozen=True)
class ProjectRecord:
    """What the last successful build of one project produced."""

    input_hash: str
    outputs: dict[str, str] = field(default_factory=dict)  # relpath -> sha256
    status: str | None = None  # worst check status, e.g. "pass" | "warn" | "fail"
    summary: dict[str, Any] = field(default_factory=dict)  # free-form, JSON-ready

    def as_dict(self) -> dict:
        return {"input_hash": self.input_hash, "outputs": dict(sorted(self.outputs.items())),
                "status": self.status, "summary": _jsonable(self.summary)}

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> "ProjectRecord":
        if not isinstance(d, Mapping):
            raise ValueError("project record is not an object")
        ih = d.get("input_hash")
        outputs = d.get("outputs", {})
        summary = d.get("summary", {})
        status = d.get("status")
        if not isinstance(ih, str):
            raise ValueError("input_hash missing or not text")
        if not (isinstance(outputs, Mapping) and all(isinstance(k, str) and isinstance(v, str)
                                                     for k, v in outputs.items())):
            raise ValueError("outputs must map file names to hashes")
        if not isinstance(summary, Mapping):
            raise ValueError("summary must be an object")
        if status is not None and not isinstance(status, str):
            raise ValueError("status must be text")
        return cls(ih, dict(outputs), status, dict(summary))


class Manifest:
    """The build manifest of one output folder.

    >>> m = Manifest.load(out_dir, on_warning=print)          # doctest: +SKIP
    >>> rec = m.get("plant-a")
    >>> if not m.is_current("plant-a", new_hash, out_dir / "plant-a"): ...
    >>> m.set("plant-a", ProjectRecord(new_hash, output_hashes(staging), "warn", {...}))
    >>> m.save()
    """

    def __init__(self, out_dir: PathLike, projects: Mapping[str, ProjectRecord] | None = None,
                 warnings: list[str] | None = None):
        self.out_dir = Path(out_dir)
        self.projects: dict[str, ProjectRecord] = dict(projects or {})
        self.warnings: list[str] = list(warnings or [])

    @staticmethod
    def path_for(out_dir: PathLike) -> Path:
        return Path(out_dir) / STATE_DIR / MANIFEST_NAME

    @property
    def path(self) -> Path:
        return self.path_for(self.out_dir)

    @classmethod
    def load(cls, out_dir: PathLike, on_warning: Callable[[str], None] | None = None) -> "Manifest":
        """Read the manifest; a missing one is empty, a bad one warns and is empty (never raises)."""
        path = cls.path_for(out_dir)
        warnings: list[str] = []

        def warn(msg: str) -> "Manifest":
            full = f"{path}: {msg}; rebuilding everything"
            warnings.append(full)
            if on_warning:
                on_warning(full)
            return cls(out_dir, {}, warnings)

        try:
            raw = path.read_bytes()
        except FileNotFoundError:
            return cls(out_dir)
        except OSError as exc:
            return warn(f"cannot read the build manifest ({exc.strerror or exc})")
        try:
            data = json.loads(raw.decode("utf-8"))
        except (UnicodeDecodeError, ValueError) as exc:
            return warn(f"the build manifest is corrupt ({exc})")
        if not isinstance(data, dict) or data.get("format") != FORMAT:
            fmt = data.get("format") if isinstance(data, dict) else None
            return warn(f"unknown build manifest format {fmt!r}")
        projects_raw = data.get("projects", {})
        if not isinstance(projects_raw, dict):
            return warn("the build manifest has no project table")
        projects: dict[str, ProjectRecord] = {}
        for name, rec in projects_raw.items():
            try:
                projects[name] = ProjectRecord.from_dict(rec)
            except ValueError as exc:
                msg = f"{path}: dropping the record of project {name!r} ({exc}); it will be rebuilt"
                warnings.append(msg)
                if on_warning:
                    on_warning(msg)
        return cls(out_dir, projects, warnings)

    def as_dict(self) -> dict:
        return {"format": FORMAT,
                "projects": {k: self.projects[k].as_dict() for k in sorted(self.projects)}}

    def to_json(self) -> str:
        return canonical_json(self.as_dict(), indent=2) + "\n"

    def save(self) -> None:
        """Write atomically (DIR/.reportgen/ is created if needed)."""
        self.path.parent.mkdir(parents=True, exist_ok=True)
        atomic_write_text(self.path, self.to_json())

    def get(self, name: str) -> ProjectRecord | None:
        return self.projects.get(name)

    def set(self, name: str, record: ProjectRecord) -> None:
        self.projects[name] = record

    def remove(self, name: str) -> None:
        self.projects.pop(name, None)

    def names(self) -> list[str]:
        return sorted(self.projects)

    def check(self, name: str, folder: PathLike | None = None) -> OutputCheck:
        """Compare the published folder (default ``DIR/<name>``) with the record of ``name``."""
        rec = self.projects.get(name)
        folder = self.out_dir / name if folder is None else Path(folder)
        return check_outputs(rec.outputs if rec else {}, folder)

    def is_current(self, name: str, input_hash: str, folder: PathLike | None = None) -> bool:
        """True when the recorded input hash equals ``input_hash`` and every output verifies."""
        rec = self.projects.get(name)
        if rec is None or rec.input_hash != input_hash or not rec.outputs:
            return False
        return self.check(name, folder).ok
