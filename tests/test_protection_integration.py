"""Protection stage end to end: hand-checked bills of materials for the two demo projects,
catalog round trips (YAML and CSV) with prices, bom.csv, the JSON keys and the report text.

Hand calculations (each value below is checked in a test; sources beside each):

printworks-480v (NEC rule set, NFPA 70-2023). The sizing (core) chooses 2 × 50 + 1 × 25 kvar
480 V delta units: 125 kvar at 480 V, a fixed bank in two groups.
  feeder  I_r = 125000/(√3·480) = 150.35 A                             (hand calculation)
          fuse 1.65 × 150.35 = 248.08 A -> 250 A                        (NEC 240.6(A), published
                                                                         secondary; 1.65 common practice)
          disconnect ≥ 1.35 × 150.35 = 202.97 A (NEC 460.8(C)); fused, so ≥ the 250 A fuse
                     -> 400 A switch (NEMA KS 1 sizes 200, 400: common practice)
          conductor ≥ 202.97 A (NEC 460.8(A)); 40 °C ambient, 75 °C column: factor 0.88
                     (NEC 310.15(B)(1), published secondary). 250 kcmil: 255 × 0.88 = 224.4 A is
                     enough for 203 A but a 250 A fuse does not protect it (NEC 240.4(B): the next
                     standard rating above 224.4 A is 225 A); 300 kcmil: 285 × 0.88 = 250.8 A.
  groups  G1 2 × 50 kvar: 120.28 A; fuse 1.65 × 120.28 = 198.46 -> 200 A
          G2 1 × 25 kvar: 30.07 A; fuse 49.61 -> 50 A
  losses  125 kvar × 0.5 W/kvar = 62.5 W (common practice); airflow 62.5/(1.2·1005·10)
          = 5.182e-3 m³/s
  inrush  isolated, S_sc 30 MVA: L_s = 480²/(2π·60·30e6) = 20.37 µH; C_Y = 125000/(2π·60·480²)
          = 1.4391 mF; I_pk = (√2·480/√3)/√(L_s/C_Y) = 391.9/0.11898 = 3294 A, plus the steady
          peak √2·150.35 = 212.6 A -> 3507 A; f0 = 60·√(30e6/125e3) = 929.5 Hz
          (IEEE Std 1036 / C37.012 formulas, from memory)
  discharge 50 kvar delta element C = 50000/(3·2π·60·480²) = 191.88 µF; R_max =
          60/(C·ln(√2·480/50)) = 60/(191.88e-6 × 2.6083) = 119.9 kΩ (NEC 460.6(A), published
          secondary)
  catalog (projects_demo/catalog.yaml, invented), first entry of the kind meeting the need:
          RG-CAP-50-480     2 × 640.00 = 1280.00
          RG-CAP-25-480     1 × 395.00 =  395.00
          RG-FU-200-600     3 ×  48.00 =  144.00
          RG-FH-200-600     3 ×  44.00 =  132.00   (60 and 100 A holders too small)
          RG-FU-50-600      3 ×  14.20 =   42.60
          RG-FH-60-600      3 ×  18.00 =   54.00
          RG-FU-250-600     3 ×  66.00 =  198.00
          RG-SW-400-600     1 × 1480.00 = 1480.00  (200 A switch too small)
          RG-W-300-CU75    54 ×  17.40 =  939.60   (3 conductors × 18 m)
          RG-ENC-150        1 × 980.00 =  980.00   (62.5 W ≤ 150 W)
          total                          5645.20 USD

bottling-hall-400v (IEC rule set). 4 × 50 kvar 440 V delta units on a 400 V 50 Hz supply.
  I_r = 200000/(√3·440) = 262.43 A; cables and switchgear 1.5 × 262.43 = 393.65 A
          (IEC 60831-1 with the capacitance tolerance, common practice)
  fuse 1.6 × 262.43 = 419.9 A -> 500 A gG (IEC 60269-1 ratings, from memory)
  switch ≥ 393.65 A, fused -> ≥ 500 A -> 500 A
  cable: 433.1 of IEC 60364-4-43: Iz ≥ 500 A and 1.45·Iz ≥ 1.6·500 -> Iz ≥ 551.7 A; XLPE
          method C at 35 °C (factor 0.96, from memory): 240 mm² 514 × 0.96 = 493.4 A (short);
          300 mm² 593 × 0.96 = 569.3 A
  discharge: C_e = 50000/(3·2π·50·440²) = 274.03 µF; R_max = 180/(C_e·ln(√2·440/75))
          = 310.45 kΩ; the fitted 180 kΩ reaches 75 V in 180e3·C_e·2.1159 = 104.4 s ≤ 180 s
          (IEC 60831-1:2014, published secondary); 12 resistors (3 per unit), each
          440²/180e3 = 1.076 W
  catalog (catalog.csv, invented, EUR): 2160.00 + 156.00 + 1340.00 + 34.80 + 1087.20
          + 1190.00 = 5968.00
"""

