"""Price catalogs (YAML or CSV) for the bill of materials.

A catalog lists orderable items, one entry each: its ``kind`` (see :data:`KINDS`),
``part_number``, optionally ``description``, ``unit_price`` (a non-negative number)
and ``currency``, and the ratings it is matched on, written with their units::

    currency: USD            # YAML: a default for every entry
    items:
      - kind: fuse
        part_number: RG-FU-100-600
        description: Class J fuse, 100 A, 600 V
        current: 100 A
        voltage: 600 V
        unit_price: 18.40

A YAML catalog may also be a plain list of entries; a file with only comments is a
catalog with no entries. A CSV catalog has a header row
with the same names as columns (an empty cell means "not given").

Rating names and what they become (SI, as the bill of materials core matches them):
``reactive_power`` → q_var, ``voltage`` → v_v, ``current`` → i_a, ``resistance`` →
r_ohm, ``power`` → p_w (a resistor's or an enclosure's dissipation), ``detuning`` →
p_pct (7 % or 0.07), ``steps`` → steps, ``size`` (e.g. "3/0 AWG", "95 mm2"),
``material`` (copper or aluminium), ``temperature_rating`` → temp_c (°C).

Problems are ``file:line:col`` (CSV: the 1-based field number as column).
"""

from __future__ import annotations

import math
import os
from pathlib import Path

from reportgen import units, yamlload
from reportgen.errors import InputError, Problem

from .interval import MAX_PROBLEMS, open_csv_rows

__all__ = ["KINDS", "read_catalog", "Catalog"]

#: item kinds a catalog may list (those of reportgen.calc.bom, plus fuse holders)
KINDS = ("capacitor", "reactor", "fuse", "fuse_holder", "disconnect", "contactor",
         "discharge_resistor", "pf_controller", "conductor", "enclosure")

#: friendly rating name -> (SI key, unit kind or special parser)
RATINGS = {
    "reactive_power": ("q_var", "reactive_power"),
    "voltage": ("v_v", "voltage"),
    "current": ("i_a", "current"),
    "resistance": ("r_ohm", "resistance"),
    "power": ("p_w", "real_power"),
    "detuning": ("p_pct", "percent"),
    "steps": ("steps", "count"),
    "size": ("size", "text"),
    "material": ("material", "material"),
    "temperature_rating": ("temp_c", "celsius"),
}
#: the same ratings given directly in SI (plain numbers)
SI_KEYS = {"q_var", "v_v", "i_a", "r_ohm", "p_w", "p_pct", "temp_c"}
TEXT_KEYS = ("kind", "part_number", "description", "currency")
ALLOWED = TEXT_KEYS + ("unit_price",) + tuple(RATINGS) + tuple(sorted(SI_KEYS))
MAX_ENTRIES = 5000


class Catalog(list):
    """Catalog entries (dicts with SI ratings) plus the file they came from."""

    def __init__(self, entries, display: str):
        super().__init__(entries)
        self.display = display


def _number(raw) -> float | None:
    if isinstance(raw, bool):
        return None
    if isinstance(raw, (int, float)):
        return float(raw)
    if isinstance(raw, str):
        try:
            return float(raw.strip())
        except ValueError:
            return None
    return None


