"""Interval meter data (CSV): timestamps, real power and reactive power or PF.

The file is comma-separated with one header row. Column names are matched
exactly, then ignoring case. Values are in kW and kvar by default (as the
usual column names say); ``power_unit`` may be ``"W"``, ``"kW"`` or ``"MW"``
and the reactive column is read with the same prefix (var, kvar, Mvar). They
are converted to W and var. Each row is the average demand over one interval.

Timestamps are ISO 8601: ``2024-01-31 13:45``, ``2024-01-31T13:45:00``, a
date alone, optionally with fractional seconds (dropped) and a time-zone
offset (``Z``, ``+01:00``, ``-0500``); times with an offset are converted to
UTC, times without one are taken as they are (treated as UTC).

Reactive power comes from ``reactive_column`` (+ inductive) or, failing
that, from ``power_factor_column``: ``Q = |P| tan(acos |PF|)``, negative
(leading) where the PF value is negative. The PF column must hold values in
[-1, 1] and not 0.

Problems are reported as ``file:line:col`` with ``col`` the 1-based field
(column) number in the CSV. Blank lines are ignored; a row with an empty
power, reactive or PF cell is skipped and listed in ``skipped`` (a meter's
missing reading); every other problem is an error. At most
:data:`MAX_BYTES` bytes and :data:`MAX_ROWS` data rows are read.
"""

from __future__ import annotations

import csv
import io
import os
import re
import warnings
from dataclasses import dataclass
from operator import itemgetter
from typing import Any

import numpy as np

from reportgen.calc.profile import Gap, IntervalInfo, interval_info
from reportgen.errors import InputError, Problem

__all__ = ["IntervalData", "read_interval_csv", "MAX_BYTES", "MAX_ROWS", "find_column", "parse_timestamps"]

MAX_BYTES = 64 * 1024 * 1024
MAX_ROWS = 1_100_000  # a leap year of one-minute data is 527 040 rows
MAX_PROBLEMS = 20

_UNITS = {"w": 1.0, "kw": 1e3, "mw": 1e6}
_TZ = re.compile(r"(Z|z|[+-]\d\d(?::?\d\d)?)$")
_ISO = re.compile(r"^\d{4}-\d\d-\d\d([T ]\d\d(:\d\d(:\d\d(\.\d+)?)?)?)?$")
_EXAMPLE = "expected ISO 8601 such as 2024-01-31 13:45 or 2024-01-31T13:45:00+01:00"


@dataclass(frozen=True, eq=False)
class IntervalData:
    """Parsed interval data in SI units.

    ``t`` is ``datetime64[s]`` (UTC), ``t_s`` the same as float seconds since
    1970-01-01, ``lines`` the 1-based file line of each sample, ``info`` the
    interval length and gaps (``gaps`` repeats ``info.gaps``) and
    ``skipped`` the rows left out.
    """

    t: np.ndarray
    t_s: np.ndarray
    p_w: np.ndarray
    q_var: np.ndarray
    lines: np.ndarray
    info: IntervalInfo
    gaps: tuple[Gap, ...]
    skipped: tuple[Problem, ...]

    def as_dict(self) -> dict[str, Any]:
        return {
            "intervals": int(self.t.size),
            "interval_s": self.info.interval_s,
            "first": str(self.t[0]),
            "last": str(self.t[-1]),
            "gaps": [g.as_dict() for g in self.gaps],
            "skipped": [str(p) for p in self.skipped],
        }


def _fail(problems: list[Problem]) -> None:
    if problems:
        raise InputError(problems[:MAX_PROBLEMS])


def find_column(header: list[str], name: str, display_name: str, what: str) -> int:
    """0-based index of ``name`` in ``header`` (exact, then ignoring case)."""
    clean = [h.strip() for h in header]
    if name in clean:
        return clean.index(name)
    low = [h.lower() for h in clean]
    if low.count(name.lower()) == 1:
        return low.index(name.lower())
    present = ", ".join(repr(h) for h in clean) or "none"
    raise InputError([Problem(display_name, 1, 1, f"no {what} column {name!r}; the columns present are {present}")])


