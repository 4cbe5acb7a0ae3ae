"""Feature stage: protection, wiring, discharge, switching and the bill of materials.

Reads ``rules``, ``catalog`` and ``protection`` from the project (see
reportgen/schema/protection.py) and the core design, calls the pure core
(reportgen.calc.protection, discharge, switching, bom) and adds to the design:

* ``d.json["protection"]``: ``rated_current_a``, ``conductor {size, ampacity_a}``,
  ``fuse_a``, ``disconnect_a``, ``discharge {max_resistance_ohm, seconds_to_limit}``,
  ``inrush {peak_a, frequency_hz}`` (bank feeder and governing values) with the
  details of every step, unit, rule and check;
* ``d.bom``: the full bill of materials (results.json ``bom[]``: item, quantity,
  rating, unit_price, extended_price, ...), ``d.json["bom_summary"]`` its total;
* ``d.parts["bom"]`` (a reportgen.calc.bom.Bom, for the economics stage) and
  ``d.parts["protection"]`` (everything the templates and the diagram draw);
* ``d.files["bom.csv"]``, checks, cautions, calculation sheets, the report section
  ``sections/protection.html`` and the figure ``one_line``.

Step layout, in order of preference:
1. ``d.parts["bank"]`` (a reportgen.calc.profile.Bank with ``steps_var``), when a
   stage before this one has put it there;
2. ``correction.steps`` read from the project model (the stepped-bank keys of the
   profile feature), a list of step sizes;
3. otherwise a fixed bank: the units chosen by the sizing, one group per unit size,
   switched together as one step.
Step sizes from 1 and 2 are nameplate kvar (the profile feature puts the Bank at
nameplate kvar); each becomes ``n`` units of the largest size on hand that divides it,
else one unit of that size.
"""

from __future__ import annotations

import csv
import io
import math
from dataclasses import replace

from ..calc import bom as bom_mod
from ..calc import codes
from ..calc import protection as prot
from ..calc import switching as sw
from ..calc.discharge import SAFETY_NOTE, discharge_check
from ..calc.errors import CalcError
from ..calc.sheet import Sheet
from ..render.fmt import kvar, num, qty

GOVERNING = ("These ratings are a design aid. Local codes, the authority having jurisdiction and the "
             "utility's rules govern; a licensed engineer must check the design.")

#: stated default when neither the power-quality source nor protection.switching gives the
#: short-circuit power: a transformer loaded to its rating with 4 % impedance, i.e.
#: S_sc = S_load / 0.04 (stiffer than the 5.75 % typical of distribution transformers, from
#: memory, so the inrush estimate errs high; common practice assumption)
DEFAULT_SOURCE_IMPEDANCE_PU = 0.04

MATERIAL = {"copper": "cu", "aluminium": "al", "aluminum": "al"}


def _fail(exc: CalcError, path: tuple) -> CalcError:
    if not getattr(exc, "path", None):
        exc.path = path
    return exc


# --------------------------------------------------------------------------- inputs


def _options(m) -> tuple:
    from ..schema.protection import Conductors, Discharge, Enclosure, Protection, Switching

    p = m.protection or Protection()
    return (p, p.conductors or Conductors(), p.discharge or Discharge(), p.switching or Switching(),
            p.enclosure or Enclosure())


def _as_var(x) -> float | None:
    """A step size from whatever shape the stepped-bank keys take (float, model, dict)."""
    if isinstance(x, bool):
        return None
    if isinstance(x, (int, float)):
        return float(x)
    for name in ("q_var", "size", "kvar", "reactive_power", "q", "rating"):
        v = x.get(name) if isinstance(x, dict) else getattr(x, name, None)
        if isinstance(v, (int, float)) and not isinstance(v, bool):
            return float(v)
        if isinstance(v, dict) and isinstance(v.get("q_var"), (int, float)):
            return float(v["q_var"])
    return None


