"""Sizing a capacitor bank for a target power factor, from the units on hand.

Rule for choosing units (any count of each size): the delivered reactive
power Q_inst must satisfy Q_required <= Q_inst <= Q_upper, where
Q_required = Q1 - P·tan(acos PF_target) reaches the target and
Q_upper = Q1 keeps the PF from turning leading (with ``allow_leading`` the
upper bound is Q1 + P·tan(acos PF_target), the target PF leading). Among the
combinations inside that window: the fewest units, then the least kvar.
When none fits, the largest combination with Q_inst <= Q1 (flagged), or no
bank when even the smallest unit would lead.

A unit used off its nameplate delivers Q_rated·(V/V_rated)²·(f/f_rated).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .errors import CalcError
from .sheet import Sheet

#: LV unit sizes in kvar, when the project lists none (common practice; no standard series exists)
DEFAULT_KVAR_SERIES = (1, 1.5, 2, 2.5, 3, 4, 5, 7.5, 10, 12.5, 15, 20, 25, 30, 40, 50, 60, 75, 100)
#: capacitance series for small loads (IEC 60063 E6 values), farads
DEFAULT_C_SERIES = tuple(m * 10.0**e for e in range(-9, -2) for m in (1.0, 1.5, 2.2, 3.3, 4.7, 6.8))
#: below this reactive power the default series is capacitances, not kvar units
SMALL_LOAD_VAR = 1000.0
#: largest number of grid cells for the unit-combination search
MAX_GRID = 100_000
#: most units a bank may be made of; beyond this the unit sizes do not suit the load
MAX_UNITS_TOTAL = 1000
#: relative tolerance on the window edges
EDGE_TOL = 1e-9
#: a size so small that more than this many would fit in the bank is left out of the search
MAX_UNITS_PER_SIZE = 2000


@dataclass(frozen=True)
class UnitType:
    """One size of unit on hand, at its nameplate voltage and frequency.

    ``q_rated_var`` is the whole unit's rating (3-phase units: all three
    phases). A size given as a capacitance is one capacitor per phase, in the
    bank's connection; its ``q_rated_var`` is then derived at the rated values.
    """

    q_rated_var: float
    c_f: float | None = None  # set when the size was given as a capacitance
    label: str = ""


@dataclass(frozen=True)
class Choice:
    unit: UnitType
    count: int
    q_delivered_each_var: float


@dataclass(frozen=True)
class Sizing:
    p_w: float
    q_before_var: float
    pf_before: float
    target_pf: float
    q_target_var: float  # Q remaining at the target PF
    q_required_var: float
    q_upper_var: float
    factor: float  # (V/V_rated)^2 (f/f_rated)
    choices: tuple[Choice, ...]
    q_installed_var: float
    q_rated_installed_var: float
    status: str  # "met" | "short" | "none_fits" | "not_needed"
    message: str
    sheet: Sheet = field(compare=False)

    @property
    def unit_count(self) -> int:
        return sum(c.count for c in self.choices)


def capacitance_unit_q(c_f: float, v_v: float, f_hz: float, phases: int, connection: str) -> float:
    """Reactive power of one capacitor per phase (a set of three on 3 phases)."""
    w = 2 * math.pi * f_hz
    if phases == 1:
        return w * c_f * v_v**2
    v_ph = v_v if connection == "delta" else v_v / math.sqrt(3)
    return 3 * w * c_f * v_ph**2


def default_units(q_var: float, v_rated: float, f_rated: float, phases: int, connection: str):
    if q_var < SMALL_LOAD_VAR:
        return [UnitType(capacitance_unit_q(c, v_rated, f_rated, phases, connection), c_f=c)
                for c in DEFAULT_C_SERIES]
    return [UnitType(k * 1e3) for k in DEFAULT_KVAR_SERIES]


def size_bank(p_w: float, q_var: float, target_pf: float, units: list[UnitType], *, v_v: float,
              f_hz: float, v_rated_v: float, f_rated_hz: float, allow_leading: bool = False) -> Sizing:
    """Choose units for the target power factor; record every step."""
    sh = Sheet("Sizing")
    if p_w <= 0:
        raise CalcError("the loads draw no real power; a power factor target cannot be applied")
    s1 = math.hypot(p_w, q_var)
    pf1 = sh.calc("PF_1", "P / sqrt(P**2 + Q_1**2)", "", "Present power factor", P=(p_w, "W"),
                  Q_1=(q_var, "var"))
    q_t = sh.calc("Q_2", "P * tan(acos(PF_t))", "var", "Reactive power left at the target PF",
                  P=(p_w, "W"), PF_t=target_pf)
    factor = sh.calc("k", "(V / V_r)**2 * (f / f_r)", "", "Delivered / rated kvar of a unit used off its "
                     "nameplate", V=(v_v, "V"), V_r=(v_rated_v, "V"), f=(f_hz, "Hz"), f_r=(f_rated_hz, "Hz"))
    if q_var <= q_t * (1 + EDGE_TOL):
        msg = (f"the present power factor {pf1:.3f} {'leading' if q_var < 0 else 'lagging'} already "
               f"meets the target {target_pf:.3f}; no bank is needed")
        sh.note(msg[0].upper() + msg[1:] + ".")
        return Sizing(p_w, q_var, pf1, target_pf, q_t, 0.0, 0.0, factor, (), 0.0, 0.0, "not_needed", msg, sh)
    q_req = sh.calc("Q_c", "Q_1 - P * tan(acos(PF_t))", "var", "Capacitor kvar needed for the target",
                    Q_1=(q_var, "var"), P=(p_w, "W"), PF_t=target_pf)
    if allow_leading:
        q_up = sh.calc("Q_max", "Q_1 + P * tan(acos(PF_t))", "var",
                       "Most kvar allowed: the target PF, leading", Q_1=(q_var, "var"), P=(p_w, "W"),
                       PF_t=target_pf)
    else:
        q_up = q_var
        sh.note(f"Most kvar allowed: Q_1 = {q_var:.6g} var, so the power factor never turns leading.")
    delivered = np.array([u.q_rated_var * factor for u in units])
    counts, status = _choose(delivered, q_req, q_up, q_var)
    choices = tuple(Choice(u, int(n), float(d)) for u, n, d in zip(units, counts, delivered) if n > 0)
    choices = tuple(sorted(choices, key=lambda c: -c.unit.q_rated_var))
    q_inst = float(sum(c.count * c.q_delivered_each_var for c in choices))
    q_rated = float(sum(c.count * c.unit.q_rated_var for c in choices))
    n_units = sum(c.count for c in choices)
    if status == "met":
        msg = (f"{n_units} unit(s) deliver {q_inst:.6g} var, within {q_req:.6g} … {q_up:.6g} var: "
               f"the fewest units, then the least kvar, that meet the target without leading")
    elif status == "short":
        msg = (f"no combination of the units on hand falls within {q_req:.6g} … {q_up:.6g} var; the "
               f"largest that does not lead, {q_inst:.6g} var, is chosen and the target is not reached")
    else:
        msg = ("even the smallest unit on hand would turn the power factor leading; no bank is chosen")
    sh.note(msg[0].upper() + msg[1:] + ".", title="Choice of units")
    return Sizing(p_w, q_var, pf1, target_pf, q_t, q_req, q_up, factor, choices, q_inst, q_rated, status,
                  msg, sh)


def _choose(delivered: np.ndarray, q_lo: float, q_hi: float, q_no_lead: float):
    """Counts per unit size by the rule in the module docstring.

    Breadth-first over the number of units on an integer grid: ``reach[n]``
    marks the totals reachable with exactly n units (NumPy boolean shifts,
    one per unit size). The first n with a total inside the window wins; the
    least total inside the window at that n is taken.
    """
    k = len(delivered)
    if k == 0 or np.any(delivered <= 0):
        raise CalcError("unit sizes must be positive")
    top = max(q_hi, q_no_lead)
    if q_lo / delivered.max() > MAX_UNITS_TOTAL:
        raise CalcError(f"the bank would need more than {MAX_UNITS_TOTAL} units of the largest size on hand "
                        f"({delivered.max():.6g} var for {q_lo:.6g} var); give larger unit sizes")
    usable = delivered * MAX_UNITS_PER_SIZE >= top
    if not usable.any():
        usable = delivered == delivered.max()
    if not usable.all():
        sub, status = _choose(delivered[usable], q_lo, q_hi, q_no_lead)
        counts = np.zeros(k, dtype=int)
        counts[np.flatnonzero(usable)] = sub
        return counts, status
    res = _resolution(delivered, top)
    cells = np.rint(delivered / res).astype(np.int64)
    if np.any(cells <= 0):
        cells = np.maximum(cells, 1)
    n_cells = int(math.floor(top * (1 + EDGE_TOL) / res)) + 1
    lo = int(math.ceil(q_lo * (1 - EDGE_TOL) / res - 1e-6))
    hi = int(math.floor(q_hi * (1 + EDGE_TOL) / res + 1e-6))
    no_lead = int(math.floor(q_no_lead * (1 + EDGE_TOL) / res + 1e-6))
    prev_reach = np.zeros(n_cells, dtype=bool)
    prev_reach[0] = True
    via = []  # via[n][s] = index of a unit size that reaches s at level n (largest size first)
    best_short = None
    max_levels = min(int(max(hi, no_lead) // max(int(cells.min()), 1)) + 1, MAX_UNITS_TOTAL)
    for n in range(1, max_levels + 1):
        prev = prev_reach
        cur = np.zeros(n_cells, dtype=bool)
        pick = np.full(n_cells, -1, dtype=np.int8)
        for idx in np.argsort(-delivered, kind="stable"):
            c = int(cells[idx])
            if c >= n_cells:
                continue
            shifted = np.zeros(n_cells, dtype=bool)
            shifted[c:] = prev[: n_cells - c]
            new = shifted & ~cur
            pick[new] = idx
            cur |= shifted
        if not cur.any():
            break
        prev_reach = cur
        via.append(pick)
        window = np.flatnonzero(cur[lo : hi + 1]) if lo <= hi else np.array([], dtype=np.int64)
        if window.size:
            return _trace(int(lo + window[0]), n, via, cells, k), "met"
        below = np.flatnonzero(cur[: no_lead + 1])
        if below.size:
            s = int(below[-1])
            if best_short is None or s > best_short[0]:
                best_short = (s, n)
    if best_short is None:
        return np.zeros(k, dtype=int), "none_fits"
    return _trace(best_short[0], best_short[1], via, cells, k), "short"


def _resolution(delivered: np.ndarray, top: float) -> float:
    """Grid step: the common divisor of the sizes when it is coarse enough, else top / MAX_GRID."""
    floor = top / MAX_GRID
    g = 0
    for d in delivered:
        g = math.gcd(g, int(round(d * 1000)))  # in mvar
    res = g / 1000.0
    exact = res > 0 and all(abs(d / res - round(d / res)) < 1e-6 for d in delivered)
    if exact and res >= floor:
        return res
    return max(floor, min(delivered) / 1000.0)


def _trace(s: int, n: int, via: list, cells: np.ndarray, k: int) -> np.ndarray:
    counts = np.zeros(k, dtype=int)
    for level in range(n, 0, -1):
        idx = int(via[level - 1][s])
        counts[idx] += 1
        s -= int(cells[idx])
    return counts


@dataclass(frozen=True)
class After:
    q_after_var: float
    s_after_va: float
    pf_after: float
    leading_after: bool
    current_before_a: float
    current_after_a: float
    loss_reduction_fraction: float
    capacitance_per_phase_f: float
    bank_current_a: float
    bank_rated_current_a: float
    sheet: Sheet = field(compare=False)


def after_correction(p_w: float, q_var: float, q_inst_var: float, q_rated_var: float, *, v_v: float,
                     f_hz: float, v_rated_v: float, phases: int, connection: str) -> After:
    """The supply after the bank: PF, apparent power, current, loss reduction, capacitance."""
    sh = Sheet("After correction")
    s1 = sh.calc("S_1", "sqrt(P**2 + Q_1**2)", "VA", "Apparent power before", P=(p_w, "W"),
                 Q_1=(q_var, "var"))
    q2 = sh.calc("Q_2", "Q_1 - Q_c", "var", "Reactive power after (the bank supplies Q_c)",
                 Q_1=(q_var, "var"), Q_c=(q_inst_var, "var"))
    s2 = sh.calc("S_2", "sqrt(P**2 + Q_2**2)", "VA", "Apparent power after", P=(p_w, "W"), Q_2=(q2, "var"))
    pf2 = sh.calc("PF_2", "P / S_2", "", "Power factor after", P=(p_w, "W"), S_2=(s2, "VA"))
    if phases == 3:
        i1 = sh.calc("I_1", "S_1 / (sqrt(3) * V)", "A", "Line current before", S_1=(s1, "VA"), V=(v_v, "V"))
        i2 = sh.calc("I_2", "S_2 / (sqrt(3) * V)", "A", "Line current after", S_2=(s2, "VA"), V=(v_v, "V"))
    else:
        i1 = sh.calc("I_1", "S_1 / V", "A", "Current before", S_1=(s1, "VA"), V=(v_v, "V"))
        i2 = sh.calc("I_2", "S_2 / V", "A", "Current after", S_2=(s2, "VA"), V=(v_v, "V"))
    loss = sh.calc("dP_loss", "1 - (I_2 / I_1)**2", "", "Fractional reduction in feeder I²R loss",
                   I_1=(i1, "A"), I_2=(i2, "A"))
    w = 2 * math.pi * f_hz
    if q_inst_var > 0:
        if phases == 1:
            c = sh.calc("C", "Q_c / (omega * V**2)", "F", "Capacitance", Q_c=(q_inst_var, "var"),
                        omega=(w, "rad/s"), V=(v_v, "V"))
        elif connection == "delta":
            c = sh.calc("C_ph", "Q_c / (3 * omega * V**2)", "F", "Capacitance per phase, delta (each "
                        "phase across the line voltage)", Q_c=(q_inst_var, "var"), omega=(w, "rad/s"),
                        V=(v_v, "V"))
        else:
            c = sh.calc("C_ph", "Q_c / (omega * V**2)", "F", "Capacitance per phase, wye (Q_c/3 = ω·C·(V/√3)²)",
                        Q_c=(q_inst_var, "var"), omega=(w, "rad/s"), V=(v_v, "V"))
        if phases == 3:
            ib = sh.calc("I_c", "Q_c / (sqrt(3) * V)", "A", "Bank line current at the applied voltage",
                         Q_c=(q_inst_var, "var"), V=(v_v, "V"))
            ibr = sh.calc("I_cr", "Q_r / (sqrt(3) * V_r)", "A", "Bank rated line current",
                          Q_r=(q_rated_var, "var"), V_r=(v_rated_v, "V"))
        else:
            ib = sh.calc("I_c", "Q_c / V", "A", "Bank current at the applied voltage",
                         Q_c=(q_inst_var, "var"), V=(v_v, "V"))
            ibr = sh.calc("I_cr", "Q_r / V_r", "A", "Bank rated current", Q_r=(q_rated_var, "var"),
                          V_r=(v_rated_v, "V"))
    else:
        c = ib = ibr = 0.0
    return After(q2, s2, pf2, q2 < 0, i1, i2, loss, c, ib, ibr, sh)


def phasors(p_w: float, q_var: float, q_inst_var: float, v_v: float, phases: int) -> dict:
    """Per-phase phasors for the diagram: V (reference), load, capacitor and source currents."""
    v_ph = v_v / math.sqrt(3) if phases == 3 else v_v
    n = 3 if phases == 3 else 1
    i_load = complex(p_w, -q_var) / (n * v_ph)
    i_cap = complex(0.0, q_inst_var) / (n * v_ph)
    return {"v_v": complex(v_ph, 0.0), "i_load_a": i_load, "i_cap_a": i_cap, "i_source_a": i_load + i_cap}
