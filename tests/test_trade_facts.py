"""Facts of the trade (common practice), each checked on the core's own functions."""

import cmath
import math

import pytest

from reportgen.calc import loads as L
from reportgen.calc import sizing
from reportgen.calc.sheet import Sheet


@pytest.mark.parametrize("reading, as_, rms", [
    (10.0, "rms", 10.0),
    (10.0, "peak", 10.0 / math.sqrt(2)),               # common practice: rms = peak / sqrt 2 (sine)
    (10.0, "peak_to_peak", 10.0 / (2 * math.sqrt(2))),  # common practice: rms = p-p / (2 sqrt 2)
])
def test_rms_of_a_sine(reading, as_, rms):
    assert L.to_rms(Sheet(), "V", reading, as_, "channel") == pytest.approx(rms, rel=1e-15)


def test_shunt_current_phase_angle_and_power():
    # common practice: I = V_shunt / R_shunt; phi = 360 deg * f * dt; P = V I PF; S = V I
    f, dt = 60.0, 1.0e-3
    lp = L.scope("x", 1, f, 120.0, "rms", 0.5, "rms", 0.1, time_shift_s=dt)
    i = 0.5 / 0.1
    phi = math.radians(360.0 * f * dt)
    assert lp.extras["i_rms_a"] == pytest.approx(i)
    assert lp.extras["phase_angle_rad"] == pytest.approx(phi)
    assert lp.p_w == pytest.approx(120.0 * i * math.cos(phi))
    assert abs(lp.s_va) == pytest.approx(120.0 * i)
    assert lp.q_var > 0  # lagging current: inductive, Q positive


def test_leading_scope_reading_is_capacitive():
    lp = L.scope("x", 1, 50.0, 10.0, "rms", 1.0, "rms", 1.0, phase_rad=math.radians(30), leading=True)
    assert lp.q_var < 0


def test_shunt_inside_voltage_channel_is_subtracted_as_phasor():
    # The channel reads load + shunt; the load voltage is V_m - I R_sh (phasors), hand calculation
    v_m, i, r_sh, phi = 10.0, 2.0, 0.5, math.radians(40)
    lp = L.scope("x", 1, 50.0, v_m, "rms", i * r_sh, "rms", r_sh, phase_rad=phi, shunt_in_measured_voltage=True)
    v_load = cmath.rect(v_m, phi) - i * r_sh
    assert lp.p_w == pytest.approx((v_load * i).real)
    assert lp.q_var == pytest.approx((v_load * i).imag)
    # the shunt's own loss is not charged to the load
    assert lp.p_w == pytest.approx(v_m * i * math.cos(phi) - i**2 * r_sh)


def test_three_phase_scope_is_three_times_one_phase():
    one = L.scope("x", 1, 60.0, 277.0, "rms", 1.0, "rms", 0.01, phase_rad=0.5)
    three = L.scope("x", 3, 60.0, 277.0, "rms", 1.0, "rms", 0.01, phase_rad=0.5)
    assert three.s_va == pytest.approx(3 * one.s_va)
    assert three.current_a == pytest.approx(one.current_a)  # line current = phase current (wye)


def test_capacitor_current_cancels_reactive_part_of_load_current():
    p, q, v = 400e3, 300e3, 480.0
    ph = sizing.phasors(p, q, q, v, 3)  # correct fully to unity
    assert ph["i_load_a"].imag + ph["i_cap_a"].imag == pytest.approx(0.0, abs=1e-9)
    assert ph["i_source_a"].real == pytest.approx(ph["i_load_a"].real)  # active part unchanged
    assert abs(ph["i_source_a"]) * math.sqrt(3) * v == pytest.approx(p)


def test_off_nameplate_delivery_scales_with_v_squared_and_f():
    # common practice: Q = Q_rated (V/V_rated)^2 (f/f_rated)
    s = sizing.size_bank(100e3, 80e3, 0.95, [sizing.UnitType(10e3)], v_v=415, f_hz=50, v_rated_v=480, f_rated_hz=60)
    assert s.factor == pytest.approx((415 / 480) ** 2 * (50 / 60))
    assert s.q_installed_var == pytest.approx(sum(c.count for c in s.choices) * 10e3 * s.factor)


def test_power_triangle_invariants():
    # Q_after = Q_before - Q_bank; P unchanged; PF <= 1 (consistency checks after every solve)
    a = sizing.after_correction(500e3, 400e3, 250e3, 250e3, v_v=480, f_hz=60, v_rated_v=480, phases=3,
                                connection="delta")
    assert a.q_after_var == pytest.approx(150e3)
    assert a.s_after_va == pytest.approx(math.hypot(500e3, 150e3))
    assert 0 < a.pf_after <= 1
    assert a.loss_reduction_fraction == pytest.approx(1 - (a.s_after_va / math.hypot(500e3, 400e3)) ** 2)
