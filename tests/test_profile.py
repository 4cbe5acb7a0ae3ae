"""Interval profiles, the stepped-bank controller rule and the design search."""

import math

import numpy as np
import pytest

from reportgen.calc import profile as pr
from reportgen.calc.errors import CalcError
from reportgen.calc.sheet import Sheet

T0 = np.datetime64("2024-03-04T00:00:00")  # a Monday
Q15 = np.timedelta64(900, "s")

# Hand-made profile, 12 intervals of 15 min (P kW, Q kvar). Bank: 4 equal steps of
# 50 kvar, target PF 0.95 (tan(acos 0.95) = 0.328684), never leading.
# q_allow = P * 0.328684; need = Q - q_allow; cap = Q (never leading).
# Hand calculation per interval:
#  1  P=100 Q=20    need=-12.9          -> 0 steps; Q_after 20 <= 32.9   met
#  2  P=100 Q=60    need=27.1           -> 1 step (50); Q_after 10       met
#  3  P=200 Q=150   need=84.3           -> 2 steps (100); Q_after 50 <= 65.7 met
#  4  P=300 Q=250   need=151.4          -> 4 steps (150 < 151.4); Q_after 50 met
#  5  P=400 Q=400   need=268.5 > 200    -> 4 steps (all); Q_after 200 > 131.5 not met
#  6  P=20  Q=45    need=38.4 -> 1 step, but 50 > cap 45 -> 0 steps; not met
#  7  P=0   Q=0     no load             -> 0 steps; S = 0 counts as PF 1, met
#  8  P=50  Q=-10   load leading        -> 0 steps; PF 0.981 leading, met (load leads)
#  9  P=150 Q=100   need=50.7           -> 2 steps (100 <= cap 100); Q_after 0 met
# 10  P=150 Q=99.9  need=50.6 -> 2 steps, but 100 > cap 99.9 -> 1 step; Q_after 49.9 > 49.3 not met
# 11  P=250 Q=130   need=47.8           -> 1 step; Q_after 80 <= 82.2 met
# 12  P=100 Q=60    as 2                -> 1 step, met
HAND_P_KW = [100, 100, 200, 300, 400, 20, 0, 50, 150, 150, 250, 100]
HAND_Q_KVAR = [20, 60, 150, 250, 400, 45, 0, -10, 100, 99.9, 130, 60]
HAND_STEPS = [0, 1, 2, 4, 4, 0, 0, 0, 2, 1, 1, 1]
HAND_MET = [1, 1, 1, 1, 0, 0, 1, 1, 1, 0, 1, 1]
# never_leading=False: cap = Q + q_allow. Interval 6: cap 51.6 -> 1 step, Q_after -5,
# |-5| <= 6.6 met (leading). Interval 10: cap 149.2 -> 2 steps, Q_after -0.1, met (leading).
HAND_STEPS_LEAD = [0, 1, 2, 4, 4, 1, 0, 0, 2, 2, 1, 1]
HAND_MET_LEAD = [1, 1, 1, 1, 0, 1, 1, 1, 1, 1, 1, 1]


def hand_profile():
    n = len(HAND_P_KW)
    t = T0 + np.arange(n) * Q15
    return t, np.array(HAND_P_KW, float) * 1e3, np.array(HAND_Q_KVAR, float) * 1e3


@pytest.mark.parametrize("impl", [pr.simulate, pr.simulate_loop])
def test_hand_profile_never_leading(impl):
    t, p, q = hand_profile()
    r = impl(t, p, q, pr.Bank.equal(50e3, 4), 0.95, never_leading=True)
    assert r.steps.tolist() == HAND_STEPS  # hand calculation above
    assert r.met.astype(int).tolist() == HAND_MET
    assert r.met_fraction == pytest.approx(9 / 12)
    # Only interval 8 is leading, and there the load itself leads (no steps in).
    assert r.leading_hours == pytest.approx(0.25)
    assert r.bank_leading_hours == 0.0
    # |delta steps|: 1+1+2+0+4+0+0+2+1+0+0 = 11 operations over 12 x 15 min = 0.125 day.
    assert r.switching_ops == 11
    assert r.switching_per_day == pytest.approx(11 / 0.125)
    assert r.level_changes == 6  # changes at 1->2, 2->3, 3->4, 5->6, 8->9, 9->10
    assert r.min_kvar == pytest.approx(-10e3) and r.max_kvar == pytest.approx(400e3)
    # Met energy: all kW except intervals 5, 6, 10 (400 + 20 + 150 of 1820 kW-intervals).
    assert r.met_energy_fraction == pytest.approx((1820 - 570) / 1820)
    assert r.q_after_var[8] == 0.0 and r.pf_after[8] == 1.0


