"""Power quality wired into a project: source, voltage rise, resonance, JSON keys, detuned kvar.

References are named beside each check: hand calculations from the published formulas
(IEEE Std 1036 guide formulas, from memory / secondary source) and the delivered-kvar
relation of a detuned bank Q_r*(V/V_r)^2/(1 - p) (hand calculation).
"""

from __future__ import annotations

import json
import math
import shutil
from pathlib import Path

import pytest

from reportgen.cli import main

DEMO = Path(__file__).resolve().parent.parent / "projects_demo"
PLAIN = DEMO / "plastics-drives-480v"
DETUNED = DEMO / "plastics-drives-480v-detuned"


def calc_json(folder: Path, capsys) -> dict:
    code = main(["calc", str(folder), "--json"])
    out = capsys.readouterr()
    assert code == 0, out.err
    return json.loads(out.out)


@pytest.fixture(scope="module")
def plain():
    import contextlib
    import io

    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        assert main(["calc", str(PLAIN), "--json"]) == 0
    return json.loads(buf.getvalue())


@pytest.fixture(scope="module")
def detuned():
    import contextlib
    import io

    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        assert main(["calc", str(DETUNED), "--json"]) == 0
    return json.loads(buf.getvalue())


def test_json_keys_of_the_issue(plain):
    q = plain["power_quality"]
    for key in ("s_sc_va", "v_before_pu", "v_after_pu", "voltage_rise_estimate_pct", "resonance_order",
                "thd_v_before_pct", "thd_v_after_pct"):
        assert isinstance(q[key], float), key
    assert set(q["capacitor_duty"]) == {"v_rms_pu", "v_peak_pu", "i_rms_pu", "q_pu"}
    assert q["assessed"] is True
    wave = [ld for ld in plain["loads"] if ld["kind"] == "waveform"]
    assert len(wave) == 1
    for key in ("thd_i_pct", "true_pf", "displacement_pf"):
        assert isinstance(wave[0][key], float)


def test_source_and_short_circuit_power_hand_calculation(plain):
    # Hand calculation from the demo's inputs: utility 5 kA at 13.8 kV (S = sqrt(3)*V*I), X/R 8;
    # transformer 1500 kVA, 6.5 %, X/R 6; both referred to 480 V and added as R + jX.
    v = 480.0
    s_u = math.sqrt(3) * 13_800 * 5_000
    z_u = v**2 / s_u
    z_t = 0.065 * v**2 / 1.5e6
    r = z_u / math.sqrt(65) + z_t / math.sqrt(37)
    x = z_u * 8 / math.sqrt(65) + z_t * 6 / math.sqrt(37)
    s_sc = v**2 / math.hypot(r, x)
    q = plain["power_quality"]
    assert q["s_sc_va"] == pytest.approx(s_sc, rel=1e-9)
    assert q["source"]["r_ohm"] == pytest.approx(r, rel=1e-9)
    assert q["source"]["x_ohm"] == pytest.approx(x, rel=1e-9)
    assert q["i_sc_a"] == pytest.approx(s_sc / (math.sqrt(3) * v), rel=1e-9)


def test_voltage_rise_and_resonance_of_the_plain_bank(plain):
    q = plain["power_quality"]
    q_bank = plain["correction"]["q_installed_var"]
    # IEEE Std 1036 guide formulas (from memory; secondary source in REFERENCES.md section 2):
    # dV% ~ Q/S_sc*100 and h_r ~ sqrt(S_sc/Q).
    assert q["voltage_rise_estimate_pct"] == pytest.approx(q_bank / q["s_sc_va"] * 100, rel=1e-12)
    assert q["resonance_order_estimate"] == pytest.approx(math.sqrt(q["s_sc_va"] / q_bank), rel=1e-12)
    # The exact (phasor) rise agrees with the estimate to a fraction of a percent (hand calculation:
    # the estimate neglects R and the load's own drop, a few % of the rise here).
    assert q["bus"]["rise_pct"] == pytest.approx(q["voltage_rise_estimate_pct"], rel=0.05)
    assert q["v_after_pu"] > q["v_before_pu"]
    # The demo is built to resonate near the 5th: flagged, and a detuning proposed.
    assert 4.5 <= q["resonance_order"] <= 5.5
    assert q["resonance_flagged"] and q["resonance_near_order"] == 5
    assert q["proposal"]["detuning_p"] == pytest.approx(0.07)
    assert q["proposed"]["resonance_order"] < 3.78  # below the 7 % tuning order 1/sqrt(0.07)
    checks = {c["id"]: c for c in plain["checks"]}
    assert "power_quality" not in checks  # the placeholder is replaced by real checks
    assert checks["pq_resonance"]["status"] == "fail"
    assert checks["pq_voltage_distortion"]["status"] == "fail"  # THD above IEEE 519 8 % at <= 1 kV
    assert q["thd_v_after_pct"] > 8.0 > q["thd_v_before_pct"]


