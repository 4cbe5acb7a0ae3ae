"""Atomic writes, whole-folder publishing under kill -9, and the build lock."""

from __future__ import annotations

import os
import random
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest

from reportgen import fsutil
from reportgen.errors import BuildError

ROOT = Path(__file__).resolve().parents[1]


# ---------------------------------------------------------------------------
# atomic writes


def _leftovers(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if p.name.endswith(".tmp"))


def test_atomic_write_creates_and_replaces(tmp_path):
    target = tmp_path / "a.json"
    fsutil.atomic_write_text(target, "one\n")
    assert target.read_bytes() == b"one\n"
    fsutil.atomic_write_bytes(target, b"\x00two")
    assert target.read_bytes() == b"\x00two"
    fsutil.atomic_write_text(target, "ünï\r\n", encoding="utf-8")
    assert target.read_bytes() == "ünï\r\n".encode()  # no newline translation
    assert _leftovers(tmp_path) == []


def test_atomic_write_mode_follows_umask(tmp_path):
    old = os.umask(0o022)
    try:
        fsutil.atomic_write_text(tmp_path / "m.txt", "x")
    finally:
        os.umask(old)
    assert (tmp_path / "m.txt").stat().st_mode & 0o777 == 0o644


def test_atomic_write_error_leaves_old_content_and_no_temp(tmp_path, monkeypatch):
    target = tmp_path / "keep.txt"
    target.write_text("old")

    def boom(src, dst):
        raise OSError("simulated failure while replacing")

    monkeypatch.setattr(fsutil.os, "replace", boom)
    with pytest.raises(OSError, match="simulated"):
        fsutil.atomic_write_text(target, "new")
    monkeypatch.undo()
    assert target.read_text() == "old"
    assert _leftovers(tmp_path) == []


def test_atomic_write_bad_data_leaves_no_temp(tmp_path):
    with pytest.raises(TypeError):
        fsutil.atomic_write_bytes(tmp_path / "x.bin", 12.5)  # not bytes-like
    assert list(tmp_path.iterdir()) == []


def test_atomic_write_missing_folder_raises(tmp_path):
    with pytest.raises(FileNotFoundError):
        fsutil.atomic_write_text(tmp_path / "nope" / "x.txt", "x")


# ---------------------------------------------------------------------------
# is_within


def test_is_within_resolves_symlinks(tmp_path):
    root = tmp_path / "proj"
    (root / "sub").mkdir(parents=True)
    outside = tmp_path / "secret.txt"
    outside.write_text("x")
    (root / "link.txt").symlink_to(outside)
    (root / "dirlink").symlink_to(tmp_path)
    assert fsutil.is_within(root / "sub" / "a.yaml", root)
    assert fsutil.is_within(root, root)
    assert not fsutil.is_within(root / "link.txt", root)  # link escapes the root
    assert not fsutil.is_within(root / "dirlink" / "secret.txt", root)
    assert not fsutil.is_within(root / ".." / "secret.txt", root)
    assert not fsutil.is_within(tmp_path / "proj2" / "a", root)  # prefix of name is not containment
    # the root itself given through a link still contains its files
    (tmp_path / "alias").symlink_to(root)
    assert fsutil.is_within(root / "sub", tmp_path / "alias")


# ---------------------------------------------------------------------------
# publish_dir: generations of a small site; each is recognisable and has its own file set

WRITER = textwrap.dedent(
    """
    import os, sys
    from pathlib import Path

    def files_for(gen):
        names = ["index.html", "data/summary.json", f"fig/f{gen % 3}.svg"]
        names += [f"part{k}.txt" for k in range(gen % 4)]
        return names

    def write_gen(folder, gen):
        for k, name in enumerate(files_for(gen)):
            p = Path(folder) / name
            p.parent.mkdir(parents=True, exist_ok=True)
            p.write_text(f"gen={gen}\\n{name}\\n" + "x" * (700 * k))
    """
)
exec(WRITER)  # defines files_for and write_gen for the checks below


