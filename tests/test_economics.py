"""Savings, losses and investment figures against numpy-financial and closed forms."""

import math

import numpy as np
import numpy_financial as npf
import pytest

from reportgen.calc import economics as ec
from reportgen.calc import profile as pr
from reportgen.calc.errors import CalcError
from reportgen.calc.sheet import Sheet


@pytest.mark.parametrize(
    "flows,rate",
    [
        ([-10000, 2500, 2500, 2500, 2500, 2500, 2500], 0.08),
        ([-50000, 8000, 9000, 10000, 11000, 12000, 13000, 14000], 0.05),
        ([-1200, 100, 100, 100], 0.0),
        ([-3000, 1000, 1000, 1000, 1000, -500], 0.12),
    ],
)
def test_npv_irr_against_numpy_financial(flows, rate):
    # Reference tool: numpy-financial npv (values[0] at t = 0) and irr.
    assert ec.npv(rate, flows) == pytest.approx(npf.npv(rate, flows), rel=1e-12, abs=1e-9)
    r = ec.irr(flows)
    ref = npf.irr(flows)
    if np.isnan(ref):
        assert r is None
    else:
        assert r == pytest.approx(ref, abs=1e-9)
        assert ec.npv(r, flows) == pytest.approx(0.0, abs=1e-6)


def test_annuity_closed_form():
    # Closed-form present value of a level annuity, PV = S (1 - (1 + r)^-N) / r:
    # r = 8 %, N = 10 gives the factor 6.710081 (hand calculation; standard annuity tables).
    assert ec.annuity_npv(0.0, 1.0, 0.08, 10) == pytest.approx(6.710081, abs=1e-6)
    flows = [-10000.0] + [2580.0] * 10
    assert ec.annuity_npv(10000, 2580, 0.08, 10) == pytest.approx(npf.npv(0.08, flows), rel=1e-12)
    assert ec.annuity_npv(1000, 150, 0.0, 10) == 500.0


def test_irr_none_and_multiple_roots():
    assert ec.irr([-100, -50, -10]) is None  # never changes sign
    assert ec.irr([100, 50]) is None
    # -100 + 230/(1+r) - 132/(1+r)^2 = 0 -> (1+r) = 1.1 or 1.2 (hand calculation): nearest 0 is 10 %.
    assert ec.irr([-100, 230, -132]) == pytest.approx(0.10, abs=1e-10)
    assert npf.irr([-100, 230, -132]) == pytest.approx(0.10, abs=1e-9)  # same choice


def test_payback_and_evaluate():
    s = Sheet()
    e = ec.evaluate(12000.0, bill_saving=3000.0, discount_rate=0.07, years=12,
                    energy_charge_per_wh=0.10 / 1000, loss_reduction_wh_per_year=2_000e3,
                    capacitor_loss_wh_per_year=876e3, sheet=s)
    # Hand calculation: 3000 + 2000 kWh x 0.10 - 876 kWh x 0.10 = 3112.40; payback 12000 / 3112.4.
    assert e.annual_saving == pytest.approx(3112.40)
    assert e.payback_years == pytest.approx(12000 / 3112.40)
    flows = [-12000.0] + [3112.40] * 12
    assert e.npv == pytest.approx(npf.npv(0.07, flows), rel=1e-12)
    assert e.irr == pytest.approx(npf.irr(flows), abs=1e-9)
    assert set(e.as_dict()) == {"annual_saving", "payback_years", "npv", "irr"}
    assert any(getattr(x, "symbol", "") == "T_pb" and x.expr == "C / S_yr" for x in s.steps)
    assert ec.payback_years(1000, 0.0) is None
    bad = ec.evaluate(1000, bill_saving=-10, discount_rate=0.05, years=5)
    assert bad.payback_years is None and bad.irr is None
    with pytest.raises(CalcError):
        ec.evaluate(1000, bill_saving=10, discount_rate=0.05, years=0)


