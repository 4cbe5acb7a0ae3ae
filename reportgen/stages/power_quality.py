"""Feature stage: power quality at the correction point (see reportgen/stages/__init__.py).

Reads ``system.source``, ``loads[].harmonics``, ``loads[].waveform``,
``correction.detuning`` and the motor-terminal keys, calls the pure core
(:mod:`reportgen.calc.power_quality`, :mod:`reportgen.calc.waveform`) and adds
to the design:

* ``d.json["power_quality"]``: the issue's keys (``s_sc_va``, ``v_before_pu``,
  ``v_after_pu``, ``voltage_rise_estimate_pct``, ``resonance_order``,
  ``thd_v_before_pct``, ``thd_v_after_pct``, ``capacitor_duty``) and the
  details; ``assessed`` is false when no source is given;
* ``d.parts["power_quality"]``: the :class:`~reportgen.calc.power_quality.PowerQuality`
  result (its ``source`` is the Thevenin source later stages use);
  ``d.parts["pq_view"]``: what the templates and figures need;
* checks ``pq_*`` in place of the core's "power_quality" placeholder, cautions,
  sections ``sections/power_quality*.html`` and figures ``pq_scan``, ``pq_spectrum``
  and ``pq_waveform``.

At import it registers the ``waveform`` load kind in ``LOAD_COMPUTERS`` and the
detuning reactor's delivered-kvar factor in ``BANK_DELIVERY`` (the core then sizes
the bank on ``Q_r*(V/V_r)**2/(1 - p)`` per unit).
"""

from __future__ import annotations

import math

from .. import design
from ..calc import power_quality as pq
from ..calc.errors import CalcError
from ..calc.loads import LoadPower, line_current
from ..calc.sheet import Sheet
from ..calc.waveform import TIME_JITTER, analyze_waveform
from ..errors import InputError, Problem

#: ANSI C84.1 service-voltage ranges (from memory): Range A up to +5 %, Range B up to +5.8 %.
RANGE_A_PU = 1.05
RANGE_B_PU = 1.058
#: orders below this % of the fundamental are left out of a captured spectrum (noise floor; our choice)
CAPTURE_FLOOR_PCT = 0.2

STANDARD_18 = "IEEE Std 18-2012 (same continuous limits as the 2002 edition)"


# --------------------------------------------------------------------------- detuning: delivered kvar


def _next_rating(v: float) -> float:
    for r in sorted(pq.COMMON_LV_CAPACITOR_RATED_V):
        if r >= v * (1 - 1e-9):
            return float(r)
    return float(v)


def _detuning_delivery(m, v_v: float, f_hz: float):
    p = m.correction.detuning
    if not p:
        return None
    v_c = v_v / (1.0 - p)
    v_r = _next_rating(v_c)
    basis = ("next common low-voltage capacitor rating, common practice" if v_r != v_c else
             "above the common low-voltage ratings: choose the next standard rating and give it as "
             "correction.rated_voltage")
    return design.BankDelivery(
        factor=1.0 / (1.0 - p), expr="1 / (1 - p)", values={"p": (p, "")},
        title="Detuning reactor: delivered kvar per kvar the capacitors give at the applied voltage",
        v_rated_default_v=v_r,
        note=(f"Detuned bank (p = {p * 100:g} %): the capacitors see V/(1 − p) = {v_c:.1f} V, so units rated "
              f"{v_r:g} V are taken ({basis}). Give correction.rated_voltage to choose otherwise."))


design.BANK_DELIVERY.append(_detuning_delivery)


# --------------------------------------------------------------------------- waveform load kind


def _data_rows(path):
    """1-based line numbers of the data rows (as the CSV reader counts them) and the delimiter."""
    lines = path.read_text(encoding="utf-8-sig").splitlines()
    k = next(i for i, ln in enumerate(lines) if ln.strip())
    head = lines[k]
    delim = "," if "," in head else (";" if ";" in head else ("\t" if "\t" in head else ","))
    rows = [i + 1 for i in range(k + 1, len(lines)) if lines[i].replace(delim, "").strip()]
    return rows, delim, lines, [h.strip() for h in head.split(delim)]


