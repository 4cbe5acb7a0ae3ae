"""Bus voltage before and after the bank against pandapower's Newton-Raphson load flow.

Reference tool: pandapower (balanced three-phase load flow). The utility is an
ext_grid (slack at 1.0 pu) behind an explicit series impedance, the
transformer is modelled without core losses, loads are constant PQ and the
bank is a pandapower shunt (constant admittance, rated at vn).
"""

from __future__ import annotations

import math
import warnings

import pytest

from reportgen.calc.power_quality import BusLoad, assess, bus_voltage, source_from_bus, source_from_utility

pp = pytest.importorskip("pandapower")

TOL_PU = 1e-6


def _run(net) -> None:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        pp.runpp(net, tolerance_mva=1e-11, max_iteration=50, calculate_voltage_angles=True, init="flat")


def _utility_line(net, from_bus, to_bus, v_kv, s_sc_mva, x_r):
    """The utility's Thevenin impedance as a 1 km line, computed here by hand (Z = V^2/S)."""
    z = v_kv**2 / s_sc_mva
    r = z / math.sqrt(1 + x_r**2)
    x = r * x_r
    pp.create_line_from_parameters(net, from_bus, to_bus, length_km=1.0, r_ohm_per_km=r, x_ohm_per_km=x,
                                   c_nf_per_km=0.0, max_i_ka=100.0)


def _pp_480v_behind_transformer(p_mw, q_mvar, q_bank_mvar):
    """13.8 kV utility 250 MVA X/R 10, 1500 kVA 5.75 % X/R 6 transformer, 480 V bus."""
    net = pp.create_empty_network(sn_mva=1.0, f_hz=60.0)
    b_src = pp.create_bus(net, vn_kv=13.8)
    b_hv = pp.create_bus(net, vn_kv=13.8)
    b_lv = pp.create_bus(net, vn_kv=0.48)
    pp.create_ext_grid(net, b_src, vm_pu=1.0, va_degree=0.0)
    _utility_line(net, b_src, b_hv, 13.8, 250.0, 10.0)
    vk = 5.75
    pp.create_transformer_from_parameters(net, b_hv, b_lv, sn_mva=1.5, vn_hv_kv=13.8, vn_lv_kv=0.48,
                                          vk_percent=vk, vkr_percent=vk / math.sqrt(1 + 6.0**2),
                                          pfe_kw=0.0, i0_percent=0.0, shift_degree=0.0)
    pp.create_load(net, b_lv, p_mw=p_mw, q_mvar=q_mvar)
    if q_bank_mvar:
        # pandapower's shunt q_mvar is absorbed reactive power at v = 1 pu: a capacitor is negative.
        pp.create_shunt(net, b_lv, q_mvar=-q_bank_mvar, p_mw=0.0, vn_kv=0.48)
    _run(net)
    return float(net.res_bus.vm_pu.at[b_lv])


@pytest.mark.parametrize("q_bank_var", [0.0, 300e3, 600e3])
def test_480v_bus_behind_transformer(q_bank_var):
    # Reference: pandapower load flow of the same utility + transformer + loads + shunt.
    src = source_from_utility(480.0, 13_800.0, 10.0, utility_s_sc_va=250e6, transformer_s_va=1.5e6,
                              transformer_z_pct=5.75, transformer_x_r=6.0)
    s_load = 1.1e6 + 0.75e6j
    res = bus_voltage(src, s_load, q_bank_var)
    v_before_pp = _pp_480v_behind_transformer(1.1, 0.75, 0.0)
    v_after_pp = _pp_480v_behind_transformer(1.1, 0.75, q_bank_var / 1e6)
    assert res.v_before_pu == pytest.approx(v_before_pp, abs=TOL_PU)
    assert res.v_after_pu == pytest.approx(v_after_pp, abs=TOL_PU)