import csv
import io
import json
import math
import shutil
from pathlib import Path

import pytest

from reportgen import design
from reportgen.cli import main
from reportgen.project import load_project
from reportgen.render.fmt import qty

from reports import norm, pdf_text

DEMO = Path(__file__).resolve().parent.parent / "projects_demo"


def compute(name):
    return design.compute(load_project(DEMO / name))


def lines_by_part(d):
    return {b["part_number"]: b for b in d.bom}


def test_printworks_feeder_and_groups_hand_calculation():
    d = compute("printworks-480v")
    pr = d.json["protection"]
    assert pr["rated_current_a"] == pytest.approx(125e3 / (math.sqrt(3) * 480), rel=1e-9)  # 150.35 A
    assert pr["fuse_a"] == 250.0  # NEC 240.6(A): next rating ≥ 248.08 A
    assert pr["disconnect_a"] == 400.0  # fused switch ≥ 250 A -> 400 A (common practice sizes)
    assert pr["conductor"]["size"] == "300 kcmil" and pr["conductor"]["sets"] == 1
    assert pr["conductor"]["ampacity_a"] == pytest.approx(285 * 0.88)  # NEC Table 310.16 × 310.15(B)(1)
    assert pr["feeder"]["conductor_min_a"] == pytest.approx(1.35 * 150.3516, rel=1e-5)  # NEC 460.8(A)
    fuses = {s["name"]: s["fuse_a"] for s in pr["steps"]}
    assert fuses == {"G1": 200.0, "G2": 50.0}  # hand calculation above
    # inrush, isolated bank (hand calculation with IEEE 1036 formulas, from memory)
    assert pr["inrush"]["peak_a"] == pytest.approx(3507, rel=2e-3)
    assert pr["inrush"]["frequency_hz"] == pytest.approx(60 * math.sqrt(30e6 / 125e3), rel=1e-9)
    # discharge, NEC 460.6(A): the 50 kvar unit governs
    c_e = 50e3 / (3 * 2 * math.pi * 60 * 480**2)
    assert pr["discharge"]["max_resistance_ohm"] == pytest.approx(60 / (c_e * math.log(math.sqrt(2) * 480 / 50)))
    assert pr["discharge"]["seconds_to_limit"] == 60.0


def test_printworks_bom_priced_from_shared_catalog():
    d = compute("printworks-480v")
    by = lines_by_part(d)
    expected = {  # part: (quantity, unit price) from the hand calculation above
        "RG-CAP-50-480": (2, 640.00), "RG-CAP-25-480": (1, 395.00), "RG-FU-200-600": (3, 48.00),
        "RG-FH-200-600": (3, 44.00), "RG-FU-50-600": (3, 14.20), "RG-FH-60-600": (3, 18.00),
        "RG-FU-250-600": (3, 66.00), "RG-SW-400-600": (1, 1480.00), "RG-W-300-CU75": (54, 17.40),
        "RG-ENC-150": (1, 980.00),
    }
    assert set(by) == set(expected)
    for part, (q, price) in expected.items():
        assert by[part]["quantity"] == q and by[part]["unit_price"] == price, part
        assert by[part]["extended_price"] == pytest.approx(q * price)
    s = d.json["bom_summary"]
    assert s["total"] == pytest.approx(5645.20) and s["currency"] == "USD" and s["unpriced"] == 0
    assert s["losses_w"] == pytest.approx(62.5) and s["airflow_m3_s"] == pytest.approx(62.5 / (1.2 * 1005 * 10))
    assert d.parts["bom"].total == pytest.approx(5645.20)  # for the economics stage
    # every line carries its rule or calculation
    assert all(b["basis"] for b in d.bom)
    assert "NEC 460.8(C)" in by["RG-SW-400-600"]["basis"]
    assert "NEC 460.8(A)" in by["RG-W-300-CU75"]["basis"]


