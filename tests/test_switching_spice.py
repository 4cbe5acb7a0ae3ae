"""Inrush peak and ring frequency against ngspice transients of the per-phase LC circuits.

Reference tool: ngspice transient analysis (``uic``). The formulas under test are the
IEEE Std 1036 / IEEE C37.012 expressions (from memory): I_pk = V_pk/√(L/C),
f0 = 1/(2π√(LC)) for an isolated bank; I_pk = V_pk·√(C_eq/L), f = 1/(2π√(L·C_eq)) back to back
(``transient_peak_a``), and the conservative total ``peak_a`` = transient + steady-state peak
√2·I_c, checked against a sine source closing at the voltage peak.
"""

import math

import numpy as np
import pytest

import spice
from reportgen.calc.errors import CalcError
from reportgen.calc.protection import BankStep, CapacitorUnit
from reportgen.calc.switching import (
    DEFAULT_L_BETWEEN_H,
    SwitchCapability,
    back_to_back_inrush,
    bank_inrush,
    isolated_inrush,
)

F1 = 60.0
V = 480.0
C50 = 50e3 / (2 * math.pi * F1 * V**2)  # per-phase wye-equivalent C of a 50 kvar step


def _ring(t, i):
    """Peak |i| and mean ring frequency from zero crossings of the current."""
    s = np.sign(i)
    idx = np.nonzero((s[:-1] < 0) & (s[1:] >= 0) | (s[:-1] > 0) & (s[1:] <= 0))[0]
    tz = t[idx] - i[idx] * (t[idx + 1] - t[idx]) / (i[idx + 1] - i[idx])
    tz = tz[tz > t[1]]  # the start at i = 0 is not a crossing
    assert len(tz) >= 5
    half_periods = np.diff(tz[:5])
    return float(np.max(np.abs(i))), float(1.0 / (2.0 * np.mean(half_periods)))


def _tran(net, vectors, t_stop, n=20000):
    dt = t_stop / n
    return spice.tran(net, vectors, dt, t_stop, options=f"0 {dt!r} uic")


def test_isolated_bank_dc_source_at_peak():
    # ngspice: a DC source at the peak line-to-neutral voltage switched through L_s onto an
    # uncharged C (the worst-case closing instant, lossless).
    r = isolated_inrush(C50, V, F1, s_sc_va=20e6, name="S1")
    # Hand check: f0 = f1·√(S_sc/Q) = 60·√(20e6/50e3) = 1200 Hz.
    assert r.frequency_hz == pytest.approx(1200.0, rel=1e-9)
    l_s = V**2 / (2 * math.pi * F1 * 20e6)
    assert r.l_h == pytest.approx(l_s)
    net = f"""
V1 src 0 DC {r.v_peak_v!r}
L1 src m {l_s!r}
Vm m x 0
C1 x 0 {C50!r} ic=0
"""
    t, v = _tran(net, ["i(vm)"], 3.0 / r.frequency_hz)
    pk, f = _ring(t, v["i(vm)"])
    assert r.transient_peak_a == pytest.approx(pk, rel=0.01)
    assert r.frequency_hz == pytest.approx(f, rel=0.01)


def test_isolated_bank_sine_source_closing_at_peak():
    # ngspice: the 60 Hz source V_pk·cos(ωt) (closing at the voltage peak) through L_s. The
    # steady-state 60 Hz current rides on the ring: over the first cycles of the ring the
    # maximum approaches V_pk/Z0 + √2·I_c (lossless), above the transient formula alone.
    r = isolated_inrush(C50, V, F1, s_sc_va=20e6)
    net = f"""
V1 src 0 SIN(0 {r.v_peak_v!r} {F1!r} 0 0 90)
L1 src m {r.l_h!r}
Vm m x 0
C1 x 0 {C50!r} ic=0
"""
    t, v = _tran(net, ["i(vm)"], 3.0 / r.frequency_hz)
    pk, f = _ring(t, v["i(vm)"])
    assert pk > r.transient_peak_a * 1.02
    assert r.peak_a == pytest.approx(pk, rel=0.02)
    assert r.peak_a >= pk
    assert r.frequency_hz == pytest.approx(f, rel=0.03)
    # √2·I_c = V_pk·ω·C (hand calculation: 391.9·377·575.6e-6 = 85.0 A).
    assert r.steady_peak_a == pytest.approx(r.v_peak_v * 2 * math.pi * F1 * C50)