def test_feeder_loss_reduction_hand():
    # 480 V three-phase, R = 0.01 ohm per phase, 300 kW from PF 0.80 (225 kvar) to 0.95.
    # Hand calculation: S_b = 375 kVA, I_b = 375000 / (sqrt(3) 480) = 451.05 A;
    # Q_a = 300 tan(acos 0.95) = 98.60 kvar, S_a = 315.79 kVA, I_a = 379.84 A;
    # dP = 3 x 0.01 x (451.05^2 - 379.84^2) = 1775.0 W.
    qa = 300e3 * math.tan(math.acos(0.95))
    s = Sheet()
    r = ec.feeder_loss_reduction(0.01, 480.0, 300e3, 225e3, qa, 3600.0, sheet=s)
    assert r.peak_w == pytest.approx(1775.0, rel=1e-3)
    assert r.energy_wh == pytest.approx(r.peak_w)  # one hour
    # Loss ratio 1 - (PF_b / PF_a)^2 = 1 - (0.8 / 0.95)^2 = 29.1 % of the losses before
    # (the usual loss-reduction relation, common practice).
    loss_before = 3 * 0.01 * (375e3 / (math.sqrt(3) * 480)) ** 2
    assert r.peak_w / loss_before == pytest.approx(1 - (0.8 / 0.95) ** 2, rel=1e-9)
    assert [x.symbol for x in s.steps if hasattr(x, "symbol")] == ["I_b", "I_a", "dP_feeder"]
    # Single phase, 240 V, 2 conductors of 0.05 ohm, 10 kW, Q 7.5 -> 0 kvar: I 52.08 -> 41.67 A,
    # dP = 2 x 0.05 x (52.08^2 - 41.67^2) = 97.66 W (hand calculation).
    r1 = ec.feeder_loss_reduction(0.05, 240.0, 10e3, 7.5e3, 0.0, 3600.0, phases=1)
    assert r1.peak_w == pytest.approx(2 * 0.05 * ((12.5e3 / 240) ** 2 - (10e3 / 240) ** 2))
    assert r1.peak_w == pytest.approx(97.66, abs=0.01)


def test_transformer_capacitor_capacity_hand():
    # 1000 kVA transformer, 10 kW load loss at rating; 800 -> 600 kVA:
    # dP = 10 kW x (0.8^2 - 0.6^2) = 2.8 kW (hand calculation).
    r = ec.transformer_loss_reduction(10e3, 1000e3, 800e3, 600e3, 3600.0)
    assert r.peak_w == pytest.approx(2800.0)
    # LV metallized PP capacitors 0.5 W/kvar (REFERENCES §8, common practice): 200 kvar for
    # 8760 h -> 0.5 x 200 x 8760 = 876 kWh.
    assert ec.capacitor_loss_wh(0.5 / 1000, 200e3, 8760 * 3600.0) == pytest.approx(876e3)
    assert ec.capacity_released_va([375e3, 300e3], [315.79e3, 290e3]) == pytest.approx(59.21e3)


def test_profile_losses_vectorised_equals_sum():
    rng = np.random.default_rng(3)
    n = 96 * 7
    t = np.datetime64("2024-01-01T00:00:00") + np.arange(n) * np.timedelta64(900, "s")
    p = rng.uniform(100e3, 400e3, n)
    q = p * rng.uniform(0.5, 0.9, n)
    sim = pr.simulate(t, p, q, pr.Bank.equal(25e3, 8), 0.95)
    out = ec.profile_losses(sim, feeder_r_ohm=0.005, v_v=480.0, transformer_load_loss_w=9e3,
                            transformer_s_va=750e3, capacitor_w_per_var=0.4e-3)
    # Interval-by-interval: 3 R (I_b^2 - I_a^2) x 0.25 h.
    e = 0.0
    for pi, qb, qa in zip(p, q, sim.q_after_var):
        ib = math.hypot(pi, qb) / (math.sqrt(3) * 480.0)
        ia = math.hypot(pi, qa) / (math.sqrt(3) * 480.0)
        e += 3 * 0.005 * (ib * ib - ia * ia) * 0.25
    assert out.feeder.energy_wh == pytest.approx(e, rel=1e-10)
    assert out.annual_factor == pytest.approx(8760 / (n * 0.25))
    assert out.feeder_wh_per_year == pytest.approx(e * 8760 / (n * 0.25), rel=1e-10)
    assert out.capacitor_loss_wh == pytest.approx(0.4e-3 * sim.delivered_varh)
    assert out.capacity_released_va == pytest.approx(sim.s_before_peak_va - sim.s_after_peak_va)
    assert out.transformer.energy_wh > 0