def test_bottling_iec_hand_calculation_and_csv_catalog():
    d = compute("bottling-hall-400v")
    pr = d.json["protection"]
    i_r = 200e3 / (math.sqrt(3) * 440)
    assert pr["rated_current_a"] == pytest.approx(i_r)
    assert pr["feeder"]["conductor_min_a"] == pytest.approx(1.5 * i_r)  # IEC 60831-1 + tolerance, common practice
    assert pr["fuse_a"] == 500.0 and pr["disconnect_a"] == 500.0  # IEC 60269-1 ratings (from memory)
    assert pr["conductor"]["size"] == "300 mm2"
    assert pr["conductor"]["ampacity_a"] == pytest.approx(593 * 0.96)  # IEC 60364-5-52, from memory
    c_e = 50e3 / (3 * 2 * math.pi * 50 * 440**2)
    lnr = math.log(math.sqrt(2) * 440 / 75)
    assert pr["discharge"]["max_resistance_ohm"] == pytest.approx(180 / (c_e * lnr))  # IEC 60831-1
    assert pr["discharge"]["seconds_to_limit"] == pytest.approx(180e3 * c_e * lnr)  # 104.4 s
    by = lines_by_part(d)
    assert by["RG-DR-180K-3W"]["quantity"] == 12
    assert by["RG-DR-180K-3W"]["rating"]["p_w"] == pytest.approx(440**2 / 180e3)
    assert by["RG-FSD-630-690"]["quantity"] == 1
    s = d.json["bom_summary"]
    assert s["total"] == pytest.approx(5968.00) and s["currency"] == "EUR" and s["unpriced"] == 0
    ids = {c.id: c.status for c in d.checks}
    assert ids["discharge"] == "pass" and ids["inrush"] == "pass"


def test_bom_csv_round_trip():
    d = compute("printworks-480v")
    text = d.files["bom.csv"]
    rows = list(csv.DictReader(io.StringIO(text)))
    assert rows[-1]["item"] == "total" and rows[-1]["extended_price"] == "5645.20"
    body = rows[:-1]
    assert len(body) == len(d.bom)
    assert sum(float(r["extended_price"]) for r in body) == pytest.approx(5645.20)
    assert {r["part_number"] for r in body} == set(lines_by_part(d))
    fu = next(r for r in body if r["part_number"] == "RG-FU-250-600")
    assert fu["quantity"] == "3" and fu["unit_price"] == "66.00" and fu["rating"] == "250 A, ≥ 480 V"
    assert compute("printworks-480v").files["bom.csv"] == text  # deterministic


def test_no_catalog_lists_everything_unpriced():
    d = compute("cold-store-480v")
    assert d.json["bom_summary"]["total"] is None
    kinds = {b["kind"] for b in d.bom}
    assert {"capacitor", "fuse", "disconnect", "conductor", "enclosure"} <= kinds
    assert all(b["unit_price"] is None and b["extended_price"] is None for b in d.bom)


@pytest.fixture(scope="module")
def site(tmp_path_factory):
    out = tmp_path_factory.mktemp("site")
    src = tmp_path_factory.mktemp("src")
    shutil.copy(DEMO / "catalog.yaml", src / "catalog.yaml")
    for name in ("printworks-480v", "bottling-hall-400v"):
        shutil.copytree(DEMO / name, src / name)
    assert main(["build", str(src), "--out", str(out), "--quiet"]) == 0
    return out


@pytest.mark.parametrize("name", ["printworks-480v", "bottling-hall-400v"])
def test_report_html_pdf_and_json(site, name):
    folder = site / name
    data = json.loads((folder / "results.json").read_text())
    pr = data["protection"]
    for key in ("rated_current_a", "fuse_a", "disconnect_a"):
        assert isinstance(pr[key], float)
    assert set(pr["conductor"]) >= {"size", "ampacity_a"}
    assert set(pr["discharge"]) == {"max_resistance_ohm", "seconds_to_limit"}
    assert set(pr["inrush"]) == {"peak_a", "frequency_hz"}
    assert data["bom"] and all({"item", "quantity", "rating", "unit_price", "extended_price"} <= set(b)
                               for b in data["bom"])
    assert not any("q_rated_var" in b for b in data["bom"])  # the core's capacitor-only rows are replaced
    html = norm((folder / "index.html").read_text())
    text = norm(pdf_text(folder / f"{name}.pdf"))
    expected = [qty(pr["rated_current_a"], "A"), qty(pr["fuse_a"], "A"), qty(pr["disconnect_a"], "A"),
                pr["conductor"]["size"], qty(pr["inrush"]["peak_a"], "A"),
                qty(pr["discharge"]["max_resistance_ohm"], "ohm"), "{:,.2f}".format(data["bom_summary"]["total"]),
                "authority having jurisdiction"]
    for figure in expected:
        assert norm(figure) in html, figure
        assert norm(figure) in text, figure
    assert (folder / "bom.csv").read_text().startswith("line,item,quantity")
    svg = (folder / "figures" / "one_line.svg").read_text()
    assert svg.startswith("<svg") and "disconnect" in svg and norm(pr["conductor"]["size"]) in norm(svg)