def read_gen(folder: Path) -> int:
    """Generation of a published folder; asserts it is one complete, unmixed generation."""
    found = sorted(str(p.relative_to(folder)) for p in folder.rglob("*") if p.is_file())
    assert found, f"{folder} is empty"
    gens = {p: int((folder / p).read_text().split("\n", 1)[0].removeprefix("gen=")) for p in found}
    values = set(gens.values())
    assert len(values) == 1, f"mixed generations in {folder}: {gens}"
    gen = values.pop()
    assert found == sorted(files_for(gen)), f"incomplete or extra files for gen {gen}: {found}"
    for name in found:
        k = files_for(gen).index(name)
        assert (folder / name).read_text() == f"gen={gen}\n{name}\n" + "x" * (700 * k)
    return gen


def assert_clean_state(out: Path) -> None:
    for sub in ("staging", "trash", "journal"):
        d = out / ".reportgen" / sub
        assert not d.exists() or list(d.iterdir()) == [], f"leftovers in {d}: {list(d.iterdir())}"


@pytest.fixture(params=[True, False], ids=["exchange", "rename-dance"])
def swap_mode(request, monkeypatch):
    monkeypatch.setattr(fsutil, "USE_EXCHANGE", request.param)
    return request.param


def test_publish_first_and_replace(tmp_path, swap_mode):
    out = tmp_path / "site"
    final = out / "plant-a"
    for gen in (1, 2, 3, 4):
        st = fsutil.new_staging_dir(final)
        assert fsutil.is_within(st, out / ".reportgen")
        write_gen(st, gen)
        fsutil.publish_dir(st, final)
        assert not st.exists()
        assert read_gen(final) == gen
        assert final.is_dir() and not final.is_symlink()
        assert_clean_state(out)


def test_publish_from_foreign_staging_folder(tmp_path, swap_mode):
    out = tmp_path / "site"
    st = tmp_path / "elsewhere"
    st.mkdir()
    write_gen(st, 5)
    fsutil.publish_dir(st, out / "p")
    assert read_gen(out / "p") == 5
    assert not st.exists()


def test_staged_publishes_or_discards(tmp_path):
    out = tmp_path / "site"
    with fsutil.staged(out / "p") as st:
        write_gen(st, 1)
    assert read_gen(out / "p") == 1
    with pytest.raises(RuntimeError):
        with fsutil.staged(out / "p") as st:
            write_gen(st, 2)
            raise RuntimeError("render failed")
    assert read_gen(out / "p") == 1  # untouched
    assert_clean_state(out)


def test_publish_rejects_nested_folders(tmp_path):
    final = tmp_path / "site" / "p"
    (final / "inner").mkdir(parents=True)
    with pytest.raises(BuildError):
        fsutil.publish_dir(final / "inner", final)
    with pytest.raises(BuildError):
        fsutil.publish_dir(tmp_path / "site" / "missing", final)


class Crash(BaseException):
    """Stands for the process dying at this exact call."""


@pytest.mark.parametrize("first_publish", [False, True], ids=["replace", "first"])
def test_publish_interrupted_at_every_step(tmp_path, swap_mode, monkeypatch, first_publish):
    """Die before each file-system operation of publish_dir in turn; recover; check old-or-new."""
    names = ["rename", "replace", "unlink"]
    real = {n: getattr(os, n) for n in names}
    real_rmtree, real_exchange = fsutil.shutil.rmtree, fsutil._exchange
    counter = {"n": 0, "crash_at": -1}

    def tick():
        if counter["n"] == counter["crash_at"]:
            counter["n"] += 1
            raise Crash()
        counter["n"] += 1

    def wrap(fn):
        def inner(*a, **k):
            tick()
            return fn(*a, **k)
        return inner

    completed = False
    crash_at = 0
    while not completed:
        out = tmp_path / f"run{crash_at}"
        final = out / "proj"
        if not first_publish:
            st = fsutil.new_staging_dir(final)
            write_gen(st, 1)
            fsutil.publish_dir(st, final)
        st = fsutil.new_staging_dir(final)
        write_gen(st, 2)
        counter.update(n=0, crash_at=crash_at)
        for n in names:
            monkeypatch.setattr(os, n, wrap(real[n]))
        monkeypatch.setattr(fsutil.shutil, "rmtree", wrap(real_rmtree))
        monkeypatch.setattr(fsutil, "_exchange", wrap(real_exchange))
        try:
            fsutil.publish_dir(st, final, durable=False)
            completed = True
        except Crash:
            pass
        finally:
            for n in names:
                monkeypatch.setattr(os, n, real[n])
            monkeypatch.setattr(fsutil.shutil, "rmtree", real_rmtree)
            monkeypatch.setattr(fsutil, "_exchange", real_exchange)
        if swap_mode and not first_publish:
            # with the exchange the published folder is whole even before recovery
            assert read_gen(final) in (1, 2)
        fsutil.recover(out)
        if first_publish and not final.exists():
            assert not completed
        else:
            got = read_gen(final)
            assert got in ((2,) if first_publish else (1, 2)), (crash_at, got)
            if completed:
                assert got == 2
        assert_clean_state(out)
        crash_at += 1
    assert crash_at >= 3  # several distinct interruption points were exercised