def _step_sizes(d) -> tuple[list[float] | None, str]:
    """Nameplate kvar of each step of an automatic bank, or None for a fixed bank."""
    bank = d.parts.get("bank")
    sv = getattr(bank, "steps_var", None)
    if sv:
        return [float(x) for x in sv], "the automatic bank's steps"
    corr = d.model.correction
    if getattr(corr, "bank", None) == "fixed":
        return None, ""
    steps = getattr(corr, "steps", None)
    if steps is None or getattr(steps, "design", False):
        return None, ""
    count, size = getattr(steps, "count", None), getattr(steps, "size", None)
    if isinstance(count, int) and isinstance(size, (int, float)) and count >= 1 and size > 0:
        if getattr(steps, "weighting", "equal") == "binary":
            return [float(size) * 2**k for k in range(count)], "correction.steps"
        return [float(size)] * count, "correction.steps"
    vals = [_as_var(x) for x in steps] if isinstance(steps, (list, tuple)) else [None]
    if not vals or any(v is None or not v > 0 for v in vals):
        return None, ""
    return vals, "correction.steps"


def _detuning_pct(d) -> float | None:
    det = getattr(d.model.correction, "detuning", None)
    if det is None:
        return None
    if isinstance(det, (int, float)) and not isinstance(det, bool):
        v = float(det)
    else:
        v = None
        for name in ("p_pct", "percent", "p", "factor", "detuning", "reactor"):
            x = det.get(name) if isinstance(det, dict) else getattr(det, name, None)
            if isinstance(x, (int, float)) and not isinstance(x, bool):
                v = float(x)
                break
        if v is None:
            for name in ("tuning_order", "order", "h"):
                x = det.get(name) if isinstance(det, dict) else getattr(det, name, None)
                if isinstance(x, (int, float)) and not isinstance(x, bool) and x > 1:
                    return 100.0 / float(x) ** 2
            return None
    if not v > 0:
        return None
    return v * 100.0 if v < 1 else v


def _unit(d, q_rated_var: float) -> prot.CapacitorUnit:
    conn = d.connection if d.phases == 3 else "delta"
    name = f"{kvar(q_rated_var)} {qty(d.v_rated_v, 'V')}".replace("\u00a0", " ").replace("\u2009", " ")
    return prot.CapacitorUnit(q_rated_var, d.v_rated_v, d.f_rated_hz, d.phases, conn, name=name)


def _steps(d) -> tuple[list[prot.BankStep], bool, str]:
    """(steps, automatic, where the layout came from)."""
    p_pct = _detuning_pct(d)
    sizes, source = _step_sizes(d)
    if sizes:
        on_hand = sorted({c.unit.q_rated_var for c in d.sizing.choices}
                         | {u.get("q_var") for u in (d.model.correction.unit_sizes or []) if u.get("q_var")},
                         reverse=True)
        out = []
        for k, q_r in enumerate(sizes):
            unit_q, count = q_r, 1
            for uq in on_hand:
                n = q_r / uq
                if n >= 1 and abs(n - round(n)) < 1e-6:
                    unit_q, count = uq, int(round(n))
                    break
            out.append(prot.BankStep(f"S{k + 1}", _unit(d, unit_q), count, p_pct))
        return out, True, source
    choices = [c for c in d.sizing.choices if c.count > 0]
    if len(choices) == 1:
        return [prot.BankStep("bank", _unit(d, choices[0].unit.q_rated_var), choices[0].count, p_pct)], False, \
            "fixed bank"
    return [prot.BankStep(f"G{k + 1}", _unit(d, c.unit.q_rated_var), c.count, p_pct)
            for k, c in enumerate(choices)], False, "fixed bank"


def _source_s_sc(d, sw_opts) -> tuple[float, str, bool]:
    """(S_sc, where it came from, assumed?)."""
    pq = d.parts.get("power_quality")
    src = pq.get("source") if isinstance(pq, dict) else getattr(pq, "source", None)
    s_sc = src.get("s_sc_va") if isinstance(src, dict) else getattr(src, "s_sc_va", None)
    if isinstance(s_sc, (int, float)) and not isinstance(s_sc, bool) and s_sc > 0:
        return float(s_sc), "the power-quality source (system.source)", False
    if sw_opts.source_short_circuit:
        return float(sw_opts.source_short_circuit), "protection.switching.source_short_circuit", False
    s_load = abs(d.total_s_va)
    return (s_load / DEFAULT_SOURCE_IMPEDANCE_PU,
            f"not given: assumed {num(1 / DEFAULT_SOURCE_IMPEDANCE_PU, 3)} × the load's apparent power "
            f"(a transformer loaded to its rating with {num(DEFAULT_SOURCE_IMPEDANCE_PU * 100, 2)} % "
            "impedance; a stiff source on purpose, common practice assumption)", True)


