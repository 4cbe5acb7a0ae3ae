"""Reader for waveform captures saved as CSV (time, voltage, current or shunt voltage).

The first non-blank line is the header; columns are chosen by header name.
Fields are separated by commas (a header without commas but with semicolons
or tabs selects that separator). Blank lines are skipped. Every problem is
reported as ``file:line:col`` (1-based; ``col`` is the character column where
the field starts), with a limit on file size and rows so a wrong file cannot
exhaust memory.
"""

from __future__ import annotations

import csv
import math
import os
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from reportgen.errors import InputError, Problem

__all__ = ["WaveformData", "read_waveform_csv", "MAX_FILE_BYTES", "MAX_ROWS", "MIN_ROWS"]

MAX_FILE_BYTES = 50 * 1024 * 1024
MAX_ROWS = 2_000_000
MIN_ROWS = 8
MAX_PROBLEMS = 20


@dataclass(frozen=True)
class WaveformData:
    """Samples read from a capture: time (s), voltage (V), current (A)."""

    t_s: np.ndarray
    v_v: np.ndarray
    i_a: np.ndarray

    @property
    def samples(self) -> int:
        return int(self.t_s.size)


def _fail(name: str, message: str, line: int = 1, col: int = 1) -> InputError:
    return InputError([Problem(name, line, col, message)])


def _field_cols(raw: str, fields: list[str], delim: str) -> list[int]:
    """1-based character column where each field starts (exact for unquoted fields)."""
    cols, pos = [], 0
    for f in fields:
        cols.append(pos + 1)
        pos += len(f) + len(delim)
    if '"' in raw:  # quoted fields: locate each field by search instead
        cols, start = [], 0
        for f in fields:
            k = raw.find(f, start)
            k = start if k < 0 else k
            cols.append(k + 1)
            start = k + len(f)
    return cols


def read_waveform_csv(
    path: str | os.PathLike,
    display_name: str,
    time_column: str,
    voltage_column: str,
    current_column: str | None = None,
    shunt_column: str | None = None,
    shunt_resistance_ohm: float | None = None,
) -> WaveformData:
    """Read time, voltage and current samples from a CSV capture.

    Parameters
    ----------
    path : path-like
        The file (already resolved inside the project).
    display_name : str
        Name shown in messages (e.g. the path relative to the project).
    time_column, voltage_column : str
        Header names of the time (s) and voltage (V) columns.
    current_column : str, optional
        Header name of the current column (A).
    shunt_column : str, optional
        Header name of a shunt-voltage column (V); current = shunt voltage / R.
    shunt_resistance_ohm : float, optional
        Shunt resistance R (ohm), required with ``shunt_column``.

    Returns
    -------
    WaveformData

    Raises
    ------
    InputError
        Missing file, file too large, missing column (the message lists the
        columns present), empty or non-numeric cell (its line and column),
        too few or too many rows.
    """
    name = display_name
    if (current_column is None) == (shunt_column is None):
        raise _fail(name, "give either a current column or a shunt-voltage column (exactly one)")
    if shunt_column is not None:
        if shunt_resistance_ohm is None or not (shunt_resistance_ohm > 0 and math.isfinite(shunt_resistance_ohm)):
            raise _fail(name, f"a shunt column needs a positive shunt resistance in ohm, got {shunt_resistance_ohm!r}")
    p = Path(path)
    try:
        size = p.stat().st_size
    except FileNotFoundError:
        raise _fail(name, "file not found") from None
    except OSError as exc:
        raise _fail(name, f"cannot read the file: {exc.strerror}") from None
    if not p.is_file():
        raise _fail(name, "not a file")
    if size > MAX_FILE_BYTES:
        raise _fail(name, f"the file is {size / 1e6:.1f} MB; waveform captures are limited to "
                          f"{MAX_FILE_BYTES / 1024 / 1024:.0f} MB (shorten the capture or lower the sampling rate)")
    try:
        with p.open("r", encoding="utf-8-sig", newline="") as fh:
            text = fh.read()
    except UnicodeDecodeError as exc:
        raise _fail(name, f"the file is not UTF-8 text (byte {exc.start + 1})") from None
    except OSError as exc:
        raise _fail(name, f"cannot read the file: {exc.strerror}") from None

    lines = text.splitlines()
    header_idx = next((k for k, ln in enumerate(lines) if ln.strip()), None)
    if header_idx is None:
        raise _fail(name, "the file is empty; expected a header line and data rows")
    head = lines[header_idx]
    delim = "," if "," in head else (";" if ";" in head else ("\t" if "\t" in head else ","))
    header = next(csv.reader([head], delimiter=delim))
    names = [h.strip() for h in header]
    header_cols = _field_cols(head, header, delim)
    wanted = [("time", time_column), ("voltage", voltage_column)]
    wanted.append(("current", current_column) if current_column is not None else ("shunt voltage", shunt_column))
    idx: list[int] = []
    problems: list[Problem] = []
    present = ", ".join(repr(n) for n in names)
    for role, col in wanted:
        if col not in names:
            problems.append(Problem(name, header_idx + 1, 1,
                                    f"no {role} column {col!r}; the columns present are {present}"))
        else:
            idx.append(names.index(col))
    if problems:
        raise InputError(problems)
    dup = [c for _, c in wanted if names.count(c) > 1]
    if dup:
        k = names.index(dup[0])
        raise _fail(name, f"column {dup[0]!r} appears more than once in the header", header_idx + 1, header_cols[k])

    cols: list[list[float]] = [[], [], []]
    rows = 0
    need = max(idx) + 1
    reader = csv.reader(lines[header_idx + 1:], delimiter=delim)
    for rec in reader:
        line_no = header_idx + 1 + reader.line_num
        if not rec or all(not f.strip() for f in rec):
            continue
        rows += 1
        if rows > MAX_ROWS:
            raise _fail(name, f"more than {MAX_ROWS:,} data rows; shorten the capture", line_no, 1)
        if len(rec) < need:
            problems.append(Problem(name, line_no, 1, f"the row has {len(rec)} fields; expected at least {need}"))
        else:
            for slot, k in enumerate(idx):
                cell = rec[k].strip()
                try:
                    val = float(cell)
                    ok = math.isfinite(val)
                except ValueError:
                    ok = False
                if not ok:
                    raw = lines[line_no - 1]
                    col = _field_cols(raw, rec, delim)[k]
                    what = "an empty cell" if not cell else f"{cell!r} is not a finite number"
                    problems.append(Problem(name, line_no, col, f"column {names[k]!r}: {what}"))
                else:
                    cols[slot].append(val)
        if len(problems) >= MAX_PROBLEMS:
            break
    if problems:
        raise InputError(problems)
    if rows < MIN_ROWS:
        raise _fail(name, f"only {rows} data rows; a waveform capture needs at least {MIN_ROWS} "
                          "(and at least one full cycle)", header_idx + 1, 1)
    t = np.asarray(cols[0])
    v = np.asarray(cols[1])
    i = np.asarray(cols[2])
    if shunt_column is not None:
        i = i / float(shunt_resistance_ohm)
    return WaveformData(t, v, i)
