"""What git knows about a project folder: last commit, local changes, revision history.

Every function runs the ``git`` program (``git -C DIR ...``) with ``LC_ALL=C``,
no pager, no prompts, optional locks off (so reportgen never blocks or
rewrites the user's index), network transports disabled and a timeout. Outside
a git working copy, when git is missing, times out or fails, the functions
return ``None`` / ``[]`` / ``False``: a build never breaks because of git.

Dates are committer dates in UTC, ISO 8601 (``2024-03-01T08:00:00Z``), so the
text does not depend on the machine's time zone.
"""

from __future__ import annotations

import os
import subprocess
from dataclasses import asdict, dataclass
from datetime import datetime, timezone
from pathlib import Path, PurePosixPath

TIMEOUT_S = 20.0

PathLike = str | os.PathLike

_CONFIG = [
    "-c", "core.quotepath=off",
    "-c", "log.showSignature=false",
    "-c", "color.ui=never",
    "-c", "core.fsmonitor=false",
    "-c", "protocol.allow=never",  # nothing here may reach a remote
]
_DROP_ENV = ("GIT_DIR", "GIT_WORK_TREE", "GIT_INDEX_FILE", "GIT_OBJECT_DIRECTORY", "GIT_PREFIX",
             "GIT_NAMESPACE", "GIT_COMMON_DIR")
_FS, _RS = "\x1f", "\x1e"


@dataclass(frozen=True)
class CommitInfo:
    """The last commit that touched a folder."""

    id: str
    short_id: str
    date: str  # committer date, UTC, ISO 8601 with "Z"
    subject: str
    author: str

    def as_dict(self) -> dict:
        return asdict(self)


@dataclass(frozen=True)
class HistoryEntry:
    """One commit in a folder's history, with the ``project.revision`` it carried."""

    id: str
    short_id: str
    date: str
    subject: str
    author: str
    revision: str | None  # project.revision at that commit (as text), None if absent/unreadable

    def as_dict(self) -> dict:
        return asdict(self)


# ---------------------------------------------------------------------------
# running git


def _env() -> dict:
    env = {k: v for k, v in os.environ.items() if k not in _DROP_ENV}
    env.update(LC_ALL="C", LANG="C", GIT_TERMINAL_PROMPT="0", GIT_OPTIONAL_LOCKS="0",
               GIT_NO_LAZY_FETCH="1", GIT_PAGER="cat", PAGER="cat", GIT_ASKPASS="",
               SSH_ASKPASS="")
    return env


def _git(cwd: PathLike, *args: str, input: bytes | None = None) -> bytes | None:
    """stdout of ``git -C cwd args`` or None on any failure."""
    try:
        proc = subprocess.run(["git", "--no-pager", *_CONFIG, "-C", os.fspath(cwd), *args],
                              input=input, capture_output=True, env=_env(), timeout=TIMEOUT_S,
                              stdin=None if input is not None else subprocess.DEVNULL)
    except (OSError, subprocess.SubprocessError, ValueError):
        return None
    if proc.returncode != 0:
        return None
    return proc.stdout


def git_available() -> bool:
    return _git(".", "--version") is not None


def _locate(path: PathLike) -> tuple[Path, str] | None:
    """(repository top folder, path of ``path`` relative to it in POSIX form, "" for the top)."""
    p = Path(os.path.abspath(os.fspath(path)))
    tail: list[str] = []
    while not p.is_dir():  # a file, or a path that no longer exists: start from a folder
        tail.insert(0, p.name)
        if p.parent == p:
            return None
        p = p.parent
    out = _git(p, "rev-parse", "--show-toplevel", "--show-prefix")
    if out is None:
        return None
    lines = out.decode("utf-8", "surrogateescape").split("\n")
    if len(lines) < 2 or not lines[0]:
        return None  # e.g. inside .git or a bare repository
    top, prefix = Path(lines[0]), lines[1]
    rel = str(PurePosixPath(prefix, *tail)) if (prefix or tail) else ""
    return top, "" if rel == "." else rel.rstrip("/")


def _spec(rel: str) -> list[str]:
    return ["--", f":(literal){rel}" if rel else "."]