@pytest.mark.parametrize("impl", [pr.simulate, pr.simulate_loop])
def test_hand_profile_leading_allowed(impl):
    t, p, q = hand_profile()
    r = impl(t, p, q, pr.Bank.equal(50e3, 4), 0.95, never_leading=False)
    assert r.steps.tolist() == HAND_STEPS_LEAD  # hand calculation above
    assert r.met.astype(int).tolist() == HAND_MET_LEAD
    # Leading: 6 and 10 (bank), 8 (load) -> 3 x 0.25 h, 2 x 0.25 h with steps in.
    assert r.leading_hours == pytest.approx(0.75)
    assert r.bank_leading_hours == pytest.approx(0.5)
    # Never beyond the target on the leading side:
    lead = r.q_after_var < 0
    assert np.all(r.pf_after[lead & (r.steps > 0)] >= 0.95)


def test_hand_profile_binary_bank():
    # Binary steps 25, 50, 100 kvar: levels 0, 25, ..., 175 kvar (level k = bit pattern k).
    # Interval 3: need 84.3 -> level 4 (100 kvar: the 100 step alone, pattern 100).
    # Interval 4: need 151.4 -> level 7 (175, 150 < 151.4), cap 250 -> pattern 111.
    # Interval 5: need 268.5 -> all (level 7). Interval 6: need 38.4 -> level 2 (50) > cap 45 -> level 1 (25).
    t, p, q = hand_profile()
    r = pr.simulate(t[:6], p[:6], q[:6], pr.Bank.binary(25e3, 3), 0.95)
    # Interval 1: 0; interval 2: need 27.1 -> level 2 (50 kvar), cap 60.
    assert r.steps.tolist() == [0, 2, 4, 7, 7, 1]
    # Contactor operations: 000->010: 1, 010->100: 2, 100->111: 2, 111->111: 0, 111->001: 2 = 7
    assert r.switching_ops == 7
    loop = pr.simulate_loop(t[:6], p[:6], q[:6], pr.Bank.binary(25e3, 3), 0.95)
    assert loop.steps.tolist() == r.steps.tolist() and loop.switching_ops == 7


def test_custom_bank_levels():
    # Steps 25, 25, 50: totals 0, 25, 50, 75, 100; 50 is reached with the single 50 step
    # (fewest steps), 25 with step 1 (lowest step number). Hand enumeration.
    lv, masks = pr.Bank.custom([25e3, 25e3, 50e3]).levels()
    assert lv.tolist() == [0, 25e3, 50e3, 75e3, 100e3]
    assert masks.tolist() == [0b000, 0b001, 0b100, 0b101, 0b111]


def _random_profile(rng, n, integer=False):
    t = T0 + np.arange(n) * Q15
    p = rng.uniform(-20e3, 400e3, n)
    q = rng.uniform(-40e3, 300e3, n)
    if integer:  # many exact ties with step multiples
        p = np.round(p / 5e3) * 5e3
        q = np.round(q / 5e3) * 5e3
    p[rng.integers(0, n, 5)] = 0.0
    q[rng.integers(0, n, 5)] = 0.0
    return t, p, q


@pytest.mark.parametrize("seed", range(6))
def test_vectorised_equals_loop_random(seed):
    rng = np.random.default_rng(seed)
    t, p, q = _random_profile(rng, 700, integer=seed % 2 == 0)
    banks = [
        pr.Bank.equal(25e3, 8),
        pr.Bank.equal(15e3, 3),
        pr.Bank.binary(10e3, 5),
        pr.Bank.custom([20e3, 30e3, 30e3, 50e3]),
    ]
    for bank in banks:
        for nl in (True, False):
            for target in (0.9, 0.95, 1.0):
                v = pr.simulate(t, p, q, bank, target, never_leading=nl)
                lp = pr.simulate_loop(t, p, q, bank, target, never_leading=nl)
                assert np.array_equal(v.steps, lp.steps), (bank, nl, target)
                assert np.array_equal(v.met, lp.met)
                for k in ("met_fraction", "leading_hours", "bank_leading_hours",
                          "switching_ops", "level_changes", "switching_per_day"):
                    assert getattr(v, k) == pytest.approx(getattr(lp, k), rel=1e-12), k
                assert v.met_energy_fraction == pytest.approx(lp.met_energy_fraction, rel=1e-9)
                if nl:
                    assert v.bank_leading_hours == 0.0


