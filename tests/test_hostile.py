"""A corpus of hostile inputs, each with its exact expected outcome.

Project files and their data come from many hands: a bad file must never crash the
build, corrupt an earlier good report, run code, read outside the project, or reach
the network.
"""

import os
import re
import shutil
import textwrap
from pathlib import Path

import pytest

from reportgen.cli import main

BASE = """\
format: 1
project:
  title: {title}
  client: {text}
  site: {text}
  prepared_by: {text}
  checked_by: {text}
  revision: {short}
  summary: {summary}
system:
  frequency: 60 Hz
  phases: 3
  voltage: {voltage}
loads:
  - name: {short}
    demand: {{power: 100 kW, power_factor: 0.8}}
correction:
  target_power_factor: 0.95
"""

LOCATED = re.compile(r"^\S+:\d+:\d+: \S.*$")


def write(tmp_path: Path, text: str | bytes, name: str = "p") -> Path:
    folder = tmp_path / name
    folder.mkdir(parents=True, exist_ok=True)
    target = folder / "project.yaml"
    target.write_bytes(text if isinstance(text, bytes) else text.encode())
    return folder


def calc(folder: Path, capsys) -> tuple[int, list[str]]:
    code = main(["calc", str(folder)])
    captured = capsys.readouterr()
    assert "Traceback" not in captured.err + captured.out
    lines = [x for x in captured.err.splitlines() if x]
    if code == 2:
        assert lines and all(LOCATED.match(x) for x in lines), lines
    return code, lines


def project(**kw) -> str:
    values = dict(title="Hostile", text="plain", short="plain", summary="plain", voltage="480 V")
    values.update(kw)
    return BASE.format(**values)


