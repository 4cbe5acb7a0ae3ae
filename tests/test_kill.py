"""Kill a build at random points (SIGKILL) and check that nothing is lost.

After every kill, each project's output folder is either the old complete set or
the new complete set, byte for byte; the next build repairs the rest. CI kills 3
times; the long run (REPORTGEN_KILLS=25) is documented in DEVELOPERS.md.
"""

import os
import random
import re
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "projects_demo"
KILLS = int(os.environ.get("REPORTGEN_KILLS", "3"))


def tree(folder: Path) -> dict:
    return {p.relative_to(folder).as_posix(): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def build_cmd(src, out):
    return [sys.executable, "-m", "reportgen", "build", str(src), "--out", str(out), "--quiet", "--jobs", "2"]


PROJECTS = ("coil-bench-400hz", "cold-store-480v", "joinery-workshop-230v")


def make_src(dest: Path, revision: str) -> Path:
    for name in PROJECTS:
        shutil.copytree(DEMO / name, dest / name)
    for y in dest.glob("*/project.yaml"):
        text = y.read_text()
        m = re.search(r"^  title: ([\"']?)", text, re.M)
        y.write_text(text[: m.end()] + f"({revision}) " + text[m.end():])
    return dest


@pytest.fixture(scope="module")
def refs(tmp_path_factory):
    """Reference builds of the old and the new inputs, from the same source path."""
    tmp = tmp_path_factory.mktemp("kill")
    src = tmp / "src"
    make_src(src, "old")
    subprocess.run(build_cmd(src, tmp / "ref-old"), check=True, cwd=ROOT)
    shutil.rmtree(src)
    make_src(src, "new")
    subprocess.run(build_cmd(src, tmp / "ref-new"), check=True, cwd=ROOT)
    names = sorted(PROJECTS)
    old_sets = {n: tree(tmp / "ref-old" / n) for n in names}
    new_sets = {n: tree(tmp / "ref-new" / n) for n in names}
    assert all(old_sets[n] != new_sets[n] for n in names)
    return src, tmp / "ref-old", names, old_sets, new_sets


@pytest.mark.parametrize("seed", range(KILLS))
def test_kill_during_build_keeps_old_or_new_set(tmp_path, refs, seed):
    src, ref_old, names, old_sets, new_sets = refs
    rng = random.Random(seed)
    # the site under test starts as the old build; the new sources are built into it and killed
    site = tmp_path / "site"
    shutil.copytree(ref_old, site)
    proc = subprocess.Popen(build_cmd(src, site), cwd=ROOT, start_new_session=True,
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    time.sleep(rng.uniform(0.2, 5.0))
    os.killpg(proc.pid, signal.SIGKILL)
    proc.wait()
    for n in names:
        got = tree(site / n)
        assert got == old_sets[n] or got == new_sets[n], f"{n}: a mix of old and new outputs"
    # the next build repairs whatever was left
    subprocess.run(build_cmd(src, site), check=True, cwd=ROOT)
    for n in names:
        assert tree(site / n) == new_sets[n], n