def _check_time(t, path, shown: str, column: str) -> None:
    """Uneven or non-increasing sample times, located at the CSV line and column."""
    import numpy as np

    dt = np.diff(t)
    bad = None
    if np.any(dt <= 0):
        k = int(np.flatnonzero(dt <= 0)[0])
        bad = (k + 1, f"column {column!r}: the time does not increase ({t[k + 1]!r} s after {t[k]!r} s)")
    else:
        mean = (t[-1] - t[0]) / (t.size - 1)
        over = np.flatnonzero(np.abs(dt - mean) > TIME_JITTER * mean)
        if over.size:
            k = int(over[0])
            bad = (k + 1, f"column {column!r}: the samples are not evenly spaced: the interval before this "
                          f"row is {dt[k]:.6g} s against a mean of {mean:.6g} s (more than "
                          f"{TIME_JITTER:.0%} apart); resample the capture to a fixed rate")
    if bad is None:
        return
    rows, delim, lines, names = _data_rows(path)
    line = rows[bad[0]] if bad[0] < len(rows) else 1
    fields = lines[line - 1].split(delim)
    k = names.index(column) if column in names else 0
    col = 1 + sum(len(f) + len(delim) for f in fields[:k])
    raise InputError([Problem(shown, line, col, bad[1])])


def _waveform(load, c) -> LoadPower:
    from ..project import resolve_data_file
    from ..readers.waveform import read_waveform_csv

    wf = load.waveform
    path, shown = resolve_data_file(c.project, wf.file, ("loads", c.index, "waveform", "file"),
                                    suffixes=(".csv",))
    data = read_waveform_csv(path, shown, wf.time_column, wf.voltage_column, current_column=wf.current_column,
                             shunt_column=wf.shunt_column, shunt_resistance_ohm=wf.shunt_resistance)
    _check_time(data.t_s, path, shown, wf.time_column)
    sh = Sheet(load.name)
    try:
        wa = analyze_waveform(data.t_s, data.v_v, data.i_a, c.f_hz, sheet=sh)
    except CalcError as exc:
        err = CalcError(f"{wf.file}: {exc}")
        err.path = ("file",)
        raise err from None
    if c.phases == 3:
        sh.note("The capture is one phase of a balanced three-phase load (line-to-neutral voltage, line "
                "current): its powers are multiplied by 3.", "Three phases")
        p = sh.calc("P", "3 * P_ph", "W", "Real power, P_ph the mean of v·i over whole cycles",
                    P_ph=(wa.p_w, "W"))
        q = sh.calc("Q", "3 * Q_1ph", "var", "Fundamental reactive power (inductive +)",
                    Q_1ph=(wa.q1_var, "var"))
        v_basis = math.sqrt(3) * wa.v_rms_v
    else:
        p, q = wa.p_w, wa.q1_var
        sh.note(f"Real power P = mean of v·i = {p:.6g} W; fundamental reactive power Q_1 = {q:.6g} var.")
        v_basis = wa.v_rms_v
    s_one = complex(p, q)
    if load.count != 1:
        p = sh.calc("P_total", "n * P", "W", f"Real power of {load.count} loads", n=load.count, P=(p, "W"))
        q = sh.calc("Q_total", "n * Q", "var", f"Reactive power of {load.count} loads", n=load.count,
                    Q=(q, "var"))
        s_one = complex(p, q)
    extras = {
        "file": wf.file,
        "thd_i_pct": wa.thd_i_pct,
        "thd_v_pct": wa.thd_v_pct,
        "true_pf": wa.true_pf,
        "displacement_pf": wa.displacement_pf,
        "f_measured_hz": wa.f_hz,
        "fs_hz": wa.fs_hz,
        "samples_used": wa.samples_used,
        "cycles": wa.cycles,
        "v_rms_v": wa.v_rms_v,
        "i_rms_a": wa.i_rms_a,
        "v1_v": float(wa.v_h_v[0]),
        "i1_a": float(wa.i_h_a[0]),
        "p_phase_w": wa.p_w,
        "q1_phase_var": wa.q1_var,
        "harmonics_pct": wa.harmonics_pct(CAPTURE_FLOOR_PCT),
        "spectrum": {"orders": [int(o) for o in wa.orders], "i_h_a": [float(x) for x in wa.i_h_a],
                     "v_h_v": [float(x) for x in wa.v_h_v]},
    }
    return LoadPower(load.name, "waveform", load.count, c.phases, v_basis, s_one,
                     line_current(s_one, v_basis, c.phases), sh, extras)