def _convert(key: str, raw) -> tuple[str, object]:
    """One rating or field to (SI key, value); raises ValueError with a message."""
    if key in TEXT_KEYS:
        if raw is None or (isinstance(raw, str) and not raw.strip()):
            raise ValueError(f"'{key}' is empty")
        if isinstance(raw, (dict, list)):
            raise ValueError(f"'{key}' must be text")
        return key, str(raw).strip()
    if key == "unit_price":
        v = _number(raw)
        if v is None or not math.isfinite(v):
            raise ValueError(f"unit_price {raw!r} is not a number")
        if v < 0:
            raise ValueError(f"unit_price {raw!r} is negative; prices must be zero or more")
        return key, v
    if key in SI_KEYS:
        v = _number(raw)
        if v is None or not math.isfinite(v):
            raise ValueError(f"'{key}' takes a plain number in SI units, not {raw!r}")
        if v < 0:
            raise ValueError(f"'{key}' {raw!r} is negative")
        return key, v
    si, how = RATINGS[key]
    if how == "text":
        if raw is None or isinstance(raw, (dict, list)) or not str(raw).strip():
            raise ValueError(f"'{key}' must be text such as '3/0 AWG' or '95 mm2'")
        return si, " ".join(str(raw).split())
    if how == "material":
        m = str(raw).strip().lower()
        table = {"copper": "cu", "cu": "cu", "aluminium": "al", "aluminum": "al", "al": "al"}
        if m not in table:
            raise ValueError(f"material {raw!r}: use copper or aluminium")
        return si, table[m]
    if how == "count":
        v = _number(raw)
        if v is None or v < 1 or v != int(v):
            raise ValueError(f"'{key}' must be a whole number of at least 1, not {raw!r}")
        return si, float(v)
    if how == "percent":
        try:
            v = units.parse_fraction(raw, "detuning")
        except units.UnitProblem as exc:
            raise ValueError(str(exc)) from None
        if not 0 < v < 1:
            raise ValueError(f"detuning {raw!r} must be between 0 and 100 %")
        return si, v * 100.0
    if how == "celsius":
        v = _number(raw)
        if v is None:
            try:
                v = units.parse_quantity(raw, "temperature")
            except units.UnitProblem as exc:
                raise ValueError(str(exc)) from None
        return si, float(v)
    try:
        v = units.parse_quantity(raw, how)
    except units.UnitProblem as exc:
        raise ValueError(str(exc)) from None
    if v <= 0:
        raise ValueError(f"'{key}' {raw!r} must be positive")
    return si, v


def _entry(raw: dict, where, default_currency: str | None) -> tuple[dict, list[Problem]]:
    """Validate one entry; ``where(key, at_key)`` gives a Problem's position."""
    problems: list[Problem] = []
    out: dict = {}
    for key, val in raw.items():
        k = str(key).strip().lower()
        if k not in ALLOWED:
            import difflib

            close = difflib.get_close_matches(k, ALLOWED, n=1, cutoff=0.6)
            hint = f" (did you mean '{close[0]}'?)" if close else ""
            problems.append(where(key, True, f"unknown catalog field '{key}'{hint}; allowed: "
                                  f"{', '.join(ALLOWED)}"))
            continue
        if val is None or (isinstance(val, str) and not val.strip()):
            if k in ("kind", "part_number"):
                problems.append(where(key, False, f"'{k}' is empty"))
            continue  # an empty cell: not given
        try:
            si, v = _convert(k, val)
        except ValueError as exc:
            problems.append(where(key, False, str(exc)))
            continue
        out[si] = v
    if problems:
        return out, problems
    for req in ("kind", "part_number"):
        if req not in out:
            problems.append(where(None, False, f"catalog entry needs '{req}'"))
    if "kind" in out:
        out["kind"] = out["kind"].lower()
        if out["kind"] not in KINDS:
            problems.append(where("kind", False, f"unknown kind {out['kind']!r}; use one of "
                                  f"{', '.join(KINDS)}"))
    if "currency" not in out and default_currency:
        out["currency"] = default_currency
    return out, problems


def read_catalog(path: str | os.PathLike, display: str) -> Catalog:
    """Read a YAML (.yaml, .yml) or CSV (.csv) catalog; return its entries with SI ratings.

    Raises
    ------
    reportgen.errors.InputError
        A missing or unreadable file, bad YAML or CSV, an entry without kind or
        part number, an unknown kind or field, a rating without its unit, a
        negative price, or a part number given twice.
    """
    p = Path(path)
    if p.suffix.lower() == ".csv":
        entries = _read_csv(p, display)
    else:
        entries = _read_yaml(p, display)
    return Catalog(entries, display)


def _check_duplicates(entries: list[dict], positions: list[tuple[int, int]], display: str):
    seen: dict[str, int] = {}
    problems = []
    for i, e in enumerate(entries):
        pn = e.get("part_number")
        if pn in seen:
            problems.append(Problem(display, *positions[i], f"part number {pn!r} is listed twice "
                                    f"(first on line {positions[seen[pn]][0]})"))
        else:
            seen[pn] = i
    return problems