def test_design_search_rows_equal_loop():
    rng = np.random.default_rng(42)
    t, p, q = _random_profile(rng, 400, integer=True)
    sizes = [10e3, 25e3, 40e3]
    for nl in (True, False):
        ds = pr.design_search(t, p, q, 0.95, sizes, max_steps=7, max_binary_steps=4, never_leading=nl)
        assert len(ds.candidates) == 3 * 7 + 3 * 3
        for c in ds.candidates:
            lp = pr.simulate_loop(t, p, q, c.bank, 0.95, never_leading=nl)
            assert c.met_fraction == pytest.approx(lp.met_fraction, rel=1e-12), c
            assert c.met_energy_fraction == pytest.approx(lp.met_energy_fraction, rel=1e-9)
            assert c.leading_hours == pytest.approx(lp.leading_hours, rel=1e-12)
            assert c.bank_leading_hours == pytest.approx(lp.bank_leading_hours, rel=1e-12)
            assert c.switching_ops == lp.switching_ops, c
            assert c.total_var == pytest.approx(c.bank.total_var)


def test_design_search_choice_and_table():
    # Smooth daily cycle: P 100..300 kW, Q = 0.75 P (PF 0.8); target 0.95.
    n = 96 * 14
    t = T0 + np.arange(n) * Q15
    hr = (np.arange(n) % 96) / 4.0
    p = 100e3 + 200e3 * np.sin(np.pi * hr / 24.0) ** 2
    q = 0.75 * p
    cost = pr.CostModel(fixed=1000.0, per_var=0.02, per_step=200.0)
    s = Sheet()
    ds = pr.design_search(t, p, q, 0.95, share=0.95, cost=cost, sheet=s)
    assert len(ds.candidates) >= 200
    feas = [c for c in ds.candidates if c.feasible]
    assert ds.best is not None and ds.best.feasible
    assert ds.best.cost == min(c.cost for c in feas)
    assert all(c.met_fraction >= 0.95 and c.bank_leading_hours == 0.0 for c in feas)
    # The chosen bank, re-simulated, reproduces its table row.
    sim = pr.simulate(t, p, q, ds.best_bank, 0.95)
    assert sim.met_fraction == pytest.approx(ds.best.met_fraction)
    # Needed at the peak: 300 kW x (0.75 - 0.3287) = 126.4 kvar (kW multiplier, REFERENCES §7,
    # 0.80 -> 0.95 = 0.421): the chosen bank must reach at least that.
    assert ds.best.total_var >= 300e3 * pr.kw_multiplier(0.8, 0.95) * 0.95
    cost_row = cost(ds.best.kind, ds.best.step_var, ds.best.step_count, ds.best.total_var)
    assert ds.best.cost == pytest.approx(cost_row)
    d = ds.as_dict()
    assert set(d["bank"]) == {"kind", "step_var", "step_count"}
    assert len(d["candidates"]) == len(ds.candidates)
    assert any("Least-cost" in getattr(x, "text", "") for x in s.steps)


def test_design_search_none_feasible():
    t, p, q = hand_profile()
    ds = pr.design_search(t, p, q, 0.95, [1e3], max_steps=2, binary=False)
    assert ds.best is None and not any(c.feasible for c in ds.candidates)


# kW multiplier tan(acos PF1) - tan(acos PF2): REFERENCES §7 (computed; 0.398 and 1.169
# also appear in published tables, IEEE 141 ch. 8 from memory).
@pytest.mark.parametrize(
    "pf1,pf2,k",
    [(0.70, 0.95, 0.691), (0.70, 0.90, 0.536), (0.75, 0.90, 0.398), (0.75, 0.95, 0.553),
     (0.80, 0.95, 0.421), (0.80, 1.0, 0.750), (0.85, 0.95, 0.291), (0.65, 1.0, 1.169)],
)
def test_kw_multiplier_table(pf1, pf2, k):
    assert pr.kw_multiplier(pf1, pf2) == pytest.approx(k, abs=6e-4)


