"""The design-record site: reproducible bytes, incremental builds, check, git record, overrides."""

import json
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from reportgen.cli import main

DEMO = Path(__file__).resolve().parent.parent / "projects_demo"
ROOT = Path(__file__).resolve().parent.parent


def copy_demo(dest: Path, names=None) -> Path:
    dest.mkdir(parents=True, exist_ok=True)
    for p in sorted(DEMO.iterdir()):
        if p.is_dir() and (names is None or p.name in names):
            shutil.copytree(p, dest / p.name)
        elif p.is_file() and names is None:
            shutil.copy2(p, dest / p.name)
    return dest


def tree_bytes(folder: Path) -> dict:
    return {p.relative_to(folder).as_posix(): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def build(src, out, *extra):
    return main(["build", str(src), "--out", str(out), "--quiet", *extra])


def test_byte_identical_builds_in_two_folders_and_with_different_jobs(tmp_path, monkeypatch):
    monkeypatch.delenv("SOURCE_DATE_EPOCH", raising=False)
    a = copy_demo(tmp_path / "a" / "src")
    b = copy_demo(tmp_path / "elsewhere" / "deeper" / "src")
    assert build(a, tmp_path / "a" / "site", "--jobs", "1") == 0
    monkeypatch.chdir(tmp_path / "elsewhere")
    assert build(b, tmp_path / "elsewhere" / "out", "--jobs", "2") == 0
    ta, tb = tree_bytes(tmp_path / "a" / "site"), tree_bytes(tmp_path / "elsewhere" / "out")
    assert sorted(ta) == sorted(tb)
    different = [k for k in ta if ta[k] != tb[k]]
    assert different == []
    # no absolute paths or temp-folder names leak into outputs
    for k, v in ta.items():
        assert str(tmp_path).encode() not in v, k


def run_build(src, out, *extra):
    """Build and return {name: action} from the plain per-project lines."""
    proc = subprocess.run([sys.executable, "-m", "reportgen", "build", str(src), "--out", str(out), "--no-pdf",
                           "--jobs", "1", *extra], capture_output=True, text=True, cwd=ROOT)
    assert proc.returncode == 0, proc.stderr
    built = {line.split()[1] for line in proc.stdout.splitlines() if line.startswith("built ")}
    removed = {line.split()[1] for line in proc.stdout.splitlines() if line.startswith("removed ")}
    return built, removed


def test_manifest_rebuilds_exactly_what_changed(tmp_path):
    src = copy_demo(tmp_path / "src")
    out = tmp_path / "site"
    names = {p.name for p in src.iterdir() if (p / "project.yaml").is_file()}
    assert run_build(src, out)[0] == names
    assert run_build(src, out)[0] == set()  # no-op
    # one project's file changed -> that project only
    y = src / "cold-store-480v" / "project.yaml"
    y.write_text(y.read_text().replace("revision: B", "revision: C"))
    assert run_build(src, out)[0] == {"cold-store-480v"}
    # a new data file inside one project folder -> that project only
    (src / "joinery-workshop-230v" / "notes.csv").write_text("a,b\n1,2\n")
    assert run_build(src, out)[0] == {"joinery-workshop-230v"}
    # a shared file beside the projects (e.g. the shared catalog) -> all
    cat = src / "catalog.yaml"
    cat.write_text(cat.read_text() + "\n# price list checked\n")
    assert run_build(src, out)[0] == names
    # a template override -> all
    (src / "templates").mkdir()
    (src / "templates" / "report.html").write_text('{% extends "base/report.html" %}{% block logo %}<p>LOGO</p>{% endblock %}')
    assert run_build(src, out)[0] == names
    # a changed option -> all; --force -> all
    proc = subprocess.run([sys.executable, "-m", "reportgen", "build", str(src), "--out", str(out), "--jobs", "1",
                           "--pdf-variant", "pdf/a-3b", "--no-pdf"], capture_output=True, text=True, cwd=ROOT)
    assert proc.stdout.count("built ") == len(names)
    assert run_build(src, out, "--force")[0] == names
    # a removed project -> its outputs removed, nothing rebuilt
    shutil.rmtree(src / "coil-bench-400hz")
    built, removed = run_build(src, out)
    assert built == set() and removed == {"coil-bench-400hz"}
    assert not (out / "coil-bench-400hz").exists()
    assert 'coil-bench-400hz/index.html' not in (out / "index.html").read_text()


def test_noop_build_imports_no_renderer(tmp_path):
    src = copy_demo(tmp_path / "src", {"joinery-workshop-230v"})
    out = tmp_path / "site"
    assert build(src, out, "--no-pdf") == 0
    code = ("import sys; from reportgen.cli import main; rc = main(['build', sys.argv[1], '--out', sys.argv[2], "
            "'--no-pdf', '--quiet']); heavy = [m for m in ('matplotlib', 'weasyprint') if m in sys.modules]; "
            "print(rc, heavy)")
    proc = subprocess.run([sys.executable, "-c", code, str(src), str(out)], capture_output=True, text=True, cwd=ROOT)
    assert proc.stdout.strip() == "0 []", proc.stdout + proc.stderr


def check(src, out, *extra, capsys=None):
    code = main(["check", str(src), "--out", str(out), *extra])
    return code


def test_check_exit_codes(tmp_path, capsys):
    src = copy_demo(tmp_path / "src", {"joinery-workshop-230v", "cold-store-480v"})
    out = tmp_path / "site"
    assert check(src, out) == 1  # nothing built yet: missing
    assert "missing" in capsys.readouterr().out
    assert build(src, out, "--no-pdf") == 0
    before = tree_bytes(out)
    assert check(src, out, "--no-pdf") == 0  # fresh
    assert check(src, out, "--no-pdf", "--fail-on", "warn") == 1  # the demos carry warnings
    assert "warn" in capsys.readouterr().out
    # stale
    y = src / "cold-store-480v" / "project.yaml"
    y.write_text(y.read_text().replace("revision: B", "revision: C"))
    assert check(src, out, "--no-pdf") == 1
    assert "cold-store-480v: stale" in capsys.readouterr().out
    assert build(src, out, "--no-pdf") == 0
    # an output deleted or edited by hand
    (out / "joinery-workshop-230v" / "results.json").unlink()
    assert check(src, out, "--no-pdf") == 1
    assert "results.json" in capsys.readouterr().out
    assert build(src, out, "--no-pdf") == 0 and check(src, out, "--no-pdf") == 0
    # a failing design check: a target the units on hand cannot reach
    y.write_text(y.read_text().replace("unit_sizes: [5 kvar, 10 kvar, 25 kvar, 50 kvar]", "unit_sizes: [900 kvar]"))
    assert build(src, out, "--no-pdf") == 0
    assert check(src, out, "--no-pdf") == 1
    assert "check target_pf fail" in capsys.readouterr().out
    # check writes nothing
    snapshot = tree_bytes(out)
    check(src, out, "--no-pdf")
    assert tree_bytes(out) == snapshot


def git(cwd, *args):
    env = dict(os.environ, GIT_AUTHOR_NAME="Design Office", GIT_AUTHOR_EMAIL="office@example.invalid",
               GIT_COMMITTER_NAME="Design Office", GIT_COMMITTER_EMAIL="office@example.invalid",
               GIT_CONFIG_GLOBAL="/dev/null", GIT_CONFIG_SYSTEM="/dev/null")
    return subprocess.run(["git", *args], cwd=cwd, env=env, check=True, capture_output=True, text=True).stdout


@pytest.fixture
def repo(tmp_path):
    src = copy_demo(tmp_path / "repo" / "projects", {"cold-store-480v"})
    top = tmp_path / "repo"
    git(top, "init", "-q", "-b", "main")
    git(top, "add", "-A")
    git(top, "commit", "-q", "-m", "Issue revision B for review", "--date", "2026-11-20T09:00:00Z")
    y = src / "cold-store-480v" / "project.yaml"
    y.write_text(y.read_text().replace("revision: B", "revision: C").replace("power: 38 kW", "power: 58 kW"))
    git(top, "commit", "-q", "-am", "Revision C: dock lighting measured at 58 kW", "--date", "2026-11-27T09:00:00Z")
    return src


def test_git_record_in_report_and_diff(repo, tmp_path, capsys):
    out = tmp_path / "site"
    assert build(repo, out, "--no-pdf") == 0
    html = (out / "cold-store-480v" / "index.html").read_text()
    head = git(repo, "log", "-1", "--format=%h").strip()
    assert f"commit <code>{head}</code>" in html
    assert "Revision history" in html and "Revision C: dock lighting measured at 58 kW" in html
    assert "Changes since the previous revision" in html
    assert "loads[Dock lighting and offices].demand.power" in html
    assert "the working copy differs" not in html
    # diff: default is the previous commit against the working copy
    assert main(["diff", str(repo / "cold-store-480v")]) == 0
    text = capsys.readouterr().out
    assert "loads[Dock lighting and offices].demand.power: 38 kW → 58 kW" in text
    assert "loads[Dock lighting and offices].p_w: 38000 → 58000" in text
    assert "correction.q_installed_var" in text
    # by revision label, as JSON
    assert main(["diff", "B", "C", str(repo / "cold-store-480v"), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    paths = {c["path"] for c in data["results"]}
    assert "loads[Dock lighting and offices].p_w" in paths and "project.revision" in paths
    # a local edit: the report says the working copy differs
    y = repo / "cold-store-480v" / "project.yaml"
    y.write_text(y.read_text().replace("target_power_factor: 0.95", "target_power_factor: 0.97"))
    assert build(repo, out, "--no-pdf") == 0
    html = (out / "cold-store-480v" / "index.html").read_text()
    assert "the working copy differs" in html
    assert main(["diff", str(repo / "cold-store-480v")]) == 0
    assert "correction.target_power_factor: 0.95 → 0.97" in capsys.readouterr().out


def test_outside_git_nothing_breaks(tmp_path, capsys):
    src = copy_demo(tmp_path / "src", {"joinery-workshop-230v"})
    assert build(src, tmp_path / "site", "--no-pdf") == 0
    assert "not in a git repository" in (tmp_path / "site" / "joinery-workshop-230v" / "index.html").read_text()
    assert main(["diff", str(src / "joinery-workshop-230v")]) == 1
    assert "no earlier commit" in capsys.readouterr().err


def test_template_override_of_one_block(tmp_path):
    src = copy_demo(tmp_path / "src", {"joinery-workshop-230v"})
    (src / "templates").mkdir()
    (src / "templates" / "report.html").write_text(
        '{% extends "base/report.html" %}{% block cautions %}<section id="cautions"><h2>Cautions</h2>'
        '<p>Office wording of the cautions.</p>{{ super() }}</section>{% endblock %}')
    assert build(src, tmp_path / "site", "--no-pdf") == 0
    html = (tmp_path / "site" / "joinery-workshop-230v" / "index.html").read_text()
    assert "Office wording of the cautions." in html
    assert "Power-factor correction design report" in html  # the rest of the default template is kept
    other = tmp_path / "tpl"
    other.mkdir()
    (other / "report.html").write_text('{% extends "base/report.html" %}{% block logo %}<p>OFFICE LOGO</p>{% endblock %}')
    assert build(src, tmp_path / "site2", "--no-pdf", "--templates", str(other)) == 0
    assert "OFFICE LOGO" in (tmp_path / "site2" / "joinery-workshop-230v" / "index.html").read_text()


def test_init_builds_as_is(tmp_path, capsys):
    assert main(["init", "new-plant", "--parent", str(tmp_path / "src")]) == 0
    text = (tmp_path / "src" / "new-plant" / "project.yaml").read_text()
    assert text.startswith("# yaml-language-server: $schema=")
    assert build(tmp_path / "src", tmp_path / "site", "--no-pdf") == 0
    assert main(["init", "new-plant", "--parent", str(tmp_path / "src")]) == 1  # never overwrites


def test_schema_is_json_schema(capsys):
    assert main(["schema"]) == 0
    schema = json.loads(capsys.readouterr().out)
    assert schema["$schema"].startswith("https://json-schema.org/")
    assert {"format", "project", "system", "loads", "correction"} <= set(schema["properties"])
    import jsonschema

    jsonschema.Draft202012Validator.check_schema(schema)


def test_pdf_a_3b_variant(tmp_path):
    import pypdf

    src = copy_demo(tmp_path / "src", {"joinery-workshop-230v"})
    assert build(src, tmp_path / "site", "--pdf-variant", "pdf/a-3b") == 0
    reader = pypdf.PdfReader(str(tmp_path / "site" / "joinery-workshop-230v" / "joinery-workshop-230v.pdf"))
    root = reader.trailer["/Root"]
    assert "/OutputIntents" in root  # ISO 19005-3: an output intent (sRGB) is embedded
    xmp = root["/Metadata"].get_object().get_data()
    assert b"pdfaid" in xmp and b"3" in xmp.split(b"pdfaid:part")[1][:8]
