"""Power-factor clauses of utility tariffs, each checked on a hand-worked month."""

import math

import numpy as np
import pytest

from reportgen.calc import profile as pr
from reportgen.calc import tariff as tf
from reportgen.calc.errors import CalcError
from reportgen.calc.sheet import Sheet


def month_at_peak_pf(month, peak_kw, pf, kwh=100_000.0):
    """A month whose bill gives the peak kVA (so the billing PF is the PF at the peak)."""
    return tf.MonthUsage(month, kwh * 1e3, kwh * 1e3 * math.tan(math.acos(pf)), peak_kw * 1e3,
                         peak_va=peak_kw * 1e3 / pf)


def test_norris_adjusted_demand_published_example():
    # Norris Public Power District (Nebraska) newsletter, REFERENCES §9/§10 (published, V):
    # 51.09 kW at PF 0.871, reference 0.93, $23.80/kW: billed 51.09 x 0.93 / 0.871 = 54.55 kW,
    # $1,298.29, against $1,215.94 at PF >= 0.93 (+$82.35). The utility bills to 0.01 kW.
    u = month_at_peak_pf("2024-01", 51.09, 0.871, kwh=20_000)
    tariff = tf.Tariff(demand_charge_per_w=23.80 / 1000, energy_charge_per_wh=0.0,
                       clause=tf.AdjustedDemand(0.93, "ratio", max_factor=1.10), demand_round_w=10.0,
                       name="Norris-style adjusted demand")
    # The bank brings the peak to unity: remove all of the peak kvar.
    q_pk = math.sqrt((51.09e3 / 0.871) ** 2 - 51.09e3**2)
    s = Sheet()
    r = tf.compare_bills([u], tariff, {"2024-01": tf.BankEffect(0.0, q_pk)}, sheet=s)
    m = r.months[0]
    assert m.pf_before == pytest.approx(0.871)
    assert m.billed_demand_before == pytest.approx(54.55e3)
    assert m.demand_charge_before == pytest.approx(1298.29, abs=0.005)
    assert m.demand_charge_after == pytest.approx(1215.94, abs=0.005)
    assert m.saving == pytest.approx(82.35, abs=0.01)
    assert m.pf_charge_before == pytest.approx(82.35, abs=0.01)
    assert r.annual_saving == pytest.approx(12 * m.saving)
    steps = [x for x in s.steps if getattr(x, "symbol", "") == "P_bill"]
    assert steps and steps[0].result == pytest.approx(54_550.75, abs=0.01)
    # Without the 0.01 kW rounding: 54.5507 kW x 23.80 = $1,298.31 (hand calculation).
    t2 = tf.Tariff(23.80 / 1000, 0.0, tf.AdjustedDemand(0.93))
    assert tf.compare_bills([u], t2).months[0].demand_charge_before == pytest.approx(1298.31, abs=0.005)


def test_norris_cap_ten_percent():
    # Same newsletter: the increase is capped at +10 % (PF floor 0.846). At PF 0.80 the ratio
    # 0.93 / 0.80 = 1.1625 is capped at 1.10: 100 kW -> 110 kW billed (hand calculation).
    u = month_at_peak_pf("2024-02", 100.0, 0.80)
    t = tf.Tariff(0.0238, 0.0, tf.AdjustedDemand(0.93, max_factor=1.10))
    assert tf.compare_bills([u], t).months[0].billed_demand_before == pytest.approx(110e3)
    assert tf.AdjustedDemand(0.93, max_factor=1.10).factor(0.846) == pytest.approx(0.93 / 0.846)