def test_480v_fault_current_form_matches_pandapower():
    # Same system with the utility given as a fault current: I = S/(sqrt(3)*V) = 10.459 kA at 13.8 kV
    # (hand calculation); reference: pandapower as above.
    i_f = 250e6 / (math.sqrt(3) * 13_800.0)
    src = source_from_utility(480.0, 13_800.0, 10.0, utility_fault_current_a=i_f, transformer_s_va=1.5e6,
                              transformer_z_pct=5.75, transformer_x_r=6.0)
    res = bus_voltage(src, 0.9e6 + 0.5e6j, 400e3)
    assert res.v_after_pu == pytest.approx(_pp_480v_behind_transformer(0.9, 0.5, 0.4), abs=TOL_PU)


def _pp_bus_behind_impedance(v_kv, s_sc_mva, x_r, loads, q_bank_mvar):
    net = pp.create_empty_network(sn_mva=1.0, f_hz=60.0)
    b_src = pp.create_bus(net, vn_kv=v_kv)
    b = pp.create_bus(net, vn_kv=v_kv)
    pp.create_ext_grid(net, b_src, vm_pu=1.0)
    _utility_line(net, b_src, b, v_kv, s_sc_mva, x_r)
    for p_mw, q_mvar in loads:
        pp.create_load(net, b, p_mw=p_mw, q_mvar=q_mvar)
    if q_bank_mvar:
        pp.create_shunt(net, b, q_mvar=-q_bank_mvar, p_mw=0.0, vn_kv=v_kv)
    _run(net)
    return float(net.res_bus.vm_pu.at[b]), math.radians(float(net.res_bus.va_degree.at[b]))


@pytest.mark.parametrize(
    "v_kv, s_sc_mva, x_r, loads, q_bank_mvar",
    [
        (4.16, 150.0, 15.0, [(3.0, 2.0), (1.2, 0.9)], 1.5),  # 4.16 kV plant bus
        (13.8, 60.0, 8.0, [(12.0, 7.0)], 6.0),  # 13.8 kV bus, heavily loaded (about 0.9 pu)
        (13.8, 400.0, 20.0, [(2.0, -0.3)], 3.0),  # light leading load: the bank pushes the bus above 1 pu
    ],
)
def test_bus_from_short_circuit_power(v_kv, s_sc_mva, x_r, loads, q_bank_mvar):
    # Reference: pandapower load flow, ext_grid behind a series R + jX line with the Thevenin impedance.
    src = source_from_bus(v_kv * 1e3, s_sc_mva * 1e6, x_r)
    s_load = sum(complex(p, q) for p, q in loads) * 1e6
    res = bus_voltage(src, s_load, q_bank_mvar * 1e6)
    vb, ab = _pp_bus_behind_impedance(v_kv, s_sc_mva, x_r, loads, 0.0)
    va, aa = _pp_bus_behind_impedance(v_kv, s_sc_mva, x_r, loads, q_bank_mvar)
    assert res.v_before_pu == pytest.approx(vb, abs=TOL_PU)
    assert res.v_after_pu == pytest.approx(va, abs=TOL_PU)
    assert res.angle_before_rad == pytest.approx(ab, abs=1e-6)
    assert res.angle_after_rad == pytest.approx(aa, abs=1e-6)


def test_assess_voltages_match_pandapower():
    # assess() must report the same load-flow voltages (reference: pandapower, 4.16 kV case above).
    src = source_from_bus(4160.0, 150e6, 15.0)
    loads = [BusLoad(3.0e6 + 2.0e6j, {5: 20.0, 7: 10.0}), BusLoad(1.2e6 + 0.9e6j)]
    pq = assess(src, loads, 1.5e6, 60.0)
    vb, _ = _pp_bus_behind_impedance(4.16, 150.0, 15.0, [(3.0, 2.0), (1.2, 0.9)], 0.0)
    va, _ = _pp_bus_behind_impedance(4.16, 150.0, 15.0, [(3.0, 2.0), (1.2, 0.9)], 1.5)
    d = pq.as_dict()
    assert d["v_before_pu"] == pytest.approx(vb, abs=TOL_PU)
    assert d["v_after_pu"] == pytest.approx(va, abs=TOL_PU)
