"""Bill of materials for a capacitor bank, optionally priced from a catalog.

:func:`bank_needs` turns a design (steps, protection results, discharge
results, options) into :class:`BomNeed` items: what is needed, how many,
the required ratings (SI) and the rule or calculation behind them.
:func:`price_needs` matches each need against a catalog and prices it;
:func:`build_bom` does both.

Catalog
-------
A list of dicts already parsed by the caller, one per orderable item::

    {"kind": "fuse", "i_a": 100.0, "v_v": 600.0, "part_number": "F-100",
     "unit_price": 12.5, "currency": "USD"}

Match fields use the same SI names as the need's ``rating`` (see
:data:`MATCH_FIELDS`). Matching rule: among the entries of the need's kind,
in catalog order, the first whose every match field satisfies the need is
chosen. Capability ratings ("min") must meet or exceed the need (a 600 V fuse
serves a 480 V circuit; a 200 A switch serves 168 A); ratings the design fixes
("eq") must be equal — capacitor kvar and voltage, detuning, conductor size
and material, and the fuse ampere rating (a larger fuse would no longer
protect the conductor it was coordinated with); "max" ratings must not be
exceeded (a discharge resistor's resistance). Numbers compare with a
relative tolerance of 1e-6; strings case-insensitively. An entry lacking a
match field does not match. A discharge resistor entry must also be able to
dissipate V²/R at its own resistance. Unit prices must not be negative.

Losses: capacitor units 0.5 W/kvar by default (LV metallized polypropylene
0.2–0.5 W/kvar, upper end so ventilation is not undersized; common practice),
detuned steps including their reactors 7 W/kvar (4–7 W/kvar, from memory).
Ventilation airflow V = P/(ρ·c_p·ΔT) with air ρ = 1.2 kg/m³ and
c_p = 1005 J/(kg·K) (handbook values, from memory). Contactor, fuse and
controller losses are not included: add them from the makers' data.
"""

from __future__ import annotations

import math
from collections import OrderedDict
from dataclasses import dataclass, field
from typing import Any, Mapping, Sequence

from reportgen.calc import codes
from reportgen.calc.discharge import DischargeResult
from reportgen.calc.errors import CalcError
from reportgen.calc.protection import BankProtection, BankStep, CircuitProtection
from reportgen.calc.sheet import Sheet

KINDS = ("capacitor", "reactor", "fuse", "disconnect", "contactor", "discharge_resistor",
         "pf_controller", "conductor", "enclosure")

# kind -> {field: "eq" | "min" | "max"}
MATCH_FIELDS: dict[str, dict[str, str]] = {
    "capacitor": {"q_var": "eq", "v_v": "eq"},
    "reactor": {"q_var": "eq", "p_pct": "eq", "v_v": "min"},
    "fuse": {"i_a": "eq", "v_v": "min"},
    "disconnect": {"i_a": "min", "v_v": "min"},
    "contactor": {"i_a": "min", "v_v": "min"},
    "discharge_resistor": {"r_ohm": "max", "p_w": "min"},
    "pf_controller": {"steps": "min"},
    "conductor": {"size": "eq", "material": "eq", "temp_c": "min"},
    "enclosure": {"p_w": "min"},
}

W_PER_KVAR = 0.5e-3  # W per var: 0.5 W/kvar (common practice, upper end of 0.2–0.5)
W_PER_KVAR_RANGE = (0.2e-3, 0.5e-3)
DETUNED_W_PER_KVAR = 7e-3  # W per var: 7 W/kvar incl. reactor (from memory, upper end of 4–7)
DETUNED_W_PER_KVAR_RANGE = (4e-3, 7e-3)
AIR_RHO_KG_M3 = 1.2
AIR_CP_J_KG_K = 1005.0