# --------------------------------------------------------------------------- run


def run(d) -> None:
    if d.sizing.q_installed_var <= 0 or not any(c.count for c in d.sizing.choices):
        return
    m = d.model
    rules = m.rules
    p, cond, dis, swo, enc = _options(m)
    here = ("protection",) if m.protection is not None else ("rules",)
    try:
        opts = prot.ProtectionOptions(
            rules=rules, fuse_multiple=p.fuse_multiple, iec_sizing_factor=p.iec_sizing_factor,
            material=MATERIAL[cond.material], insulation_temp_c=cond.insulation_rating,
            termination_temp_c=cond.termination_rating,
            ambient_c=30.0 if cond.ambient is None else float(cond.ambient),
            bundled_count=cond.grouped, largest_size=cond.largest_size, fused_disconnect=p.fused_disconnect)
    except CalcError as exc:
        raise _fail(exc, here)
    steps, automatic, layout = _steps(d)

    # ---- protection and wiring
    psheet = Sheet(f"Protection and wiring ({_rule_name(rules)})")
    psheet.note(GOVERNING, title="Basis")
    cpath = ("protection", "conductors") if (m.protection and m.protection.conductors) else here
    unit_currents = []
    seen = set()
    for st in steps:
        if st.unit.name in seen:
            continue
        seen.add(st.unit.name)
        try:
            unit_currents.append((st.unit, prot.capacitor_currents(
                st.unit.q_var, st.unit.v_rated_v, d.v_v, phases=st.unit.phases, connection=st.unit.connection,
                name=f"unit {st.unit.name}", sheet=psheet)))
        except CalcError as exc:
            raise _fail(exc, here)
    try:
        bp = prot.protect_bank(steps, d.v_v, opts, feeder_name="bank feeder", sheet=psheet)
    except CalcError as exc:
        raise _fail(exc, cpath)

    # ---- discharge
    dsheet = Sheet(f"Discharge ({_rule_name(rules)})")
    dpath = ("protection", "discharge") if (m.protection and m.protection.discharge) else here
    discharge = []
    done = set()
    for st, sp in zip(steps, bp.steps):
        if st.unit.name in done:
            continue
        done.add(st.unit.name)
        v_c = max(sp2.currents.v_capacitor_v for s2, sp2 in zip(steps, bp.steps) if s2.unit.name == st.unit.name)
        v_pk = math.sqrt(2) * v_c if st.detuning_pct else None
        try:
            discharge.append(discharge_check(st.unit, rules, dis.resistance, v_peak_v=v_pk, sheet=dsheet))
        except CalcError as exc:
            raise _fail(exc, dpath)
    q_rated_total = sum(st.q_rated_var for st in steps)
    energy = dsheet.calc("E", "Q / (2 * pi * f)", "J", "energy stored in the bank at the peak of rated voltage",
                         note="½·C·V_pk² summed over the elements = Q/ω", Q=(q_rated_total, "var"),
                         f=(d.f_rated_hz, "Hz"))

    # ---- switching
    ssheet = Sheet("Switching: inrush current")
    s_sc, s_src, s_assumed = _source_s_sc(d, swo)
    ssheet.note(f"short-circuit power at the bank's bus {qty(s_sc, 'VA')}: {s_src}", title="Source")
    spath = ("protection", "switching") if (m.protection and m.protection.switching) else here
    cap = None
    if swo.device is not None:
        try:
            cap = sw.SwitchCapability(swo.device.peak_current, swo.device.frequency_current_product,
                                      swo.device.name or "the switching device")
        except CalcError as exc:
            raise _fail(exc, ("protection", "switching", "device"))
    try:
        if automatic:
            inrush = sw.bank_inrush(steps, d.v_v, f_hz=d.f_hz, s_sc_va=s_sc,
                                    l_between_h=swo.inductance_between_steps, capability=cap, sheet=ssheet)
            inrush_results = list(inrush.results)
        else:
            c_tot = sum(st.c_wye_f for st in steps)
            l_r = 0.0
            if all(st.reactor_l_h for st in steps):
                l_r = 1.0 / sum(1.0 / st.reactor_l_h for st in steps)
            one = sw.isolated_inrush(c_tot, d.v_v, d.f_hz, s_sc_va=s_sc, l_extra_h=l_r, phases=d.phases,
                                     capability=cap, name="fixed bank (energised)", sheet=ssheet)
            inrush = sw.BankInrush((one,))
            inrush_results = [one]
    except CalcError as exc:
        raise _fail(exc, spath)

    # ---- motor capacitors
    msheet = Sheet("Capacitors switched with a motor")
    motors = _motor_capacitors(d, p, msheet)

    # ---- bill of materials
    bsheet = Sheet("Bill of materials: losses and ventilation")
    try:
        needs, summary = bom_mod.bank_needs(
            steps, bp, d.v_v, automatic=automatic, discharge=discharge, discharge_built_in=dis.built_in,
            feeder_length_m=cond.feeder_length, step_length_m=cond.step_length, enclosure=enc.include,
            w_per_var=None if enc.loss_per_kvar is None else enc.loss_per_kvar / 1e3,
            detuned_w_per_var=None if enc.detuned_loss_per_kvar is None else enc.detuned_loss_per_kvar / 1e3,
            delta_t_k=enc.temperature_rise, sheet=bsheet)
    except CalcError as exc:
        raise _fail(exc, here)
    needs = _adjust_needs(list(needs), steps, bp, automatic, p.fused_disconnect, d.v_v, motors)
    catalog = _load_catalog(d)
    try:
        bom = _price(needs, catalog, summary)
    except CalcError as exc:
        raise _fail(exc, ("catalog",))
    descriptions = {e["part_number"]: e.get("description", "") for e in (catalog or [])}

    # ---- results
    summ = prot.protection_summary(bp.feeder, discharge, inrush)
    summ.update({
        "rules": rules,
        "rule_set": _rule_name(rules),
        "governing": GOVERNING,
        "layout": layout,
        "automatic": automatic,
        "units": [{"name": u.name, **c.as_dict()} for u, c in unit_currents],
        "feeder": bp.feeder.as_dict(),
        "steps": [{"name": st.name, "unit": st.unit.name, "count": st.count, "q_rated_var": st.q_rated_var,
                   "detuning_pct": st.detuning_pct, "reactor_l_h": st.reactor_l_h, **sp.as_dict()}
                  for st, sp in zip(steps, bp.steps)],
        "discharge_checks": [x.as_dict() for x in discharge],
        "stored_energy_j": float(energy),
        "switching": {"s_sc_va": s_sc, "s_sc_source": s_src, "s_sc_assumed": s_assumed,
                      "l_between_h": swo.inductance_between_steps or sw.DEFAULT_L_BETWEEN_H,
                      "capability": None if cap is None else cap.as_dict(), **inrush.as_dict()},
        "motor_capacitors": [mc["result"].as_dict() | {"load": mc["load"], "q_var": mc["q_var"]}
                             for mc in motors],
    })
    summ["step_groups"] = _step_groups(summ["steps"])
    summ["switching"]["rows"] = _inrush_rows(inrush_results)
    d.json["protection"] = summ
    lines = [_line_dict(ln, descriptions) for ln in bom.lines]
    d.bom = lines
    d.json["bom_summary"] = {"total": bom.total, "currency": bom.currency, "unpriced": bom.unpriced,
                             "losses_w": bom.losses_w, "airflow_m3_s": bom.airflow_m3_s,
                             "notes": list(bom.notes),
                             "catalog": None if catalog is None else catalog.display}
    d.parts["bom"] = bom
    d.parts["protection"] = {
        "rules": rules, "rule_name": _rule_name(rules), "steps": steps, "bank": bp, "automatic": automatic,
        "layout": layout, "unit_currents": unit_currents, "discharge": discharge, "inrush": inrush,
        "inrush_results": inrush_results, "s_sc_va": s_sc, "s_sc_source": s_src, "s_sc_assumed": s_assumed,
        "capability": cap, "energy_j": float(energy), "motors": motors, "bom": bom, "lines": lines,
        "catalog": None if catalog is None else catalog.display, "options": opts,
        "built_in": dis.built_in, "governing": GOVERNING,
    }
    d.files["bom.csv"] = bom_csv(lines, bom)
    d.sheets += [psheet, dsheet, ssheet] + ([msheet] if motors else []) + [bsheet]
    d.checks += _checks(d, rules, bp, discharge, dis, inrush, cap, s_assumed, bom, catalog, motors)
    d.cautions += _cautions(rules, discharge, energy, dis)
    d.sections.append("sections/protection.html")
    d.figures["one_line"] = lambda d: _one_line(d)