def test_batavia_linear_adjusted_demand():
    # City of Batavia, Illinois, Large General Service (REFERENCES §9, published form):
    # adjusted demand = [1 + (0.90 - PF)] x demand. Hand month: 200 kW at PF 0.80 ->
    # 200 x 1.10 = 220 kW; demand rate 12.00 per kW (invented): 2,640.00 vs 2,400.00.
    u = month_at_peak_pf("2024-03", 200.0, 0.80)
    t = tf.Tariff(12.00 / 1000, 0.0, tf.AdjustedDemand(0.90, "linear", slope=1.0))
    q_pk = 200e3 * 0.75
    # Bank removes 100 kvar at the peak: Q 50 kvar, PF = 200 / sqrt(200^2 + 50^2) = 0.970 >= 0.90.
    m = tf.compare_bills([u], t, {"2024-03": tf.BankEffect(0.0, q_pk - 50e3)}).months[0]
    assert m.billed_demand_before == pytest.approx(220e3)
    assert m.demand_charge_before == pytest.approx(2640.00)
    assert m.pf_after == pytest.approx(200 / math.hypot(200, 50))
    assert m.demand_charge_after == pytest.approx(2400.00)


def test_crppd_two_percent_per_point():
    # Schedule A-16-LP on crppd.com (REFERENCES §9, published): +2 % of demand for each 1 %
    # of PF below 95 %. PF 0.90 -> +10 %: 300 kW -> 330 kW (hand calculation).
    u = month_at_peak_pf("2024-04", 300.0, 0.90)
    t = tf.Tariff(0.01, 0.0, tf.AdjustedDemand(0.95, "linear", slope=2.0))
    assert tf.compare_bills([u], t).months[0].billed_demand_before == pytest.approx(330e3)


def test_flora_kva_demand():
    # Flora, Indiana, code of ordinances (REFERENCES §9, published): "$3.95 per KVA of billing
    # maximum demand". Hand month without a peak kVA on the bill: 100,000 kWh and 75,000 kvarh
    # -> average PF 0.80; peak 400 kW -> peak kvar 400 x 0.75 = 300, peak 500 kVA -> $1,975.00.
    u = tf.MonthUsage("2024-05", 100_000e3, 75_000e3, 400e3)
    assert tf.month_pf(u) == pytest.approx(0.80)
    t = tf.Tariff(3.95 / 1000, 0.0, tf.KvaDemand())
    # Bank: 200 kvar at the peak, 60,000 kvarh in the month. After: 100 kvar at the peak,
    # sqrt(400^2 + 100^2) = 412.311 kVA x 3.95 -> $1,628.63; kvarh 15,000, PF 100/sqrt(100^2+15^2) = 0.9889.
    m = tf.compare_bills([u], t, {"2024-05": tf.BankEffect(60_000e3, 200e3)}).months[0]
    assert m.billed_demand_unit == "VA"
    assert m.demand_charge_before == pytest.approx(1975.00)
    assert m.peak_va_after == pytest.approx(412.3106e3, rel=1e-6)
    assert m.demand_charge_after == pytest.approx(1628.63, abs=0.005)
    assert m.pf_after == pytest.approx(100 / math.hypot(100, 15))
    assert m.pf_charge_before == pytest.approx(100e3 * 3.95 / 1000)


def test_kvarh_charge_energy_from_memory():
    # Typical clause, from memory (REFERENCES §9, M): a charge per kvarh above 0.5 x kWh.
    # Hand month: 100,000 kWh, 75,000 kvarh, 0.01 per kvarh -> 25,000 kvarh x 0.01 = 250.00.
    # After 40,000 kvarh delivered: 35,000 kvarh <= 50,000 -> 0.
    u = tf.MonthUsage("2024-06", 100_000e3, 75_000e3, 400e3, billed_amount=9000.0)
    t = tf.Tariff(10.0 / 1000, 0.08 / 1000, tf.ReactiveCharge(rate=0.01 / 1000, ratio=0.5, basis="energy"))
    m = tf.compare_bills([u], t, {"2024-06": tf.BankEffect(40_000e3, 0.0)}).months[0]
    assert m.pf_charge_before == pytest.approx(250.00)
    assert m.pf_charge_after == 0.0
    assert m.energy_charge == pytest.approx(8000.00)  # 100,000 kWh x 0.08
    assert m.total_before == pytest.approx(4000.00 + 8000.00 + 250.00)
    assert m.saving == pytest.approx(250.00)
    assert m.billed_amount == 9000.0