def _read_yaml(p: Path, display: str) -> list[dict]:
    try:
        data_bytes = p.read_bytes()
    except FileNotFoundError:
        raise InputError([Problem(display, 1, 1, "file not found")]) from None
    except OSError as exc:
        raise InputError([Problem(display, 1, 1, f"cannot read the file: {exc.strerror}")]) from None
    if not any(ln.strip() and not ln.lstrip().startswith(b"#") for ln in data_bytes.splitlines()):
        return []  # a catalog with no entries yet (only comments): every line stays unpriced
    data, locs = yamlload.load(data_bytes, display)
    base: tuple = ()
    currency = None
    if isinstance(data, dict):
        extra = [k for k in data if k not in ("items", "currency")]
        if extra:
            raise InputError([locs.problem((extra[0],), f"unknown key '{extra[0]}' in the catalog; "
                                           "a catalog has 'currency' and 'items'", at_key=True)])
        if "currency" in data:
            c = data["currency"]
            if not isinstance(c, str) or not c.strip():
                raise InputError([locs.problem(("currency",), "currency must be text, e.g. USD")])
            currency = c.strip()
        if "items" not in data:
            raise InputError([locs.problem((), "a catalog needs 'items': a list of entries")])
        base = ("items",)
        data = data["items"]
    if not isinstance(data, list):
        raise InputError([locs.problem(base, "a catalog is a list of entries (or 'items:' with one)")])
    if len(data) > MAX_ENTRIES:
        raise InputError([locs.problem(base, f"more than {MAX_ENTRIES} entries; refused")])
    entries, positions, problems = [], [], []
    for i, raw in enumerate(data):
        path = base + (i,)
        if not isinstance(raw, dict):
            problems.append(locs.problem(path, "a catalog entry is a mapping of fields (kind, part_number, ...)"))
            continue

        def where(key, at_key, msg, path=path):
            if key is None:
                return locs.problem(path, msg)
            return locs.problem(path + (key,), msg, at_key=at_key)

        e, probs = _entry(raw, where, currency)
        problems += probs
        entries.append(e)
        positions.append(locs.of_value(path))
        if len(problems) >= MAX_PROBLEMS:
            break
    if not problems:
        problems = _check_duplicates(entries, positions, display)
    if problems:
        raise InputError(problems[:MAX_PROBLEMS])
    return entries


def _read_csv(p: Path, display: str) -> list[dict]:
    header, rows, lines = open_csv_rows(p, display)
    names = [h.strip() for h in header]
    low = [h.lower() for h in names]
    problems: list[Problem] = []
    for j, h in enumerate(low):
        if h not in ALLOWED:
            import difflib

            close = difflib.get_close_matches(h, ALLOWED, n=1, cutoff=0.6)
            hint = f" (did you mean '{close[0]}'?)" if close else ""
            problems.append(Problem(display, 1, j + 1, f"unknown column '{names[j]}'{hint}; allowed: "
                                    f"{', '.join(ALLOWED)}"))
    for req in ("kind", "part_number"):
        if req not in low:
            problems.append(Problem(display, 1, 1, f"no column '{req}'; the columns present are "
                                    f"{', '.join(repr(n) for n in names)}"))
    if problems:
        raise InputError(problems)
    if len(rows) > MAX_ENTRIES:
        raise InputError([Problem(display, 1, 1, f"more than {MAX_ENTRIES} entries; refused")])
    entries, positions = [], []
    for row, line in zip(rows, lines):
        if len(row) > len(low):
            problems.append(Problem(display, line, len(low) + 1,
                                    f"{len(row)} fields, but the header has {len(low)}"))
            continue
        raw = {low[j]: row[j] for j in range(len(row))}

        def where(key, at_key, msg, line=line):
            col = low.index(key) + 1 if key in low else 1
            return Problem(display, line, col, msg)

        e, probs = _entry(raw, where, None)
        problems += probs
        entries.append(e)
        positions.append((line, 1))
        if len(problems) >= MAX_PROBLEMS:
            break
    if not problems:
        problems = _check_duplicates(entries, positions, display)
    if problems:
        raise InputError(problems[:MAX_PROBLEMS])
    return entries
