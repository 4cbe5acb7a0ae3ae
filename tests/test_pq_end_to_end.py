"""Build the two power-quality demos; the HTML and PDF show the computed figures as the filters format them."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

from reportgen.cli import main
from reports import norm, pdf_text
from reportgen.render.fmt import kvar, num, pf, qty

DEMO = Path(__file__).resolve().parent.parent / "projects_demo"
NAMES = ("plastics-drives-480v", "plastics-drives-480v-detuned")


@pytest.fixture(scope="module")
def site(tmp_path_factory):
    base = tmp_path_factory.mktemp("pq-e2e")
    src = base / "src"
    for n in NAMES:
        shutil.copytree(DEMO / n, src / n)
    out = base / "out"
    assert main(["build", str(src), "--out", str(out), "--quiet"]) == 0
    return out


def outputs(site, name):
    folder = site / name
    data = json.loads((folder / "results.json").read_text())
    html = norm((folder / "index.html").read_text())
    text = norm(pdf_text(folder / f"{name}.pdf"))
    return folder, data, html, text


def assert_shown(figures, html, text):
    for figure in figures:
        assert norm(figure) in html, figure
        assert norm(figure) in text, figure


@pytest.mark.parametrize("name", NAMES)
def test_pq_figures_in_html_and_pdf(site, name):
    folder, data, html, text = outputs(site, name)
    q = data["power_quality"]
    du = q["capacitor_duty"]
    shown = [
        "Power quality at the correction point",
        qty(q["s_sc_va"], "VA"),
        qty(q["i_sc_a"], "A"),
        f"{num(q['v_before_pu'], 4)} pu",
        f"{num(q['v_after_pu'], 4)} pu",
        qty(q["voltage_rise_estimate_pct"], "%", 3),
        qty(q["bus"]["rise_pct"], "%", 3),
        num(q["resonance_order"], 4),
        num(q["resonance_order_estimate"], 4),
        qty(q["thd_v_before_pct"], "%", 3),
        qty(q["thd_v_after_pct"], "%", 3),
        f"{num(du['v_rms_pu'], 3)} pu",
        f"{num(du['v_peak_pu'], 3)} pu",
        f"{num(du['i_rms_pu'], 3)} pu",
        f"{num(du['q_pu'], 3)} pu",
        "IEEE Std 18-2012",
        "IEEE Std 519-2014 Table 1",
    ]
    for row in q["harmonic_table"]:
        shown += [qty(row["i_h_a"], "A"), qty(row["v_h_after_pct"], "%", 3)]
    wave = [ld for ld in data["loads"] if ld["kind"] == "waveform"]
    for ld in wave:
        shown += [qty(ld["thd_i_pct"], "%", 3), pf(ld["true_pf"]), pf(ld["displacement_pf"])]
    assert_shown(shown, html, text)
    for key in ("pq_scan", "pq_spectrum", "pq_waveform"):
        svg = (folder / "figures" / f"{key}.svg").read_text()
        assert svg.startswith("<svg") and f"figures/{key}.svg" in html
    scan = (folder / "figures" / "pq_scan.svg").read_text()
    assert "harmonic order" in scan and "mΩ" in scan  # axes labelled with quantity and unit


def test_plain_bank_shows_resonance_and_the_proposal(site):
    _, data, html, text = outputs(site, "plastics-drives-480v")
    q = data["power_quality"]
    pr = q["proposed"]
    dt = pr["detuned"]
    assert_shown([
        "Detuning proposal",
        f"It lies within 10 % of harmonic order {q['resonance_near_order']}",
        num(pr["resonance_order"], 3),
        qty(pr["thd_v_after_pct"], "%", 3),
        qty(dt["l_h"], "H"),
        qty(dt["v_cap_v"], "V"),
        qty(dt["v_cap_rated_v"], "V"),
        kvar(dt["q_cap_rated_var"]),
        "Resonance. The bank and the supply resonate near harmonic order 5",
        "Capacitors at motor terminals",
        qty(q["motor_terminals"][0]["i_after_a"], "A"),
        kvar(q["motor_terminals"][0]["q_max_var"]),
        "overload relay",
    ], html, text)
    checks = {c["id"]: c["status"] for c in data["checks"]}
    assert checks["pq_resonance"] == "fail" and checks["pq_capacitor_duty"] == "fail"


def test_detuned_bank_shows_reactor_and_consistent_kvar(site):
    _, data, html, text = outputs(site, "plastics-drives-480v-detuned")
    q = data["power_quality"]
    dt = q["detuned"]
    c = data["correction"]
    assert_shown([
        "Detuned bank",
        num(dt["tuning_order"], 3),
        qty(dt["v_cap_v"], "V"),
        qty(dt["l_h"], "H"),
        qty(dt["i_rms_a"], "A"),
        kvar(dt["q_delivered_var"]),
        kvar(c["q_installed_var"]),
        pf(c["pf_after"], c["leading_after"]),
    ], html, text)
    assert "Detuning proposal" not in html
    assert dt["q_delivered_var"] == pytest.approx(c["q_installed_var"])