def _names(names: list[str]) -> str:
    return names[0] if len(names) == 1 else (f"{names[0]}–{names[-1]}" if len(names) > 2 else ", ".join(names))


def _step_groups(steps: list[dict]) -> list[dict]:
    """Consecutive steps with the same units and ratings, shown once: {names, count_steps, step}."""
    out: list[dict] = []
    for st in steps:
        key = (st["unit"], st["count"], st["detuning_pct"], st["fuse_a"], st["conductor"]["size"],
               st["conductor"]["sets"], round(st["disconnect_min_a"], 9))
        if out and out[-1]["key"] == key:
            out[-1]["names_list"].append(st["name"])
        else:
            out.append({"key": key, "names_list": [st["name"]], "step": st})
    return [{"names": _names(g["names_list"]), "steps": len(g["names_list"]), "step": g["step"]} for g in out]


def _inrush_rows(results) -> list[dict]:
    """Switching events with the same case, peak and frequency, shown once."""
    rows: list[dict] = []
    for r in results:
        step, _, event = r.name.partition(" (")
        event = event.rstrip(")")
        key = (r.case, event, round(r.peak_a, 6), round(r.frequency_hz, 6), r.passed)
        for row in rows:
            if row["key"] == key:
                row["names_list"].append(step)
                break
        else:
            rows.append({"key": key, "names_list": [step], "event": event, "result": r.as_dict()})
    return [{"names": _names(x["names_list"]), "event": x["event"], **x["result"]} for x in rows]