def repo_root(path: PathLike) -> Path | None:
    """Top folder of the git working copy containing ``path``, or None."""
    loc = _locate(path)
    return loc[0] if loc else None


def _iso_utc(unix_s: str) -> str:
    return datetime.fromtimestamp(int(unix_s), timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")


_LOG_FORMAT = "--format=" + "%x1f".join(["%H", "%h", "%ct", "%aN", "%s"]) + "%x1e"


def _log(top: Path, rel: str, limit: int) -> list[tuple[str, str, str, str, str]]:
    out = _git(top, "log", f"-n{int(limit)}", _LOG_FORMAT, "HEAD", *_spec(rel))
    if out is None:
        return []
    rows = []
    for rec in out.decode("utf-8", "replace").split(_RS):
        rec = rec.strip("\n")
        if not rec:
            continue
        parts = rec.split(_FS)
        if len(parts) != 5:
            continue
        cid, short, ct, author, subject = parts
        rows.append((cid, short, _iso_utc(ct), subject, author))
    return rows


# ---------------------------------------------------------------------------
# public functions


def folder_commit(path: PathLike) -> CommitInfo | None:
    """The last commit touching ``path`` (a folder or a file), or None."""
    loc = _locate(path)
    if loc is None:
        return None
    rows = _log(*loc, limit=1)
    if not rows:
        return None
    cid, short, date, subject, author = rows[0]
    return CommitInfo(cid, short, date, subject, author)


def folder_dirty(path: PathLike) -> bool:
    """True when files in the folder are modified, staged, deleted or untracked (ignored ones do not count)."""
    loc = _locate(path)
    if loc is None:
        return False
    top, rel = loc
    out = _git(top, "status", "--porcelain=v1", "-z", "--untracked-files=all", "--ignore-submodules=none",
               *_spec(rel))
    return bool(out)


def source_info(path: PathLike) -> dict | None:
    """For a report's "source" line: the folder's last commit plus ``dirty``; None outside git.

    ``{"id", "short_id", "date", "subject", "author", "dirty"}``. A dirty
    folder means the report was built from uncommitted files, which the
    report should say next to the commit id.
    """
    c = folder_commit(path)
    if c is None:
        return None
    return {**c.as_dict(), "dirty": folder_dirty(path)}


def resolve_rev(path: PathLike, rev: str) -> str | None:
    """Full commit id that ``rev`` (a commit id, tag, branch, ``HEAD~2``...) names, or None."""
    if not rev or rev.startswith("-") or "\n" in rev or "\0" in rev:
        return None
    loc = _locate(path)
    return _resolve(loc[0], rev) if loc else None


def _resolve(top: Path, rev: str) -> str | None:
    if not rev or rev.startswith("-") or "\n" in rev or "\0" in rev:
        return None
    out = _git(top, "rev-parse", "--verify", "--quiet", "--end-of-options", f"{rev}^{{commit}}")
    if out is None:
        return None
    cid = out.decode("ascii", "replace").strip()
    return cid or None


def _cat_batch(top: Path, requests: list[str]) -> list[bytes | None]:
    """Contents for each ``git cat-file --batch`` request (object id or REV:path); None if missing."""
    if not requests:
        return []
    if any("\n" in r for r in requests):
        raise ValueError("a request contains a newline")
    out = _git(top, "cat-file", "--batch", input=("\n".join(requests) + "\n").encode("utf-8", "surrogateescape"))
    if out is None:
        return [None] * len(requests)
    results: list[bytes | None] = []
    pos = 0
    for _ in requests:
        nl = out.find(b"\n", pos)
        if nl < 0:
            results.append(None)
            continue
        header = out[pos:nl].split(b" ")
        pos = nl + 1
        if len(header) == 3 and header[1] in (b"blob", b"tree", b"commit", b"tag"):
            size = int(header[2])
            results.append(out[pos:pos + size] if header[1] == b"blob" else None)
            pos += size + 1
        else:  # "<request> missing" / "ambiguous"
            results.append(None)
    return results


def _revision_of(data: bytes | None) -> str | None:
    if data is None:
        return None
    try:
        import yaml

        doc = yaml.safe_load(data.decode("utf-8"))
    except Exception:  # unparsable old version, bad encoding, PyYAML missing
        return None
    if not isinstance(doc, dict) or not isinstance(doc.get("project"), dict):
        return None
    rev = doc["project"].get("revision")
    if rev is None or isinstance(rev, (dict, list)):
        return None
    return str(rev)


def history(path: PathLike, filename: str = "project.yaml", limit: int = 50) -> list[HistoryEntry]:
    """Commits touching the folder ``path``, newest first (at most ``limit``).

    Each entry carries the ``project.revision`` value that ``path/filename``
    held at that commit (read with ``git cat-file`` and ``yaml.safe_load``;
    None when the file is missing, unparsable or has no revision).
    """
    loc = _locate(path)
    if loc is None:
        return []
    top, rel = loc
    rows = _log(top, rel, limit)
    file_rel = str(PurePosixPath(rel, filename)) if rel else filename
    blobs = _cat_batch(top, [f"{cid}:{file_rel}" for cid, *_ in rows]) if "\n" not in file_rel else [None] * len(rows)
    return [HistoryEntry(cid, short, date, subject, author, _revision_of(blob))
            for (cid, short, date, subject, author), blob in zip(rows, blobs)]


def find_revision(path: PathLike, revision: str, filename: str = "project.yaml",
                  limit: int = 500) -> HistoryEntry | None:
    """Newest commit whose ``project.revision`` equals ``revision`` (the last state issued as it)."""
    for entry in history(path, filename, limit):
        if entry.revision == str(revision):
            return entry
    return None


def read_at(rev: str, path: PathLike) -> bytes | None:
    """Bytes of file ``path`` as committed at ``rev``; None if absent there or not in git."""
    loc = _locate(path)
    if loc is None:
        return None
    cid = _resolve(loc[0], rev)
    if cid is None or not loc[1] or "\n" in loc[1]:
        return None
    return _cat_batch(loc[0], [f"{cid}:{loc[1]}"])[0]


def _tree_at(rev: str, folder: PathLike) -> tuple[Path, list[tuple[str, str]]] | None:
    loc = _locate(folder)
    if loc is None:
        return None
    top, rel = loc
    cid = _resolve(top, rev)
    if cid is None:
        return None
    out = _git(top, "ls-tree", "-r", "-z", "--full-tree", cid, *([] if not rel else _spec(rel)))
    if out is None:
        return None
    entries = []
    base = PurePosixPath(rel) if rel else None
    for item in out.split(b"\0"):
        if not item:
            continue
        meta, _, name = item.partition(b"\t")
        mode, typ, oid = meta.decode("ascii").split(" ")
        if typ != "blob" or mode == "120000":  # skip submodules and symlinks
            continue
        full = PurePosixPath(name.decode("utf-8", "surrogateescape"))
        try:
            relname = full.relative_to(base) if base else full
        except ValueError:
            continue
        entries.append((relname.as_posix(), oid))
    entries.sort()
    return top, entries


def list_at(rev: str, folder: PathLike) -> list[str]:
    """Files (POSIX paths relative to ``folder``) in ``folder`` at ``rev``, sorted; [] if none/unknown.

    Symlinks and submodules are left out.
    """
    tree = _tree_at(rev, folder)
    return [name for name, _ in tree[1]] if tree else []


def materialize(rev: str, folder: PathLike, dest: PathLike) -> list[str] | None:
    """Write the files of ``folder`` as committed at ``rev`` into ``dest`` (created if needed).

    Returns the relative paths written (sorted), or None when ``folder`` is
    not in git or ``rev`` names no commit. Used by ``reportgen diff`` to
    rebuild an earlier revision of a project in a temporary folder.
    """
    tree = _tree_at(rev, folder)
    if tree is None:
        return None
    top, entries = tree
    dest_p = Path(dest)
    dest_p.mkdir(parents=True, exist_ok=True)
    root = dest_p.resolve()
    blobs = _cat_batch(top, [oid for _, oid in entries])
    written = []
    for (name, _), data in zip(entries, blobs):
        target = dest_p / name
        parts = PurePosixPath(name).parts
        if data is None or ".." in parts or PurePosixPath(name).is_absolute():
            continue
        target.parent.mkdir(parents=True, exist_ok=True)
        if root not in target.resolve().parents:
            continue
        target.write_bytes(data)
        written.append(name)
    return written