design.LOAD_COMPUTERS["waveform"] = _waveform


# --------------------------------------------------------------------------- the stage


def _pairs(d):
    """(index, model load, LoadPower) for every load that adds power at the correction point."""
    out, k = [], 0
    for i, load in enumerate(d.model.loads):
        if k < len(d.loads) and d.loads[k].name == load.name and d.loads[k].kind == load.kind:
            out.append((i, load, d.loads[k]))
            k += 1
    return out


def _load_harmonics(load, lp: LoadPower) -> dict[int, float]:
    """Harmonic currents of one load, order -> % of its fundamental current."""
    if getattr(load, "harmonics", None):
        return {int(n): v * 100.0 for n, v in load.harmonics.items()}
    if lp.kind == "waveform":
        return {int(n): float(v) for n, v in lp.extras["harmonics_pct"].items()}
    return {}


def _source(d, sheet: Sheet) -> pq.SourceImpedance:
    s = d.model.system.source
    try:
        if s.utility is not None:
            u, t = s.utility, s.transformer
            return pq.source_from_utility(
                d.v_v, u.voltage, u.x_r, utility_s_sc_va=u.short_circuit_power,
                utility_fault_current_a=u.fault_current, transformer_s_va=t.rating if t else None,
                transformer_z_pct=t.impedance * 100.0 if t else None, transformer_x_r=t.x_r if t else None,
                phases=d.phases, sheet=sheet)
        return pq.source_from_bus(d.v_v, s.short_circuit_power, s.x_r, d.phases, sheet)
    except CalcError as exc:
        exc.path = ("system", "source")
        raise


def _steps(d) -> list[float] | None:
    """Delivered var of each bank step in switching order, for an automatic (stepped) bank."""
    plan = d.parts.get("bank_plan")
    steps = getattr(getattr(plan, "delivered", None), "steps_var", None)
    return [float(x) for x in steps] if steps else None


def _bank_in_service(d) -> float:
    """Delivered var of the bank in service at the design point (all of a fixed bank)."""
    if d.parts.get("bank_plan") is None:
        return d.sizing.q_installed_var
    return float(d.total_s_va.imag - d.after.q_after_var)  # Q_c = Q_1 - Q_2 of the after-correction sheet


def _status_max(*sts: str) -> str:
    return max(sts, key=list(design.STATUS_ORDER).index)


