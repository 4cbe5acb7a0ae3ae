"""Benchmark: a year of 15-minute interval data read, simulated and searched.

Prints timings, the speed ratio against the per-interval Python loop of the same
controller rule, and peak traced memory. Asserts correctness only, never wall time.
Run as a script for the figures alone: ``python tests/benchmarks/test_bench_profile.py``.
"""

from __future__ import annotations

import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

import numpy as np
import pytest

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from reportgen.calc import profile as pr  # noqa: E402
from reportgen.readers.interval import read_interval_csv  # noqa: E402

N = 35040  # 365 days x 96 intervals
TARGET = 0.95


def invented_year(path: Path) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """An invented plant: 150 kW base, a weekday shift of motors, slow random wander."""
    rng = np.random.default_rng(2024)
    k = np.arange(N)
    t = np.datetime64("2023-01-02T00:00:00") + k * np.timedelta64(900, "s")  # a Monday
    hour = (k % 96) / 4.0
    day = (k // 96) % 7
    shift = ((hour >= 7) & (hour < 17) & (day < 5)).astype(float)
    wander = np.convolve(rng.normal(0, 1, N), np.ones(8) / 8, mode="same")
    p_kw = 150 + 250 * shift + 25 * wander
    pf = np.where(shift > 0, 0.78, 0.86) + 0.01 * wander
    q_kvar = p_kw * np.tan(np.arccos(np.clip(pf, 0.5, 0.99)))
    p_kw, q_kvar = np.round(p_kw, 2), np.round(q_kvar, 2)
    with open(path, "w", encoding="utf-8") as fh:
        fh.write("time,kW,kvar\n")
        ts = np.datetime_as_string(t, unit="m")
        fh.writelines(f"{a},{b:.2f},{c:.2f}\n" for a, b, c in zip(ts, p_kw, q_kvar))
    return t, p_kw * 1e3, q_kvar * 1e3


def best_of(fn, repeat: int) -> tuple[float, object]:
    best, out = float("inf"), None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def run(folder: Path) -> dict[str, float]:
    csv_path = folder / "year.csv"
    t, p, q = invented_year(csv_path)
    bank = pr.Bank.equal(25e3, 10)

    t_read, data = best_of(lambda: read_interval_csv(csv_path, "year.csv", "time", "kW", "kvar"), 5)
    assert data.t.size == N and np.array_equal(data.t, t) and not data.gaps
    assert np.allclose(data.p_w, p) and np.allclose(data.q_var, q)

    t_sim, sim = best_of(lambda: pr.simulate(data.t, data.p_w, data.q_var, bank, TARGET), 5)
    t_loop, loop = best_of(lambda: pr.simulate_loop(data.t, data.p_w, data.q_var, bank, TARGET), 1)
    assert np.array_equal(sim.steps, loop.steps)
    assert sim.switching_ops == loop.switching_ops and sim.met_fraction == loop.met_fraction

    t_search, ds = best_of(lambda: pr.design_search(data.t, data.p_w, data.q_var, TARGET), 3)
    assert len(ds.candidates) >= 200
    assert ds.best is not None

    tracemalloc.start()
    d2 = read_interval_csv(csv_path, "year.csv", "time", "kW", "kvar")
    pr.simulate(d2.t, d2.p_w, d2.q_var, bank, TARGET)
    pr.design_search(d2.t, d2.p_w, d2.q_var, TARGET)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()

    figures = {
        "rows": float(N),
        "read_s": t_read,
        "simulate_s": t_sim,
        "read_plus_simulate_s": t_read + t_sim,
        "loop_s": t_loop,
        "loop_ratio": t_loop / t_sim,
        "search_s": t_search,
        "candidates": float(len(ds.candidates)),
        "peak_mem_mb": peak / 1e6,
    }
    print(
        f"\n{N} rows of 15-minute data, one equal-step bank ({bank.step_count} x {bank.step_var / 1e3:g} kvar):\n"
        f"  read CSV           {t_read * 1e3:8.1f} ms\n"
        f"  simulate (NumPy)   {t_sim * 1e3:8.1f} ms\n"
        f"  simulate (loop)    {t_loop * 1e3:8.1f} ms   ratio {t_loop / t_sim:.0f}x\n"
        f"  design search      {t_search * 1e3:8.1f} ms   {len(ds.candidates)} candidates\n"
        f"  peak traced memory {peak / 1e6:8.1f} MB\n"
        f"  chosen bank: {ds.best.step_count} {ds.best.kind} x {ds.best.step_var / 1e3:g} kvar, "
        f"met {ds.best.met_fraction * 100:.1f} %, {ds.best.switching_per_day:.1f} operations/day"
    )
    return figures


@pytest.mark.benchmark
def test_benchmark_profile(tmp_path):
    figures = run(tmp_path)
    assert figures["candidates"] >= 200


if __name__ == "__main__":
    with tempfile.TemporaryDirectory() as d:
        run(Path(d))