@pytest.mark.parametrize("case, text, fragment", [
    ("alias bomb", "a: &a [x, x, x, x, x, x, x, x, x, x]\n" + "".join(
        f"{c}: &{c} [{', '.join(['*' + p] * 10)}]\n" for p, c in zip("abcdefgh", "bcdefghi")),
     "document too large: more than 200000 values (alias expansion?); refused"),
    ("deep nesting", "a: " + "[" * 3000 + "]" * 3000 + "\n", "nesting"),
    ("python object tag", "format: 1\nproject: !!python/object/apply:os.system ['touch /tmp/reportgen-pwned']\n",
     "the YAML tag 'tag:yaml.org,2002:python/object/apply:os.system' is not allowed in a project file"),
    ("binary garbage", b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR", "file contains binary data (NUL byte)"),
    ("not utf-8", b"format: 1\nproject: {title: \xff\xfe}\n", "file is not UTF-8 text"),
    ("merge key", "base: &b {frequency: 60 Hz}\nsystem:\n  <<: *b\n", "merge keys ('<<') are not supported"),
    ("duplicate key", project().replace("  phases: 3\n", "  phases: 3\n  phases: 1\n"),
     "duplicate key 'phases' (first given on line 12)"),
    ("NaN voltage", project(voltage="nan V"), "is not a finite number"),
    ("infinite voltage", project(voltage="inf V"), "is not a finite number"),
    ("absurd magnitude", project(voltage="1e30 V"), "'1e30 V' is an implausible magnitude"),
    ("YAML NaN for a ratio", project().replace("power_factor: 0.8", "power_factor: .nan"), "is not a finite number"),
    ("malformed unit", project(voltage="480 VV"), "unknown unit"),
    ("unit soup", project(voltage="480 V/A*s**2"), "is not a voltage"),
    ("empty file", "", "file is empty"),
    ("a list, not a mapping", "- 1\n- 2\n", "a project file is a mapping of keys"),
    ("unknown format", project().replace("format: 1", "format: 99"), "format 99 is not known"),
    ("overlong name", project(short="x" * 200), "loads[0].name: too long (at most 120 characters)"),
    ("empty title", project(title='""'), "project.title: must not be empty"),
])
def test_hostile_inputs(tmp_path, capsys, case, text, fragment):
    code, lines = calc(write(tmp_path, text), capsys)
    assert code == 2, case
    assert any(fragment in x for x in lines), (case, lines)
    assert not Path("/tmp/reportgen-pwned").exists()


def test_oversized_file_is_refused_without_parsing(tmp_path, capsys):
    code, lines = calc(write(tmp_path, "# " + "x" * 1_100_000 + "\n"), capsys)
    assert code == 2 and lines == [f"{tmp_path.name}/p/project.yaml:1:1: file is larger than 1000 kB; refused"] or \
        lines[0].endswith("project.yaml:1:1: file is larger than 1000 kB; refused")


INJECTIONS = [
    "<script>alert('x')</script>",
    "\"><img src=x onerror=alert(1)>",
    "{{ 7*7 }} {% include '/etc/passwd' %}",
    "'; DROP TABLE projects; --",
    "\u202eevil\u202c & <b>bold</b>",
]


def test_injection_strings_are_escaped_everywhere(tmp_path, capsys):
    import json

    text = project(title=json.dumps(INJECTIONS[0]), text=json.dumps(" | ".join(INJECTIONS)),
                   short=json.dumps("<b>bold</b><script>"),
                   summary=json.dumps("Raw <script>alert(1)</script> and [a link](javascript:alert(1)) and "
                                      "[ok](https://example.invalid/x) and <iframe src=x></iframe>"))
    src = tmp_path / "src"
    write(src, text, "hostile")
    out = tmp_path / "site"
    assert main(["build", str(src), "--out", str(out), "--quiet"]) == 0
    html = (out / "hostile" / "index.html").read_text()
    index = (out / "index.html").read_text()
    for page in (html, index):
        assert "<script>alert" not in page
        assert "<img src=x" not in page
        assert "<b>bold</b>" not in page
        assert "&lt;script&gt;" in page
    assert "{{ 7*7 }}" in html  # template syntax in data is text, not evaluated
    assert "49" not in html.split("{{ 7*7 }}")[0][-5:]
    assert 'href="javascript:' not in html and "<iframe" not in html
    assert 'href="https://example.invalid/x"' in html  # safe links survive
    for svg in (out / "hostile" / "figures").glob("*.svg"):
        assert "<script" not in svg.read_text()
    assert (out / "hostile" / "hostile.pdf").stat().st_size > 1000


def test_pdf_fetcher_serves_only_build_files(tmp_path):
    from reportgen.render import pdf

    (tmp_path / "build").mkdir()
    secret = tmp_path / "secret.txt"
    secret.write_text("not for the report")
    html = (f'<html><body><img src="{secret.as_uri()}"><img src="http://127.0.0.1:9/x.png">'
            f'<link rel="stylesheet" href="file:///etc/passwd"><p>ok</p></body></html>')
    out = tmp_path / "build" / "x.pdf"
    pdf.write_pdf(html, tmp_path / "build", out, title="t", date_iso="2026-01-01T00:00:00+00:00")
    assert out.is_file()
    with pytest.raises(pdf.FetchRefused):
        pdf._resolve((tmp_path / "build").resolve(), secret.as_uri())
    with pytest.raises(pdf.FetchRefused):
        pdf._resolve((tmp_path / "build").resolve(), "http://127.0.0.1:9/x.png")


def test_data_file_paths_are_confined(tmp_path):
    from reportgen.errors import InputError
    from reportgen.project import load_project, resolve_data_file

    folder = write(tmp_path / "src", project(), "p")
    (tmp_path / "outside.csv").write_text("t,v\n")
    (folder / "inside.csv").write_text("t,v\n")
    (tmp_path / "src" / "shared.csv").write_text("t,v\n")
    os.symlink(tmp_path / "outside.csv", folder / "link.csv")
    proj = load_project(folder, tmp_path)
    assert resolve_data_file(proj, "inside.csv", ("loads",))[0].name == "inside.csv"
    assert resolve_data_file(proj, "../shared.csv", ("loads",), shared=True)[0].name == "shared.csv"
    for bad, msg in [("../shared.csv", "outside the project folder"), ("../../outside.csv", "outside"),
                     (str(tmp_path / "outside.csv"), "must be relative"), ("link.csv", "outside the project folder"),
                     ("missing.csv", "no such file"), ("", "a file name is needed")]:
        with pytest.raises(InputError) as exc:
            resolve_data_file(proj, bad, ("loads", 0))
        assert msg in str(exc.value), bad
        assert re.match(r"^\S+:\d+:\d+: ", str(exc.value))


def test_core_errors_are_explained(tmp_path, capsys):
    # a purely reactive network is the only load: no real power to correct
    text = project().replace("    demand: {power: 100 kW, power_factor: 0.8}", "    network: {capacitor: 100 uF}")
    code, lines = calc(write(tmp_path, text, "a"), capsys)
    assert code == 2 and "the loads draw no real power" in lines[0]
    # a target below the present PF is not an error: it is reported as already met
    text = project().replace("power_factor: 0.8}", "power_factor: 0.99}")
    code, _ = calc(write(tmp_path, text, "b"), capsys)
    assert code == 0
    assert main(["calc", str(tmp_path / "b"), "--json"]) == 0
    import json

    data = json.loads(capsys.readouterr().out)
    assert data["correction"]["status"] == "not_needed" and data["correction"]["q_installed_var"] == 0
    # a scope angle a passive load cannot have
    text = project().replace("    demand: {power: 100 kW, power_factor: 0.8}",
                             "    scope: {voltage: 10 V, shunt_voltage: 1 V, shunt_resistance: 1 ohm, time_shift: 10 ms}")
    code, lines = calc(write(tmp_path, text, "c"), capsys)
    assert code == 2 and "is more than 90°" in lines[0]


def test_no_template_can_be_named_from_a_project(tmp_path, capsys):
    text = project() + "templates: /etc\n"
    code, lines = calc(write(tmp_path, text), capsys)
    assert code == 2 and "unknown key 'templates'" in lines[0]
