"""Bill of materials: a hand-checked design and a priced catalog round trip.

Design (invented): automatic bank, 480 V 60 Hz, two steps of 2 × 25 kvar delta units,
NEC rule set, copper 75 °C, 15 m feeder.

Hand calculation (NEC 2023; fuse multiple 1.65 common practice):
  step:   I = 50000/(√3·480) = 60.14 A; fuse 1.65·60.14 = 99.23 -> 100 A (240.6(A));
          switching device >= 1.35·60.14 = 81.19 A (460.8(C)); 3 fuses per step.
  feeder: I = 120.28 A; fuse 1.65·120.28 = 198.46 -> 200 A; conductor >= 162.38 A
          (460.8(A)) and protected by 200 A (240.4) -> 3/0 AWG (200 A); disconnect >= 162.38 A,
          fused -> >= 200 A -> 200 A switch.
  losses: 100 kvar × 0.5 W/kvar (common practice) = 50 W;
          airflow 50/(1.2·1005·10) = 4.146e-3 m³/s.
  catalog picks (first entry of the kind that meets the need):
          capacitor 25 kvar 480 V   4 × 300.00 = 1200.00
          fuse 100 A 600 V          6 ×  12.00 =   72.00
          fuse 200 A 600 V          3 ×  40.00 =  120.00
          contactor 95 A (65 A too small; 115 A listed later) 2 × 150.00 = 300.00
          disconnect 200 A 600 V    1 × 500.00 =  500.00
          PF controller 6 steps     1 × 250.00 =  250.00
          conductor 3/0 Cu 75 °C    45 m (3 × 15 m) × 9.50 = 427.50
          enclosure 200 W           1 × 800.00 =  800.00
          total                                  3669.50
"""

import json
import math

import pytest

from reportgen.calc.bom import bank_needs, build_bom, match_entry, price_needs
from reportgen.calc.discharge import discharge_check
from reportgen.calc.errors import CalcError
from reportgen.calc.protection import BankStep, CapacitorUnit, protect_bank
from reportgen.calc.sheet import Sheet

U = CapacitorUnit(25e3, 480, 60, name="U25")
STEPS = [BankStep("S1", U, 2), BankStep("S2", U, 2)]


def catalog():
    usd = "USD"
    return [
        {"kind": "capacitor", "q_var": 25e3, "v_v": 480, "part_number": "CAP-25-480",
         "unit_price": 300.0, "currency": usd},
        {"kind": "capacitor", "q_var": 50e3, "v_v": 480, "part_number": "CAP-50-480",
         "unit_price": 520.0, "currency": usd},
        {"kind": "fuse", "i_a": 90, "v_v": 600, "part_number": "FU-90", "unit_price": 11.0,
         "currency": usd},
        {"kind": "fuse", "i_a": 100, "v_v": 250, "part_number": "FU-100-250", "unit_price": 5.0,
         "currency": usd},
        {"kind": "fuse", "i_a": 100, "v_v": 600, "part_number": "FU-100", "unit_price": 12.0,
         "currency": usd},
        {"kind": "fuse", "i_a": 200, "v_v": 600, "part_number": "FU-200", "unit_price": 40.0,
         "currency": usd},
        {"kind": "contactor", "i_a": 65, "v_v": 600, "part_number": "K-65", "unit_price": 90.0,
         "currency": usd},
        {"kind": "contactor", "i_a": 95, "v_v": 600, "part_number": "K-95", "unit_price": 150.0,
         "currency": usd},
        {"kind": "contactor", "i_a": 115, "v_v": 600, "part_number": "K-115", "unit_price": 140.0,
         "currency": usd},
        {"kind": "disconnect", "i_a": 100, "v_v": 600, "part_number": "SW-100", "unit_price": 300.0,
         "currency": usd},
        {"kind": "disconnect", "i_a": 200, "v_v": 600, "part_number": "SW-200", "unit_price": 500.0,
         "currency": usd},
        {"kind": "pf_controller", "steps": 6, "part_number": "PFC-6", "unit_price": 250.0,
         "currency": usd},
        {"kind": "conductor", "size": "3/0 AWG", "material": "cu", "temp_c": 75,
         "part_number": "W-3/0-CU", "unit_price": 9.5, "currency": usd},
        {"kind": "enclosure", "p_w": 200, "part_number": "ENC-200", "unit_price": 800.0,
         "currency": usd},
    ]


def _line(bom, item):
    found = [ln for ln in bom.lines if ln.item == item]
    assert found, item
    return found


def test_hand_checked_bom():
    pr = protect_bank(STEPS, 480)
    s = Sheet()
    bom = build_bom(STEPS, pr, 480, catalog(), feeder_length_m=15.0, sheet=s)
    cap = _line(bom, "capacitor unit U25")[0]
    assert (cap.quantity, cap.part_number, cap.extended_price) == (4.0, "CAP-25-480", 1200.0)
    sf = _line(bom, "step fuse")
    assert len(sf) == 1  # both steps need the same fuse: one line of 6
    assert (sf[0].quantity, sf[0].rating["i_a"], sf[0].part_number) == (6.0, 100.0, "FU-100")
    assert "460.8(B)" in sf[0].basis
    ff = _line(bom, "feeder fuse")[0]
    assert (ff.quantity, ff.rating["i_a"], ff.part_number, ff.extended_price) == (3.0, 200.0, "FU-200", 120.0)
    k = _line(bom, "step switching device (capacitor duty)")[0]
    assert k.rating["i_a"] == pytest.approx(81.19, abs=0.01)
    assert (k.quantity, k.part_number) == (2.0, "K-95")  # first entry that meets 81.19 A
    d = _line(bom, "bank disconnect")[0]
    assert (d.rating["i_a"], d.part_number) == (200.0, "SW-200")
    c = _line(bom, "feeder conductors")[0]
    assert (c.rating["size"], c.quantity, c.unit, c.extended_price) == ("3/0 AWG", 45.0, "m", 427.5)
    e = _line(bom, "enclosure with ventilation")[0]
    assert e.rating["p_w"] == pytest.approx(50.0)
    assert bom.losses_w == pytest.approx(50.0)
    assert bom.airflow_m3_s == pytest.approx(50 / (1.2 * 1005 * 10))
    assert bom.total == pytest.approx(3669.50)
    assert bom.total == pytest.approx(sum(ln.extended_price for ln in bom.lines))
    assert (bom.currency, bom.unpriced) == ("USD", 0)
    assert any(getattr(x, "symbol", "") == "P_loss" for x in s.steps)