def test_publish_settles_an_earlier_killed_publish(tmp_path, monkeypatch):
    """A killed dance (final moved to trash) followed directly by another publish, no recover()."""
    monkeypatch.setattr(fsutil, "USE_EXCHANGE", False)
    out = tmp_path / "site"
    final = out / "p"
    st = fsutil.new_staging_dir(final)
    write_gen(st, 1)
    fsutil.publish_dir(st, final)
    st = fsutil.new_staging_dir(final)
    write_gen(st, 2)
    real_rename = os.rename
    calls = {"n": 0}

    def rename_once(a, b):
        calls["n"] += 1
        if calls["n"] == 2:
            raise Crash()
        return real_rename(a, b)

    monkeypatch.setattr(os, "rename", rename_once)
    with pytest.raises(Crash):
        fsutil.publish_dir(st, final, durable=False)
    monkeypatch.setattr(os, "rename", real_rename)
    assert not final.exists()  # cut between final->trash and staging->final
    st = fsutil.new_staging_dir(final)
    write_gen(st, 3)
    fsutil.publish_dir(st, final)
    assert read_gen(final) == 3
    fsutil.recover(out)
    assert_clean_state(out)


def test_recover_ignores_corrupt_journal(tmp_path):
    out = tmp_path / "site"
    jdir = out / ".reportgen" / "journal"
    jdir.mkdir(parents=True)
    (jdir / "p.json").write_text("{not json")
    (out / ".reportgen" / "staging" / "p.abc").mkdir(parents=True)
    warnings: list[str] = []
    assert fsutil.recover(out, on_warning=warnings.append) == []
    assert len(warnings) == 1 and "journal" in warnings[0]
    assert_clean_state(out)
    assert fsutil.recover(tmp_path / "never-built") == []


# ---------------------------------------------------------------------------
# kill -9 at random points of a publish loop in a child process

PUBLISHER = WRITER + textwrap.dedent(
    """
    from reportgen import fsutil
    out = Path(sys.argv[1]); final = out / "proj"
    gen = int(sys.argv[2])
    while True:
        gen += 1
        st = fsutil.new_staging_dir(final)
        write_gen(st, gen)
        fsutil.publish_dir(st, final, durable=False)
        print(gen, flush=True)
    """
)


def _env(exchange: bool) -> dict:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    env["REPORTGEN_NO_EXCHANGE"] = "0" if exchange else "1"
    return env


def _kill_loop(tmp_path: Path, exchange: bool, iterations: int, seed: int) -> None:
    rng = random.Random(seed)
    out = tmp_path / "site"
    final = out / "proj"
    script = tmp_path / "publisher.py"
    script.write_text(PUBLISHER)
    last = 0
    for it in range(iterations):
        proc = subprocess.Popen([sys.executable, str(script), str(out), str(last)],
                                stdout=subprocess.PIPE, text=True, env=_env(exchange))
        try:
            first = proc.stdout.readline()  # one publish completed: the loop is running
            assert first.strip(), "publisher died before its first publish"
            time.sleep(rng.uniform(0.0, 0.04))
            proc.send_signal(signal.SIGKILL)
            rest = proc.stdout.read()
        finally:
            proc.kill()
            proc.wait()
        reported = [int(x) for x in (first + rest).split()]
        done = reported[-1]
        if exchange:
            # the exchange keeps the folder whole at every instant, before any recovery
            assert read_gen(final) in (done, done + 1), f"iteration {it}, seed {seed}"
        fsutil.recover(out)
        got = read_gen(final)
        assert got in (done, done + 1), f"iteration {it}, seed {seed}: got {got}, last reported {done}"
        assert_clean_state(out)
        last = got


