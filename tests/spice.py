"""Run ngspice (Debian package ``ngspice``) in batch mode as an outside reference.

Tests call :func:`ac` or :func:`tran` with a netlist body (elements only).
Under CI (``CI`` set in the environment) a missing ngspice is a failure,
not a skip: the reference checks must run somewhere.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import tempfile
from pathlib import Path

import numpy as np
import pytest


def require_ngspice() -> str:
    exe = shutil.which("ngspice")
    if exe is None:
        if os.environ.get("CI"):
            pytest.fail("ngspice is not installed (apt-get install ngspice); reference checks cannot run")
        pytest.skip("ngspice not installed")
    return exe


def _run(netlist: str, analysis: str, vectors: list[str]) -> np.ndarray:
    exe = require_ngspice()
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "out.txt"
        deck = (
            "* reportgen reference circuit\n"
            f"{netlist.strip()}\n"
            ".control\n"
            "set wr_singlescale\n"
            f"{analysis}\n"
            f"wrdata {out} {' '.join(vectors)}\n"
            "quit\n"
            ".endc\n"
            ".end\n"
        )
        cir = Path(tmp) / "deck.cir"
        cir.write_text(deck)
        proc = subprocess.run([exe, "-b", str(cir)], capture_output=True, text=True, timeout=120)
        if not out.exists():
            raise RuntimeError(f"ngspice produced no output:\n{proc.stdout}\n{proc.stderr}")
        return np.loadtxt(out, ndmin=2)


def ac(netlist: str, vectors: list[str], f_start: float, f_stop: float | None = None, points: int = 1,
       sweep: str = "lin") -> tuple[np.ndarray, dict[str, np.ndarray]]:
    """AC analysis. Returns (frequencies, {vector: complex array})."""
    f_stop = f_start if f_stop is None else f_stop
    data = _run(netlist, f"ac {sweep} {points} {f_start!r} {f_stop!r}", vectors)
    freqs = data[:, 0]
    res = {v: data[:, 1 + 2 * k] + 1j * data[:, 2 + 2 * k] for k, v in enumerate(vectors)}
    return freqs, res


def tran(netlist: str, vectors: list[str], t_step: float, t_stop: float,
         options: str = "uic") -> tuple[np.ndarray, dict[str, np.ndarray]]:
    """Transient analysis. Returns (times, {vector: real array})."""
    data = _run(netlist, f"tran {t_step!r} {t_stop!r} {options}", vectors)
    t = data[:, 0]
    return t, {v: data[:, 1 + k] for k, v in enumerate(vectors)}
