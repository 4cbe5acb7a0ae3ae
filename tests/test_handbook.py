"""Sizing against handbook tables and published worked examples.

Sources (confidence marks as in shared REFERENCES.md):
- kW multiplier tan(acos PF1) - tan(acos PF2): tables of this form are printed in
  IEEE Std 141 (Red Book) ch. 8 and USDA RUS Bulletin 1724D-112 Table 1 (from memory);
  0.75->0.90 = 0.398 and 0.65->1.00 = 1.169 also appear in published tables (secondary source);
  the other entries are hand calculations to three decimals.
- J. Bird, Electrical Circuit Theory and Technology, Problem 16.12 (published inputs, answers
  as printed: 40.0 A, 26.32 A, 23.0 A, 305 uF, 5.52 kvar).
- T. Kuphaldt, open textbook on electric circuits, vol. II (AC) ch. 11, power factor correction example
  (published inputs and answers: 2307.6 VA, PF 0.650, 1753.6 var, 32.85 ohm, 80.76 uF).
- TheAlgorithms/Python electronics/shunt_capacitor_power_factor_correction.py doctest
  (an open-source reference implementation; value as indexed: 3.1043753e-4 F).
"""

import math

import pytest

from reportgen.calc import loads as L
from reportgen.calc import sizing

UNITS = [sizing.UnitType(1e9)]  # units do not matter here: the tests read the exact requirement


@pytest.mark.parametrize("pf1, pf2, multiplier, source", [
    (0.70, 0.95, 0.691, "hand calculation"),
    (0.70, 0.90, 0.536, "hand calculation"),
    (0.75, 0.90, 0.398, "published table (secondary source)"),
    (0.75, 0.95, 0.553, "hand calculation"),
    (0.80, 0.95, 0.421, "hand calculation"),
    (0.80, 1.00, 0.750, "hand calculation"),
    (0.85, 0.95, 0.291, "hand calculation"),
    (0.65, 1.00, 1.169, "published table (secondary source)"),
])
def test_kw_multiplier_table(pf1, pf2, multiplier, source):
    p = 100e3
    q1 = p * math.tan(math.acos(pf1))
    s = sizing.size_bank(p, q1, pf2, UNITS, v_v=480, f_hz=60, v_rated_v=480, f_rated_hz=60)
    assert s.q_required_var / p == pytest.approx(multiplier, abs=0.0006), source


def test_bird_problem_16_12_motor_correction():
    # 4.8 kW output, efficiency 0.8, PF 0.625 lagging, 240 V 50 Hz, corrected to 0.95 lagging
    m = L.motor("motor", 1, 240.0, 4800.0, 0.8, 0.625)
    assert m.current_a == pytest.approx(40.0, abs=0.05)  # Bird: 40.0 A
    s = sizing.size_bank(m.p_w, m.q_var, 0.95, UNITS, v_v=240, f_hz=50, v_rated_v=240, f_rated_hz=50)
    assert s.q_required_var == pytest.approx(5520, abs=10)  # Bird: 5.52 kvar
    a = sizing.after_correction(m.p_w, m.q_var, s.q_required_var, s.q_required_var, v_v=240, f_hz=50,
                                v_rated_v=240, phases=1, connection="single")
    assert a.current_after_a == pytest.approx(26.32, abs=0.01)  # Bird: 26.32 A
    assert a.bank_current_a == pytest.approx(23.0, abs=0.05)  # Bird: 23.0 A
    assert a.capacitance_per_phase_f == pytest.approx(305e-6, rel=0.002)  # Bird: 305 uF


def test_kuphaldt_correction_to_unity():
    m = L.meter("load", 1, 240.0, 9.615, p_w=1500.0)
    assert m.s_va.real == 1500.0
    assert abs(m.s_va) == pytest.approx(2307.6, abs=0.05)
    assert m.pf == pytest.approx(0.650, abs=0.0005)
    assert m.q_var == pytest.approx(1753.6, abs=0.1)
    s = sizing.size_bank(m.p_w, m.q_var, 1.0, UNITS, v_v=240, f_hz=60, v_rated_v=240, f_rated_hz=60)
    a = sizing.after_correction(m.p_w, m.q_var, s.q_required_var, s.q_required_var, v_v=240, f_hz=60,
                                v_rated_v=240, phases=1, connection="single")
    x_c = 1 / (2 * math.pi * 60 * a.capacitance_per_phase_f)
    assert x_c == pytest.approx(32.85, abs=0.01)
    assert a.capacitance_per_phase_f == pytest.approx(80.76e-6, abs=0.01e-6)


def test_open_source_reference_shunt_capacitor():
    # 120 V, 60 Hz, 4000 W from PF 0.8 to 0.95 -> 3.1043753e-4 F (reference doctest)
    p, q1 = 4000.0, 4000.0 * math.tan(math.acos(0.8))
    s = sizing.size_bank(p, q1, 0.95, UNITS, v_v=120, f_hz=60, v_rated_v=120, f_rated_hz=60)
    a = sizing.after_correction(p, q1, s.q_required_var, s.q_required_var, v_v=120, f_hz=60, v_rated_v=120,
                                phases=1, connection="single")
    assert a.capacitance_per_phase_f == pytest.approx(3.1043753e-4, rel=1e-7)


def test_three_phase_capacitance_per_phase_by_connection():
    # REFERENCES.md (hand calculation): C_Y = Q / (w V_LL^2), C_delta = Q / (3 w V_LL^2)
    q, v, f = 100e3, 480.0, 60.0
    w = 2 * math.pi * f
    kw = dict(v_v=v, f_hz=f, v_rated_v=v, phases=3)
    y = sizing.after_correction(300e3, 200e3, q, q, connection="wye", **kw)
    d = sizing.after_correction(300e3, 200e3, q, q, connection="delta", **kw)
    assert y.capacitance_per_phase_f == pytest.approx(q / (w * v**2), rel=1e-12)
    assert d.capacitance_per_phase_f == pytest.approx(q / (3 * w * v**2), rel=1e-12)
    assert y.capacitance_per_phase_f == pytest.approx(3 * d.capacitance_per_phase_f, rel=1e-12)