@dataclass(frozen=True)
class BomNeed:
    """One thing the design needs.

    Attributes
    ----------
    kind : str
        One of :data:`KINDS`.
    item : str
        Plain description.
    quantity : float
    unit : str
        "ea" or "m" (or "run" when a conductor length is not known).
    rating : dict
        Required ratings, SI, named as in :data:`MATCH_FIELDS` (plus extra
        informative fields).
    basis : str
        The rule or calculation that gives the rating.
    priceable : bool
        False when the quantity cannot be priced (conductor length unknown).
    """

    kind: str
    item: str
    quantity: float
    unit: str
    rating: dict
    basis: str
    priceable: bool = True

    def as_dict(self) -> dict:
        return {"kind": self.kind, "item": self.item, "quantity": self.quantity, "unit": self.unit,
                "rating": dict(self.rating), "basis": self.basis, "priceable": self.priceable}


@dataclass(frozen=True)
class BomLine:
    """One priced (or unpriced) line of the bill of materials."""

    kind: str
    item: str
    quantity: float
    unit: str
    rating: dict
    basis: str
    part_number: str | None
    unit_price: float | None
    extended_price: float | None
    currency: str | None
    note: str = ""

    def as_dict(self) -> dict:
        return {
            "item": self.item,
            "kind": self.kind,
            "quantity": self.quantity,
            "unit": self.unit,
            "rating": dict(self.rating),
            "basis": self.basis,
            "part_number": self.part_number,
            "unit_price": self.unit_price,
            "extended_price": self.extended_price,
            "currency": self.currency,
            "note": self.note,
        }


@dataclass(frozen=True)
class Bom:
    """The bill of materials: lines, total, losses and notes."""

    lines: tuple[BomLine, ...]
    total: float | None
    currency: str | None
    unpriced: int
    losses_w: float | None = None
    airflow_m3_s: float | None = None
    notes: tuple[str, ...] = field(default=())

    def as_dict(self) -> dict:
        """``{"lines": [...], "total", "currency", "unpriced", "losses_w", "airflow_m3_s", "notes"}``.

        ``lines`` is the project JSON's ``bom[]``: each with ``item, quantity,
        rating, unit_price, extended_price`` (and ``kind, unit, basis,
        part_number, currency, note``).
        """
        return {
            "lines": [ln.as_dict() for ln in self.lines],
            "total": self.total,
            "currency": self.currency,
            "unpriced": self.unpriced,
            "losses_w": self.losses_w,
            "airflow_m3_s": self.airflow_m3_s,
            "notes": list(self.notes),
        }


# ---------------------------------------------------------------------------
# Needs from a design
# ---------------------------------------------------------------------------


def _add(groups: "OrderedDict[tuple, BomNeed]", need: BomNeed) -> None:
    rating = {k: (float(v) if isinstance(v, (int, float)) and not isinstance(v, bool) else v)
              for k, v in need.rating.items()}
    need = BomNeed(need.kind, need.item, float(need.quantity), need.unit, rating, need.basis,
                   need.priceable)
    key = (need.kind, need.item, need.unit, tuple(sorted((k, str(v)) for k, v in need.rating.items())),
           need.basis, need.priceable)
    if key in groups:
        old = groups[key]
        groups[key] = BomNeed(old.kind, old.item, old.quantity + need.quantity, old.unit, old.rating,
                              old.basis, old.priceable)
    else:
        groups[key] = need


def _conductor_need(p: CircuitProtection, ungrounded: int, length_m: float | None,
                    where: str) -> BomNeed:
    c = p.conductor
    count = ungrounded * c.sets
    rating = {"size": c.size, "material": c.material, "temp_c": float(c.insulation_temp_c),
              "ampacity_a": c.ampacity_a, "sets": c.sets}
    basis = (f"{p.clauses.get('conductor', '')}; {c.sets} × {c.size} per phase, "
             f"corrected ampacity {c.ampacity_a:.1f} A ≥ {c.required_a:.1f} A ({c.clause})")
    if length_m is None:
        return BomNeed("conductor", f"{where} conductors", float(count), "run", rating,
                       basis + "; length not given: quote per run", priceable=False)
    if not (length_m > 0):
        raise CalcError(f"{where}: conductor length {length_m!r} m must be positive")
    rating["length_m"] = float(length_m)
    return BomNeed("conductor", f"{where} conductors", float(count * length_m), "m", rating,
                   basis + f"; {count} conductors × {length_m:g} m")