def test_kw_multiplier_worked_example():
    # 5 kW from PF 0.75 to 0.90 needs 1.99 kvar (a published worked example, REFERENCES §10, secondary source).
    assert 5e3 * pr.kw_multiplier(0.75, 0.90) == pytest.approx(1.99e3, abs=6)


def test_interval_info_gaps():
    # 15-min series with intervals 4..6 missing (a 60-min step) and one 20-min step.
    k = np.array([0, 1, 2, 3, 7, 8, 9])
    t = T0 + k * Q15
    info = pr.interval_info(t)
    assert info.interval_s == 900.0
    assert len(info.gaps) == 1
    g = info.gaps[0]
    assert g.index == 4 and g.missing_intervals == 3 and g.duration_s == 2700.0
    assert g.start_s == pr.to_seconds(t)[3] + 900.0
    assert info.covered_s == 7 * 900.0 and info.span_s == 10 * 900.0
    t2 = pr.to_seconds(T0 + np.arange(5) * Q15)
    t2[3] += 300.0
    assert pr.interval_info(t2).irregular_count == 2
    with pytest.raises(CalcError, match="increase"):
        pr.interval_info(np.array([0.0, 900.0, 900.0]))


def test_profile_stats_hand():
    # Four 15-min intervals: P 100, 200, 300, 400 kW; Q 75, 150, 225, -100 kvar.
    t = T0 + np.arange(4) * Q15
    p = np.array([100, 200, 300, 400.0]) * 1e3
    q = np.array([75, 150, 225, -100.0]) * 1e3
    s = Sheet()
    st = pr.profile_stats(t, p, q, target_pf=0.95, sheet=s)
    assert st.energy_wh == pytest.approx(1000e3 * 0.25)  # 1000 kW x 0.25 h
    assert st.reactive_energy_varh == pytest.approx(350e3 * 0.25)
    # Average PF = 1000 / sqrt(1000^2 + 350^2) = 0.94385 (hand calculation)
    assert st.pf_average == pytest.approx(1000 / math.hypot(1000, 350))
    assert st.pf_min == pytest.approx(0.8)
    assert st.leading_hours == pytest.approx(0.25)
    assert st.p_duration_w.tolist() == [400e3, 300e3, 200e3, 100e3]
    # kvar needed at 300 kW, PF 0.8: 300 x 0.421 = 126.4 kvar (REFERENCES §7 multiplier).
    assert st.q_needed_max_var == pytest.approx(300e3 * pr.kw_multiplier(0.8, 0.95))
    assert st.hours_below_target == pytest.approx(0.75)
    h = st.pf_hist
    assert h.lagging_counts.sum() == 3 and h.leading_counts.sum() == 1
    # 0.8 falls in the [0.80, 0.82) bin; 400/sqrt(400^2+100^2) = 0.970 in [0.96, 0.98).
    assert h.lagging_counts[np.searchsorted(h.edges, 0.8, side="right") - 1] == 3
    assert h.leading_counts[np.searchsorted(h.edges, 0.9701, side="right") - 1] == 1
    d = st.as_dict()
    assert len(d["p_duration_w"]) == 101 and d["p_duration_w"][0] == 400e3 and d["p_duration_w"][-1] == 100e3
    assert any(getattr(x, "symbol", "") == "PF_avg" for x in s.steps)


def test_fixed_bank_check_hand():
    # Minimum Q 47 kvar; units 10, 15, 25 kvar. Up to 2 units: 25 + 15 = 40 (25 + 25 = 50 too
    # big); up to 3 units: 25 + 10 + 10 = 45 (hand enumeration).
    q = np.array([47e3, 80e3, 120e3])
    p = np.array([100e3, 150e3, 200e3])
    r2 = pr.fixed_bank_check(p, q, [10e3, 15e3, 25e3], max_units=2)
    assert r2.bank_var == 40e3 and sorted(r2.units_var) == [15e3, 25e3]
    r3 = pr.fixed_bank_check(p, q, [10e3, 15e3, 25e3], max_units=3, target_pf=0.95)
    assert r3.bank_var == 45e3 and r3.allowed_var == 47e3
    # With 45 kvar on: Q_after 2, 35, 75 kvar vs allowed 32.9, 49.3, 65.7 -> 2 of 3 met.
    assert r3.met_fraction == pytest.approx(2 / 3)
    r0 = pr.fixed_bank_check(p, np.array([5e3, 80e3, 1e3]), [10e3])
    assert r0.bank_var == 0.0 and r0.units_var == ()


