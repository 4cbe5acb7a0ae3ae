"""Build projects_demo/ end to end; the HTML and the PDF text carry the computed figures."""

import json
import shutil
from pathlib import Path

import pytest

from reportgen.cli import main
from reports import norm, pdf_text
from reportgen.render.fmt import kvar, pf, qty

DEMO = Path(__file__).resolve().parent.parent / "projects_demo"


@pytest.fixture(scope="module")
def site(tmp_path_factory):
    out = tmp_path_factory.mktemp("site")
    assert main(["build", str(DEMO), "--out", str(out), "--quiet"]) == 0
    return out


def demo_names():
    return sorted(p.parent.name for p in DEMO.glob("*/project.yaml"))


@pytest.mark.parametrize("name", demo_names())
def test_outputs_carry_computed_figures(site, name):
    folder = site / name
    data = json.loads((folder / "results.json").read_text())
    html = norm((folder / "index.html").read_text())
    text = norm(pdf_text(folder / f"{name}.pdf"))
    c = data["correction"]
    expected = [
        qty(data["total"]["p_w"], "W"),
        qty(data["total"]["q_var"], "var"),
        pf(data["total"]["pf"], data["total"]["leading"]),
        pf(c["pf_after"], c["leading_after"]),
        kvar(c["q_installed_var"]),
        qty(c["current_after_a"], "A"),
        data["project"]["title"],
    ]
    for figure in expected:
        assert norm(figure) in html, figure
        assert norm(figure) in text, figure
    assert "Page 1 of" in text  # the print stylesheet's page counter
    assert "lethal charge" in text and "licensed professional engineer" in text  # cautions present
    assert (folder / "figures" / "triangle.svg").read_text().startswith("<svg")


def test_json_keys(site):
    data = json.loads((site / "cold-store-480v" / "results.json").read_text())
    for key in ("name", "p_w", "q_var", "s_va", "pf", "current_a"):
        assert key in data["loads"][0] and key in data["total"]
    for key in ("target_pf", "q_required_var", "q_installed_var", "units", "capacitance_per_phase_f", "pf_after",
                "s_after_va", "current_after_a", "loss_reduction_fraction"):
        assert key in data["correction"]
    assert all({"id", "status", "message"} <= set(ch) for ch in data["checks"])
    assert all(set(u) >= {"q_rated_var", "count"} for u in data["correction"]["units"])


def test_index_lists_every_project(site):
    html = (site / "index.html").read_text()
    for name in demo_names():
        assert f'href="{name}/index.html"' in html
        assert f'href="{name}/{name}.pdf"' in html


def test_bad_project_leaves_earlier_output_and_others_build(tmp_path, capsys):
    src = tmp_path / "src"
    shutil.copytree(DEMO / "joinery-workshop-230v", src / "good")
    shutil.copytree(DEMO / "joinery-workshop-230v", src / "bad")
    out = tmp_path / "out"
    assert main(["build", str(src), "--out", str(out), "--no-pdf", "--quiet"]) == 0
    before = {p.relative_to(out): p.read_bytes() for p in (out / "bad").rglob("*") if p.is_file()}
    y = src / "bad" / "project.yaml"
    y.write_text(y.read_text().replace("voltage: 230 V", "voltage: 230 A"))
    (src / "good" / "project.yaml").write_text((src / "good" / "project.yaml").read_text().replace(
        "revision: A", "revision: B"))
    capsys.readouterr()
    code = main(["build", str(src), "--out", str(out), "--no-pdf"])
    captured = capsys.readouterr()
    assert code == 2
    assert "bad/project.yaml:" in captured.out + captured.err and "is not a voltage" in captured.out + captured.err
    after = {p.relative_to(out): p.read_bytes() for p in (out / "bad").rglob("*") if p.is_file()}
    assert after == before  # untouched
    assert '"revision": "B"' in (out / "good" / "results.json").read_text()  # the other project still built
