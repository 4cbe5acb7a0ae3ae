"""The machine-readable results of a design (``results.json``, ``calc --json``).

SI units throughout, key names carry their unit. Q is positive when
inductive; the bank's ``q_installed_var`` is a positive delivered quantity.
Keys listed in the format reference are stable: scripts depend on them.
"""

from __future__ import annotations

import json
import math

from . import __version__
from .design import Design

RESULTS_VERSION = 1


def _clean(x):
    """JSON-safe: plain floats, no NaN/inf (as null), complex as {re, im}."""
    if isinstance(x, dict):
        return {str(k): _clean(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [_clean(v) for v in x]
    if isinstance(x, bool) or x is None or isinstance(x, str):
        return x
    if isinstance(x, complex):
        return {"re": _clean(x.real), "im": _clean(x.imag)}
    if hasattr(x, "item"):  # numpy scalar
        x = x.item()
    if isinstance(x, float):
        return x if math.isfinite(x) else None
    return x


def to_dict(d: Design) -> dict:
    sz, af = d.sizing, d.after
    m = d.model
    total = d.total_s_va
    out = {
        "results_version": RESULTS_VERSION,
        "reportgen_version": __version__,
        "project": {
            "name": d.project.name,
            "title": m.project.title,
            "client": m.project.client,
            "site": m.project.site,
            "revision": m.project.revision,
            "date": m.project.date.isoformat() if m.project.date else None,
        },
        "system": {"phases": d.phases, "v_v": d.v_v, "f_hz": d.f_hz},
        "loads": [r.as_dict() for r in d.loads],
        "total": {
            "name": "Total",
            "p_w": total.real,
            "q_var": total.imag,
            "s_va": abs(total),
            "pf": sz.pf_before,
            "leading": total.imag < 0,
            "current_a": d.total_current_a,
        },
        "correction": {
            "target_pf": sz.target_pf,
            "status": sz.status,
            "q_required_var": sz.q_required_var,
            "q_upper_var": sz.q_upper_var,
            "q_installed_var": sz.q_installed_var,
            "q_rated_installed_var": sz.q_rated_installed_var,
            "delivered_fraction": sz.factor,
            "v_rated_v": d.v_rated_v,
            "f_rated_hz": d.f_rated_hz,
            "connection": d.connection,
            "units": [{"q_rated_var": c.unit.q_rated_var, "count": c.count,
                       "q_delivered_var": c.q_delivered_each_var * c.count,
                       "c_f": c.unit.c_f} for c in sz.choices],
            "unit_sizes_default": d.units_default,
            "capacitance_per_phase_f": af.capacitance_per_phase_f,
            "bank_current_a": af.bank_current_a,
            "bank_rated_current_a": af.bank_rated_current_a,
            "q_after_var": af.q_after_var,
            "pf_after": af.pf_after,
            "leading_after": af.leading_after,
            "s_after_va": af.s_after_va,
            "current_after_a": af.current_after_a,
            "loss_reduction_fraction": af.loss_reduction_fraction,
        },
        "checks": [c.as_dict() for c in d.checks],
        "bom": d.bom,
        "calculations": [
            {"title": sh.title, "steps": [s.as_dict() if hasattr(s, "as_dict") else
                                          {"note": s.text, "title": s.title} for s in sh.steps]}
            for sh in d.sheets
        ],
    }
    for key, value in d.json.items():
        out[key] = value
    return _clean(out)


def dumps(data: dict) -> str:
    """Canonical JSON text: sorted keys, fixed separators, newline at the end."""
    return json.dumps(data, indent=2, sort_keys=True, ensure_ascii=False) + "\n"