def test_detuned_bank_delivered_kvar_feeds_the_core(detuned):
    c = detuned["correction"]
    q = detuned["power_quality"]
    # Hand calculation: with p = 7 % and no rated voltage given the capacitors are rated at the next
    # common LV rating above 480/(1 - 0.07) = 516.1 V, i.e. 525 V (common practice).
    assert c["v_rated_v"] == 525.0
    k = (480 / 525) ** 2 / (1 - 0.07)
    assert c["delivered_fraction"] == pytest.approx(k, rel=1e-12)
    # Q_delivered = Q_r*(V/V_r)^2/(1 - p) summed over the units chosen (hand calculation)
    q_r = sum(u["q_rated_var"] * u["count"] for u in c["units"])
    assert c["q_rated_installed_var"] == pytest.approx(q_r)
    assert c["q_installed_var"] == pytest.approx(q_r * k, rel=1e-12)
    # PF after from the delivered kvar: P / sqrt(P^2 + (Q - Q_c)^2)
    p, q1 = detuned["total"]["p_w"], detuned["total"]["q_var"]
    assert c["pf_after"] == pytest.approx(p / math.hypot(p, q1 - c["q_installed_var"]), rel=1e-12)
    assert c["pf_after"] >= 0.95
    # the power-quality assessment uses the same bank: nameplate kvar and rated voltage agree
    assert q["detuned"]["q_cap_rated_var"] == pytest.approx(q_r, rel=1e-9)
    assert q["detuned"]["q_delivered_var"] == pytest.approx(c["q_installed_var"], rel=1e-12)
    assert q["detuned"]["v_cap_v"] == pytest.approx(480 / 0.93, rel=1e-12)
    assert q["detuned"]["tuning_order"] == pytest.approx(1 / math.sqrt(0.07), rel=1e-12)
    # the bill of materials lists nameplate units at 525 V
    caps = [b for b in detuned["bom"] if b.get("kind", "capacitor") == "capacitor"]
    assert caps and all(b.get("v_rated_v", b.get("rating", {}).get("v_v")) == 525.0 for b in caps)
    checks = {ch["id"]: ch for ch in detuned["checks"]}
    assert checks["pq_resonance"]["status"] == "pass"
    assert checks["pq_detuning"]["status"] == "pass"
    assert checks["pq_voltage_distortion"]["status"] == "pass"
    assert checks["pq_capacitor_duty"]["status"] == "pass"
    assert "516.1 V" in checks["unit_voltage"]["message"]
    assert q["proposal"] is None


def test_without_a_source_the_placeholder_stays(tmp_path, capsys):
    folder = tmp_path / "p"
    shutil.copytree(PLAIN, folder)
    y = folder / "project.yaml"
    text = y.read_text()
    start = text.index("  source:\n")
    end = text.index("loads:\n")
    y.write_text(text[:start] + text[end:])
    data = calc_json(folder, capsys)
    q = data["power_quality"]
    assert q["assessed"] is False and q["s_sc_va"] is None and q["capacitor_duty"] is None
    ids = {c["id"]: c for c in data["checks"]}
    assert ids["power_quality"]["status"] == "warn" and "not assessed" in ids["power_quality"]["message"]
    assert not any(i.startswith("pq_") and i != "pq_motor_terminals" for i in ids)
    # the waveform load still feeds P, Q and its THD
    wave = [ld for ld in data["loads"] if ld["kind"] == "waveform"][0]
    assert wave["thd_i_pct"] > 20


def test_format_1_files_without_new_keys_are_unchanged(capsys):
    # backward compatible: an older demo has no power-quality keys and still reports "not assessed"
    data = calc_json(DEMO / "cold-store-480v", capsys)
    assert data["power_quality"]["assessed"] is False
    assert [c["status"] for c in data["checks"] if c["id"] == "power_quality"] == ["warn"]