def run(d) -> None:
    m = d.model
    pairs = _pairs(d)
    view: dict = {"waveforms": [lp for _, _, lp in pairs if lp.kind == "waveform"], "motors": []}
    d.parts["pq_view"] = view
    out: dict = {}
    _motor_terminals(d, pairs, view, out)
    if view["waveforms"]:
        d.figures["pq_waveform"] = lambda d: _figs().waveform_spectra(d)
    source = getattr(m.system, "source", None)
    if source is None:
        out.update({k: None for k in ("s_sc_va", "v_before_pu", "v_after_pu", "voltage_rise_estimate_pct",
                                      "resonance_order", "thd_v_before_pct", "thd_v_after_pct",
                                      "capacitor_duty")})
        out["assessed"] = False
        out["reason"] = "no system.source given"
        d.json["power_quality"] = out
        d.sections.append("sections/power_quality.html")
        return
    sh_src = Sheet("Power quality: source at the bus")
    src = _source(d, sh_src)
    loads = []
    spectra = []
    for _, load, lp in pairs:
        h = _load_harmonics(load, lp)
        loads.append(pq.BusLoad(lp.s_va, h, phases=lp.phases, v_v=lp.v_v))
        if h:
            spectra.append({"name": lp.name, "harmonics_pct": h})
    p = m.correction.detuning or None
    q_bank = _bank_in_service(d)
    steps = _steps(d)
    sh = Sheet("Power quality: voltage, resonance, harmonics, capacitor duty")
    try:
        res = pq.assess(src, loads, q_bank, d.f_hz, detuning_p=p, step_q_var=steps,
                        v_cap_rated_v=m.correction.rated_voltage, sheet=sh)
        # light load: a fixed bank stays in service; an automatic bank's controller switches steps out
        light = pq.bus_voltage(src, 0j, q_bank) if q_bank > 0 and steps is None else None
    except CalcError as exc:
        exc.path = ("system", "source")
        raise
    if light is not None:
        sh.note(f"With the bank in service and the loads off (light load), the bus rises to "
                f"{light.v_after_pu:.4f} pu.", "Bus voltage at light load")
    d.sheets += [sh_src, sh]
    d.parts["power_quality"] = res
    i_h = pq.harmonic_currents(loads, src.v_bus_v, src.phases)
    sig = pq._significant_orders(i_h, pq.SIGNIFICANT_PCT)
    view.update(res=res, src=src, spectra=spectra, i_h=i_h, significant_orders=sig, p=p,
                light=light, q_bank=q_bank)

    out.update(res.as_dict())
    out["assessed"] = True
    out["q_bank_var"] = q_bank  # delivered kvar of the bank in service at the design point
    out["source"] = src.as_dict()
    out["bus"] = res.bus.as_dict()
    out["v_light_load_pu"] = None if light is None else light.v_after_pu
    out["resonance_order_estimate"] = res.resonance_order_estimate
    out["resonance_near_order"] = res.near_order
    out["resonance_flagged"] = res.resonance_flagged
    out["significant_orders"] = sig
    out["harmonics"] = res.harmonics.as_dict()
    out["capacitor_duty_detail"] = None if res.capacitor_duty is None else res.capacitor_duty.as_dict()
    out["capacitor_duty_standard"] = STANDARD_18
    scan = res.scan
    out["scan"] = {"orders": [int(o) for o in scan.orders],
                   "z_source_ohm": [float(x) for x in scan.z_source_at_orders_ohm],
                   "z_bank_ohm": [float(x) for x in scan.z_bank_at_orders_ohm],
                   "z_detuned_ohm": None if scan.z_detuned_at_orders_ohm is None else
                   [float(x) for x in scan.z_detuned_at_orders_ohm],
                   "peak_order_bank": scan.peak_order_bank, "peak_order_detuned": scan.peak_order_detuned}
    out["i_sc_a"] = src.s_sc_va / (math.sqrt(3) * d.v_v if d.phases == 3 else d.v_v)
    hd = res.harmonics
    out["harmonic_table"] = [
        {"order": int(n), "i_h_a": float(i), "i_h_pct": float(i / i_h[1] * 100.0) if i_h[1] > 0 else 0.0,
         "v_h_before_pct": float(vb / hd.v1_before_v * 100.0), "v_h_after_pct": float(va / hd.v1_after_v * 100.0)}
        for n, i, vb, va in zip(hd.orders, hd.i_h_a, hd.v_h_before_v, hd.v_h_after_v) if i > 0]
    out["detuning_p"] = p
    out["detuned"] = None if res.detuned is None else _detuned_dict(res.detuned, d.connection)
    out["steps"] = None if res.steps is None else res.steps.as_dict()
    out["proposal"] = None if res.proposal is None else res.proposal.as_dict()
    if res.proposed is not None:
        pr = res.proposed
        out["proposed"] = {**pr.as_dict(), "detuned": _detuned_dict(pr.detuned, d.connection) if pr.detuned else None,
                           "resonance_near_order": pr.near_order,
                           "harmonics_status": pr.harmonics.status_after,
                           "capacitor_duty_status": None if pr.capacitor_duty is None else
                           dict(pr.capacitor_duty.status)}
    else:
        out["proposed"] = None
    d.json["power_quality"] = out

    _checks(d, res, light, sig, p)
    _cautions(d, res, light)
    d.figures["pq_scan"] = lambda d: _figs().scan(d)
    d.figures["pq_spectrum"] = lambda d: _figs().spectrum(d)
    d.sections.append("sections/power_quality.html")


def _detuned_dict(dt: pq.DetunedBank, connection: str) -> dict:
    out = dt.as_dict()
    # c_f is the wye-equivalent capacitance per phase; a delta leg holds a third of it
    out["c_delta_leg_f"] = dt.c_f / 3.0 if connection == "delta" else None
    return out