def _one_line(d):
    from ..render import figures_protection

    return figures_protection.one_line(d)


def _rule_name(rules: str) -> str:
    return (f"NEC rule set, {codes.NEC_EDITION} Article 460" if rules == "nec"
            else f"IEC rule set, {codes.IEC_LV_EDITION} with IEC 60364")


# --------------------------------------------------------------------------- motors


def _motor_capacitors(d, p, sheet: Sheet) -> list[dict]:
    out = []
    if not p.motor_capacitors:
        return out
    by_name = {ld.name: (i, ld) for i, ld in enumerate(d.model.loads)}
    results = {lp.name: lp for lp in d.loads}
    for k, mc in enumerate(p.motor_capacitors):
        path = ("protection", "motor_capacitors", k, "load")
        if mc.load not in by_name or by_name[mc.load][1].kind != "motor" or mc.load not in results:
            motors_named = [ld.name for ld in d.model.loads if ld.kind == "motor"]
            exc = CalcError(f"'{mc.load}' is not a motor load in loads[] (motor loads: "
                            f"{', '.join(motors_named) or 'none'})")
            raise _fail(exc, path)
        lp = results[mc.load]
        n = max(lp.count, 1)
        p_each, q_each = lp.p_w / n, lp.q_var / n
        i_each = lp.current_a / n
        q_c = float(mc.capacitor)
        if q_c >= q_each:
            raise _fail(CalcError(f"{kvar(q_c)} at '{mc.load}' is not less than the motor's own "
                                  f"{kvar(q_each)}: it would overcorrect (self-excitation risk)"),
                        ("protection", "motor_capacitors", k, "capacitor"))
        pf_b = p_each / math.hypot(p_each, q_each)
        pf_a = sheet.calc("PF_after", "P / sqrt(P**2 + (Q - Q_c)**2)", "", f"{mc.load}: power factor with "
                          "its capacitor", P=(p_each, "W"), Q=(q_each, "var"), Q_c=(q_c, "var"))
        try:
            r = prot.motor_capacitor(i_each, pf_b, float(pf_a), q_c, d.v_v, phases=d.phases,
                                     load_side_of_overload=mc.side == "load_side_of_overload",
                                     i_no_load_a=mc.no_load_current, sheet=sheet)
        except CalcError as exc:
            raise _fail(exc, ("protection", "motor_capacitors", k))
        out.append({"load": mc.load, "count": n, "q_var": q_c, "result": r, "side": mc.side})
    return out


