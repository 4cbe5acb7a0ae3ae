"""The profile feature end to end through the compute stage: interval load, automatic bank,
design mode, bills and economics, on the invented Eastfield demo data."""

from __future__ import annotations

import json
import math
import shutil
from pathlib import Path

import numpy as np
import numpy_financial as npf
import pytest

import profile_demo_data
from reportgen import design
from reportgen.calc import profile as pr
from reportgen.cli import main
from reportgen.project import load_project

DEMO = Path(__file__).resolve().parent.parent / "projects_demo"
EASTFIELD = DEMO / "eastfield-dc-480v"
DESIGNED = DEMO / "eastfield-dc-design-480v"


def calc_json(folder: Path, capsys) -> dict:
    capsys.readouterr()
    assert main(["calc", str(folder), "--json"]) == 0
    return json.loads(capsys.readouterr().out)


@pytest.fixture(scope="module")
def eastfield():
    return design.compute(load_project(EASTFIELD))


def test_committed_demo_data_is_what_the_generator_writes(tmp_path):
    profile_demo_data.write(tmp_path)
    for name in ("interval.csv", "bills.csv"):
        assert (tmp_path / name).read_bytes() == (EASTFIELD / name).read_bytes(), name
    assert (EASTFIELD / "interval.csv").stat().st_size < 2_000_000


def test_json_keys_of_the_issue(capsys):
    data = calc_json(EASTFIELD, capsys)
    assert set(data["profile"]) >= {"intervals", "met_fraction", "leading_hours", "switching_per_day", "min_kvar",
                                    "max_kvar"}
    assert set(data["bank"]) >= {"kind", "step_var", "step_count"}
    assert set(data["economics"]) >= {"annual_saving", "payback_years", "npv", "irr"}
    assert data["bank"] == {**data["bank"], "kind": "equal", "step_var": 25000.0, "step_count": 8}
    # SI: var, not kvar
    assert 1e4 < data["profile"]["min_kvar"] < data["profile"]["max_kvar"] < 1e6


def test_design_point_and_installed_kvar(eastfield):
    """The interval load contributes the interval needing the most kvar; the installed kvar is the
    bank's total and the after figures are for the steps in service there."""
    d = eastfield
    part = d.parts["profile"]
    data = part.data
    kt = math.tan(math.acos(0.95))
    need = data.q_var - np.abs(data.p_w) * kt
    k = int(np.argmax(need))
    assert d.total_s_va == complex(data.p_w[k], data.q_var[k])
    assert d.sizing.q_installed_var == 8 * 25e3
    plan = d.parts["bank_plan"]
    assert d.parts["bank"] == pr.Bank.equal(25e3, 8)
    # hand calculation of the controller rule at the design point: fewest steps with
    # Q - n * 25 kvar <= P tan(acos 0.95), and n * 25 kvar <= Q
    p, q = data.p_w[k], data.q_var[k]
    n = next((n for n in range(9) if q - n * 25e3 <= p * kt), 8)
    while n > 0 and n * 25e3 > q:
        n -= 1
    assert plan.steps_on == n
    assert d.after.q_after_var == pytest.approx(q - n * 25e3)
    assert d.json["bank"]["steps_in_service_at_design_point"] == n


def test_simulation_matches_the_plain_loop(eastfield):
    """The stage's simulation is the core's vectorised one; the per-interval loop agrees."""
    part = eastfield.parts["profile"]
    data = part.data
    loop = pr.simulate_loop(data.t, data.p_w, data.q_var, pr.Bank.equal(25e3, 8), 0.95, never_leading=True)
    assert np.array_equal(loop.steps, part.sim.steps)
    assert loop.met_fraction == eastfield.json["profile"]["met_fraction"]
    assert loop.switching_per_day == pytest.approx(eastfield.json["profile"]["switching_per_day"])
    assert eastfield.json["profile"]["leading_hours"] == 0.0  # never_leading, and the load never leads


def test_gaps_and_skipped_rows_are_reported_with_lines(eastfield):
    rp = eastfield.json["profile"]
    # the generator removes 24 + 192 intervals and empties one reading (hand count)
    assert rp["intervals"] == 365 * 96 - 24 - 192 - 1
    missing = sorted(g["missing_intervals"] for g in rp["gaps"])
    assert missing == [1, 24, 192]
    lines = (EASTFIELD / "interval.csv").read_text().splitlines()
    (skip,) = rp["skipped_rows"]
    assert lines[skip["line"] - 1].startswith("2025-06-03 10:30,") and lines[skip["line"] - 1].endswith(",")
    check = next(c for c in eastfield.checks if c.id == "interval_data")
    assert check.status == "warn" and "3 gap(s)" in check.message


def test_bills_against_a_hand_calculation(eastfield):
    """One month by hand: adjusted demand 0.90 / PF at the peak (Batavia/Norris form, REFERENCES §9)."""
    bills = eastfield.json["bills"]
    jan = bills["months"][0]
    assert jan["month"] == "2025-01"
    row = (EASTFIELD / "bills.csv").read_text().splitlines()[1].split(",")
    kwh, kvarh, peak_kw, peak_kva = map(float, row[1:5])
    pf = peak_kw / peak_kva
    billed = peak_kw * 0.90 / pf  # hand calculation
    assert jan["pf_before"] == pytest.approx(pf)
    assert jan["billed_demand_before"] == pytest.approx(billed * 1e3)
    assert jan["total_before"] == pytest.approx(billed * 14.50 + kwh * 0.11 + 95.0)
    # after correction the month PF is above the reference: no adjustment
    assert jan["pf_after"] > 0.90 and jan["billed_demand_after"] == pytest.approx(peak_kw * 1e3)
    assert bills["annual_saving"] == pytest.approx(sum(m["saving"] for m in bills["months"]))


def test_economics_against_numpy_financial(eastfield):
    """NPV and IRR of the stage's cash flows against numpy-financial (reference tool)."""
    e = eastfield.json["economics"]
    flows = e["cash_flows"]
    assert len(flows) == 16 and flows[0] == -e["investment"]
    assert e["npv"] == pytest.approx(npf.npv(0.07, flows), rel=1e-9)
    assert e["irr"] == pytest.approx(npf.irr(flows), rel=1e-6)
    assert e["payback_years"] == pytest.approx(e["investment"] / e["annual_saving"])
    # installed_cost: from_bom takes the priced bill of materials of the protection stage
    assert e["installed_cost_source"] == "bom" and e["investment"] == eastfield.parts["bom"].total


def test_fixed_bank_variant_overcorrects_at_light_load(tmp_path, capsys):
    """The same site with the core's fixed bank: it leads at night; the limit is the minimum Q."""
    src = tmp_path / "fixed"
    shutil.copytree(EASTFIELD, src)
    shutil.copy(DEMO / "catalog.yaml", tmp_path / "catalog.yaml")
    y = src / "project.yaml"
    text = y.read_text()
    text = text.replace("  bank: automatic\n  steps: {count: 8, size: 25 kvar}\n"
                        "  controller: {target_power_factor: 0.95, never_leading: true}\n", "  bank: fixed\n")
    y.write_text(text)
    data = calc_json(src, capsys)
    assert data["bank"]["kind"] == "fixed"
    q_min = data["profile"]["min_kvar"]
    fixed = data["profile"]["fixed_bank_check"]
    assert fixed["allowed_var"] == q_min and fixed["bank_var"] <= q_min
    lead = next(c for c in data["checks"] if c["id"] == "profile_leading")
    assert lead["status"] == "fail" and data["profile"]["leading_hours"] > 100