def _figs():
    from ..render import figures_pq

    return figures_pq


# --------------------------------------------------------------------------- checks and cautions


def _replace_placeholder(d, new: list) -> None:
    idx = next((k for k, c in enumerate(d.checks) if c.id == "power_quality"), len(d.checks))
    d.checks[idx:idx + 1] = new


def _checks(d, res: pq.PowerQuality, light, sig: list[int], p) -> None:
    Check = design.Check
    new = []
    v_hi = max(res.v_after_pu, light.v_after_pu if light is not None else 0.0)
    st = "pass" if v_hi <= RANGE_A_PU else ("warn" if v_hi <= RANGE_B_PU else "fail")
    msg = (f"Bus voltage {res.v_before_pu:.4f} pu without the bank, {res.v_after_pu:.4f} pu with it "
           f"(rise {res.bus.rise_pct:.2f} %; estimate Q/S_sc {res.voltage_rise_estimate_pct:.2f} %)")
    if light is not None:
        msg += f"; {light.v_after_pu:.4f} pu at light load with the bank in service"
    msg += ", from a source at 1.000 pu."
    new.append(Check("pq_voltage_rise", st, msg, "ANSI C84.1 service voltage Range A +5 %, Range B +5.8 % "
                     "(from memory)"))
    if res.resonance_order is None:
        new.append(Check("pq_resonance", "pass", "No bank in service: no parallel resonance with the source.",
                         "IEEE Std 1036 (from memory)"))
    else:
        h = res.resonance_order
        if res.resonance_flagged:
            carried = res.near_order in sig
            st = "fail" if carried else "warn"
            msg = (f"Parallel resonance at order {h:.2f} (estimate √(S_sc/Q) {res.resonance_order_estimate:.2f}) "
                   f"lies within 10 % of order {res.near_order}"
                   + (", which the loads carry." if carried else ", a characteristic order of converters."))
            if res.proposal is not None:
                msg += f" A {res.proposal.detuning_p * 100:g} % detuning reactor is proposed below."
            new.append(Check("pq_resonance", st, msg, "IEEE Std 1036 guide formula (from memory); ±10 % band "
                             "common practice"))
        else:
            msg = f"Parallel resonance at order {h:.2f}, not within 10 % of a harmonic the loads carry or of 5, 7, 11, 13."
            if p:
                msg += f" The {p * 100:g} % reactor tunes the bank to order {pq.tuning_order(p):.2f}."
            new.append(Check("pq_resonance", "pass", msg, "IEEE Std 1036 (from memory); ±10 % band common "
                             "practice"))
        if res.steps is not None and any(res.steps.near_order):
            bad = [f"{q / 1e3:.0f} kvar (order {hh:.2f})" for q, hh, n in
                   zip(res.steps.q_cumulative_var, res.steps.resonance_order, res.steps.near_order) if n]
            carried = any(n in sig for n in res.steps.near_order if n)
            new.append(Check("pq_step_resonance", "fail" if carried else "warn",
                             "With these steps in service the bank resonates near a harmonic: " + ", ".join(bad)
                             + ".", "IEEE Std 1036 (from memory); ±10 % band common practice"))
    hd = res.harmonics
    lim = hd.limits
    new.append(Check(
        "pq_voltage_distortion", hd.status_after,
        f"Voltage THD {hd.thd_v_before_pct:.2f} % without the bank, {hd.thd_v_after_pct:.2f} % with it; largest "
        f"single order {hd.max_individual_after_pct:.2f} % (limits {lim.thd_pct:g} % and {lim.individual_pct:g} % "
        f"for {lim.voltage_class}).",
        f"{lim.source}; 'warn' above 95 % of a limit (our margin)"))
    du = res.capacitor_duty
    if du is not None:
        worst = du.worst
        names = {"v_rms_pu": "rms voltage", "v_peak_pu": "peak voltage", "i_rms_pu": "rms current",
                 "q_pu": "kvar"}
        over = [names[k] for k, s in du.status.items() if s != "pass"]
        msg = (f"Capacitor duty: rms voltage {du.v_rms_pu:.3f} pu, peak {du.v_peak_pu:.3f} pu, rms current "
               f"{du.i_rms_pu:.3f} pu, kvar {du.q_pu:.3f} pu of rating ({du.v_cap_rated_v:g} V units)")
        msg += (f"; near or above the limit: {', '.join(over)}." if over else "; within the continuous limits.")
        new.append(Check("pq_capacitor_duty", worst, msg, f"{STANDARD_18} continuous limits 110 % rms V, 120 % "
                         "peak V, 135 % rms I, 135 % kvar (secondary source); 'warn' above 95 % of a limit"))
    if res.detuned is not None:
        dt = res.detuned
        low = min(sig) if sig else None
        ok_order = low is None or dt.tuning_order < low
        ok_v = dt.v_cap_rated_v >= dt.v_cap_v * (1 - 1e-9)
        st = "pass" if ok_order and ok_v else "fail"
        msg = (f"Reactor p = {dt.detuning_p * 100:g} % tunes the bank to order {dt.tuning_order:.2f} "
               f"({dt.tuning_f_hz:.0f} Hz)" + (f", below the lowest significant harmonic {low}" if low and ok_order
                                               else (f", NOT below the significant order {low}" if low else "")))
        msg += (f"; capacitors see {dt.v_cap_v:.1f} V and are rated {dt.v_cap_rated_v:g} V"
                + ("." if ok_v else ": rated voltage too low."))
        new.append(Check("pq_detuning", st, msg, "tuning below the lowest significant harmonic: common practice"))
    _replace_placeholder(d, new)
    if res.detuned is not None:
        _unit_voltage_detuned(d, res.detuned)