# --------------------------------------------------------------------------- bill of materials


def _adjust_needs(needs, steps, bp, automatic, fused_disconnect, v_v, motors):
    """Fixed banks: no separate step fuses for a single group; group naming. Fuse holders. Motors."""
    out = []
    fixed_one = not automatic and len(steps) == 1
    for n in needs:
        if n.kind == "fuse" and n.item == "step fuse":
            if fixed_one:
                continue  # the feeder fuses protect the only group
            if not automatic:
                n = replace(n, item="group fuse")
        out.append(n)
        if n.kind == "fuse" and (n.item != "feeder fuse" or not fused_disconnect):
            out.append(bom_mod.BomNeed(
                "fuse_holder", n.item.replace("fuse", "fuse holder"), n.quantity, "ea",
                {"i_a": n.rating["i_a"], "v_v": v_v},
                f"holds the {num(n.rating['i_a'])} A fuses: rated at least {num(n.rating['i_a'])} A "
                f"and {num(v_v)} V"))
    out = _merge_step_conductors(out)
    for mc in motors:
        r = mc["result"]
        out.append(bom_mod.BomNeed(
            "capacitor", f"capacitor at motor {mc['load']}", float(mc["count"]), "ea",
            {"q_var": mc["q_var"], "v_v": v_v},
            f"switched with the motor (NEC 460.8(C) exception); conductors ≥ {num(r.conductor_min_a)} A "
            "(NEC 460.8(A))"))
    return out


def _merge_step_conductors(needs):
    """One line for the steps' conductors of the same size and run length (S1, S2, ... together)."""
    out, groups = [], {}
    for n in needs:
        if n.kind == "conductor" and n.item.startswith("step ") and n.item.endswith(" conductors"):
            key = tuple(sorted((k, str(v)) for k, v in n.rating.items()))
            if key in groups:
                k = groups[key]
                old = out[k]
                names = old.item[len("steps "):-len(" conductors")] if old.item.startswith("steps ") else \
                    old.item[len("step "):-len(" conductors")]
                out[k] = replace(old, item=f"steps {names}, {n.item[len('step '):-len(' conductors')]} conductors",
                                 quantity=old.quantity + n.quantity,
                                 basis=n.basis if n.basis.endswith(", for each step") else n.basis + ", for each step")
                continue
            groups[key] = len(out)
        out.append(n)
    return out


HOLDER_FIELDS = {"i_a": "min", "v_v": "min"}


def _price(needs, catalog, summary) -> bom_mod.Bom:
    """Price each need; fuse holders match entries rated at least the fuse and the voltage."""
    cat = list(catalog or ())
    lines = []
    for n in needs:
        if n.kind == "fuse_holder" and cat:
            sub = [e for e in cat if e["kind"] != "fuse_holder" or all(
                f in e and bom_mod._field_ok(op, n.rating[f], e[f]) for f, op in HOLDER_FIELDS.items())]
            ln = bom_mod.price_needs([n], sub).lines[0]
            if ln.part_number is None:
                ln = replace(ln, note="no catalog entry of kind 'fuse_holder' with "
                             + ", ".join(f"{f} {op} {n.rating[f]!r}" for f, op in HOLDER_FIELDS.items()))
        else:
            ln = bom_mod.price_needs([n], cat).lines[0]
        lines.append(ln)
    priced = [ln for ln in lines if ln.extended_price is not None]
    currencies = {ln.currency or "" for ln in priced}
    if len(currencies) > 1:
        raise CalcError("catalog prices are in more than one currency "
                        f"({', '.join(sorted(c or '(none)' for c in currencies))}); a total cannot be formed")
    total = sum(ln.extended_price for ln in priced) if priced else None
    return bom_mod.Bom(lines=tuple(lines), total=total,
                       currency=(next(iter(currencies)) or None) if currencies else None,
                       unpriced=len(lines) - len(priced), losses_w=summary["losses_w"],
                       airflow_m3_s=summary["airflow_m3_s"], notes=tuple(summary["notes"]))