def test_typical_week_and_as_dict_keys():
    n = 96 * 21
    t = T0 + np.arange(n) * Q15
    p = np.full(n, 100e3)
    p[: 96 * 7] = 300e3  # first week heavy, later weeks typical
    a, b = pr.typical_week(t, p)
    assert b - a == 96 * 7 and a >= 96
    sim = pr.simulate(t, p, 0.7 * p, pr.Bank.equal(25e3, 6), 0.95)
    assert set(sim.as_dict()) == {"intervals", "met_fraction", "leading_hours", "switching_per_day",
                                  "min_kvar", "max_kvar"}
    assert pr.Bank.equal(25e3, 6).as_dict() == {"kind": "equal", "step_var": 25e3, "step_count": 6}


def test_bad_inputs():
    t, p, q = hand_profile()
    with pytest.raises(CalcError, match="target power factor"):
        pr.simulate(t, p, q, pr.Bank.equal(50e3, 4), 1.2)
    with pytest.raises(CalcError, match="step"):
        pr.Bank.equal(-5.0, 3)
    with pytest.raises(CalcError, match="one length"):
        pr.simulate(t, p[:3], q, pr.Bank.equal(50e3, 4), 0.95)


# Property check: the vectorised rule and the plain loop agree exactly, including the many
# exact ties that integer kW/kvar values and integer step sizes produce.
from hypothesis import given, settings, strategies as st  # noqa: E402


@settings(max_examples=60, deadline=None)
@given(
    pq=st.lists(st.tuples(st.integers(-50, 500), st.integers(-100, 400)), min_size=1, max_size=40),
    step=st.integers(1, 80),
    count=st.integers(1, 6),
    kind=st.sampled_from(["equal", "binary"]),
    target=st.sampled_from([0.8, 0.9, 0.95, 0.98, 1.0]),
    nl=st.booleans(),
)
def test_vectorised_equals_loop_property(pq, step, count, kind, target, nl):
    p = np.array([a for a, _ in pq], float) * 1e3
    q = np.array([b for _, b in pq], float) * 1e3
    t = T0 + np.arange(len(pq)) * Q15
    bank = pr.Bank(kind, step * 1e3, count)
    v = pr.simulate(t, p, q, bank, target, never_leading=nl, interval_s=900.0)
    lp = pr.simulate_loop(t, p, q, bank, target, never_leading=nl, interval_s=900.0)
    assert np.array_equal(v.steps, lp.steps)
    assert np.array_equal(v.met, lp.met)
    assert v.switching_ops == lp.switching_ops
    assert v.bank_leading_hours == lp.bank_leading_hours
    ds = pr.design_search(t, p, q, target, [step * 1e3], max_steps=count, max_binary_steps=max(count, 2),
                          never_leading=nl, interval_s=900.0)
    # (A one-step binary bank is the one-step equal bank; the search lists it once.)
    row_kind = "equal" if count == 1 else kind
    row = next(c for c in ds.candidates if c.kind == row_kind and c.step_count == count)
    assert row.switching_ops == lp.switching_ops
    assert row.met_fraction == lp.met_fraction
    assert row.leading_hours == lp.leading_hours


def test_results_are_json_ready():
    import json

    t, p, q = hand_profile()
    sim = pr.simulate(t, p, q, pr.Bank.equal(50e3, 4), 0.95)
    json.dumps(sim.as_dict(detail=True))
    json.dumps(pr.profile_stats(t, p, q, target_pf=0.95).as_dict())
    json.dumps(pr.design_search(t, p, q, 0.95, [25e3, 50e3], max_steps=4).as_dict())
    json.dumps(pr.fixed_bank_check(p, q, target_pf=0.95).as_dict())
    json.dumps(pr.interval_info(t).as_dict())