def open_csv_rows(path: str | os.PathLike, display_name: str) -> tuple[list[str], list[list[str]], list[int]]:
    """Header, data rows and their 1-based line numbers (blank lines dropped), with size limits."""
    try:
        size = os.path.getsize(path)
    except FileNotFoundError:
        raise InputError([Problem(display_name, 1, 1, "file not found")]) from None
    except OSError as exc:
        raise InputError([Problem(display_name, 1, 1, f"cannot read the file: {exc.strerror}")]) from None
    if size > MAX_BYTES:
        raise InputError([Problem(
            display_name, 1, 1,
            f"file is {size / 1e6:.1f} MB; the limit is {MAX_BYTES / 1e6:.0f} MB (split the data or use a longer interval)",
        )])
    try:
        with open(path, "rb") as fh:
            raw = fh.read()
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        raise InputError([Problem(display_name, line, 1, "the file is not UTF-8 text")]) from None
    except OSError as exc:
        raise InputError([Problem(display_name, 1, 1, f"cannot read the file: {exc.strerror}")]) from None
    try:
        if '"' not in text:
            # No quoting: one physical line per row, so line numbers are indices.
            all_rows = list(csv.reader(text.split("\n")))
            all_lines: list[int] | None = None
        else:
            reader = csv.reader(io.StringIO(text, newline=""))
            all_rows, all_lines = [], []
            for row in reader:
                all_rows.append(row)
                all_lines.append(reader.line_num)
    except csv.Error as exc:
        raise InputError([Problem(display_name, 1, 1, f"bad CSV: {exc}")]) from None
    while all_rows and not all_rows[-1]:
        all_rows.pop()
    if all_rows and min(map(len, all_rows)) > 1:
        keep = range(len(all_rows))  # no blank lines: keep every row
    else:
        keep = [i for i, r in enumerate(all_rows) if r and (len(r) > 1 or r[0].strip())]
    header: list[str] | None = None
    rows: list[list[str]] = []
    lines: list[int] = []
    if keep:
        header = all_rows[keep[0]]
        if isinstance(keep, range):
            rows = all_rows[1:]
            lines = list(range(2, len(all_rows) + 1)) if all_lines is None else all_lines[1:]
        else:
            rows = [all_rows[i] for i in keep[1:]]
            lines = [i + 1 for i in keep[1:]] if all_lines is None else [all_lines[i] for i in keep[1:]]
        if len(rows) > MAX_ROWS:
            raise InputError([Problem(
                display_name, lines[MAX_ROWS], 1,
                f"more than {MAX_ROWS} data rows; the limit is {MAX_ROWS} (split the data or use a longer interval)",
            )])
    if header is None:
        raise InputError([Problem(display_name, 1, 1, "the file is empty (no header row)")])
    return header, rows, lines


def _fast_datetimes(strings: list[str]) -> np.ndarray | None:
    """All strings to datetime64[s] in one NumPy call, or None if any is not plain ISO 8601.

    Strings shorter than a date (NumPy would take "2024", "today", "now") and
    strings with a time-zone offset (NumPy warns) are refused here.
    """
    if not strings or min(map(len, strings)) < 10:
        return None
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error")
            t = np.array(strings, dtype="datetime64[s]")
    except (ValueError, TypeError, DeprecationWarning, UserWarning):
        return None
    if np.isnat(t).any():
        return None
    return t


