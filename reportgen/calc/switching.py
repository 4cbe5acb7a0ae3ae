"""Inrush current when capacitor steps are switched on.

Both cases are the lossless LC circuit of a per-phase (wye-equivalent)
model, closing at the voltage peak onto an uncharged capacitor — the worst
case, and an upper bound since circuit resistance only damps it. Formulas as
in IEEE Std 1036 and IEEE C37.012 (application guides; clause numbers from
memory):

Isolated bank (energised from the source through L = L_s + L_extra):
    Z0 = √(L/C),  I_pk = V_pk / Z0,  f0 = 1/(2π√(L·C)) = f1·√(S_sc/Q) when L = L_s.
Back-to-back (a step closing onto energised steps; the source inductance is
much larger than the inductance L between the steps, so the energised steps
supply the first peak and only L counts):
    C_eq = C1·C2/(C1 + C2),  I_pk = V_pk·√(C_eq/L),  f = 1/(2π√(L·C_eq)).

The source keeps driving the steady 60/50 Hz current, whose peak √2·I_c
(I_c of the switched step) adds to the ring: in the lossless circuit the
first-cycle maximum is about V_pk/Z0·(1 + f1/f0) = V_pk/Z0 + √2·I_c — the
"(1 + √(X_C/X_S))" form. ``peak_a`` is that sum (transient + steady-state
peak); ``transient_peak_a`` the formula alone. The capability check uses
``peak_a``; the f·I product uses the transient peak.

V_pk is the peak line-to-neutral voltage √2·V/√3 (three phase) or √2·V
(single phase); C is the per-phase wye-equivalent capacitance Q/(ω·V²) and
L_s = V²/(ω·S_sc) the source inductance per phase.

To bring a peak within a device's capability I_max, the loop inductance must
be at least V_pk²·C/(I_max − √2·I_c)²; to keep f·I_pk ≤ (f·I)_max it must be at least
V_pk/(2π·(f·I)_max). The added inductance is the larger requirement less the
present L.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

from reportgen.calc import codes
from reportgen.calc.errors import CalcError
from reportgen.calc.protection import BankStep
from reportgen.calc.sheet import Sheet

FORMULA_SOURCE = "IEEE Std 1036 / IEEE C37.012 (from memory)"
# Inductance between steps of a low-voltage bank (bus bars and cables, all three phases'
# loop per phase): a few microhenries. Common practice / from memory: compute or measure
# it for the actual layout when the result matters.
DEFAULT_L_BETWEEN_H = 5e-6
DEFAULT_L_BETWEEN_SOURCE = f"{codes.COMMON_PRACTICE}, {codes.FROM_MEMORY}"


@dataclass(frozen=True)
class SwitchCapability:
    """What a contactor or breaker can make when closing onto capacitors.

    Attributes
    ----------
    peak_a : float
        Largest permitted making (inrush) peak current, A.
    f_peak_product_a_hz : float, optional
        Largest permitted product of inrush frequency and peak current, A·Hz.
    name : str
    """

    peak_a: float
    f_peak_product_a_hz: float | None = None
    name: str = ""

    def __post_init__(self):
        if not (math.isfinite(self.peak_a) and self.peak_a > 0):
            raise CalcError(f"switching device {self.name!r}: peak_a must be positive")
        if self.f_peak_product_a_hz is not None and not (self.f_peak_product_a_hz > 0):
            raise CalcError(f"switching device {self.name!r}: f_peak_product_a_hz must be positive")

    def as_dict(self) -> dict:
        return {"name": self.name, "peak_a": self.peak_a,
                "f_peak_product_a_hz": self.f_peak_product_a_hz}


@dataclass(frozen=True)
class InrushResult:
    """Inrush of one switching event (per phase)."""

    case: str  # "isolated" or "back_to_back"
    name: str
    v_peak_v: float
    c_f: float  # C (isolated) or C_eq (back-to-back), wye-equivalent per phase
    l_h: float
    z0_ohm: float
    transient_peak_a: float
    steady_peak_a: float
    peak_a: float
    frequency_hz: float
    f_peak_product_a_hz: float
    peak_ratio: float
    source: str
    capability: SwitchCapability | None
    passed: bool | None
    added_inductance_h: float | None
    recommendation: str

    def as_dict(self) -> dict:
        return {
            "case": self.case,
            "name": self.name,
            "v_peak_v": self.v_peak_v,
            "c_f": self.c_f,
            "l_h": self.l_h,
            "z0_ohm": self.z0_ohm,
            "transient_peak_a": self.transient_peak_a,
            "steady_peak_a": self.steady_peak_a,
            "peak_a": self.peak_a,
            "frequency_hz": self.frequency_hz,
            "f_peak_product_a_hz": self.f_peak_product_a_hz,
            "peak_ratio": self.peak_ratio,
            "source": self.source,
            "capability": None if self.capability is None else self.capability.as_dict(),
            "passed": self.passed,
            "added_inductance_h": self.added_inductance_h,
            "recommendation": self.recommendation,
        }


def _v_peak(v_v: float, phases: int, s: Sheet, t: str) -> float:
    if phases == 3:
        return s.calc("V_pk", "sqrt(2) * V / sqrt(3)", "V", t + "peak line-to-neutral voltage",
                      V=(v_v, "V"))
    if phases == 1:
        return s.calc("V_pk", "sqrt(2) * V", "V", t + "peak voltage", V=(v_v, "V"))
    raise CalcError(f"phases must be 1 or 3, not {phases!r}")


def _judge(case: str, name: str, v_pk: float, c: float, l: float, i_tr: float, f0: float,
           f_hz: float, c_switched: float, capability: SwitchCapability | None,
           s: Sheet, t: str) -> InrushResult:
    i_ss = s.calc("I_ss", "V_pk * 2 * pi * f_1 * C_s", "A",
                  t + "steady-state peak current of the switched capacitors",
                  V_pk=(v_pk, "V"), f_1=(f_hz, "Hz"), C_s=(c_switched, "F"))
    peak = s.calc("I_pk,max", "I_pk + I_ss", "A", t + "inrush peak with the steady-state current",
                  note="conservative: lossless, closing at the voltage peak",
                  I_pk=(i_tr, "A"), I_ss=(i_ss, "A"))
    fp = i_tr * f0
    passed = added = None
    rec = ""
    if capability is not None:
        ok_pk = peak <= capability.peak_a
        ok_fp = capability.f_peak_product_a_hz is None or fp <= capability.f_peak_product_a_hz
        passed = ok_pk and ok_fp
        dev = capability.name or "the switching device"
        if passed:
            rec = (f"peak {peak:.0f} A within {dev}'s {capability.peak_a:.0f} A"
                   + ("" if capability.f_peak_product_a_hz is None
                      else f"; f·I {fp:.3g} A·Hz within {capability.f_peak_product_a_hz:.3g} A·Hz"))
            added = 0.0
        elif capability.peak_a <= i_ss:
            rec = (f"{dev}'s {capability.peak_a:.0f} A is not above the steady-state peak "
                   f"{i_ss:.0f} A: no inrush limiting can help; choose a device rated for the step")
        else:
            l_need = s.calc("L_req", "V_pk**2 * C / (I_max - I_ss)**2", "H",
                            t + "loop inductance that limits the peak to the device capability",
                            V_pk=(v_pk, "V"), C=(c, "F"), I_max=(capability.peak_a, "A"),
                            I_ss=(i_ss, "A"))
            if capability.f_peak_product_a_hz is not None:
                l_fp = s.calc("L_req,fI", "V_pk / (2 * pi * fI_max)", "H",
                              t + "loop inductance that limits f·I_pk to the device capability",
                              V_pk=(v_pk, "V"), fI_max=(capability.f_peak_product_a_hz, "A*Hz"))
                l_need = max(l_need, l_fp)
            dl = s.calc("dL", "L_req - L", "H", t + "inductance to add per phase",
                        L_req=(float(l_need), "H"), L=(l, "H"))
            added = float(dl)
            rec = (f"peak {peak:.0f} A (f·I {fp:.3g} A·Hz) exceeds {dev}'s capability: limit the "
                   f"inrush — capacitor-duty contactors with damping (pre-insertion) resistors, or "
                   f"series inrush reactors adding at least {added * 1e6:.1f} µH per phase "
                   f"(a detuning reactor also does this) — or choose a device rated for the peak")
        s.note(t + rec, title=t + "switching device check")
    return InrushResult(
        case=case, name=name, v_peak_v=float(v_pk), c_f=float(c), l_h=float(l),
        z0_ohm=math.sqrt(l / c), transient_peak_a=float(i_tr), steady_peak_a=float(i_ss),
        peak_a=float(peak), frequency_hz=float(f0),
        f_peak_product_a_hz=float(fp), peak_ratio=float(peak / i_ss), source=FORMULA_SOURCE, capability=capability,
        passed=passed, added_inductance_h=added, recommendation=rec,
    )


def isolated_inrush(
    c_f: float,
    v_v: float,
    f_hz: float,
    *,
    s_sc_va: float | None = None,
    l_source_h: float | None = None,
    l_extra_h: float = 0.0,
    phases: int = 3,
    capability: SwitchCapability | None = None,
    name: str = "bank",
    sheet: Sheet | None = None,
) -> InrushResult:
    """Inrush when an isolated capacitor bank (nothing else energised nearby) is switched on.

    Parameters
    ----------
    c_f : float
        Per-phase wye-equivalent capacitance of the switched capacitors, F.
    v_v : float
        System voltage (line-to-line for three phase), V.
    f_hz : float
        System frequency, Hz.
    s_sc_va : float, optional
        Short-circuit power at the bank's bus, VA (gives L_s = V²/(ω·S_sc)).
    l_source_h : float, optional
        Source inductance per phase, H (used when ``s_sc_va`` is not given).
    l_extra_h : float
        Further series inductance per phase (cables, reactors), H.
    phases : {1, 3}
    capability : SwitchCapability, optional
    name : str
    sheet : Sheet, optional

    Returns
    -------
    InrushResult
    """
    s = sheet if sheet is not None else Sheet()
    t = f"{name}: "
    if not (c_f > 0 and v_v > 0 and f_hz > 0):
        raise CalcError(f"{name}: capacitance, voltage and frequency must be positive")
    if l_extra_h < 0:
        raise CalcError(f"{name}: l_extra_h must not be negative")
    if s_sc_va is not None:
        if not s_sc_va > 0:
            raise CalcError(f"{name}: short-circuit power s_sc_va must be positive")
        l_s = s.calc("L_s", "V**2 / (2 * pi * f * S_sc)", "H", t + "source inductance per phase",
                     V=(v_v, "V"), f=(f_hz, "Hz"), S_sc=(s_sc_va, "VA"))
    elif l_source_h is not None:
        if not l_source_h > 0:
            raise CalcError(f"{name}: l_source_h must be positive")
        l_s = float(l_source_h)
    else:
        raise CalcError(f"{name}: isolated-bank inrush needs the short-circuit power s_sc_va "
                        "or the source inductance l_source_h")
    l = s.calc("L", "L_s + L_x", "H", t + "loop inductance per phase",
               L_s=(l_s, "H"), L_x=(float(l_extra_h), "H")) if l_extra_h else l_s
    v_pk = _v_peak(v_v, phases, s, t)
    z0 = s.calc("Z_0", "sqrt(L / C)", "ohm", t + "surge impedance", note=FORMULA_SOURCE,
                L=(l, "H"), C=(c_f, "F"))
    peak = s.calc("I_pk", "V_pk / Z_0", "A", t + "inrush peak current, isolated bank",
                  note=FORMULA_SOURCE, V_pk=(v_pk, "V"), Z_0=(z0, "ohm"))
    f0 = s.calc("f_0", "1 / (2 * pi * sqrt(L * C))", "Hz", t + "inrush frequency",
                note=FORMULA_SOURCE, L=(l, "H"), C=(c_f, "F"))
    if s_sc_va is not None and not l_extra_h:
        q = 2 * math.pi * f_hz * c_f * v_v**2
        s.calc("f_0", "f_1 * sqrt(S_sc / Q)", "Hz", t + "inrush frequency (same, from powers)",
               f_1=(f_hz, "Hz"), S_sc=(s_sc_va, "VA"), Q=(q, "var"))
    return _judge("isolated", name, v_pk, c_f, l, peak, f0, f_hz, c_f, capability, s, t)


def back_to_back_inrush(
    c_switched_f: float,
    c_energized_f: float,
    v_v: float,
    f_hz: float,
    *,
    l_between_h: float | None = None,
    phases: int = 3,
    capability: SwitchCapability | None = None,
    name: str = "step",
    sheet: Sheet | None = None,
) -> InrushResult:
    """Inrush when a step closes onto steps that are already energised.

    Parameters
    ----------
    c_switched_f : float
        Per-phase wye-equivalent capacitance of the closing step, F.
    c_energized_f : float
        Same, of all steps already energised, F.
    v_v : float
        System voltage (line-to-line for three phase), V.
    f_hz : float
    l_between_h : float, optional
        Inductance per phase of the loop between the closing step and the
        energised ones, H. Default :data:`DEFAULT_L_BETWEEN_H` (5 µH, common
        practice / from memory).
    phases : {1, 3}
    capability : SwitchCapability, optional
    name : str
    sheet : Sheet, optional

    Returns
    -------
    InrushResult
    """
    s = sheet if sheet is not None else Sheet()
    t = f"{name}: "
    if not (c_switched_f > 0 and c_energized_f > 0 and v_v > 0 and f_hz > 0):
        raise CalcError(f"{name}: capacitances, voltage and frequency must be positive")
    if l_between_h is None:
        l = DEFAULT_L_BETWEEN_H
        s.note(f"{t}inductance between steps not given: {l * 1e6:g} µH per phase assumed "
               f"({DEFAULT_L_BETWEEN_SOURCE}); give the value for the actual layout",
               title=t + "back-to-back inductance")
    else:
        if not l_between_h > 0:
            raise CalcError(f"{name}: l_between_h must be positive")
        l = float(l_between_h)
    v_pk = _v_peak(v_v, phases, s, t)
    c_eq = s.calc("C_eq", "C_1 * C_2 / (C_1 + C_2)", "F", t + "series capacitance of the loop",
                  C_1=(c_energized_f, "F"), C_2=(c_switched_f, "F"))
    peak = s.calc("I_pk", "V_pk * sqrt(C_eq / L)", "A", t + "back-to-back inrush peak current",
                  note=FORMULA_SOURCE, V_pk=(v_pk, "V"), C_eq=(c_eq, "F"), L=(l, "H"))
    f0 = s.calc("f_0", "1 / (2 * pi * sqrt(L * C_eq))", "Hz", t + "back-to-back inrush frequency",
                note=FORMULA_SOURCE, L=(l, "H"), C_eq=(c_eq, "F"))
    return _judge("back_to_back", name, v_pk, c_eq, l, peak, f0, f_hz, c_switched_f,
                  capability, s, t)


@dataclass(frozen=True)
class BankInrush:
    """Inrush of every step: closing first (isolated) and last (against all others)."""

    results: tuple[InrushResult, ...]

    @property
    def worst(self) -> InrushResult:
        return max(self.results, key=lambda r: r.peak_a)

    @property
    def passed(self) -> bool | None:
        checks = [r.passed for r in self.results if r.passed is not None]
        return all(checks) if checks else None

    def as_dict(self) -> dict:
        w = self.worst
        return {
            "results": [r.as_dict() for r in self.results],
            "worst": {"name": w.name, "case": w.case, "peak_a": w.peak_a,
                      "frequency_hz": w.frequency_hz},
            "peak_a": w.peak_a,
            "frequency_hz": w.frequency_hz,
            "passed": self.passed,
        }


def bank_inrush(
    steps: Sequence[BankStep],
    v_applied_v: float,
    *,
    f_hz: float | None = None,
    s_sc_va: float | None = None,
    l_source_h: float | None = None,
    l_between_h: float | None = None,
    capability: SwitchCapability | dict[str, SwitchCapability] | None = None,
    sheet: Sheet | None = None,
) -> BankInrush:
    """Inrush of each step of a bank: switched first, and switched last against all the others.

    A detuned step's reactor (p/(ω²·C)) adds to the loop inductance: its own
    when it closes, and for the energised group the parallel combination of
    the group's reactors when all of them are detuned (an undetuned energised
    step offers no reactor, so none is counted: the safe side).

    Parameters
    ----------
    steps : sequence of BankStep
    v_applied_v : float
        System voltage, V.
    f_hz : float, optional
        System frequency; default the first unit's rated frequency.
    s_sc_va, l_source_h : float, optional
        Source strength for the isolated case (skipped when neither is given).
    l_between_h : float, optional
        Step-to-step inductance per phase (default 5 µH, common practice / from memory).
    capability : SwitchCapability or dict of step name -> SwitchCapability, optional
        The step switching devices' capability.
    sheet : Sheet, optional

    Returns
    -------
    BankInrush
    """
    if not steps:
        raise CalcError("a capacitor bank needs at least one step")
    f = steps[0].unit.f_hz if f_hz is None else float(f_hz)
    phases = steps[0].unit.phases
    s = sheet if sheet is not None else Sheet()
    out: list[InrushResult] = []
    for k, st in enumerate(steps):
        cap = capability.get(st.name) if isinstance(capability, dict) else capability
        l_own = st.reactor_l_h or 0.0
        if s_sc_va is not None or l_source_h is not None:
            out.append(isolated_inrush(
                st.c_wye_f, v_applied_v, f, s_sc_va=s_sc_va, l_source_h=l_source_h,
                l_extra_h=l_own, phases=phases, capability=cap, name=f"{st.name} (closing first)",
                sheet=s))
        others = [o for j, o in enumerate(steps) if j != k]
        if others:
            c_on = sum(o.c_wye_f for o in others)
            l_on = 0.0
            if all(o.reactor_l_h for o in others):
                l_on = 1.0 / sum(1.0 / o.reactor_l_h for o in others)
            l_b = DEFAULT_L_BETWEEN_H if l_between_h is None else float(l_between_h)
            if l_between_h is None:
                s.note(f"{st.name}: inductance between steps not given: {l_b * 1e6:g} µH per "
                       f"phase assumed ({DEFAULT_L_BETWEEN_SOURCE})", title="back-to-back inductance")
            l_loop = l_b + l_own + l_on
            if l_own or l_on:
                l_loop = s.calc("L", "L_b + L_r + L_on", "H",
                                f"{st.name}: loop inductance with detuning reactors",
                                L_b=(l_b, "H"), L_r=(l_own, "H"), L_on=(l_on, "H"))
            out.append(back_to_back_inrush(
                st.c_wye_f, c_on, v_applied_v, f, l_between_h=l_loop, phases=phases,
                capability=cap, name=f"{st.name} (closing last)", sheet=s))
    if not out:
        raise CalcError("a single-step bank needs s_sc_va or l_source_h to compute inrush")
    return BankInrush(tuple(out))