def bank_needs(
    steps: Sequence[BankStep],
    protection: BankProtection,
    v_applied_v: float,
    *,
    automatic: bool = True,
    discharge: Sequence[DischargeResult] = (),
    discharge_built_in: bool = True,
    feeder_length_m: float | None = None,
    step_length_m: float | Mapping[str, float] | None = None,
    ungrounded: int | None = None,
    enclosure: bool = True,
    w_per_var: float | None = None,
    detuned_w_per_var: float | None = None,
    delta_t_k: float = 10.0,
    sheet: Sheet | None = None,
) -> tuple[tuple[BomNeed, ...], dict]:
    """The items a bank design needs.

    Parameters
    ----------
    steps : sequence of BankStep
    protection : BankProtection
        From :func:`reportgen.calc.protection.protect_bank` for the same steps.
    v_applied_v : float
        System voltage (rated voltage of switching and protective devices must meet it), V.
    automatic : bool
        Automatic bank: one switching device (contactor) per step and a PF controller.
        Otherwise a fixed bank: no contactors, no controller.
    discharge : sequence of DischargeResult
        One per distinct unit (matched by unit name) when resistors are not built in.
    discharge_built_in : bool
        True when the units carry internal discharge resistors.
    feeder_length_m : float, optional
        Length of the feeder run, m.
    step_length_m : float or dict of step name -> float, optional
        Length of each step's wiring, m.
    ungrounded : int, optional
        Ungrounded conductors per circuit (fuses and conductors per circuit);
        default 3 for three phase, 1 for single phase.
    enclosure : bool
        Include an enclosure line sized on losses.
    w_per_var, detuned_w_per_var : float, optional
        Loss per var of plain and detuned steps, W/var (defaults 0.5 and 7 W/kvar).
    delta_t_k : float
        Allowed air temperature rise in the enclosure for the airflow estimate, K.
    sheet : Sheet, optional

    Returns
    -------
    (needs, summary) : (tuple of BomNeed, dict)
        ``summary`` holds ``losses_w``, ``airflow_m3_s`` and ``notes``.
    """
    if not steps:
        raise CalcError("a bill of materials needs at least one step")
    if len(protection.steps) != len(steps):
        raise CalcError("protection results do not match the steps (different count)")
    for st, p in zip(steps, protection.steps):
        if st.name != p.name:
            raise CalcError(f"protection result {p.name!r} does not match step {st.name!r}")
    if not v_applied_v > 0:
        raise CalcError("v_applied_v must be positive")
    s = sheet if sheet is not None else Sheet()
    phases = steps[0].unit.phases
    n_ug = (3 if phases == 3 else 1) if ungrounded is None else int(ungrounded)
    if n_ug < 1:
        raise CalcError("ungrounded conductor count must be at least 1")
    groups: "OrderedDict[tuple, BomNeed]" = OrderedDict()
    notes: list[str] = []

    # Capacitor units
    for st in steps:
        u = st.unit
        _add(groups, BomNeed(
            "capacitor", f"capacitor unit{' ' + u.name if u.name else ''}", float(st.count), "ea",
            {"q_var": u.q_var, "v_v": u.v_rated_v, "f_hz": u.f_hz, "phases": u.phases,
             "connection": u.connection},
            "step sizing (design input)"))
    # Detuning reactors
    for st, p in zip(steps, protection.steps):
        if st.detuning_pct is not None:
            _add(groups, BomNeed(
                "reactor", "detuning reactor", 1.0, "ea",
                {"q_var": st.q_rated_var, "p_pct": float(st.detuning_pct), "v_v": v_applied_v,
                 "l_h": st.reactor_l_h, "i_a": p.basis_current_a},
                f"p = {st.detuning_pct:g} % of the step's {st.q_rated_var:g} var capacitors; "
                f"L = p/(ω²·C) = {st.reactor_l_h:.4g} H per phase"))
    # Step fuses and switching devices
    for st, p in zip(steps, protection.steps):
        _add(groups, BomNeed(
            "fuse", "step fuse", float(n_ug), "ea", {"i_a": p.fuse_a, "v_v": v_applied_v},
            p.clauses["fuse"] + f"; ≥ {p.fuse_min_a:.1f} A"))
        if automatic:
            _add(groups, BomNeed(
                "contactor", "step switching device (capacitor duty)", 1.0, "ea",
                {"i_a": p.disconnect_min_a, "v_v": v_applied_v, "q_var": st.q_rated_var},
                f"{p.clauses['disconnect']}; ≥ {p.disconnect_min_a:.1f} A; check its inrush "
                "making capacity against the switching calculation"))
    # Feeder
    f = protection.feeder
    _add(groups, BomNeed("fuse", "feeder fuse", float(n_ug), "ea",
                         {"i_a": f.fuse_a, "v_v": v_applied_v},
                         f.clauses["fuse"] + f"; ≥ {f.fuse_min_a:.1f} A"))
    _add(groups, BomNeed("disconnect", "bank disconnect", 1.0, "ea",
                         {"i_a": f.disconnect_a, "v_v": v_applied_v},
                         f.clauses["disconnect"] + f"; ≥ {f.disconnect_min_a:.1f} A, "
                         f"next standard switch rating {f.disconnect_a:g} A"))
    # Discharge resistors
    if not discharge_built_in:
        by_name = {d.unit_name: d for d in discharge}
        for st in steps:
            nm = st.unit.name or "unit"
            d = by_name.get(nm)
            if d is None:
                raise CalcError(f"no discharge result for unit {nm!r} (resistors not built in)")
            r = d.r_user_ohm if (d.r_user_ohm is not None and d.passed) else d.max_resistance_ohm
            _add(groups, BomNeed(
                "discharge_resistor", "discharge resistor", float(st.count * d.resistors), "ea",
                {"r_ohm": r, "p_w": d.v_element_rms_v**2 / r, "v_v": d.v_element_rms_v},
                f"{d.clause}: ≤ {d.v_limit_v:g} V within {d.t_limit_s:g} s; "
                f"R ≤ t/(C·ln(V0/V_lim)) = {d.max_resistance_ohm:.4g} ohm, one per element"))
        notes.append("Discharge resistors: choose parts rated well above their dissipation "
                     "and for the full peak voltage.")
    # PF controller
    if automatic:
        _add(groups, BomNeed("pf_controller", "power factor controller", 1.0, "ea",
                             {"steps": float(len(steps))}, f"automatic bank of {len(steps)} steps"))
    # Conductors
    _add(groups, _conductor_need(f, n_ug, feeder_length_m, "feeder"))
    if step_length_m is not None:
        for st, p in zip(steps, protection.steps):
            ln = step_length_m.get(st.name) if isinstance(step_length_m, Mapping) else step_length_m
            if ln is not None:
                _add(groups, _conductor_need(p, n_ug, float(ln), f"step {st.name}"))
    notes.append("Equipment grounding conductors are not listed: size them per NEC 250.122 "
                 "(or IEC 60364-5-54) from the fuse ratings.")
    # Losses and enclosure
    w_plain = W_PER_KVAR if w_per_var is None else float(w_per_var)
    w_det = DETUNED_W_PER_KVAR if detuned_w_per_var is None else float(detuned_w_per_var)
    if w_plain < 0 or w_det < 0:
        raise CalcError("loss per var must not be negative")
    q_plain = sum(max(st.q_rated_var, p.currents.q_applied_var)
                  for st, p in zip(steps, protection.steps) if st.detuning_pct is None)
    q_det = sum(max(st.q_rated_var, p.currents.q_applied_var)
                for st, p in zip(steps, protection.steps) if st.detuning_pct is not None)
    loss = s.calc("P_loss", "Q_c * w_c + Q_d * w_d", "W", "bank losses for ventilation",
                  note=(f"{codes.COMMON_PRACTICE}: capacitors {W_PER_KVAR_RANGE[0] * 1e3:g}–"
                        f"{W_PER_KVAR_RANGE[1] * 1e3:g} W/kvar; detuned steps incl. reactor "
                        f"{DETUNED_W_PER_KVAR_RANGE[0] * 1e3:g}–{DETUNED_W_PER_KVAR_RANGE[1] * 1e3:g} "
                        f"W/kvar ({codes.FROM_MEMORY})"),
                  Q_c=(q_plain, "var"), w_c=(w_plain, "W/var"), Q_d=(q_det, "var"),
                  w_d=(w_det, "W/var"))
    if not delta_t_k > 0:
        raise CalcError("delta_t_k must be positive")
    air = s.calc("V_air", "P_loss / (rho * c_p * dT)", "m3/s", "ventilation airflow",
                 note="air properties from memory; fan and filter losses not included",
                 P_loss=(loss, "W"), rho=(AIR_RHO_KG_M3, "kg/m3"), c_p=(AIR_CP_J_KG_K, "J/(kg*K)"),
                 dT=(float(delta_t_k), "K"))
    if enclosure:
        _add(groups, BomNeed("enclosure", "enclosure with ventilation", 1.0, "ea",
                             {"p_w": float(loss), "airflow_m3_s": float(air),
                              "delta_t_k": float(delta_t_k)},
                             f"dissipates {loss:.0f} W (capacitor and reactor losses) at "
                             f"ΔT {delta_t_k:g} K: airflow ≥ {air:.4f} m³/s"))
    summary = {"losses_w": float(loss), "airflow_m3_s": float(air), "notes": notes}
    return tuple(groups.values()), summary