def parse_timestamps(
    raw: list[str], lines: list[int], col: int, display_name: str, column_name: str
) -> np.ndarray:
    """ISO 8601 strings to ``datetime64[s]`` UTC; problems name the line and 1-based field."""
    t = _fast_datetimes(raw)
    if t is not None:
        return t
    n = len(raw)
    offs = np.zeros(n, dtype=np.int64)
    base: list[str] = []
    problems: list[Problem] = []

    def bad(i: int) -> None:
        problems.append(Problem(display_name, lines[i], col + 1,
                                f"bad timestamp {raw[i]!r} in column {column_name!r}; {_EXAMPLE}"))

    for i, s in enumerate(raw):
        m = _TZ.search(s, 10)
        if m is None:
            base.append(s)
            continue
        base.append(s[: m.start()])
        tz = m.group(1)
        if tz in ("Z", "z"):
            continue
        digits = tz[1:].replace(":", "")
        hh, mm = int(digits[:2]), int(digits[2:4] or 0)
        if hh > 18 or mm > 59:
            bad(i)
        offs[i] = (-1 if tz[0] == "-" else 1) * (hh * 3600 + mm * 60)
    t = _fast_datetimes(base) if not problems else None
    if t is None:
        t = np.empty(n, dtype="datetime64[s]")
        for i, s in enumerate(base):
            if len(problems) >= MAX_PROBLEMS:
                break
            if not _ISO.match(s):
                bad(i)
                continue
            one = _fast_datetimes([s])
            if one is None:
                bad(i)
                continue
            t[i] = one[0]
        _fail(problems)
    # UTC = local time - offset
    return t - offs.astype("timedelta64[s]")


def parse_numbers(
    raw: list[str], lines: list[int], col: int, display_name: str, column_name: str
) -> np.ndarray:
    """Strings to float64; problems name the line and field."""
    out, problems = _numbers(raw, lines, col, display_name, column_name)
    _fail(problems)
    return out


def _numbers(
    raw: list[str], lines: list[int], col: int, display_name: str, column_name: str
) -> tuple[np.ndarray, list[Problem]]:
    try:
        a = np.array(raw, dtype=float)
        if np.all(np.isfinite(a)):
            return a, []
    except ValueError:
        pass
    problems = []
    out = np.empty(len(raw))
    for i, s in enumerate(raw):
        try:
            v = float(s)
            if not np.isfinite(v):
                raise ValueError
            out[i] = v
        except ValueError:
            problems.append(Problem(display_name, lines[i], col + 1,
                                    f"{s!r} in column {column_name!r} is not a number"))
            if len(problems) >= MAX_PROBLEMS:
                break
    return out, problems


def _careful(rows, lines, ct, cp, cq, need, names, display_name):
    """Row-by-row extraction: strips cells, skips empty readings, locates every problem."""
    problems: list[Problem] = []
    ts: list[str] = []
    ps: list[str] = []
    qs: list[str] = []
    keep_lines: list[int] = []
    skipped: list[Problem] = []
    for row, ln in zip(rows, lines):
        if len(row) <= need:
            problems.append(Problem(display_name, ln, len(row) + 1,
                                    f"row has {len(row)} field(s); column {names[need]!r} (field {need + 1}) is missing"))
            if len(problems) >= MAX_PROBLEMS:
                break
            continue
        t, p, q = row[ct].strip(), row[cp].strip(), row[cq].strip()
        if not t:
            problems.append(Problem(display_name, ln, ct + 1, f"empty timestamp in column {names[ct]!r}"))
            continue
        if not p or not q:
            c = cp if not p else cq
            skipped.append(Problem(display_name, ln, c + 1, f"empty value in column {names[c]!r}; row skipped"))
            continue
        ts.append(t)
        ps.append(p)
        qs.append(q)
        keep_lines.append(ln)
    _fail(problems)
    if not ts:
        raise InputError([Problem(display_name, 1, 1, "the file holds no data rows")])
    t64 = parse_timestamps(ts, keep_lines, ct, display_name, names[ct])
    p_w, bad_p = _numbers(ps, keep_lines, cp, display_name, names[cp])
    qv, bad_q = _numbers(qs, keep_lines, cq, display_name, names[cq])
    _fail(bad_p + bad_q)
    return t64, p_w, qv, keep_lines, skipped, qs


