"""The two Eastfield demos build; their HTML and PDF text show the computed profile, bank and
economics figures as the report filters format them; the JSON carries the keys of the issue in SI."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

from reportgen.cli import main
from reportgen.render.fmt import kvar, num, qty

from reports import norm, pdf_text

DEMO = Path(__file__).resolve().parent.parent / "projects_demo"
NAMES = ("eastfield-dc-480v", "eastfield-dc-design-480v")


def money(x: float) -> str:
    """As the economics section's macro writes amounts: whole units, thin-space thousands."""
    return "{:,.0f}".format(x).replace(",", "\u2009").replace("-", "\u2212")


def pct(x: float) -> str:
    return f"{num(x * 100, 3)} %"


@pytest.fixture(scope="module")
def site(tmp_path_factory):
    src = tmp_path_factory.mktemp("src")
    for n in NAMES:
        shutil.copytree(DEMO / n, src / n)
    shutil.copy(DEMO / "catalog.yaml", src / "catalog.yaml")  # the shared price list
    out = tmp_path_factory.mktemp("site")
    assert main(["build", str(src), "--out", str(out), "--quiet"]) == 0
    return out


@pytest.mark.parametrize("name", NAMES)
def test_report_shows_profile_bank_and_economics(site, name):
    folder = site / name
    r = json.loads((folder / "results.json").read_text())
    html = norm((folder / "index.html").read_text())
    text = norm(pdf_text(folder / f"{name}.pdf"))
    p, b, e = r["profile"], r["bank"], r["economics"]
    expected = [
        "Load profile", "Bank design", "Economics",
        pct(p["met_fraction"]), pct(p["met_energy_fraction"]),
        num(p["switching_per_day"], 3), qty(p["leading_hours"], "h"),
        qty(p["max_kvar"], "var"), qty(p["min_kvar"], "var"),
        f"{b['steps_in_service_at_design_point']} of {b['step_count']} steps",
        kvar(b["total_var"]), kvar(b["step_var"]),
        money(r["bills"]["annual_saving"]), money(e["npv"]), money(e["investment"]),
        num(e["payback_years"], 3) + " years", pct(e["irr"]),
        r["loads"][0]["design_point_time"],
    ]
    first = r["bills"]["months"][0]
    expected += [first["month"], money(first["total_before"]), money(first["total_after"])]
    for figure in expected:
        assert norm(figure) in html, figure
        assert norm(figure) in text, figure
    for key in ("profile_duration", "profile_pf_hist", "profile_week", "profile_steps", "profile_cash", "triangle"):
        svg = (folder / "figures" / f"{key}.svg").read_text()
        assert svg.startswith("<svg") and f"figures/{key}.svg" in (folder / "index.html").read_text()
    assert "discharged" in text  # the automatic-bank caution


def test_json_is_si_and_has_the_issue_keys(site):
    r = json.loads((site / "eastfield-dc-480v" / "results.json").read_text())
    assert {"intervals", "met_fraction", "leading_hours", "switching_per_day", "min_kvar", "max_kvar"} <= set(r["profile"])
    assert {"kind", "step_var", "step_count"} <= set(r["bank"])
    assert {"annual_saving", "payback_years", "npv", "irr"} <= set(r["economics"])
    assert r["bank"]["step_var"] == 25000.0 and r["correction"]["q_installed_var"] == 200000.0
    assert 0.0 <= r["profile"]["met_fraction"] <= 1.0 and r["profile"]["intervals"] > 30000


def test_design_variant_lists_candidates(site):
    folder = site / "eastfield-dc-design-480v"
    r = json.loads((folder / "results.json").read_text())
    des = r["bank"]["design"]
    best = des["best"]
    assert des["cost_model"] == "project" and best["feasible"] and best["met_fraction"] >= 0.95
    cheaper = [c for c in des["candidates"] if c["feasible"] and c["cost"] < best["cost"]]
    assert not cheaper  # the least-cost qualifying candidate was chosen
    rows = (folder / "bank_candidates.csv").read_text().splitlines()
    assert len(rows) == len(des["candidates"]) + 1
    assert (folder / "figures" / "profile_design.svg").read_text().startswith("<svg")
    assert r["bills"]["usage_source"] == "interval"
