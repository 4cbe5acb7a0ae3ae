"""File-system building blocks for safe, repeatable builds.

Everything here uses the standard library only and imports nothing heavy.

Layout of an output folder ``DIR`` as managed by this module::

    DIR/
      index.html                  (written by the build with atomic_write_*)
      <project>/                  (a real folder, replaced as a whole by publish_dir)
      .reportgen.lock             (BuildLock: fcntl.flock, holder's pid inside)
      .reportgen/
        staging/<project>.<rnd>/  (new output being written, see new_staging_dir)
        trash/<project>.<rnd>/    (old output on its way out)
        journal/<project>.json    (an intent record while a swap is in flight)
        manifest.json             (reportgen.manifest)

Why real folders swapped in place (and not a symlink into versioned objects)
--------------------------------------------------------------------------
Both designs keep ``DIR/<project>`` whole under ``kill -9``. A symlink makes
the published site depend on every copy tool, file share, archive format and
static host keeping symlinks and the hidden ``.reportgen`` folder intact
(several hosts and sync clients drop one or the other), and a report folder
copied out of ``DIR`` on its own would be an empty link. Real folders copy,
zip and serve like any other folder.

The swap itself:

* On Linux, ``renameat2(RENAME_EXCHANGE)`` swaps the staging folder and the
  published folder in one system call: at every instant ``DIR/<project>`` is
  the old complete set or the new complete set. The old set ends up at the
  staging path and is deleted afterwards.
* Where the exchange is not available (other systems, some file systems),
  a rename dance is used: ``final -> trash``, ``staging -> final``. Between
  the two renames ``DIR/<project>`` is briefly absent; a journal written
  before the first rename lets :func:`recover` put the old set back.

In both cases a journal (written atomically before the swap) records the
paths involved and the identity (device, inode) of the new folder, so
:func:`recover` can tell whether the swap had happened when a build died:

* ``final`` is the new folder  -> the publish completed; remove leftovers.
* ``final`` exists, is not new -> the publish did not happen; drop staging.
* ``final`` is missing         -> the dance was cut between its renames;
  move the old set back from trash (or, for a first publish, leave it absent).

So a publish interrupted at any point is, after recovery, either fully done
or not done at all, and ``DIR/<project>`` never shows a mix of the two.
:func:`recover` also deletes stale staging and trash folders, so it must run
while holding :class:`BuildLock` (the next build calls it first thing).
"""

from __future__ import annotations

import contextlib
import errno
import json
import os
import secrets
import shutil
import sys
import time
from pathlib import Path
from typing import Callable, Iterator

from reportgen.errors import BuildError

STATE_DIR = ".reportgen"
LOCK_NAME = ".reportgen.lock"

# Set to False (or set REPORTGEN_NO_EXCHANGE=1) to force the rename dance;
# tests use this to exercise both swap strategies.
USE_EXCHANGE = os.environ.get("REPORTGEN_NO_EXCHANGE", "") in ("", "0")

PathLike = str | os.PathLike


# ---------------------------------------------------------------------------
# atomic writes


def _fsync_dir(path: PathLike) -> None:
    """fsync a folder so a rename inside it survives a power cut (best effort)."""
    try:
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_DIRECTORY", 0))
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


def atomic_write_bytes(path: PathLike, data: bytes) -> None:
    """Write ``data`` to ``path`` so that readers see the old or the new content, never a part.

    The data go to a temporary file in the same folder (so the final rename
    cannot cross file systems), are fsynced, and the file is moved into place
    with :func:`os.replace`. The temporary file is created with mode 0o666
    masked by the umask, like an ordinary new file. On any error the
    temporary file is removed and the exception propagates; ``path`` is left
    as it was. The parent folder must exist.
    """
    path = os.fspath(path)
    folder, name = os.path.split(os.path.abspath(path))
    data = bytes(data)
    flags = os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_CLOEXEC", 0)
    for _ in range(100):
        tmp = os.path.join(folder, f".{name}.{secrets.token_hex(6)}.tmp")
        try:
            fd = os.open(tmp, flags, 0o666)
            break
        except FileExistsError:
            continue
    else:  # pragma: no cover - 100 random collisions
        raise FileExistsError(f"could not create a temporary file next to {path}")
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise
    _fsync_dir(folder)