@pytest.mark.parametrize("exchange", [True, False], ids=["exchange", "rename-dance"])
def test_publish_survives_kill9(tmp_path, exchange):
    _kill_loop(tmp_path, exchange, iterations=6, seed=20240601 + exchange)


@pytest.mark.slow
@pytest.mark.parametrize("exchange", [True, False], ids=["exchange", "rename-dance"])
def test_publish_survives_kill9_long(tmp_path, exchange, request):
    # Runs only when asked for: `pytest -m slow` or REPORTGEN_SLOW=1 (about 30 s).
    if "slow" not in (request.config.getoption("-m") or "") and not os.environ.get("REPORTGEN_SLOW"):
        pytest.skip("long kill test: run with -m slow")
    _kill_loop(tmp_path, exchange, iterations=150, seed=int(time.time()))


# ---------------------------------------------------------------------------
# BuildLock with two processes

HOLDER = textwrap.dedent(
    """
    import sys, time
    from reportgen import fsutil
    with fsutil.BuildLock(sys.argv[1], timeout_s=10):
        print("locked", flush=True)
        time.sleep(float(sys.argv[2]))
    print("released", flush=True)
    """
)


def _start_holder(tmp_path: Path, out: Path, hold_s: float) -> subprocess.Popen:
    script = tmp_path / "holder.py"
    script.write_text(HOLDER)
    proc = subprocess.Popen([sys.executable, str(script), str(out), str(hold_s)],
                            stdout=subprocess.PIPE, text=True, env=_env(True))
    assert proc.stdout.readline().strip() == "locked"
    return proc


def test_lock_times_out_naming_the_holder(tmp_path):
    out = tmp_path / "site"
    holder = _start_holder(tmp_path, out, 30)
    try:
        said: list[str] = []
        t0 = time.monotonic()
        with pytest.raises(BuildError) as exc:
            with fsutil.BuildLock(out, timeout_s=0.4, on_wait=said.append):
                pass
        assert time.monotonic() - t0 >= 0.4
        assert str(exc.value) == f"another build of {out} is running (pid {holder.pid}); gave up after 0.4 s"
        assert said == [f"waiting for another build of {out} to finish (pid {holder.pid})…"]
    finally:
        holder.kill()
        holder.wait()


def test_lock_waits_then_proceeds(tmp_path):
    out = tmp_path / "site"
    holder = _start_holder(tmp_path, out, 0.5)
    try:
        said: list[str] = []
        t0 = time.monotonic()
        with fsutil.BuildLock(out, timeout_s=20, on_wait=said.append) as lock:
            waited = time.monotonic() - t0
            assert lock.path.read_text().strip() == str(os.getpid())
        assert holder.wait(timeout=10) == 0
        assert waited > 0.2
        assert len(said) == 1  # told once, however long the wait
    finally:
        holder.kill()
        holder.wait()
    # free lock: no waiting message at all
    said2: list[str] = []
    with fsutil.BuildLock(out, timeout_s=1, on_wait=said2.append):
        pass
    assert said2 == []


def test_lock_released_when_holder_is_killed(tmp_path):
    out = tmp_path / "site"
    holder = _start_holder(tmp_path, out, 30)
    holder.send_signal(signal.SIGKILL)
    holder.wait()
    with fsutil.BuildLock(out, timeout_s=2):
        pass


COUNTER = textwrap.dedent(
    """
    import sys, time
    from pathlib import Path
    from reportgen import fsutil
    out = Path(sys.argv[1])
    for _ in range(int(sys.argv[2])):
        with fsutil.BuildLock(out, timeout_s=30):
            p = out / "count.txt"
            n = int(p.read_text()) if p.exists() else 0
            time.sleep(0.002)  # widen the read-modify-write window
            fsutil.atomic_write_text(p, str(n + 1))
    """
)


def test_lock_serialises_two_processes(tmp_path):
    out = tmp_path / "site"
    out.mkdir()
    script = tmp_path / "counter.py"
    script.write_text(COUNTER)
    procs = [subprocess.Popen([sys.executable, str(script), str(out), "25"], env=_env(True)) for _ in range(2)]
    for p in procs:
        assert p.wait(timeout=60) == 0
    assert (out / "count.txt").read_text() == "50"  # no lost update