def _load_catalog(d):
    name = d.model.catalog
    if name is None:
        return None
    from ..project import display_path, resolve_data_file
    from ..readers.catalog import read_catalog

    path, _ = resolve_data_file(d.project, name, ("catalog",), shared=True,
                                suffixes=(".yaml", ".yml", ".csv"))
    catalog = read_catalog(path, display_path(path.resolve()))  # errors: named as the user sees them
    catalog.display = name  # outputs: as written in project.yaml, so they do not depend on the build folder
    return catalog


def _plain(s: str) -> str:
    return s.replace("\u00a0", " ").replace("\u2009", " ")


def rating_text(kind: str, r: dict) -> str:
    """The rating of a bill-of-materials line in words, from its SI values."""
    def v(key, unit):
        return qty(r[key], unit) if r.get(key) is not None else ""

    if kind == "capacitor":
        extra = ""
        if "f_hz" in r:
            extra = f", {v('f_hz', 'Hz')}"
        if r.get("phases") == 3:
            extra += f", 3-phase {r.get('connection', '')}".rstrip()
        elif r.get("phases") == 1:
            extra += ", single-phase"
        return _plain(f"{kvar(r['q_var'])}, {v('v_v', 'V')}{extra}")
    if kind == "reactor":
        return _plain(f"p = {num(r['p_pct'], 3)} % for {kvar(r['q_var'])}, {v('l_h', 'H')} per phase, "
                      f"≥ {v('i_a', 'A')}, ≥ {v('v_v', 'V')}")
    if kind == "fuse":
        return _plain(f"{v('i_a', 'A')}, ≥ {v('v_v', 'V')}")
    if kind in ("fuse_holder", "disconnect"):
        return _plain(f"≥ {v('i_a', 'A')}, ≥ {v('v_v', 'V')}")
    if kind == "contactor":
        return _plain(f"capacitor duty, ≥ {v('i_a', 'A')}, ≥ {v('v_v', 'V')}, for {kvar(r['q_var'])}")
    if kind == "discharge_resistor":
        return _plain(f"≤ {v('r_ohm', 'ohm')}, ≥ {v('p_w', 'W')} dissipation, {v('v_v', 'V')} rms")
    if kind == "pf_controller":
        return f"≥ {int(r['steps'])} steps"
    if kind == "conductor":
        mat = {"cu": "Cu", "al": "Al"}.get(r.get("material"), r.get("material"))
        sets = int(r.get("sets", 1))
        return _plain(f"{sets} × {r['size']} {mat} {int(r['temp_c'])} °C per phase, "
                      f"ampacity {v('ampacity_a', 'A')}")
    if kind == "enclosure":
        return _plain(f"for {v('p_w', 'W')} losses, airflow ≥ {num(r['airflow_m3_s'] * 1e3, 3)} L/s "
                      f"at ΔT {num(r['delta_t_k'], 3)} K")
    return ", ".join(f"{k} {x}" for k, x in sorted(r.items()))


def _line_dict(ln: bom_mod.BomLine, descriptions: dict) -> dict:
    out = ln.as_dict()
    out["rating_text"] = rating_text(ln.kind, ln.rating)
    out["description"] = descriptions.get(ln.part_number, "") if ln.part_number else ""
    return out


def _money(x) -> str:
    return "" if x is None else f"{x:.2f}"