def test_stepped_bank_contactors_back_to_back_inrush_and_bom():
    """printworks-480v-stepped: 5 steps of 25 kvar, 480 V 60 Hz, NEC, 6 µH between steps.

    Hand calculation (IEEE Std 1036 / C37.012 back-to-back formulas, from memory):
      step C_Y = 25000/(2π·60·480²) = 287.8 µF; the last step closes onto 4 steps:
      C_eq = C·4C/(5C) = 0.8·C = 230.3 µF; V_pk = √2·480/√3 = 391.9 V;
      I_pk = V_pk·√(C_eq/L) = 391.9·√(230.3e-6/6e-6) = 2428 A, plus √2·30.07 = 42.5 A -> 2470 A;
      f = 1/(2π·√(L·C_eq)) = 4282 Hz; within the 4 kA contactor.
      step: I_r 30.07 A; fuse 1.65·30.07 = 49.6 -> 50 A; contactor ≥ 1.35·30.07 = 40.6 A
      (NEC 460.8(C) minimum for the step's switching device) -> RG-KC-60-600;
      step conductor ≥ 40.6 A at 40 °C (0.88): 8 AWG 50·0.88 = 44 A is not protected by the 50 A fuse
      (next standard rating above 44 A is 45 A, NEC 240.4(B)); 6 AWG 65·0.88 = 57.2 A;
      5 steps × 3 conductors × 2 m = 30 m of RG-W-6-CU75 at 2.10 = 63.00.
      total 1975.00 + 213.00 + 270.00 + 1050.00 + 198.00 + 1480.00 + 420.00 + 939.60 + 63.00 + 980.00
            = 7588.60 USD
    """
    d = compute("printworks-480v-stepped")
    pr = d.json["protection"]
    assert pr["automatic"] is True and [s["q_rated_var"] for s in pr["steps"]] == [25e3] * 5
    c = 25e3 / (2 * math.pi * 60 * 480**2)
    c_eq, v_pk, l_b = 0.8 * c, math.sqrt(2) * 480 / math.sqrt(3), 6e-6
    peak = v_pk * math.sqrt(c_eq / l_b) + v_pk * 2 * math.pi * 60 * c
    assert pr["inrush"]["peak_a"] == pytest.approx(peak, rel=1e-9)
    assert pr["inrush"]["peak_a"] == pytest.approx(2470, rel=1e-3)
    assert pr["inrush"]["frequency_hz"] == pytest.approx(1 / (2 * math.pi * math.sqrt(l_b * c_eq)), rel=1e-9)
    assert pr["switching"]["passed"] is True
    by = lines_by_part(d)
    assert by["RG-KC-60-600"]["quantity"] == 5 and by["RG-PFC-6"]["quantity"] == 1
    assert by["RG-FU-50-600"]["quantity"] == 15 and by["RG-FH-60-600"]["quantity"] == 15
    assert by["RG-W-6-CU75"]["quantity"] == 30 and by["RG-W-6-CU75"]["item"].startswith("steps S1, S2")
    assert d.json["bom_summary"]["total"] == pytest.approx(7588.60)
    assert d.parts["bom"].total == pytest.approx(7588.60)


def test_comment_only_catalog_leaves_lines_unpriced(tmp_path):
    src = tmp_path / "src"
    shutil.copytree(DEMO / "printworks-480v", src / "printworks-480v")
    (src / "catalog.yaml").write_text("# prices to follow\n")
    d = design.compute(load_project(src / "printworks-480v"))
    assert d.json["bom_summary"]["total"] is None
    assert {c.id: c.status for c in d.checks}["bom_priced"] == "warn"
