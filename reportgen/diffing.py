"""Differences between two versions of JSON-like report data (for ``reportgen diff``).

Pure functions over dicts, lists, strings, numbers, booleans and None.

* Dicts are compared key by key.
* Lists of dicts are matched by their ``name`` key (else ``id``) when every
  element of both lists has one and the values are unique in each list, so a
  load inserted at the top does not show as every load changed. Otherwise
  lists are compared by index.
* Numbers (int and float, not bool) are equal within a relative tolerance of
  1e-9 (``math.isclose``), so a harmless last-digit change from a different
  summation order is not reported. NaN equals NaN.

Paths read like ``loads[Mixer].p_w`` (matched by name), ``steps[2].q_var``
(by index), ``summary["a.b"]`` (keys that would be ambiguous are quoted).
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass
from typing import Any, Iterable, Mapping

REL_TOL = 1e-9
MATCH_KEYS = ("name", "id")
STATUS_RANK = {"pass": 0, "info": 0, "warn": 1, "fail": 2}


@dataclass(frozen=True)
class Change:
    path: str
    kind: str  # "added" | "removed" | "changed"
    before: Any = None
    after: Any = None

    def as_dict(self) -> dict:
        return {"path": self.path, "kind": self.kind, "before": self.before, "after": self.after}

    def __str__(self) -> str:
        return describe(self)


@dataclass(frozen=True)
class Transition:
    """A check whose status differs between two versions (None: the check is absent in that version)."""

    name: str
    before: str | None
    after: str | None

    @property
    def kind(self) -> str:
        """ "added" | "removed" | "worse" | "better" | "changed" (e.g. to or from an unknown status)."""
        if self.before is None:
            return "added"
        if self.after is None:
            return "removed"
        rb, ra = STATUS_RANK.get(self.before), STATUS_RANK.get(self.after)
        if rb is None or ra is None or rb == ra:
            return "changed"
        return "worse" if ra > rb else "better"

    def as_dict(self) -> dict:
        return {"name": self.name, "before": self.before, "after": self.after, "kind": self.kind}

    def __str__(self) -> str:
        return describe(self)


# ---------------------------------------------------------------------------
# comparing values


def _is_number(x: Any) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool)


def numbers_equal(a: float, b: float, rel_tol: float = REL_TOL, abs_tol: float = 0.0) -> bool:
    """Equal within ``rel_tol`` (relative to the larger magnitude) or ``abs_tol``; NaN equals NaN."""
    if isinstance(a, float) and isinstance(b, float) and math.isnan(a) and math.isnan(b):
        return True
    if isinstance(a, int) and isinstance(b, int):
        return a == b
    return math.isclose(a, b, rel_tol=rel_tol, abs_tol=abs_tol)


def _key_segment(key: Any) -> str:
    text = str(key)
    if text and all(c.isalnum() or c in "_-" for c in text):
        return text
    return f"[{json.dumps(text, ensure_ascii=False)}]"


def _join(path: str, key: Any) -> str:
    seg = _key_segment(key)
    if seg.startswith("["):
        return f"{path}{seg}" if path else seg
    return f"{path}.{seg}" if path else seg


def _item_segment(label: Any) -> str:
    text = str(label)
    if text and "[" not in text and "]" not in text and text.strip() == text:
        return f"[{text}]"
    return f"[{json.dumps(text, ensure_ascii=False)}]"


def _match_key(a: list, b: list) -> str | None:
    if not a and not b:
        return None
    items = list(a) + list(b)
    if not all(isinstance(x, Mapping) for x in items):
        return None
    for key in MATCH_KEYS:
        if not all(key in x and isinstance(x[key], (str, int)) and not isinstance(x[key], bool)
                   for x in items):
            continue
        ka, kb = [x[key] for x in a], [x[key] for x in b]
        if len(set(ka)) == len(ka) and len(set(kb)) == len(kb):
            return key
    return None


def diff_values(a: Any, b: Any, path: str = "", rel_tol: float = REL_TOL,
                abs_tol: float = 0.0) -> list[Change]:
    """Changes that turn ``a`` into ``b``, in a stable order (``a``'s order, then new items).

    ``abs_tol`` (default 0) lets values near zero that are only rounding noise
    (e.g. a reactive power that cancels to 1e-12 var) compare equal.
    """
    out: list[Change] = []
    _diff(a, b, path, (rel_tol, abs_tol), out)
    return out


def _diff(a: Any, b: Any, path: str, rel_tol: tuple[float, float], out: list[Change]) -> None:
    if isinstance(a, Mapping) and isinstance(b, Mapping):
        for k in a:
            p = _join(path, k)
            if k in b:
                _diff(a[k], b[k], p, rel_tol, out)
            else:
                out.append(Change(p, "removed", a[k], None))
        for k in b:
            if k not in a:
                out.append(Change(_join(path, k), "added", None, b[k]))
        return
    if isinstance(a, (list, tuple)) and isinstance(b, (list, tuple)):
        key = _match_key(list(a), list(b))
        if key is not None:
            ib = {x[key]: x for x in b}
            ia = {x[key]: x for x in a}
            for x in a:
                p = path + _item_segment(x[key])
                if x[key] in ib:
                    _diff(x, ib[x[key]], p, rel_tol, out)
                else:
                    out.append(Change(p, "removed", x, None))
            for x in b:
                if x[key] not in ia:
                    out.append(Change(path + _item_segment(x[key]), "added", None, x))
            return
        for i in range(max(len(a), len(b))):
            p = f"{path}[{i}]"
            if i >= len(b):
                out.append(Change(p, "removed", a[i], None))
            elif i >= len(a):
                out.append(Change(p, "added", None, b[i]))
            else:
                _diff(a[i], b[i], p, rel_tol, out)
        return
    if _is_number(a) and _is_number(b):
        if not numbers_equal(a, b, *rel_tol):
            out.append(Change(path, "changed", a, b))
        return
    if type(a) is not type(b) or a != b:
        out.append(Change(path, "changed", a, b))


# ---------------------------------------------------------------------------
# readable text


def format_value(v: Any, max_len: int = 60) -> str:
    """Short text for a value: 59500.0 -> "59500", 0.1 -> "0.1", None -> "none", dicts as compact JSON."""
    if v is None:
        return "none"
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float):
        if math.isfinite(v) and v == int(v) and abs(v) < 1e15:
            return str(int(v))
        return repr(v)
    if isinstance(v, int):
        return str(v)
    if isinstance(v, str):
        return v if v else '""'
    text = json.dumps(v, ensure_ascii=False, sort_keys=True, default=str)
    return text if len(text) <= max_len else text[: max_len - 1] + "…"


def describe(change: Change | Transition) -> str:
    """One line: ``loads[Mixer].p_w: 59500 → 61200``, ``loads[Pump]: added``, ``voltage_rise: pass → fail``."""
    if isinstance(change, Transition):
        before = change.before if change.before is not None else "absent"
        after = change.after if change.after is not None else "absent"
        return f"{change.name}: {before} → {after}"
    where = change.path or "(whole document)"
    if change.kind == "added":
        return f"{where}: added ({format_value(change.after)})"
    if change.kind == "removed":
        return f"{where}: removed (was {format_value(change.before)})"
    return f"{where}: {format_value(change.before)} → {format_value(change.after)}"


# ---------------------------------------------------------------------------
# check status transitions


def _statuses(checks: Mapping[str, Any] | Iterable[Mapping[str, Any]] | None) -> dict[str, str]:
    """name -> status from ``{name: status}``, ``{name: {"status": ...}}`` or ``[{"name"/"id", "status"}]``."""
    if checks is None:
        return {}
    out: dict[str, str] = {}
    if isinstance(checks, Mapping):
        for name, v in checks.items():
            status = v.get("status") if isinstance(v, Mapping) else v
            out[str(name)] = None if status is None else str(status)
        return out
    for i, c in enumerate(checks):
        if not isinstance(c, Mapping):
            raise TypeError(f"check #{i} is not a mapping: {c!r}")
        name = c.get("name", c.get("id"))
        if name is None:
            raise ValueError(f"check #{i} has neither 'name' nor 'id'")
        status = c.get("status")
        out[str(name)] = None if status is None else str(status)
    return out


def check_transitions(checks_a, checks_b) -> list[Transition]:
    """Checks whose status differs between version a and b, in a's order then new ones.

    Accepts ``{name: status}``, ``{name: {"status": ...}}`` or a list of dicts
    with ``name`` (or ``id``) and ``status``. A check present in only one
    version gives a transition with ``None`` on the other side.
    """
    sa, sb = _statuses(checks_a), _statuses(checks_b)
    out: list[Transition] = []
    for name, st in sa.items():
        if name not in sb:
            out.append(Transition(name, st, None))
        elif sb[name] != st:
            out.append(Transition(name, st, sb[name]))
    for name, st in sb.items():
        if name not in sa:
            out.append(Transition(name, None, st))
    return out


# ---------------------------------------------------------------------------
# two reports


@dataclass(frozen=True)
class ReportDiff:
    """Value changes (outside the checks) and check status transitions between two results documents."""

    changes: tuple[Change, ...]
    transitions: tuple[Transition, ...]

    @property
    def empty(self) -> bool:
        return not self.changes and not self.transitions

    def lines(self) -> list[str]:
        return [describe(t) for t in self.transitions] + [describe(c) for c in self.changes]

    def as_dict(self) -> dict:
        return {"changes": [c.as_dict() for c in self.changes],
                "transitions": [t.as_dict() for t in self.transitions]}


def diff_reports(a: Mapping[str, Any], b: Mapping[str, Any], checks_key: str = "checks",
                 ignore: Iterable[str] = (), rel_tol: float = REL_TOL, abs_tol: float = 0.0) -> ReportDiff:
    """Compare two results documents (e.g. two ``results.json``).

    The checks under ``checks_key`` are reported as status transitions only
    (their other fields, such as message text, follow from the values that
    changed); top-level keys in ``ignore`` (e.g. ``"build"``) are left out.
    """
    skip = set(ignore) | {checks_key}
    va = {k: v for k, v in a.items() if k not in skip}
    vb = {k: v for k, v in b.items() if k not in skip}
    return ReportDiff(tuple(diff_values(va, vb, rel_tol=rel_tol, abs_tol=abs_tol)),
                      tuple(check_transitions(a.get(checks_key), b.get(checks_key))))
