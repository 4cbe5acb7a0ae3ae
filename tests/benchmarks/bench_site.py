"""Site build benchmark: full, no-op and one-changed rebuilds, --jobs 1 and 2.

Run:  python tests/benchmarks/bench_site.py [N]      (N generated projects, default 50)
Prints ratios, never asserts on time:
  no-op / full                   (target under 2 %)
  one-changed / (full / N)       (target under 1.5)
  full jobs 1 / full jobs 2      (target 1.7x or more on 2 cores)
  share of a full build spent in WeasyPrint and matplotlib themselves
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
TEMPLATE = (ROOT / "projects_demo" / "cold-store-480v" / "project.yaml").read_text()


def make_projects(src: Path, n: int) -> None:
    """N invented variants of a demo project (different measured currents and targets)."""
    for k in range(n):
        folder = src / f"site-{k:03d}"
        folder.mkdir(parents=True)
        text = (TEMPLATE.replace("current: 742 A", f"current: {700 + 7 * k} A")
                .replace("target_power_factor: 0.95", f"target_power_factor: {0.92 + (k % 6) / 100:.2f}")
                .replace("Northgate Cold Store", f"Generated site {k:03d}"))
        (folder / "project.yaml").write_text(text)


def run(src: Path, out: Path, jobs: int, extra=()) -> float:
    t = time.perf_counter()
    subprocess.run([sys.executable, "-m", "reportgen", "build", str(src), "--out", str(out), "--quiet",
                    "--jobs", str(jobs), *extra], check=True, cwd=ROOT)
    return time.perf_counter() - t


def renderer_share(src: Path, out: Path) -> tuple[float, float, float]:
    """In-process jobs-1 build timing WeasyPrint (write_pdf) and matplotlib (figure functions)."""
    sys.path.insert(0, str(ROOT))
    from reportgen import build as B
    from reportgen.render import figures, pdf

    spent = {"weasyprint": 0.0, "matplotlib": 0.0}
    depth = {"weasyprint": 0, "matplotlib": 0}

    def timed(fn, key):
        def wrapper(*a, **k):
            depth[key] += 1
            t = time.perf_counter()
            try:
                return fn(*a, **k)
            finally:
                depth[key] -= 1
                if depth[key] == 0:  # nested calls (a figure calling to_svg) are counted once
                    spent[key] += time.perf_counter() - t
        return wrapper

    pdf.write_pdf = timed(pdf.write_pdf, "weasyprint")
    for name in ("power_triangle", "phasor_diagram", "to_svg"):
        setattr(figures, name, timed(getattr(figures, name), "matplotlib"))
    t = time.perf_counter()
    B.build(src, out, B.Options(jobs=1, force=True), log=lambda *a: None, quiet=True)
    total = time.perf_counter() - t
    return total, spent["weasyprint"], spent["matplotlib"]


def main(n: int = 50) -> dict:
    with tempfile.TemporaryDirectory(prefix="reportgen-bench-") as tmp:
        tmp = Path(tmp)
        src = tmp / "src"
        make_projects(src, n)
        full1 = run(src, tmp / "out1", 1)
        full2 = run(src, tmp / "out2", 2)
        noop = run(src, tmp / "out2", 2)
        y = src / f"site-{n // 2:03d}" / "project.yaml"
        y.write_text(y.read_text().replace("revision: B", "revision: C"))
        one = run(src, tmp / "out2", 2)
        total, wp, mpl = renderer_share(src, tmp / "out3")
    figures = {
        "projects": n,
        "full_jobs1_s": full1, "full_jobs2_s": full2, "noop_s": noop, "one_changed_s": one,
        "noop_over_full_pct": 100 * noop / full2,
        "one_changed_over_full_per_project": one / (full2 / n),
        "speedup_jobs2": full1 / full2,
        "weasyprint_share_pct": 100 * wp / total, "matplotlib_share_pct": 100 * mpl / total,
        "ours_share_pct": 100 * (total - wp - mpl) / total,
    }
    return figures


if __name__ == "__main__":
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 50
    f = main(n)
    print(f"projects: {f['projects']}")
    print(f"full build   jobs 1: {f['full_jobs1_s']:.2f} s   jobs 2: {f['full_jobs2_s']:.2f} s   "
          f"speed-up {f['speedup_jobs2']:.2f}x (target >= 1.7x)")
    print(f"no-op rebuild: {f['noop_s']:.2f} s = {f['noop_over_full_pct']:.2f} % of full (target < 2 %)")
    print(f"one changed:   {f['one_changed_s']:.2f} s = {f['one_changed_over_full_per_project']:.2f} x full/N "
          f"(target < 1.5)")
    print(f"time in WeasyPrint {f['weasyprint_share_pct']:.1f} %, matplotlib {f['matplotlib_share_pct']:.1f} %, "
          f"reportgen and the rest {f['ours_share_pct']:.1f} %")
