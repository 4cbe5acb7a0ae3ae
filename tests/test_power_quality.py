"""Power quality core: hand calculations, published limits, handbook checks, ngspice AC sweeps."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

import spice
from reportgen.calc.errors import CalcError
from reportgen.calc.power_quality import (
    CAPACITOR_LIMITS_PU,
    COMMON_LV_CAPACITOR_RATED_V,
    BusLoad,
    SourceImpedance,
    assess,
    bank_reactances,
    bus_impedance,
    bus_voltage,
    capacitor_duty,
    detuned_bank,
    detuned_delivered_var,
    harmonic_currents,
    harmonic_distortion,
    ieee519_voltage_limits,
    impedance_scan,
    motor_capacitor,
    motor_current_after_correction,
    near_harmonic,
    propose_detuning,
    resonance_order,
    resonance_order_estimate,
    source_from_bus,
    source_from_utility,
    step_resonance,
    tuning_order,
    voltage_rise_estimate_pct,
)
from reportgen.calc.sheet import Sheet

F1 = 60.0


def src_480():
    return source_from_utility(480.0, 13_800.0, 10.0, utility_s_sc_va=250e6, transformer_s_va=1.5e6,
                               transformer_z_pct=5.75, transformer_x_r=6.0)


# ---------------------------------------------------------------- source impedance


def test_source_from_utility_hand_calculation():
    sh = Sheet()
    src = source_from_utility(480.0, 13_800.0, 10.0, utility_s_sc_va=250e6, transformer_s_va=1.5e6,
                              transformer_z_pct=5.75, transformer_x_r=6.0, sheet=sh)
    # Hand calculation: Z_u = 480^2/250e6 = 9.216e-4 ohm; Z_t = 0.0575*480^2/1.5e6 = 8.832e-3 ohm,
    # each split by its X/R: R = Z/sqrt(1 + (X/R)^2).
    r_u, x_u = 9.216e-4 / math.sqrt(101), 9.216e-4 * 10 / math.sqrt(101)
    r_t, x_t = 8.832e-3 / math.sqrt(37), 8.832e-3 * 6 / math.sqrt(37)
    assert src.r_ohm == pytest.approx(r_u + r_t, rel=1e-12)
    assert src.x_ohm == pytest.approx(x_u + x_t, rel=1e-12)
    assert src.s_sc_va == pytest.approx(480.0**2 / abs(complex(r_u + r_t, x_u + x_t)), rel=1e-12)
    assert {s.symbol for s in sh.steps if hasattr(s, "symbol")} >= {"Z_u", "Z_t", "R_s", "X_s", "S_sc"}


def test_fault_current_forms():
    # Hand calculation: 3 phases S = sqrt(3)*V*I; 1 phase S = V*I (240 V, 10 kA -> 2.4 MVA, Z = 0.024 ohm).
    a = source_from_utility(480.0, 480.0, 5.0, utility_fault_current_a=30_000.0)
    assert a.s_sc_va == pytest.approx(math.sqrt(3) * 480.0 * 30_000.0, rel=1e-12)
    b = source_from_utility(240.0, 240.0, 2.0, utility_fault_current_a=10_000.0, phases=1)
    assert b.s_sc_va == pytest.approx(2.4e6, rel=1e-12)
    assert abs(b.z_ohm) == pytest.approx(0.024, rel=1e-12)
    assert b.x_r == pytest.approx(2.0, rel=1e-12)


def test_source_errors():
    with pytest.raises(CalcError, match="exactly one"):
        source_from_utility(480.0, 480.0, 5.0)
    with pytest.raises(CalcError, match="together"):
        source_from_utility(480.0, 13_800.0, 5.0, utility_s_sc_va=1e8, transformer_s_va=1e6)
    with pytest.raises(CalcError, match="phases"):
        source_from_bus(480.0, 1e7, 5.0, phases=2)
    with pytest.raises(CalcError, match="positive"):
        source_from_bus(480.0, -1e7, 5.0)


# ---------------------------------------------------------------- IEEE 1036 handbook checks


def test_references_section2_resonance_and_voltage_rise():
    # REFERENCES §2 (computed check from a published case study): 5 Mvar on 125 MVA -> h = 5.00, dV ~ 4 %
    # (IEEE Std 1036 guide formulas h = sqrt(Ssc/Qcap), dV% = Qcap/Ssc*100; from memory / secondary).
    assert resonance_order_estimate(125e6, 5e6) == pytest.approx(5.00, abs=5e-3)
    assert voltage_rise_estimate_pct(125e6, 5e6) == pytest.approx(4.0, abs=1e-12)
    # The exact reactance form agrees for a nearly pure reactance source (X/R = 1000) ...
    src = source_from_bus(13_800.0, 125e6, 1000.0)
    assert resonance_order(src, 5e6) == pytest.approx(5.00, abs=5e-3)
    # ... and the phasor solution with no load gives the same ~4 % rise (V = 1/(1 - X*B) = 1.0417 pu:
    # hand calculation for a capacitor on a pure reactance, i.e. 4.2 %; the guide formula is its first order).
    res = bus_voltage(src, 0j, 5e6)
    assert res.v_after_pu == pytest.approx(1.0 / (1.0 - 0.04), abs=1e-5)
    assert res.rise_pct == pytest.approx(4.0, abs=0.2)


def test_detuning_tuning_orders():
    # REFERENCES §2: p = XL/Xc = 1/h^2: 7 % -> 3.78 (189 Hz at 50 Hz); 5.67 % -> 4.2; 14 % -> 2.67
    # (EEP formula, published; values computed).
    assert tuning_order(0.07) == pytest.approx(3.78, abs=5e-3)
    assert tuning_order(0.07) * 50.0 == pytest.approx(189.0, abs=0.5)
    assert tuning_order(0.0567) == pytest.approx(4.2, abs=5e-3)
    assert tuning_order(0.14) == pytest.approx(2.67, abs=5e-3)
    np.testing.assert_allclose(tuning_order(np.array([0.0567, 0.07, 0.14])), [4.1996, 3.7796, 2.6726], atol=1e-4)


def test_resonance_exact_is_zero_of_imaginary_part():
    src = src_480()
    q = np.array([100e3, 250e3, 480e3, 900e3])
    for p in (0.0, 0.07):
        h = resonance_order(src, q, p)
        z = bus_impedance(src, q, p, h)
        # Im Z = 0 at h_r (the parallel resonance), relative to |Z|.
        assert np.all(np.abs(z.imag) < 1e-9 * np.abs(z))
        if p:
            assert np.all(h < tuning_order(p))


def test_step_resonance_matches_scalar_calls():
    src = src_480()
    st = step_resonance(src, [120e3] * 4, 0.0, load_orders=[5, 7])
    assert st.q_cumulative_var == (120e3, 240e3, 360e3, 480e3)
    for q, h, n in zip(st.q_cumulative_var, st.resonance_order, st.near_order):
        assert h == pytest.approx(resonance_order(src, q), rel=1e-12)
        assert n == near_harmonic(h, [5, 7])
    assert st.near_order[-1] == 7  # 7.06 lies within 10 % of the 7th


def test_near_harmonic_band():
    # Flag rule: within 10 % of an order (common practice).
    assert near_harmonic(4.6) == 5
    assert near_harmonic(5.45) == 5
    assert near_harmonic(5.6) == 0
    assert near_harmonic(7.75) == 0
    assert near_harmonic(2.9, load_orders=[3]) == 3
    assert near_harmonic(2.9) == 0
    np.testing.assert_array_equal(near_harmonic(np.array([4.6, 6.0, 12.0, np.nan])), [5, 0, 11, 0])


# ---------------------------------------------------------------- bus voltage


def test_bus_voltage_capacitor_on_reactance_hand_calculation():
    # Hand calculation: no load, pure reactance X (pu), capacitor B (pu): V = 1/(1 - X*B).
    src = SourceImpedance(480.0, 0.0, 0.01, 3)
    q = 500e3
    x_pu = 0.01 / (480.0**2 / src.s_sc_va)
    b_pu = q / src.s_sc_va
    res = bus_voltage(src, 0j, q)
    assert res.v_before_pu == pytest.approx(1.0, abs=1e-12)
    assert res.v_after_pu == pytest.approx(1.0 / (1.0 - x_pu * b_pu), abs=1e-12)


def test_bus_voltage_resistive_load_closed_form():
    # Hand calculation: pure resistance R (pu) feeding constant P: V^2 - V + R*P = 0, upper root.
    src = SourceImpedance(480.0, 0.002, 0.0, 3)
    p = 20e6
    r_pu = 0.002 / (480.0**2 / src.s_sc_va)
    p_pu = p / src.s_sc_va
    v = (1 + math.sqrt(1 - 4 * r_pu * p_pu)) / 2
    assert bus_voltage(src, complex(p, 0), 0.0).v_before_pu == pytest.approx(v, abs=1e-12)


def test_bus_voltage_heavy_load_stays_on_upper_branch():
    # Hand calculation: R*P = 0.24 pu -> roots 0.6 and 0.4; Newton from a flat start must give 0.6.
    src = SourceImpedance(480.0, 0.002, 0.0, 3)
    r_pu = 0.002 / (480.0**2 / src.s_sc_va)
    p = 0.24 / r_pu * src.s_sc_va
    assert bus_voltage(src, complex(p, 0), 0.0).v_before_pu == pytest.approx(0.6, abs=1e-10)


def test_voltage_collapse_raises_with_iterations():
    src = source_from_bus(480.0, 10e6, 5.0)
    with pytest.raises(CalcError, match=r"after \d+ iterations"):
        bus_voltage(src, 8e6 + 6e6j, 0.0)


# ---------------------------------------------------------------- impedance scan vs ngspice


def _spice_bus(src: SourceImpedance, q: float, p: float, f: np.ndarray | tuple) -> tuple[np.ndarray, np.ndarray]:
    """ngspice AC sweep of the per-phase R-L source in parallel with C (and series Lr), 1 A injected."""
    w1 = 2 * math.pi * F1
    lines = ["I1 0 bus AC 1", f"Rs bus n1 {src.r_ohm!r}", f"Ls n1 0 {src.x_ohm / w1!r}"]
    if q > 0:
        x_c, x_l = (float(a) for a in bank_reactances(src.v_bus_v, q, p))
        if p > 0:
            lines += [f"Cb bus n2 {1 / (w1 * x_c)!r}", f"Lr n2 0 {x_l / w1!r}"]
        else:
            lines += [f"Cb bus 0 {1 / (w1 * x_c)!r}"]
    f_start, f_stop, points = f
    freqs, res = spice.ac("\n".join(lines), ["v(bus)"], f_start, f_stop, points)
    return freqs / F1, res["v(bus)"]


@pytest.mark.parametrize("p", [0.0, 0.07])
def test_scan_matches_ngspice(p):
    # Reference: ngspice AC sweep of the same R-L-C circuit driven by a 1 A source; |V(bus)| = |Z|.
    # The sweep 60..3000 Hz in 4901 points lands on the scan grid (orders 1..50 in 0.01 steps).
    src = src_480()
    q = 480e3
    scan = impedance_scan(src, q, p if p else None)
    h_sp, v_sp = _spice_bus(src, q, p, (F1, 50 * F1, 4901))
    np.testing.assert_allclose(h_sp, scan.h, rtol=1e-9)
    z = scan.z_detuned_ohm if p else scan.z_bank_ohm
    np.testing.assert_allclose(np.abs(v_sp), z, rtol=1e-5)
    # integer orders sit on the grid
    np.testing.assert_allclose(scan.z_bank_at_orders_ohm, scan.z_bank_ohm[(scan.orders - 1) * 100])
    # source alone
    h0, v0 = _spice_bus(src, 0.0, 0.0, (F1, 50 * F1, 50))
    np.testing.assert_allclose(np.abs(v0), scan.z_source_at_orders_ohm, rtol=1e-5)


@pytest.mark.parametrize("p", [0.0, 0.07, 0.14])
def test_resonance_order_matches_ngspice(p):
    # Reference: ngspice fine AC sweep near the resonance; the zero crossing of Im V(bus) (the
    # resistive point) must equal resonance_order, and the |V| peak the scan's refined peak.
    src = source_from_bus(4160.0, 80e6, 8.0)
    q = 1.2e6
    h_r = resonance_order(src, q, p)
    h, v = _spice_bus(src, q, p, (0.97 * h_r * F1, 1.03 * h_r * F1, 3001))
    im = v.imag
    k = int(np.flatnonzero(np.sign(im[:-1]) != np.sign(im[1:]))[0])
    h_cross = h[k] - im[k] * (h[k + 1] - h[k]) / (im[k + 1] - im[k])
    assert h_cross == pytest.approx(h_r, rel=2e-5)
    scan = impedance_scan(src, q, p if p else None)
    peak = scan.peak_order_detuned if p else scan.peak_order_bank
    h_peak = h[int(np.argmax(np.abs(v)))]
    assert peak == pytest.approx(h_peak, abs=2e-3)


# ---------------------------------------------------------------- harmonic currents and THD


def test_harmonic_currents_hand_calculation():
    # Hand calculation: 100 kVA at 480 V 3 phase -> I1 = 100e3/(sqrt(3)*480) = 120.28 A; 20 % 5th = 24.06 A.
    # 10 kVA at 240 V 1 phase -> 41.67 A; 10 % 5th = 4.167 A (currents add arithmetically).
    loads = [BusLoad(80e3 + 60e3j, {5: 20.0, 7: 10.0}), BusLoad(10e3 + 0j, {5: 10.0}, phases=1, v_v=240.0)]
    i = harmonic_currents(loads, 480.0, 3)
    assert i.size == 51
    assert i[1] == pytest.approx(120.2813 + 41.6667, abs=1e-3)
    assert i[5] == pytest.approx(24.0563 + 4.16667, abs=1e-3)
    assert i[7] == pytest.approx(12.0281, abs=1e-3)
    with pytest.raises(CalcError, match="outside"):
        harmonic_currents([BusLoad(1e3, {51: 1.0})], 480.0)


def test_thd_hand_calculation_and_limits():
    src = src_480()
    i = np.zeros(51)
    i[1], i[5], i[7] = 1000.0, 200.0, 100.0
    hd = harmonic_distortion(src, i, 300e3)
    v1 = 480.0 / math.sqrt(3)
    # Hand calculation: V_h = I_h*|R + j h X| without the bank; THD = sqrt(V5^2 + V7^2)/V1*100.
    v5 = 200.0 * abs(complex(src.r_ohm, 5 * src.x_ohm))
    v7 = 100.0 * abs(complex(src.r_ohm, 7 * src.x_ohm))
    assert hd.thd_v_before_pct == pytest.approx(math.hypot(v5, v7) / v1 * 100, rel=1e-12)
    # With the bank: V_h = I_h*|Z_s || Z_c| (parallel combination by hand).
    x_c = 480.0**2 / 300e3
    zs5, zc5 = complex(src.r_ohm, 5 * src.x_ohm), -1j * x_c / 5
    zs7, zc7 = complex(src.r_ohm, 7 * src.x_ohm), -1j * x_c / 7
    v5a = 200.0 * abs(zs5 * zc5 / (zs5 + zc5))
    v7a = 100.0 * abs(zs7 * zc7 / (zs7 + zc7))
    assert hd.thd_v_after_pct == pytest.approx(math.hypot(v5a, v7a) / v1 * 100, rel=1e-12)
    assert hd.limits.thd_pct == 8.0 and hd.limits.individual_pct == 5.0


def test_ieee519_table1():
    # IEEE Std 519-2014 Table 1: <=1 kV 5.0/8.0 and 1-69 kV 3.0/5.0 (secondary source, REFERENCES §5);
    # 69-161 kV 1.5/2.5 and >161 kV 1.0/1.5 (from memory).
    cases = [(120.0, 5.0, 8.0), (480.0, 5.0, 8.0), (1000.0, 5.0, 8.0), (4160.0, 3.0, 5.0),
             (69_000.0, 3.0, 5.0), (115_000.0, 1.5, 2.5), (161_000.0, 1.5, 2.5), (230_000.0, 1.0, 1.5)]
    for v, ind, thd in cases:
        lim = ieee519_voltage_limits(v)
        assert (lim.individual_pct, lim.thd_pct) == (ind, thd), v
    assert "from memory" in ieee519_voltage_limits(230e3).source


# ---------------------------------------------------------------- capacitor duty (IEEE 18)


def test_ieee18_limits():
    # IEEE Std 18-2002/2012 continuous limits: 110 % rms V, 120 % peak V, 135 % rms I, 135 % kvar
    # (secondary source, REFERENCES §1).
    assert CAPACITOR_LIMITS_PU == {"v_rms_pu": 1.10, "v_peak_pu": 1.20, "i_rms_pu": 1.35, "q_pu": 1.35}


def test_duty_fundamental_only():
    src = src_480()
    i = np.zeros(51)
    d = capacitor_duty(src, i, 300e3, 0.0, v_bus_pu=1.0)
    for k in ("v_rms_pu", "v_peak_pu", "i_rms_pu", "q_pu"):
        assert getattr(d, k) == pytest.approx(1.0, rel=1e-12)
    assert d.worst == "pass"
    # At 1.08 pu: V and I scale by 1.08, kvar by 1.08^2 = 1.1664 (hand calculation);
    # 1.08 > 0.95*1.10 -> 'warn' (our margin), 1.1664 < 0.95*1.35 -> 'pass'.
    d = capacitor_duty(src, i, 300e3, 0.0, v_bus_pu=1.08)
    assert d.q_pu == pytest.approx(1.08**2, rel=1e-12)
    assert d.status == {"v_rms_pu": "warn", "v_peak_pu": "pass", "i_rms_pu": "pass", "q_pu": "pass"}
    # At 1.15 pu: rms 1.15 > 1.10 -> 'fail'; peak 1.15 > 0.95*1.20 = 1.14 -> 'warn'.
    d = capacitor_duty(src, i, 300e3, 0.0, v_bus_pu=1.15)
    assert d.status["v_rms_pu"] == "fail" and d.status["v_peak_pu"] == "warn"


def test_duty_with_fifth_harmonic_hand_calculation():
    # Hand calculation on the IEEE 18 definitions: one 5th harmonic current into Z_s || Z_c.
    src = src_480()
    q = 300e3
    i = np.zeros(51)
    i[5] = 150.0
    x_c = 480.0**2 / q
    zs, zc = complex(src.r_ohm, 5 * src.x_ohm), -1j * x_c / 5
    v5 = 150.0 * abs(zs * zc / (zs + zc))
    vr = 480.0 / math.sqrt(3)
    u = v5 / vr
    d = capacitor_duty(src, i, q, 0.0, v_bus_pu=1.0)
    assert d.v_rms_pu == pytest.approx(math.sqrt(1 + u**2), rel=1e-12)
    assert d.v_peak_pu == pytest.approx(1 + u, rel=1e-12)
    assert d.i_rms_pu == pytest.approx(math.sqrt(1 + (5 * u) ** 2), rel=1e-12)
    assert d.q_pu == pytest.approx(1 + 5 * u**2, rel=1e-12)


def test_duty_detuned_capacitor_voltage():
    # With a 7 % reactor the capacitor sees V/(1 - p) at the fundamental (hand calculation):
    # 480/0.93 = 516.1 V on a 525 V capacitor (next common rating) -> 0.983 pu.
    src = src_480()
    d = capacitor_duty(src, np.zeros(51), 300e3, 0.07)
    assert d.v_cap_rated_v == 525.0
    assert d.v_rms_pu == pytest.approx(480.0 / 0.93 / 525.0, rel=1e-12)
    # rated current at 525 V: I = V_r/X_C; fundamental current V/(X_C - X_L) (hand calculation)
    x_c = 480.0**2 / (300e3 * 0.93)
    assert d.i_rms_pu == pytest.approx((480.0 / 0.93 / x_c) / (525.0 / x_c), rel=1e-12)


# ---------------------------------------------------------------- detuned bank


def test_detuned_bank_hand_calculation():
    sh = Sheet()
    b = detuned_bank(480.0, 100e3, 0.07, 60.0, 3, sheet=sh)
    # Hand calculation: X_C = 480^2/(100e3*0.93) = 2.47742 ohm; X_L = 0.07*X_C = 0.173419 ohm;
    # C = 1/(2*pi*60*X_C) = 1.07070 mF (wye equivalent); L = X_L/(2*pi*60) = 0.46 mH;
    # V_C = 480/0.93 = 516.13 V -> 525 V (common practice list); Q at 525 V = 525^2/X_C = 111.255 kvar.
    assert b.x_c_ohm == pytest.approx(2.477419, rel=1e-6)
    assert b.x_l_ohm == pytest.approx(0.1734194, rel=1e-6)
    assert b.c_f == pytest.approx(1.07070e-3, rel=1e-5)
    assert b.l_h == pytest.approx(4.6001e-4, rel=1e-4)
    assert b.v_cap_v == pytest.approx(516.129, rel=1e-6)
    assert b.v_cap_rated_v == 525.0 and b.rated_voltage_basis == "common practice"
    assert b.q_cap_rated_var == pytest.approx(111_254.9, rel=1e-6)
    assert b.i_fund_a == pytest.approx(100e3 / (math.sqrt(3) * 480.0), rel=1e-12)
    assert b.tuning_order == pytest.approx(3.7796, abs=1e-4)
    # Round trip through the delivered-var formula Q = Q_r*(V/V_r)^2/(1 - p).
    assert detuned_delivered_var(b.q_cap_rated_var, 525.0, 480.0, 0.07) == pytest.approx(100e3, rel=1e-12)
    assert 525.0 in COMMON_LV_CAPACITOR_RATED_V
    # harmonic currents raise the reactor rms current: sqrt(I1^2 + sum Ih^2)
    ih = np.zeros(51)
    ih[5], ih[7] = 30.0, 10.0
    b2 = detuned_bank(480.0, 100e3, 0.07, 60.0, 3, ih)
    assert b2.i_rms_a == pytest.approx(math.sqrt(b.i_fund_a**2 + 30.0**2 + 10.0**2), rel=1e-12)
    # medium voltage: above the LV list the computed voltage is kept and flagged
    mv = detuned_bank(4160.0, 1e6, 0.07, 60.0)
    assert mv.v_cap_rated_v == pytest.approx(4160.0 / 0.93) and "computed" in mv.rated_voltage_basis
    with pytest.raises(CalcError):
        detuned_bank(480.0, 100e3, 0.0, 60.0)


def test_propose_detuning():
    # Common practice (REFERENCES §2): 14 % when the 3rd harmonic is significant, else 7 %.
    i = np.zeros(51)
    i[1], i[5], i[7] = 100.0, 20.0, 10.0
    pr = propose_detuning(i)
    assert pr.detuning_p == 0.07 and pr.adequate and pr.lowest_significant_order == 5
    i[3] = 15.0
    pr = propose_detuning(i)
    assert pr.detuning_p == 0.14 and pr.adequate and pr.tuning_order == pytest.approx(2.67, abs=5e-3)
    i[2] = 5.0
    pr = propose_detuning(i)
    assert not pr.adequate and "engineer" in pr.reason


# ---------------------------------------------------------------- motor terminals


def test_motor_capacitor_limits():
    # NEMA MG 1 Part 14 / IEEE 141 ch. 8 rule (secondary source / from memory): Q <= sqrt(3)*V*I_nl,
    # practice 90 % of it. Hand calculation: 460 V, 30 A no-load -> 23.90 kvar, practice 21.51 kvar.
    m = motor_capacitor(460.0, 30.0, 3, q_bank_var=20e3, i_before_a=100.0, pf_before=0.80, pf_after=0.95)
    assert m.q_max_var == pytest.approx(23_902.3, rel=1e-5)
    assert m.q_practice_var == pytest.approx(21_512.1, rel=1e-5)
    assert m.status == "pass"
    # Electrical Installation Guide: relay setting x PF_before/PF_after: 100*0.80/0.95 = 84.21 A (published rule).
    assert m.i_after_a == pytest.approx(84.2105, rel=1e-5)
    assert motor_capacitor(460.0, 30.0, q_bank_var=23e3).status == "warn"
    assert motor_capacitor(460.0, 30.0, q_bank_var=25e3).status == "fail"
    assert motor_capacitor(230.0, 8.0, phases=1).q_max_var == pytest.approx(1840.0, rel=1e-12)
    with pytest.raises(CalcError):
        motor_current_after_correction(100.0, 0.8, 1.2)


# ---------------------------------------------------------------- assess


def test_assess_json_keys_and_proposal():
    src = src_480()
    loads = [BusLoad(800e3 + 600e3j, {5: 30.0, 7: 12.0, 11: 8.0, 13: 5.0}), BusLoad(300e3 + 100e3j)]
    sh = Sheet()
    pq = assess(src, loads, 480e3, F1, step_q_var=[120e3] * 4, sheet=sh)
    d = pq.as_dict()
    assert set(d) == {"s_sc_va", "v_before_pu", "v_after_pu", "voltage_rise_estimate_pct", "resonance_order",
                      "thd_v_before_pct", "thd_v_after_pct", "capacitor_duty"}
    assert set(d["capacitor_duty"]) == {"v_rms_pu", "v_peak_pu", "i_rms_pu", "q_pu"}
    json.dumps(pq.detail_dict())  # JSON-ready
    # resonance near the 7th -> flagged, 7 % proposed, and the proposal detunes it
    assert pq.resonance_flagged and pq.near_order == 7
    assert pq.proposal.detuning_p == 0.07
    assert pq.proposed.resonance_order < 3.78 and not pq.proposed.resonance_flagged
    assert pq.proposed.thd_v_after_pct < pq.thd_v_after_pct
    assert pq.proposed.detuned.v_cap_rated_v == 525.0
    assert pq.capacitor_duty.worst == "fail"
    assert d["voltage_rise_estimate_pct"] == pytest.approx(480e3 / src.s_sc_va * 100)
    assert d["resonance_order"] == pytest.approx(resonance_order(src, 480e3))
    symbols = {s.symbol for s in sh.steps if hasattr(s, "symbol")}
    assert {"dV_est", "h_r", "h_r_est"} <= symbols


def test_assess_without_bank():
    src = src_480()
    pq = assess(src, [BusLoad(500e3 + 300e3j, {5: 10.0})], 0.0, F1)
    d = pq.as_dict()
    assert d["resonance_order"] is None and d["capacitor_duty"] is None
    assert d["v_before_pu"] == d["v_after_pu"]
    assert d["thd_v_before_pct"] == pytest.approx(d["thd_v_after_pct"])


def test_assess_detuned_and_step_flag():
    src = src_480()
    loads = [BusLoad(600e3 + 450e3j, {5: 25.0, 7: 10.0})]
    # 4 x 76 kvar (S_sc = 23.6 MVA): cumulative steps resonate near 17.6, 12.5, 10.2 and 8.8: the 2nd
    # and 3rd steps lie within 10 % of the 13th and 11th while the whole bank is clear, so the step
    # flags alone trigger the proposal.
    pq = assess(src, loads, 304e3, F1, step_q_var=[76e3] * 4)
    assert not pq.resonance_flagged
    assert pq.steps.near_order == (0, 13, 11, 0)
    assert pq.proposal is not None and pq.proposal.detuning_p == 0.07
    # an explicit 7 % detuning: the resonance moves below the tuning order, the capacitor is rated 525 V
    pd = assess(src, loads, 240e3, F1, detuning_p=0.07)
    assert pd.resonance_order < tuning_order(0.07)
    assert pd.detuned.v_cap_rated_v == 525.0 and pd.proposal is None
    # fundamental capacitor voltage V_bus/(1 - p) on 525 V; harmonics add a little rms on top
    fund = pd.v_after_pu * 480.0 / 0.93 / 525.0
    assert fund < pd.capacitor_duty.v_rms_pu < 1.02 * fund


def test_assess_single_phase():
    # Single phase: Z = V^2/S is the loop impedance, I1 = S/V (hand calculation for the 5th):
    # 240 V, 2.4 MVA -> Z = 0.024 ohm; 24 kVA load at 20 % 5th -> I5 = 20 A; V5 = 20*|R + j5X|.
    src = source_from_bus(240.0, 2.4e6, 4.0, phases=1)
    pq = assess(src, [BusLoad(19.2e3 + 14.4e3j, {5: 20.0})], 0.0, F1)
    v5 = 20.0 * abs(src.at_order(5))
    assert pq.thd_v_before_pct == pytest.approx(v5 / (240.0 * pq.v_before_pu) * 100, rel=1e-12)


def test_ieee519_status():
    src = source_from_bus(480.0, 20e6, 6.0)
    i = np.zeros(51)
    i[1] = 1000.0
    v1 = 480 / math.sqrt(3)
    z5 = abs(src.at_order(5))
    for pct, status in ((4.0, "pass"), (4.9, "warn"), (5.5, "fail")):  # 5 % individual limit at <= 1 kV
        i[5] = pct / 100 * v1 / z5
        assert harmonic_distortion(src, i, 0.0).status_before == status