def read_interval_csv(
    path: str | os.PathLike,
    display_name: str,
    timestamp_column: str,
    power_column: str,
    reactive_column: str | None = None,
    power_factor_column: str | None = None,
    power_unit: str = "kW",
) -> IntervalData:
    """Read interval meter data into SI arrays.

    Parameters
    ----------
    path : path-like
        The CSV file (already resolved inside the project).
    display_name : str
        Name shown in messages (e.g. the path relative to the project).
    timestamp_column, power_column : str
        Header names of the timestamp and real-power columns.
    reactive_column : str, optional
        Header name of the reactive-power column (+ inductive).
    power_factor_column : str, optional
        Used when there is no reactive column.
    power_unit : str
        ``"W"``, ``"kW"`` (default) or ``"MW"``; the reactive column uses the
        same prefix.

    Returns
    -------
    IntervalData

    Raises
    ------
    reportgen.errors.InputError
        ``file:line:col`` problems: missing file or column, bad timestamp,
        text in a number column, duplicate or out-of-order times, size limits.
    """
    unit = _UNITS.get(power_unit.strip().lower())
    if unit is None:
        raise InputError([Problem(display_name, 1, 1, f"unknown power unit {power_unit!r}; use W, kW or MW")])
    if reactive_column is None and power_factor_column is None:
        raise InputError([Problem(display_name, 1, 1,
                                  "neither a reactive-power column nor a power-factor column was named for this file")])
    header, rows, lines = open_csv_rows(path, display_name)
    ct = find_column(header, timestamp_column, display_name, "timestamp")
    cp = find_column(header, power_column, display_name, "power")
    if reactive_column is not None:
        cq = find_column(header, reactive_column, display_name, "reactive-power")
    else:
        cq = find_column(header, power_factor_column, display_name, "power-factor")  # type: ignore[arg-type]
    names = [h.strip() for h in header]
    need = max(ct, cp, cq)
    parsed = None
    if rows and min(map(len, rows)) > need:
        t64 = _fast_datetimes(list(map(itemgetter(ct), rows)))
        if t64 is not None:
            try:
                pa = np.array(list(map(itemgetter(cp), rows)), dtype=float)
                q_raw = list(map(itemgetter(cq), rows))
                qa = np.array(q_raw, dtype=float)
                if np.all(np.isfinite(pa)) and np.all(np.isfinite(qa)):
                    parsed = (t64, pa, qa, lines, [], q_raw)
            except ValueError:
                pass
    if parsed is None:
        parsed = _careful(rows, lines, ct, cp, cq, need, names, display_name)
    t64, pa, qv, keep_lines, skipped, qs = parsed
    p_w = pa * unit
    if reactive_column is not None:
        q_var = qv * unit
    else:
        bad = np.flatnonzero((np.abs(qv) > 1.0) | (qv == 0.0))
        _fail([Problem(display_name, keep_lines[i], cq + 1,
                       f"power factor {qs[i]!r} in column {names[cq]!r} must be between -1 and 1 and not 0")
               for i in bad[:MAX_PROBLEMS]])
        pfa = np.abs(qv)
        q_var = np.sign(qv) * np.abs(p_w) * np.sqrt(1.0 - pfa * pfa) / pfa
    # Order: each time must be later than the one before.
    d = np.diff(t64.astype(np.int64))
    bad = np.flatnonzero(d <= 0)
    if bad.size:
        probs = []
        for i in bad[:MAX_PROBLEMS]:
            j = int(i) + 1
            if d[i] == 0:
                msg = f"duplicate time {t64[j]} (also on line {keep_lines[j - 1]})"
            else:
                msg = (f"time {t64[j]} is earlier than {t64[j - 1]} on line {keep_lines[j - 1]}; "
                       "rows must be in time order")
            probs.append(Problem(display_name, keep_lines[j], ct + 1, msg))
        _fail(probs)
    t_s = t64.astype(np.int64).astype(float)
    if t_s.size < 2:
        raise InputError([Problem(display_name, keep_lines[0], 1,
                                  "only one data row; at least two are needed to find the interval length")])
    info = interval_info(t_s)
    return IntervalData(
        t=t64,
        t_s=t_s,
        p_w=p_w,
        q_var=q_var,
        lines=np.asarray(keep_lines, dtype=np.int64),
        info=info,
        gaps=info.gaps,
        skipped=tuple(skipped),
    )