# ---------------------------------------------------------------------------
# Catalog matching and pricing
# ---------------------------------------------------------------------------


def _num(x: Any) -> float | None:
    if isinstance(x, bool):
        return None
    if isinstance(x, (int, float)):
        return float(x)
    return None


def _field_ok(op: str, need: Any, have: Any) -> bool:
    nn, hn = _num(need), _num(have)
    if nn is not None and hn is not None:
        tol = 1e-6 * max(abs(nn), abs(hn), 1e-30)
        if op == "eq":
            return abs(hn - nn) <= tol
        if op == "min":
            return hn >= nn - tol
        if op == "max":
            return hn <= nn + tol
        raise AssertionError(op)  # pragma: no cover
    if isinstance(need, str) and isinstance(have, str) and op == "eq":
        return need.strip().lower() == have.strip().lower()
    return False


def check_catalog(catalog: Sequence[Mapping[str, Any]]) -> None:
    """Raise :class:`CalcError` for catalog entries the matcher cannot use.

    Every entry needs a ``kind`` and a ``part_number``; ``unit_price``, when
    present, must be a non-negative number.
    """
    for i, e in enumerate(catalog):
        if not isinstance(e, Mapping):
            raise CalcError(f"catalog entry {i + 1} is not a mapping")
        if "kind" not in e or "part_number" not in e:
            raise CalcError(f"catalog entry {i + 1} needs 'kind' and 'part_number'")
        if "unit_price" in e and e["unit_price"] is not None:
            p = _num(e["unit_price"])
            if p is None or not math.isfinite(p):
                raise CalcError(f"catalog entry {e['part_number']!r}: unit_price "
                                f"{e['unit_price']!r} is not a number")
            if p < 0:
                raise CalcError(f"catalog entry {e['part_number']!r}: unit_price {p} is negative")


