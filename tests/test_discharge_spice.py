"""Discharge times against ngspice transients of the RC discharge from the rated peak.

Reference tool: ngspice (transient analysis with initial conditions, ``uic``). The
calculation is R·C·ln(V0/V_limit); ngspice integrates the circuit independently, including
the three-element delta and wye networks whose elements share terminals.
"""

import math

import numpy as np
import pytest

import spice
from reportgen.calc.discharge import discharge_check, discharge_time
from reportgen.calc.protection import CapacitorUnit


def _crossing(t, v, level):
    """First time |v| falls to ``level`` (linear interpolation between output points)."""
    a = np.abs(v)
    k = int(np.argmax(a <= level))
    assert a[k] <= level and k > 0, "never reached the level"
    return t[k - 1] + (a[k - 1] - level) * (t[k] - t[k - 1]) / (a[k - 1] - a[k])


def _tran(netlist, vectors, t_stop):
    dt = t_stop / 4000
    return spice.tran(netlist, vectors, dt, t_stop, options=f"0 {dt!r} uic")


def test_single_element_rc_matches_ngspice():
    # ngspice reference: C charged to √2·400 V discharging through the user's 200 kΩ.
    u = CapacitorUnit(50e3, 400, 50, name="U50")
    d = discharge_check(u, "iec", r_user_ohm=200e3)
    net = f"""
C1 a 0 {d.c_element_f!r} ic={d.v0_v!r}
R1 a 0 200e3
"""
    t, v = _tran(net, ["v(a)"], 1.3 * d.seconds_to_limit)
    t_spice = _crossing(t, v["v(a)"], d.v_limit_v)
    assert d.seconds_to_limit == pytest.approx(t_spice, rel=2e-3)
    assert d.passed is True


def test_delta_unit_at_max_resistance_reaches_limit_at_one_minute():
    # NEC 460.6(A): 50 V within 60 s. ngspice: a delta of three elements, each with R_max
    # across it, starting from the line-to-line peak √2·480 V across a–b (b–c and c–a at
    # −V0/2, as at a voltage peak). The largest terminal voltage should reach 50 V at 60 s.
    u = CapacitorUnit(25e3, 480, 60, connection="delta", name="U25")
    d = discharge_check(u, "nec")
    r, c, v0 = d.max_resistance_ohm, d.c_element_f, d.v0_v
    net = f"""
Cab a b {c!r}
Rab a b {r!r}
Cbc b 0 {c!r}
Rbc b 0 {r!r}
Cca 0 a {c!r}
Rca 0 a {r!r}
.ic v(a)={v0 / 2!r} v(b)={-v0 / 2!r}
"""
    t, v = _tran(net, ["v(a)", "v(b)"], 90.0)
    vab = v["v(a)"] - v["v(b)"]
    assert vab[0] == pytest.approx(v0, rel=1e-3)
    worst = np.max(np.abs(np.vstack([vab, v["v(b)"], v["v(a)"]])), axis=0)
    t_spice = _crossing(t, worst, d.v_limit_v)
    assert t_spice == pytest.approx(60.0, rel=2e-3)
    assert d.seconds_to_limit == 60.0
    # A resistor 10 % larger fails, and its time matches the formula (hand calculation).
    d2 = discharge_check(u, "nec", r_user_ohm=1.1 * r)
    assert d2.passed is False
    assert d2.seconds_to_limit == pytest.approx(66.0, rel=1e-9)


def test_wye_unit_floating_star_point():
    # ngspice: wye unit, one R per element, star point floating (terminal c as reference),
    # starting at the instant the a–b voltage is at its peak √2·V_LL (v_cn = 0). The
    # terminal-to-terminal voltage falls with τ = R·C_Y, so a–b reaches 75 V at
    # R·C_Y·ln(√2·V_LL/75) (IEC 60831-1 limit, 3 min at R_max).
    u = CapacitorUnit(30e3, 415, 50, connection="wye", name="UY")
    d = discharge_check(u, "iec")
    r, c = d.max_resistance_ohm, d.c_element_f
    assert c == pytest.approx(30e3 / (2 * math.pi * 50 * 415**2))  # Q/(ω·V²), hand calculation
    vp = math.sqrt(2) * 415 / math.sqrt(3)
    net = f"""
Ca a n {c!r}
Ra a n {r!r}
Cb b n {c!r}
Rb b n {r!r}
Cc 0 n {c!r}
Rc 0 n {r!r}
.ic v(a)={math.sqrt(3) / 2 * vp!r} v(b)={-math.sqrt(3) / 2 * vp!r} v(n)=0
"""
    t, v = _tran(net, ["v(a)", "v(b)"], 260.0)
    vab = v["v(a)"] - v["v(b)"]
    assert vab[0] == pytest.approx(d.v0_v, rel=1e-3)
    t_spice = _crossing(t, vab, d.v_limit_v)
    assert t_spice == pytest.approx(180.0, rel=2e-3)
    # Dissipation per element at rated voltage: (V_LL/√3)²/R (hand calculation).
    assert d.p_at_max_w == pytest.approx((415 / math.sqrt(3)) ** 2 / r)
    assert discharge_time(r, c, d.v0_v, d.v_limit_v) == pytest.approx(180.0)