def test_back_to_back_charged_c1_onto_c2():
    # ngspice: three energised 50 kvar steps (C1, charged to V_pk) switched onto a fourth
    # (C2, uncharged) through 5 µH. Hand check: C_eq = 3C·C/(4C) = 0.75·C50;
    # I_pk = 391.9·√(0.75·575.6e-6/5e-6) ≈ 3641 A; f = 1/(2π√(5e-6·431.7e-6)) ≈ 3426 Hz.
    r = back_to_back_inrush(C50, 3 * C50, V, F1, l_between_h=5e-6, name="S4")
    assert r.c_f == pytest.approx(0.75 * C50)
    assert r.transient_peak_a == pytest.approx(3641, rel=1e-3)
    assert r.frequency_hz == pytest.approx(3426, rel=1e-3)
    net = f"""
C1 a 0 {3 * C50!r} ic={r.v_peak_v!r}
L1 a m 5e-6
Vm m b 0
C2 b 0 {C50!r} ic=0
"""
    t, v = _tran(net, ["i(vm)"], 3.0 / r.frequency_hz)
    pk, f = _ring(t, v["i(vm)"])
    assert r.transient_peak_a == pytest.approx(pk, rel=0.01)
    assert r.frequency_hz == pytest.approx(f, rel=0.01)
    assert r.peak_a == pytest.approx(pk + r.steady_peak_a, rel=0.01)


def test_added_inductance_brings_peak_within_capability():
    # The recommended extra inductance, simulated in ngspice, limits the peak (transient from
    # ngspice + steady-state peak) to the capability (2000 A) and f·I to 4e6 A·Hz.
    cap = SwitchCapability(peak_a=2000.0, f_peak_product_a_hz=4e6, name="K4")
    r = back_to_back_inrush(C50, 3 * C50, V, F1, l_between_h=5e-6, capability=cap)
    assert r.passed is False
    assert r.added_inductance_h > 0
    assert "reactor" in r.recommendation and "damping" in r.recommendation
    l_new = 5e-6 + r.added_inductance_h
    net = f"""
C1 a 0 {3 * C50!r} ic={r.v_peak_v!r}
L1 a m {l_new!r}
Vm m b 0
C2 b 0 {C50!r} ic=0
"""
    t, v = _tran(net, ["i(vm)"], 3.0 * 2 * math.pi * math.sqrt(l_new * r.c_f))
    pk, f = _ring(t, v["i(vm)"])
    total = pk + r.steady_peak_a
    assert total <= 2000.0 * 1.01
    assert f * pk <= 4e6 * 1.02
    # The binding limit is met with equality (the other with margin).
    assert max(total / 2000.0, f * pk / 4e6) == pytest.approx(1.0, rel=0.02)
    again = back_to_back_inrush(C50, 3 * C50, V, F1, l_between_h=l_new, capability=cap)
    assert again.passed is True


def test_bank_inrush_worst_case_and_detuning():
    u = CapacitorUnit(25e3, 480, 60, name="U25")
    steps = [BankStep(f"S{k}", u, 2) for k in (1, 2, 3, 4)]
    b = bank_inrush(steps, 480, s_sc_va=20e6)
    w = b.worst
    assert w.case == "back_to_back"
    # Same circuit as the back-to-back test with the default 5 µH (common practice / from memory).
    assert DEFAULT_L_BETWEEN_H == 5e-6
    assert w.transient_peak_a == pytest.approx(3641, rel=1e-3)
    d = b.as_dict()
    assert set(d["worst"]) >= {"peak_a", "frequency_hz"}
    # 7 % detuned steps: the reactors dominate the loop and cut the peak by more than 10×.
    det = [BankStep(f"S{k}", u, 2, detuning_pct=7) for k in (1, 2, 3, 4)]
    bd = bank_inrush(det, 480)
    assert bd.worst.peak_a < w.peak_a / 10
    # Hand check of one detuned step's reactor: L = p/(ω²·C) = 0.07/(377² · 575.6e-6).
    assert det[0].reactor_l_h == pytest.approx(0.07 / ((2 * math.pi * 60) ** 2 * C50))
    with pytest.raises(CalcError):
        isolated_inrush(C50, V, F1)
    with pytest.raises(CalcError):
        bank_inrush(steps[:1], 480)