def atomic_write_text(path: PathLike, text: str, encoding: str = "utf-8") -> None:
    """Like :func:`atomic_write_bytes` for text; no newline translation ("\\n" stays "\\n")."""
    atomic_write_bytes(path, text.encode(encoding))


# ---------------------------------------------------------------------------
# containment


def is_within(path: PathLike, root: PathLike) -> bool:
    """True when ``path`` lies inside ``root`` (or is ``root``) once both are fully resolved.

    Symlinks are resolved on both sides, so a link inside ``root`` that points
    outside it is reported as outside. Paths need not exist.
    """
    p = Path(os.path.realpath(os.fspath(path)))
    r = Path(os.path.realpath(os.fspath(root)))
    return p == r or r in p.parents


# ---------------------------------------------------------------------------
# publishing a folder as a whole


def _state(out_dir: Path, sub: str) -> Path:
    d = out_dir / STATE_DIR / sub
    d.mkdir(parents=True, exist_ok=True)
    return d


def new_staging_dir(final_dir: PathLike) -> Path:
    """Create and return an empty staging folder for ``final_dir``.

    It lies in ``DIR/.reportgen/staging/`` on the same file system as
    ``final_dir`` (so the swap is a rename), and is removed by :func:`recover`
    if the build dies before publishing it.
    """
    final = Path(os.path.abspath(final_dir))
    staging = _state(final.parent, "staging") / f"{final.name}.{secrets.token_hex(6)}"
    staging.mkdir()
    return staging


_libc_renameat2 = None


def _exchange(a: str, b: str) -> bool:
    """Atomically swap two paths with renameat2(RENAME_EXCHANGE). False if unsupported."""
    global _libc_renameat2
    if not USE_EXCHANGE or not sys.platform.startswith("linux"):
        return False
    if _libc_renameat2 is None:
        try:
            import ctypes

            libc = ctypes.CDLL(None, use_errno=True)
            fn = libc.renameat2
            fn.argtypes = [ctypes.c_int, ctypes.c_char_p, ctypes.c_int, ctypes.c_char_p, ctypes.c_uint]
            fn.restype = ctypes.c_int
            _libc_renameat2 = fn
        except (OSError, AttributeError):
            _libc_renameat2 = False
    if _libc_renameat2 is False:
        return False
    import ctypes

    at_fdcwd, rename_exchange = -100, 2
    rc = _libc_renameat2(at_fdcwd, os.fsencode(a), at_fdcwd, os.fsencode(b), rename_exchange)
    if rc == 0:
        return True
    err = ctypes.get_errno()
    if err in (errno.EINVAL, errno.ENOSYS, errno.ENOTSUP, errno.EOPNOTSUPP, errno.EPERM):
        return False
    raise OSError(err, os.strerror(err), a)


def _fsync_tree(root: Path) -> None:
    for dirpath, _dirs, files in os.walk(root):
        for f in files:
            p = os.path.join(dirpath, f)
            try:
                fd = os.open(p, os.O_RDONLY)
            except OSError:
                continue
            try:
                os.fsync(fd)
            except OSError:
                pass
            finally:
                os.close(fd)
        _fsync_dir(dirpath)


def _rmtree(path: Path) -> None:
    if path.is_symlink() or path.is_file():
        path.unlink()
    elif path.exists():
        shutil.rmtree(path)