def bom_csv(lines: list[dict], bom: bom_mod.Bom) -> str:
    """The bill of materials as CSV for ordering: one row per line, then the total."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["line", "item", "quantity", "unit", "rating", "part_number", "description", "unit_price",
                "extended_price", "currency", "basis", "note"])
    for k, ln in enumerate(lines, 1):
        w.writerow([k, ln["item"], f"{ln['quantity']:g}", ln["unit"], ln["rating_text"], ln["part_number"] or "",
                    ln["description"], _money(ln["unit_price"]), _money(ln["extended_price"]),
                    ln["currency"] or "", ln["basis"], ln["note"]])
    w.writerow(["", "total" + (f" ({bom.unpriced} lines unpriced)" if bom.unpriced else ""), "", "", "", "", "",
                "", _money(bom.total), bom.currency or "", "", ""])
    return buf.getvalue()


# --------------------------------------------------------------------------- checks and cautions


def _checks(d, rules, bp, discharge, dis, inrush, cap, s_assumed, bom, catalog, motors):
    from ..design import Check

    f = bp.feeder
    c = f.conductor
    out = [Check("protection_feeder", "pass",
                 f"Bank feeder: rated current {f.rated_current_a:.1f} A; fuses {f.fuse_a:g} A; disconnect "
                 f"{f.disconnect_a:g} A; conductors {c.sets} × {c.size} {c.material} per phase "
                 f"({c.ampacity_a:.0f} A ≥ {f.conductor_min_a:.1f} A).",
                 "; ".join(f"{k}: {v}" for k, v in f.clauses.items()))]
    for x in discharge:
        basis = f"{x.clause}: ≤ {x.v_limit_v:g} V within {x.t_limit_s:g} s ({x.confidence})"
        if x.passed is None:
            if dis.built_in:
                out.append(Check("discharge", "pass", f"Units {x.unit_name}: built-in discharge devices; "
                                 f"confirm on the maker's data that they meet the rule (at most "
                                 f"{x.max_resistance_ohm:.4g} ohm per element).", basis))
            else:
                out.append(Check("discharge", "pass", f"Units {x.unit_name}: separate discharge resistors of at "
                                 f"most {x.max_resistance_ohm:.4g} ohm per element are listed.", basis))
        elif x.passed:
            out.append(Check("discharge", "pass", f"Units {x.unit_name}: {x.message}.", basis))
        else:
            out.append(Check("discharge", "fail", f"Units {x.unit_name}: the given resistor is too large: "
                             f"{x.message}.", basis))
    w = inrush.worst
    if cap is None:
        out.append(Check("inrush", "warn", f"Inrush peak {w.peak_a:.0f} A at {w.frequency_hz:.0f} Hz "
                         f"({w.name}): no switching device capability given "
                         "(protection.switching.device); compare with the maker's making capacity.",
                         sw.FORMULA_SOURCE))
    elif inrush.passed:
        out.append(Check("inrush", "pass", f"Inrush peak {w.peak_a:.0f} A at {w.frequency_hz:.0f} Hz "
                         f"({w.name}) within {cap.name}'s {cap.peak_a:.0f} A.", sw.FORMULA_SOURCE))
    else:
        bad = [r for r in inrush.results if r.passed is False]
        worst_bad = max(bad, key=lambda r: r.peak_a)
        out.append(Check("inrush", "fail", f"Inrush {worst_bad.name}: {worst_bad.recommendation}.",
                         sw.FORMULA_SOURCE))
    if s_assumed:
        out.append(Check("inrush_source", "warn", "The source short-circuit power was not given; the inrush "
                         "uses a stated assumption. Give protection.switching.source_short_circuit or the "
                         "power-quality source.", "common practice assumption"))
    if catalog is not None and bom.unpriced:
        missing = [ln.item for ln in bom.lines if ln.extended_price is None]
        out.append(Check("bom_priced", "warn", f"{bom.unpriced} of {len(bom.lines)} bill-of-materials lines "
                         f"have no catalog price: {', '.join(missing)}.", catalog.display))
    elif catalog is not None:
        out.append(Check("bom_priced", "pass", f"Every bill-of-materials line is priced from {catalog.display}.",
                         catalog.display))
    for mc in motors:
        r = mc["result"]
        ok = r.q_within_limit is not False
        out.append(Check("motor_capacitor", "pass" if ok else "warn",
                         f"{mc['load']}: " + (r.overload_note if ok else r.notes[-1]), "NEC 460.8, 460.9"))
    return out


def _cautions(rules, discharge, energy, dis) -> list[str]:
    t = max(x.seconds_to_limit for x in discharge)
    lim = discharge[0]
    out = [
        f"Stored energy. The bank stores about {num(energy, 3)} J at the peak of its rated voltage. "
        f"After disconnection, wait at least {num(t, 3)} s (the discharge time to {lim.v_limit_v:g} V per "
        f"{lim.clause}; longer if the equipment is marked so) before opening the enclosure. " + SAFETY_NOTE,
        "Arc flash. Label the bank and its disconnect with the arc-flash hazard and the required protective "
        "equipment as local rules require (in the US: NEC 110.16 and NFPA 70E); the labelling study is "
        "outside this report.",
        "Protective device ratings. " + GOVERNING,
    ]
    if not dis.built_in:
        out.append("Separate discharge resistors must be connected directly across each element, with no "
                   "switch or fuse between them and the capacitor.")
    return out