def _unit_voltage_detuned(d, dt: pq.DetunedBank) -> None:
    """The core's unit-voltage check compares the bus voltage with the rating; behind a reactor the
    capacitors see V/(1 - p): check that instead."""
    ratio = dt.v_cap_v / d.v_rated_v
    basis = "IEEE Std 18-2012, continuous rms voltage 110 %"
    if ratio > 1.10 + 1e-9:
        c = design.Check("unit_voltage", "fail", f"Behind the {dt.detuning_p * 100:g} % reactor the capacitors see "
                         f"{dt.v_cap_v:.1f} V, {ratio * 100:.1f} % of their {d.v_rated_v:g} V rating; above the "
                         "110 % continuous limit.", basis)
    elif ratio > 1.0 + 1e-9:
        c = design.Check("unit_voltage", "warn", f"Behind the {dt.detuning_p * 100:g} % reactor the capacitors see "
                         f"{dt.v_cap_v:.1f} V, {ratio * 100:.1f} % of their {d.v_rated_v:g} V rating; choose units "
                         f"rated at least {dt.v_cap_v:.0f} V.", basis + " (a contingency limit, not a design basis)")
    else:
        c = design.Check("unit_voltage", "pass", f"Behind the {dt.detuning_p * 100:g} % reactor the capacitors see "
                         f"{dt.v_cap_v:.1f} V, {ratio * 100:.1f} % of their {d.v_rated_v:g} V rating (with the "
                         f"reactor they deliver {d.sizing.factor * 100:.1f} % of nameplate kvar).")
    d.checks[:] = [c if x.id == "unit_voltage" else x for x in d.checks]


def _cautions(d, res: pq.PowerQuality, light) -> None:
    c = d.cautions
    if res.resonance_flagged:
        c.append(f"Resonance. The bank and the supply resonate near harmonic order {res.near_order} "
                 f"(h = {res.resonance_order:.2f}): harmonic currents of that order are amplified, which can "
                 "overheat and fail capacitors, blow fuses and disturb other equipment. Do not install the bank "
                 "as designed without a detuning reactor or a harmonic study by a qualified engineer.")
    v_hi = max(res.v_after_pu, light.v_after_pu if light is not None else 0.0)
    if v_hi > RANGE_A_PU:
        c.append(f"Overvoltage. With the bank in service the bus may reach {v_hi:.3f} pu. Confirm the supply "
                 "voltage with the utility, use a switched (stepped) bank that follows the load, or reduce the "
                 "fixed kvar.")
    du = res.capacitor_duty
    if (du is not None and du.worst != "pass") or res.harmonics.status_after != "pass":
        c.append("Harmonic overload. The computed harmonic duty of the capacitors or the voltage distortion is "
                 "near or above its limit. Capacitor units, fuses and contactors must be rated for the harmonic "
                 "current; a detuned or filter bank may be needed.")
    c.append("Power-quality figures assume an ideal source at nominal voltage behind the given impedance, no "
             "background distortion from the utility and no damping by other loads. Confirm the fault level "
             "and X/R with the utility and measure harmonics before and after installation.")