def publish_dir(staging_dir: PathLike, final_dir: PathLike, *, durable: bool = True) -> None:
    """Replace ``final_dir`` as a whole by the complete folder ``staging_dir``.

    At every instant ``final_dir`` is the old complete set or the new complete
    set (with the Linux exchange; with the fallback dance it can be briefly
    absent, which :func:`recover` repairs). After return ``staging_dir`` no
    longer exists and the old set is deleted.

    ``staging_dir`` should come from :func:`new_staging_dir`; a folder on
    another file system is first copied into such a staging folder. Call it
    while holding :class:`BuildLock` for ``final_dir``'s parent. ``durable``
    fsyncs the staged files first, so the swap also survives a power cut.
    """
    final = Path(os.path.abspath(final_dir))
    staging = Path(os.path.abspath(staging_dir))
    out_dir = final.parent
    if not staging.is_dir():
        raise BuildError(f"cannot publish {final}: staging folder {staging} does not exist")
    if staging == final or staging in final.parents or final in staging.parents:
        raise BuildError(f"cannot publish {staging} onto {final}: one contains the other")
    out_dir.mkdir(parents=True, exist_ok=True)
    journal_path = out_dir / STATE_DIR / "journal" / f"{final.name}.json"
    if journal_path.exists():  # a killed earlier publish of this project: settle it first
        _settle(out_dir, journal_path, None)
    if os.stat(staging).st_dev != os.stat(out_dir).st_dev:
        moved = new_staging_dir(final)
        shutil.copytree(staging, moved, dirs_exist_ok=True, symlinks=True)
        shutil.rmtree(staging)
        staging = moved
    if durable:
        _fsync_tree(staging)

    st = os.stat(staging)
    trash = _state(out_dir, "trash") / f"{final.name}.{secrets.token_hex(6)}"
    _state(out_dir, "journal")
    journal = {
        "final": final.name,
        "staging": os.path.relpath(staging, out_dir),
        "trash": os.path.relpath(trash, out_dir),
        "new_dev": st.st_dev,
        "new_ino": st.st_ino,
    }
    atomic_write_text(journal_path, json.dumps(journal, sort_keys=True))

    if not os.path.lexists(final):
        os.rename(staging, final)
    elif _exchange(str(staging), str(final)):
        # staging now holds the old set
        os.rename(staging, trash)
    else:
        os.rename(final, trash)
        os.rename(staging, final)
    if durable:
        _fsync_dir(out_dir)
    os.unlink(journal_path)
    _rmtree(trash)


def _settle(out: Path, jp: Path, on_warning: Callable[[str], None] | None) -> str | None:
    """Resolve one publish journal (see the module docstring); return the project name."""
    state = out / STATE_DIR
    try:
        j = json.loads(jp.read_text(encoding="utf-8"))
        final = out / j["final"]
        staging = out / j["staging"]
        trash = out / j["trash"]
        new_id = (int(j["new_dev"]), int(j["new_ino"]))
        if not (is_within(staging, state) and is_within(trash, state) and final.parent == out):
            raise ValueError("paths outside the output folder")
    except (OSError, ValueError, KeyError, TypeError) as exc:
        if on_warning:
            on_warning(f"ignoring unreadable publish journal {jp}: {exc}")
        jp.unlink(missing_ok=True)
        return None
    if os.path.lexists(final):
        st = os.lstat(final)
        if (st.st_dev, st.st_ino) == new_id:
            _rmtree(trash)  # publish had completed; the old set may remain in trash or staging
            if os.path.lexists(staging):
                _rmtree(staging)
        else:
            _rmtree(staging)  # publish never happened; drop the new set
    elif trash.is_dir():
        os.rename(trash, final)  # dance cut between its two renames: put the old set back
        _rmtree(staging)
    else:
        _rmtree(staging)  # first publish cut before its rename: stays absent
    _fsync_dir(out)
    jp.unlink(missing_ok=True)
    return final.name


@contextlib.contextmanager
def staged(final_dir: PathLike, *, durable: bool = True) -> Iterator[Path]:
    """Write into a fresh staging folder; publish it as ``final_dir`` when the block ends normally.

    >>> with staged(out / "plant-a") as stage:       # doctest: +SKIP
    ...     (stage / "index.html").write_text(html)
    On an exception the staging folder is removed and ``final_dir`` is untouched.
    """
    stage = new_staging_dir(final_dir)
    try:
        yield stage
    except BaseException:
        shutil.rmtree(stage, ignore_errors=True)
        raise
    publish_dir(stage, final_dir, durable=durable)


