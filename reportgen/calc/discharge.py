"""Discharge resistors: largest allowed resistance, losses, time to a safe voltage.

After disconnection a capacitor keeps its charge. The rules require the
residual voltage to fall to a limit within a time (see
:data:`reportgen.calc.codes.DISCHARGE_RULES`):

* nec, ≤ 1000 V: ≤ 50 V within 1 min (NEC 460.6(A)); > 1000 V: ≤ 50 V within
  5 min (NEC 460.28, clause number from memory);
* iec, ≤ 1000 V: ≤ 75 V within 3 min (IEC 60831-1:2014); > 1000 V: ≤ 75 V
  within 10 min (IEC 60871-1:2014).

The start is the peak of the rated voltage, V0 = √2·V_rated, taken between
terminals (line-to-line for three-phase units). With one resistor R across
each element of capacitance C, the voltage falls as V0·exp(−t/(R·C)), so

    R_max = t_limit / (C · ln(V0 / V_limit)),    t(R) = R · C · ln(V0 / V_limit).

Element capacitance: delta units C = Q/(3·ω·V²) per line pair; wye units
C = Q/(ω·V²) per line-to-star element (a resistor across each element); single
phase C = Q/(ω·V²). In both three-phase connections each element with its own
resistor decays independently with the same time constant R·C (the floating
terminals carry no current), so every terminal-to-terminal voltage, including
the worst-case √2·V_LL, falls with that time constant. Using √2·V_LL for a wye
unit (rather than the element peak √2·V_LL/√3) is on the safe side.

Whatever the calculation says, treat every capacitor as charged until it is
shorted and grounded: verify with a rated meter before touching terminals.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from reportgen.calc import codes
from reportgen.calc.errors import CalcError
from reportgen.calc.protection import CapacitorUnit
from reportgen.calc.sheet import Sheet

SAFETY_NOTE = (
    "Discharge resistors can fail open. Before touching any terminal, wait at least the "
    "discharge time marked on the equipment, then short and ground the terminals and verify "
    "with a rated meter. Local codes and the maker's instructions govern."
)


@dataclass(frozen=True)
class DischargeResult:
    """Discharge check of one capacitor unit.

    Attributes
    ----------
    max_resistance_ohm : float
        Largest resistance per element meeting the rule, ohm.
    seconds_to_limit : float
        Time to reach the limit with the user's resistor when given, else
        with ``max_resistance_ohm`` (= ``t_limit_s``), s.
    p_at_max_w : float
        Continuous dissipation of one resistor of ``max_resistance_ohm`` at
        rated voltage, W (``p_total_at_max_w`` for all resistors of the unit).
    passed : bool or None
        The user's resistor meets the rule (None when none was given).
    """

    unit_name: str
    rules: str
    clause: str
    edition: str
    confidence: str
    c_element_f: float
    v_element_rms_v: float
    v0_v: float
    v_limit_v: float
    t_limit_s: float
    resistors: int
    max_resistance_ohm: float
    p_at_max_w: float
    p_total_at_max_w: float
    r_user_ohm: float | None
    seconds_to_limit: float
    p_user_w: float | None
    p_total_user_w: float | None
    passed: bool | None
    message: str

    def as_dict(self) -> dict:
        return {
            "unit": self.unit_name,
            "rules": self.rules,
            "clause": self.clause,
            "edition": self.edition,
            "confidence": self.confidence,
            "c_element_f": self.c_element_f,
            "v_element_rms_v": self.v_element_rms_v,
            "v0_v": self.v0_v,
            "v_limit_v": self.v_limit_v,
            "t_limit_s": self.t_limit_s,
            "resistors": self.resistors,
            "max_resistance_ohm": self.max_resistance_ohm,
            "p_at_max_w": self.p_at_max_w,
            "p_total_at_max_w": self.p_total_at_max_w,
            "r_user_ohm": self.r_user_ohm,
            "seconds_to_limit": self.seconds_to_limit,
            "p_user_w": self.p_user_w,
            "p_total_user_w": self.p_total_user_w,
            "passed": self.passed,
            "message": self.message,
            "safety_note": SAFETY_NOTE,
        }


def discharge_time(r_ohm: float, c_f: float, v0_v: float, v_limit_v: float) -> float:
    """Time for an RC discharge from ``v0_v`` to reach ``v_limit_v``: R·C·ln(V0/V_limit), s."""
    if r_ohm <= 0 or c_f <= 0:
        raise CalcError("discharge resistance and capacitance must be positive")
    if v0_v <= v_limit_v:
        return 0.0
    return r_ohm * c_f * math.log(v0_v / v_limit_v)


def discharge_check(
    unit: CapacitorUnit,
    rules: str = "nec",
    r_user_ohm: float | None = None,
    *,
    v_peak_v: float | None = None,
    sheet: Sheet | None = None,
) -> DischargeResult:
    """Largest discharge resistance for a unit, its losses, and a check of a chosen resistor.

    Parameters
    ----------
    unit : CapacitorUnit
    rules : {"nec", "iec"}
    r_user_ohm : float, optional
        Resistance fitted across each element, ohm. The check fails when it is
        too large (the unit discharges too slowly).
    v_peak_v : float, optional
        Starting voltage if higher than √2·V_rated (e.g. a detuned step whose
        capacitor runs above rated voltage), V.
    sheet : Sheet, optional

    Returns
    -------
    DischargeResult
    """
    rule = codes.discharge_rule(rules, unit.v_rated_v)
    s = sheet if sheet is not None else Sheet()
    nm = unit.name or "unit"
    t = f"{nm}: "
    if unit.phases == 3 and unit.connection == "delta":
        c = s.calc("C_e", "Q / (3 * 2 * pi * f * V**2)", "F", t + "capacitance of one delta element",
                   Q=(unit.q_var, "var"), f=(unit.f_hz, "Hz"), V=(unit.v_rated_v, "V"))
    else:
        c = s.calc("C_e", "Q / (2 * pi * f * V**2)", "F",
                   t + ("capacitance of one wye element" if unit.phases == 3 else "capacitance"),
                   Q=(unit.q_var, "var"), f=(unit.f_hz, "Hz"), V=(unit.v_rated_v, "V"))
    v0 = s.calc("V_0", "sqrt(2) * V", "V", t + "starting voltage, peak of rated voltage",
                note="between terminals", V=(unit.v_rated_v, "V"))
    if v_peak_v is not None:
        if v_peak_v > v0:
            v0 = float(v_peak_v)
            s.note(f"{t}starting voltage raised to the given peak {v0:.0f} V", title=t + "discharge")
    if v0 <= rule.v_limit_v:
        raise CalcError(
            f"{nm}: peak voltage {v0:.0f} V is already at or below the {rule.v_limit_v:g} V "
            f"residual limit of {rule.clause}; no discharge resistance limit applies"
        )
    s.note(f"{t}{rule.clause} ({rule.confidence}): residual ≤ {rule.v_limit_v:g} V within "
           f"{rule.t_limit_s:g} s", title=t + "discharge rule")
    r_max = s.calc("R_max", "t / (C * ln(V_0 / V_lim))", "ohm", t + "largest discharge resistance",
                   note=rule.clause, t=(rule.t_limit_s, "s"), C=(c, "F"), V_0=(v0, "V"),
                   V_lim=(rule.v_limit_v, "V"))
    v_e = unit.element_v_v
    n_r = 3 if unit.phases == 3 else 1
    p_max = s.calc("P_R", "V_e**2 / R", "W", t + "dissipation of one resistor at rated voltage",
                   V_e=(v_e, "V"), R=(r_max, "ohm"))
    p_user = p_tot_user = None
    passed = None
    if r_user_ohm is None:
        t_lim = float(rule.t_limit_s)
        msg = (f"use at most {r_max:.4g} ohm across each element "
               f"({p_max:.3g} W each at rated voltage)")
    else:
        if not (math.isfinite(r_user_ohm) and r_user_ohm > 0):
            raise CalcError(f"{nm}: discharge resistance {r_user_ohm!r} ohm must be positive")
        t_lim = s.calc("t_d", "R * C * ln(V_0 / V_lim)", "s", t + "time to the residual limit",
                       R=(float(r_user_ohm), "ohm"), C=(c, "F"), V_0=(v0, "V"),
                       V_lim=(rule.v_limit_v, "V"))
        p_user = s.calc("P_R,user", "V_e**2 / R", "W", t + "dissipation of the fitted resistor",
                        V_e=(v_e, "V"), R=(float(r_user_ohm), "ohm"))
        p_tot_user = n_r * p_user
        passed = t_lim <= rule.t_limit_s * (1 + 1e-12)
        if passed:
            msg = (f"{r_user_ohm:.4g} ohm reaches {rule.v_limit_v:g} V in {t_lim:.1f} s "
                   f"(limit {rule.t_limit_s:g} s, {rule.clause}): meets the rule")
        else:
            msg = (f"{r_user_ohm:.4g} ohm takes {t_lim:.1f} s to reach {rule.v_limit_v:g} V, "
                   f"longer than {rule.t_limit_s:g} s ({rule.clause}): FAILS; use at most "
                   f"{r_max:.4g} ohm")
        s.note(t + msg, title=t + "discharge check")
    return DischargeResult(
        unit_name=nm, rules=rule.rules, clause=rule.clause, edition=rule.edition,
        confidence=rule.confidence, c_element_f=float(c), v_element_rms_v=float(v_e), v0_v=float(v0),
        v_limit_v=float(rule.v_limit_v), t_limit_s=float(rule.t_limit_s), resistors=n_r,
        max_resistance_ohm=float(r_max), p_at_max_w=float(p_max), p_total_at_max_w=float(n_r * p_max),
        r_user_ohm=None if r_user_ohm is None else float(r_user_ohm), seconds_to_limit=float(t_lim),
        p_user_w=None if p_user is None else float(p_user),
        p_total_user_w=None if p_tot_user is None else float(p_tot_user), passed=passed, message=msg,
    )