def test_kvar_demand_charge_secondary_source():
    # District tariff quoted on electrical-contractor.net (REFERENCES §9, V2): a charge per kvar
    # of demand above 62 % of kW. Hand month: 400 kW, 300 kvar at the peak (kVA 500 on the bill),
    # 1.50 per kvar: (300 - 0.62 x 400) = 52 kvar -> 78.00. After removing 100 kvar: 200 < 248 -> 0.
    u = tf.MonthUsage("2024-07", 100_000e3, 75_000e3, 400e3, peak_va=500e3)
    t = tf.Tariff(0.0, 0.0, tf.ReactiveCharge(rate=1.50 / 1000, ratio=0.62, basis="demand"))
    m = tf.compare_bills([u], t, {"2024-07": tf.BankEffect(0.0, 100e3)}).months[0]
    assert m.pf_charge_before == pytest.approx(78.00)
    assert m.pf_charge_after == 0.0


def test_effects_from_bank_estimate():
    # 50 kvar fixed x 744 h (January) = 37,200 kvarh, capped at the month's 30,000 kvarh.
    u = [tf.MonthUsage("2024-01", 100_000e3, 30_000e3, 300e3)]
    e = tf.effects_from_bank(u, 50e3)["2024-01"]
    assert e.delivered_varh == pytest.approx(30_000e3)
    assert e.peak_var_reduction == pytest.approx(50e3)
    # 200 operating hours: 10,000 kvarh.
    assert tf.effects_from_bank(u, 50e3, operating_hours=200)["2024-01"].delivered_varh == pytest.approx(10_000e3)
    # Automatic bank stopping at PF 0.95: kvarh to remove = 30,000 - 100,000 x 0.3287 < 0 -> 0.
    assert tf.effects_from_bank(u, 50e3, target_pf=0.95)["2024-01"].delivered_varh == 0.0
    assert tf.month_hours("2024-02") == 29 * 24


def test_effects_from_simulation_by_month():
    # Two days straddling 2024-01-31 / 2024-02-01 at 1-hour intervals, constant load.
    t = np.datetime64("2024-01-31T00:00:00") + np.arange(48) * np.timedelta64(3600, "s")
    p = np.full(48, 100e3)
    p[30] = 150e3  # February peak at 06:00
    q = 0.75 * p
    sim = pr.simulate(t, p, q, pr.Bank.equal(10e3, 6), 0.95)
    eff = tf.effects_from_simulation(sim)
    assert set(eff) == {"2024-01", "2024-02"}
    assert eff["2024-01"].delivered_varh == pytest.approx(sim.q_bank_var[:24].sum())  # 1-h intervals
    assert eff["2024-02"].peak_var_reduction == pytest.approx(sim.q_bank_var[30])
    # 150 kW, 112.5 kvar: need 112.5 - 49.3 = 63.2 -> all 6 steps (60 kvar) (hand calculation).
    assert sim.q_bank_var[30] == 60e3
    assert eff["2024-02"].source == "profile"


def test_partial_year_and_errors():
    u = [month_at_peak_pf("2024-01", 100.0, 0.85), month_at_peak_pf("2024-02", 100.0, 0.85)]
    t = tf.Tariff(0.01, 0.0, tf.AdjustedDemand(0.90, "ratio"))
    r = tf.compare_bills(u, t, {"2024-01": tf.BankEffect(0, 60e3)})
    assert r.annual_saving == pytest.approx(r.saving * 6)
    assert r.months[1].saving == 0.0 and r.months[1].effect_source == "none"
    with pytest.raises(CalcError, match="twice"):
        tf.compare_bills([u[0], u[0]], t)
    with pytest.raises(CalcError, match="YYYY-MM"):
        tf.MonthUsage("2024-13", 1.0, 1.0, 1.0)
    with pytest.raises(CalcError, match="kVA can never"):
        tf.MonthUsage("2024-01", 1.0, 1.0, 100.0, peak_va=90.0)
