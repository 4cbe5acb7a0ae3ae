"""Monthly billing data (CSV): one row per month.

Columns (header names, case ignored): ``month`` (``YYYY-MM``), ``kwh``,
``kvarh``, ``peak_kw``, and optionally ``peak_kva`` and ``billed_amount``.
Values are in kWh, kvarh, kW and kVA as the names say and are converted to
Wh, varh, W and VA. Months may be in any order but not repeated; they are
returned in calendar order. An empty optional cell means "not on the bill".
Problems are ``file:line:col`` with ``col`` the 1-based field number.
"""

from __future__ import annotations

import math
import os
import re

from reportgen.calc.tariff import MonthUsage
from reportgen.errors import InputError, Problem

from .interval import MAX_PROBLEMS, open_csv_rows

__all__ = ["read_billing_csv", "REQUIRED", "OPTIONAL"]

REQUIRED = ("month", "kwh", "kvarh", "peak_kw")
OPTIONAL = ("peak_kva", "billed_amount")
_MONTH = re.compile(r"^\d{4}-(0[1-9]|1[0-2])$")
_SCALE = {"kwh": 1e3, "kvarh": 1e3, "peak_kw": 1e3, "peak_kva": 1e3, "billed_amount": 1.0}


def read_billing_csv(path: str | os.PathLike, display_name: str) -> tuple[MonthUsage, ...]:
    """Read monthly bills into :class:`reportgen.calc.tariff.MonthUsage` records (SI).

    Parameters
    ----------
    path : path-like
        The CSV file (already resolved inside the project).
    display_name : str
        Name shown in messages.

    Returns
    -------
    tuple of MonthUsage
        In calendar order.

    Raises
    ------
    reportgen.errors.InputError
        Missing file or column, bad month, text or a negative value in a
        number column, a repeated month, a peak kVA below the peak kW.
    """
    header, rows, lines = open_csv_rows(path, display_name)
    low = [h.strip().lower() for h in header]
    present = ", ".join(repr(h.strip()) for h in header)
    missing = [c for c in REQUIRED if c not in low]
    if missing:
        raise InputError([Problem(display_name, 1, 1,
                                  f"no column {', '.join(repr(m) for m in missing)}; the columns present are {present}")])
    col = {c: low.index(c) for c in REQUIRED + OPTIONAL if c in low}
    problems: list[Problem] = []
    out: list[MonthUsage] = []
    seen: dict[str, int] = {}
    for row, ln in zip(rows, lines):
        if len(problems) >= MAX_PROBLEMS:
            break
        vals: dict[str, float | None] = {}
        ok = True
        for name, c in col.items():
            cell = row[c].strip() if c < len(row) else ""
            if name == "month":
                if not _MONTH.match(cell):
                    problems.append(Problem(display_name, ln, c + 1, f"bad month {cell!r}; write it as YYYY-MM, e.g. 2024-03"))
                    ok = False
                elif cell in seen:
                    problems.append(Problem(display_name, ln, c + 1, f"month {cell} appears twice (also on line {seen[cell]})"))
                    ok = False
                else:
                    seen[cell] = ln
                continue
            if not cell:
                if name in REQUIRED:
                    problems.append(Problem(display_name, ln, c + 1, f"empty value in column {header[c].strip()!r}"))
                    ok = False
                vals[name] = None
                continue
            try:
                v = float(cell.replace(",", "")) if name == "billed_amount" else float(cell)
                if not math.isfinite(v):
                    raise ValueError
            except ValueError:
                problems.append(Problem(display_name, ln, c + 1, f"{cell!r} in column {header[c].strip()!r} is not a number"))
                ok = False
                continue
            if v < 0 and name != "billed_amount":
                problems.append(Problem(display_name, ln, c + 1, f"{cell!r} in column {header[c].strip()!r} must not be negative"))
                ok = False
                continue
            vals[name] = v * _SCALE[name]
        if not ok:
            continue
        kva, kw = vals.get("peak_kva"), vals["peak_kw"]
        if kva is not None and kw is not None and kva < kw * (1 - 1e-9):
            problems.append(Problem(display_name, ln, col["peak_kva"] + 1,
                                    "peak kVA is below peak kW; kVA can never be less than kW"))
            continue
        out.append(MonthUsage(
            month=row[col["month"]].strip(),
            energy_wh=vals["kwh"],  # type: ignore[arg-type]
            reactive_energy_varh=vals["kvarh"],  # type: ignore[arg-type]
            peak_w=kw,  # type: ignore[arg-type]
            peak_va=kva,
            billed_amount=vals.get("billed_amount"),
        ))
    if problems:
        raise InputError(problems[:MAX_PROBLEMS])
    if not out:
        raise InputError([Problem(display_name, 1, 1, "the file holds no billing months")])
    return tuple(sorted(out, key=lambda u: u.month))