def recover(out_dir: PathLike, on_warning: Callable[[str], None] | None = None) -> list[str]:
    """Finish or undo publishes that a killed build left half done; remove stale folders.

    Returns the names of the project folders whose publish it settled (for
    logging). Must be called while holding :class:`BuildLock` for
    ``out_dir``: it deletes every staging folder, including those of a build
    that is still running.
    """
    out = Path(os.path.abspath(out_dir))
    state = out / STATE_DIR
    acted: list[str] = []
    jdir = state / "journal"
    for jp in sorted(jdir.glob("*.json")) if jdir.is_dir() else []:
        name = _settle(out, jp, on_warning)
        if name is not None:
            acted.append(name)
    for sub in ("staging", "trash", "journal"):
        d = state / sub
        if d.is_dir():
            for child in sorted(d.iterdir()):
                _rmtree(child)
    return acted


# ---------------------------------------------------------------------------
# serialising builds


class BuildLock:
    """Serialise builds into one output folder (``fcntl.flock`` on ``DIR/.reportgen.lock``).

    >>> with BuildLock(out_dir, timeout_s=60, on_wait=print):   # doctest: +SKIP
    ...     recover(out_dir); build(); publish_dir(...)

    While waiting, ``on_wait`` is called once with
    ``"waiting for another build of DIR to finish (pid N)…"``. After
    ``timeout_s`` seconds (None: wait forever) it raises
    :class:`reportgen.errors.BuildError`
    ``"another build of DIR is running (pid N); gave up after T s"``.
    The lock is released when the holder exits, even on ``kill -9`` (the
    kernel drops flock locks with the process). Not reentrant.
    """

    def __init__(self, out_dir: PathLike, timeout_s: float | None = 600.0,
                 on_wait: Callable[[str], None] | None = None, poll_s: float = 0.05):
        self.out_dir = Path(out_dir)
        self.timeout_s = timeout_s
        self.on_wait = on_wait
        self.poll_s = poll_s
        self._fd: int | None = None

    @property
    def path(self) -> Path:
        return self.out_dir / LOCK_NAME

    def _holder_pid(self) -> str:
        try:
            os.lseek(self._fd, 0, os.SEEK_SET)
            text = os.read(self._fd, 64).decode("ascii", "replace").strip()
        except OSError:
            text = ""
        return text if text.isdigit() else "?"

    def acquire(self) -> None:
        import fcntl

        if self._fd is not None:
            raise RuntimeError("BuildLock is not reentrant")
        self.out_dir.mkdir(parents=True, exist_ok=True)
        fd = os.open(self.path, os.O_RDWR | os.O_CREAT | getattr(os, "O_CLOEXEC", 0), 0o666)
        self._fd = fd
        start = time.monotonic()
        told = False
        try:
            while True:
                try:
                    fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
                    break
                except BlockingIOError:
                    pass
                pid = self._holder_pid()
                waited = time.monotonic() - start
                if self.timeout_s is not None and waited >= self.timeout_s:
                    raise BuildError(
                        f"another build of {self.out_dir} is running (pid {pid}); "
                        f"gave up after {self.timeout_s:g} s")
                if not told:
                    told = True
                    if self.on_wait:
                        self.on_wait(f"waiting for another build of {self.out_dir} to finish (pid {pid})…")
                time.sleep(self.poll_s)
            os.ftruncate(fd, 0)
            os.pwrite(fd, f"{os.getpid()}\n".encode("ascii"), 0)
        except BaseException:
            os.close(fd)
            self._fd = None
            raise

    def release(self) -> None:
        import fcntl

        if self._fd is None:
            return
        try:
            os.ftruncate(self._fd, 0)
        except OSError:
            pass
        fcntl.flock(self._fd, fcntl.LOCK_UN)
        os.close(self._fd)
        self._fd = None

    def __enter__(self) -> "BuildLock":
        self.acquire()
        return self

    def __exit__(self, *exc) -> None:
        self.release()