# --------------------------------------------------------------------------- capacitors at motor terminals


def _motor_terminals(d, pairs, view: dict, out: dict) -> None:
    m = d.model
    every = bool(getattr(m.correction, "at_motor", False))
    rows = []
    tgt = m.correction.target_power_factor
    for i, load, lp in pairs:
        if load.kind != "motor" or not (every or load.motor.at_motor):
            continue
        mo = load.motor
        sh = Sheet(f"Capacitor at the terminals of {load.name}")
        n = load.count
        p_each, q_each = lp.p_w / n, lp.q_var / n
        q_c = sh.calc("Q_c", "Q_m - P_m * tan(acos(PF_t))", "var", "Capacitor at the terminals for the target PF",
                      "one motor" if n > 1 else "", Q_m=(q_each, "var"), P_m=(p_each, "W"), PF_t=tgt)
        i_before = lp.current_a / n
        row = {"name": load.name, "count": n, "q_needed_var": max(q_c, 0.0), "i_before_a": i_before,
               "no_load_current_a": mo.no_load_current, "pf_before": mo.power_factor}
        if q_c <= 0:
            row.update(status="pass", message="no capacitor needed at its terminals")
        elif mo.no_load_current is None:
            row.update(status="warn", message="no-load current not given: the self-excitation limit cannot be "
                       "checked (give motor.no_load_current)")
        else:
            mc0 = pq.motor_capacitor(d.v_v, mo.no_load_current, d.phases, q_bank_var=q_c, sheet=sh)
            q_use = min(q_c, mc0.q_practice_var)
            if q_use < q_c:
                sh.note(f"The capacitor is limited to the practice value {q_use:.6g} var; the rest goes in the "
                        "bank at the bus.", "Capacitor at the terminals")
            pf_after = p_each / math.hypot(p_each, q_each - q_use)
            i_after = pq.motor_current_after_correction(i_before, mo.power_factor, pf_after, sh)
            row.update(status="pass" if mc0.status == "pass" else "warn", status_needed=mc0.status,
                       q_max_var=mc0.q_max_var, q_practice_var=mc0.q_practice_var,
                       q_terminal_var=q_use, pf_after=pf_after, i_after_a=i_after,
                       message=(f"{q_c / 1e3:.3g} kvar at the terminals, within 90 % of the no-load magnetizing "
                                f"{mc0.q_max_var / 1e3:.3g} kvar" if mc0.status == "pass" else
                                f"the {q_c / 1e3:.3g} kvar for the target exceeds 90 % of the no-load magnetizing "
                                f"{mc0.q_max_var / 1e3:.3g} kvar: limited to {q_use / 1e3:.3g} kvar at the "
                                "terminals, the rest in the bank at the bus"))
        rows.append(row)
        d.sheets.append(sh)
    view["motors"] = rows
    out["motor_terminals"] = rows
    if not rows:
        return
    worst = _status_max(*(r["status"] for r in rows))
    lines = "; ".join(f"{r['name']}: {r['message']}" for r in rows)
    d.checks.append(design.Check("pq_motor_terminals", worst, f"Capacitors at motor terminals — {lines}.",
                                 "√3·V·I_nl, practice ≤ 90 %: NEMA MG 1 Part 14, IEEE Std 141 ch. 8 "
                                 "(secondary source)"))
    d.cautions.append("Motor overload relays. Where a capacitor is connected at a motor's terminals on the load "
                      "side of its overload relay, the relay must be set on the reduced line current shown in "
                      "the power-quality section (NEC 460.9), not on the nameplate current. Never exceed the motor "
                      "maker's maximum capacitor rating: an oversized capacitor can self-excite the motor after "
                      "it is switched off.")
