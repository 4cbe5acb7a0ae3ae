"""The unit-choice rule of the sizing stage (hand-worked cases)."""

import pytest

from reportgen.calc import sizing

KW = dict(v_v=480, f_hz=60, v_rated_v=480, f_rated_hz=60)


def units(*kvar):
    return [sizing.UnitType(k * 1e3) for k in kvar]


def counts(s):
    return {c.unit.q_rated_var / 1e3: c.count for c in s.choices}


def test_fewest_units_then_least_kvar():
    # P = 400 kW, Q1 = 300 kvar (PF 0.8) -> 0.95 needs 168.53 kvar; window 168.53 ... 300 kvar.
    # With 25/50/100 kvar: two units can do 200 (2x100) or 150 (100+50, too little): fewest = 2 -> 200 kvar.
    s = sizing.size_bank(400e3, 300e3, 0.95, units(25, 50, 100), **KW)
    assert s.status == "met"
    assert s.q_required_var == pytest.approx(168.53e3, abs=10)
    assert counts(s) == {100: 2}


def test_least_kvar_among_equal_counts():
    # need 168.53 kvar; with 60 and 90 kvar units two units give 180 (90+90) or 150 (60+90, too little):
    # 3 units are never considered since 2 suffice. With 85 and 90: 170 (85+85) beats 175 and 180.
    s = sizing.size_bank(400e3, 300e3, 0.95, units(85, 90), **KW)
    assert counts(s) == {85: 2}


def test_none_fits_takes_largest_without_leading():
    # Q1 = 50 kvar, need 19.3 kvar for 0.98; only 40 kvar units: one would give 40 <= 50 (no lead)
    # and >= 19.3: fits. With only 60 kvar units even one unit leads -> no bank, flagged.
    s = sizing.size_bank(100e3, 50e3, 0.98, units(60), **KW)
    assert s.status == "none_fits" and s.choices == ()
    # narrow window: need 30.1 .. 35 kvar with 20 kvar units -> 20 is the largest non-leading total
    s = sizing.size_bank(100e3, 35e3, 0.9999, units(20), **KW)
    assert s.status == "short"
    assert s.q_installed_var == pytest.approx(20e3)


def test_allow_leading_widens_the_window():
    # need 30.1 .. 35 kvar (no lead) with 40 kvar units: none fits; leading allowed up to Q1 + P tan(acos 0.9999)
    s = sizing.size_bank(100e3, 35e3, 0.99, units(40), **KW)
    assert s.status == "none_fits"  # one 40 kvar unit would already lead
    s = sizing.size_bank(100e3, 35e3, 0.99, units(40), allow_leading=True, **KW)
    assert s.status == "met" and s.q_installed_var == pytest.approx(40e3)
    assert s.q_upper_var == pytest.approx(35e3 + 100e3 * 0.1424923, rel=1e-6)  # tan(acos 0.99) = 0.1424923 (hand calculation)


def test_already_meets_target():
    s = sizing.size_bank(100e3, 20e3, 0.95, units(5), **KW)
    assert s.status == "not_needed" and s.q_installed_var == 0


def test_capacitance_units_three_phase():
    # one 10 uF capacitor per phase in delta at 400 V 50 Hz: Q = 3 w C V^2 (hand calculation)
    import math
    q = sizing.capacitance_unit_q(10e-6, 400.0, 50.0, 3, "delta")
    assert q == pytest.approx(3 * 2 * math.pi * 50 * 10e-6 * 400**2)
    assert sizing.capacitance_unit_q(10e-6, 400.0, 50.0, 3, "wye") == pytest.approx(q / 3)


def test_large_bank_search_is_fast_and_exact():
    # 2 Mvar needed from 5..100 kvar units: fewest units = 20 x 100 kvar
    s = sizing.size_bank(5e6, 3.64e6, 0.95, [sizing.UnitType(k * 1e3) for k in sizing.DEFAULT_KVAR_SERIES], **KW)
    assert s.status == "met"
    n = s.unit_count
    assert n == int(-(-s.q_required_var // 100e3))
    assert s.q_required_var <= s.q_installed_var <= 3.64e6