def match_entry(need: BomNeed, catalog: Sequence[Mapping[str, Any]]) -> Mapping[str, Any] | None:
    """The first catalog entry of the need's kind that satisfies every match field, or None."""
    fields = MATCH_FIELDS.get(need.kind, {})
    for e in catalog:
        if str(e.get("kind", "")).lower() != need.kind:
            continue
        if all(f in e and f in need.rating and _field_ok(op, need.rating[f], e[f])
               for f, op in fields.items()):
            if need.kind == "discharge_resistor":
                r, p = _num(e.get("r_ohm")), _num(e.get("p_w"))
                v = need.rating.get("v_v")
                if r is None or p is None or r <= 0 or (v is not None and p < v**2 / r):
                    continue
            return e
    return None


def price_needs(needs: Sequence[BomNeed], catalog: Sequence[Mapping[str, Any]] | None = None,
                *, losses_w: float | None = None, airflow_m3_s: float | None = None,
                notes: Sequence[str] = ()) -> Bom:
    """Match needs against a catalog and price them.

    Parameters
    ----------
    needs : sequence of BomNeed
    catalog : sequence of dict, optional
        See the module docstring. Without a catalog every line is unpriced.
    losses_w, airflow_m3_s : float, optional
        Carried into the :class:`Bom`.
    notes : sequence of str

    Returns
    -------
    Bom
        ``total`` is the sum of the priced lines (None when none is priced);
        ``unpriced`` counts lines without a price.

    Raises
    ------
    CalcError
        Negative or non-numeric prices, entries without kind/part_number,
        or priced lines in more than one currency.
    """
    cat = list(catalog or ())
    check_catalog(cat)
    lines: list[BomLine] = []
    currencies: set[str] = set()
    total = 0.0
    priced = 0
    for n in needs:
        if n.quantity < 0:
            raise CalcError(f"{n.item}: negative quantity {n.quantity}")
        e = match_entry(n, cat) if cat else None
        note = ""
        part = price = ext = cur = None
        if e is not None:
            part = str(e["part_number"])
            cur = None if e.get("currency") is None else str(e["currency"])
            if e.get("unit_price") is not None:
                price = float(e["unit_price"])
                if n.priceable:
                    ext = price * n.quantity
                else:
                    note = "quantity not known: not priced"
        elif cat:
            wants = ", ".join(f"{f} {op} {n.rating.get(f)!r}" for f, op in MATCH_FIELDS.get(n.kind, {}).items())
            note = f"no catalog entry of kind {n.kind!r} with {wants}"
        if ext is not None:
            currencies.add(cur or "")
            total += ext
            priced += 1
        lines.append(BomLine(n.kind, n.item, float(n.quantity), n.unit, dict(n.rating), n.basis,
                             part, price, ext, cur, note))
    if len(currencies) > 1:
        raise CalcError("catalog prices are in more than one currency "
                        f"({', '.join(sorted(c or '(none)' for c in currencies))}); "
                        "a total cannot be formed")
    return Bom(
        lines=tuple(lines), total=total if priced else None,
        currency=(next(iter(currencies)) or None) if currencies else None,
        unpriced=len(lines) - priced, losses_w=losses_w, airflow_m3_s=airflow_m3_s,
        notes=tuple(notes),
    )


def build_bom(
    steps: Sequence[BankStep],
    protection: BankProtection,
    v_applied_v: float,
    catalog: Sequence[Mapping[str, Any]] | None = None,
    *,
    sheet: Sheet | None = None,
    **options: Any,
) -> Bom:
    """:func:`bank_needs` then :func:`price_needs`.

    Parameters
    ----------
    steps, protection, v_applied_v
        As for :func:`bank_needs`.
    catalog : sequence of dict, optional
    sheet : Sheet, optional
    **options
        Keyword options of :func:`bank_needs` (automatic, discharge,
        discharge_built_in, feeder_length_m, step_length_m, ungrounded,
        enclosure, w_per_var, detuned_w_per_var, delta_t_k).

    Returns
    -------
    Bom
    """
    needs, summary = bank_needs(steps, protection, v_applied_v, sheet=sheet, **options)
    return price_needs(needs, catalog, losses_w=summary["losses_w"],
                       airflow_m3_s=summary["airflow_m3_s"], notes=summary["notes"])