def test_catalog_round_trip_through_json():
    pr = protect_bank(STEPS, 480)
    bom = build_bom(STEPS, pr, 480, catalog(), feeder_length_m=15.0)
    text = json.dumps(bom.as_dict())
    back = json.loads(text)
    assert back == bom.as_dict()
    for ln in back["lines"]:
        assert set(ln) >= {"item", "quantity", "rating", "unit_price", "extended_price"}
        assert ln["extended_price"] == pytest.approx(ln["quantity"] * ln["unit_price"])
    assert back["total"] == pytest.approx(sum(ln["extended_price"] for ln in back["lines"]))
    # Re-pricing the same needs from the JSON-loaded catalog gives the same total.
    needs, summ = bank_needs(STEPS, pr, 480, feeder_length_m=15.0)
    again = price_needs(needs, json.loads(json.dumps(catalog())))
    assert again.total == pytest.approx(bom.total)


def test_unmatched_and_unpriced_lines():
    pr = protect_bank(STEPS, 480)
    # No catalog: every line unpriced, total None.
    b0 = build_bom(STEPS, pr, 480)
    assert b0.total is None and b0.unpriced == len(b0.lines)
    # Without a feeder length the conductor is listed per run and not priced.
    b1 = build_bom(STEPS, pr, 480, catalog())
    c = _line(b1, "feeder conductors")[0]
    assert c.unit == "run" and c.extended_price is None and c.part_number == "W-3/0-CU"
    assert b1.total == pytest.approx(3669.50 - 427.50)
    # A fuse one size up must not be substituted: the 200 A fuse is matched exactly.
    cat = [e for e in catalog() if e["part_number"] != "FU-200"]
    cat.append({"kind": "fuse", "i_a": 225, "v_v": 600, "part_number": "FU-225",
                "unit_price": 45.0, "currency": "USD"})
    b2 = build_bom(STEPS, pr, 480, cat, feeder_length_m=15.0)
    ff = _line(b2, "feeder fuse")[0]
    assert ff.part_number is None and "no catalog entry" in ff.note


def test_detuned_fixed_bank_with_external_discharge_resistors():
    # Fixed bank (no contactors, no controller), one 7 % detuned step, resistors not built in.
    st = [BankStep("S1", U, 2, detuning_pct=7)]
    pr = protect_bank(st, 480)
    d = discharge_check(U, "nec")
    cat = [{"kind": "discharge_resistor", "r_ohm": 300e3, "p_w": 2, "part_number": "R-300k",
            "unit_price": 1.0},  # too large a resistance
           {"kind": "discharge_resistor", "r_ohm": 10e3, "p_w": 2, "part_number": "R-10k",
            "unit_price": 1.0},  # 480²/10e3 = 23 W > 2 W: would burn
           {"kind": "discharge_resistor", "r_ohm": 220e3, "p_w": 2, "part_number": "R-220k",
            "unit_price": 1.5}]
    bom = build_bom(st, pr, 480, cat, automatic=False, discharge=[d], discharge_built_in=False)
    kinds = [ln.kind for ln in bom.lines]
    assert "contactor" not in kinds and "pf_controller" not in kinds
    r = _line(bom, "discharge resistor")[0]
    assert r.quantity == 6.0  # 2 delta units × 3 elements
    assert r.part_number == "R-220k"
    assert r.rating["r_ohm"] == pytest.approx(d.max_resistance_ohm)
    x = _line(bom, "detuning reactor")[0]
    assert x.rating["p_pct"] == 7.0
    # Losses: detuned step at 7 W/kvar (from memory, upper end of 4–7) on the larger of
    # nameplate 50 kvar and delivered 50/0.93 = 53.76 kvar -> 376.3 W (hand calculation).
    assert bom.losses_w == pytest.approx(7e-3 * 50e3 / 0.93)
    with pytest.raises(CalcError):
        build_bom(st, pr, 480, discharge=[], discharge_built_in=False)


def test_catalog_errors():
    pr = protect_bank(STEPS, 480)
    bad = catalog()
    bad[0] = dict(bad[0], unit_price=-1.0)
    with pytest.raises(CalcError, match="negative"):
        build_bom(STEPS, pr, 480, bad)
    mixed = catalog()
    mixed[-1] = dict(mixed[-1], currency="EUR")
    with pytest.raises(CalcError, match="currency"):
        build_bom(STEPS, pr, 480, mixed)
    with pytest.raises(CalcError):
        build_bom(STEPS, pr, 480, [{"kind": "fuse", "i_a": 100}])
    needs, _ = bank_needs(STEPS, pr, 480)
    fuse = next(n for n in needs if n.kind == "fuse")
    assert match_entry(fuse, [{"kind": "fuse", "i_a": 100, "part_number": "no-voltage"}]) is None
    assert math.isfinite(fuse.quantity)
