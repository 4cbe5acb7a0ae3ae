"""Bad input for the protection keys and catalogs: one located line per problem, exit code 2,
and a build leaves the earlier good output untouched."""

import textwrap
from pathlib import Path

import pytest

from reportgen.cli import main

GOOD = """\
format: 1
rules: nec
catalog: ../catalog.yaml
project:
  title: Protection bad-input fixture
system:
  frequency: 60 Hz
  phases: 3
  voltage: 480 V
loads:
  - name: Load A
    demand: {power: 200 kW, power_factor: 0.8}
  - name: Pump
    motor: {output: 30 hp, efficiency: 92 %, power_factor: 0.82}
correction:
  target_power_factor: 0.95
  unit_sizes: [25 kvar, 50 kvar]
protection:
  fuse_multiple: 1.65
  conductors: {ambient: 40 degC, feeder_length: 10 m}
  discharge: {built_in: true}
  switching: {source_short_circuit: 25 MVA}
"""

CATALOG = """\
currency: USD
items:
  - kind: capacitor
    part_number: T-CAP-50
    reactive_power: 50 kvar
    voltage: 480 V
    unit_price: 600
  - kind: fuse
    part_number: T-FU-400
    current: 400 A
    voltage: 600 V
    unit_price: 90
"""

CSV_CATALOG = """\
kind,part_number,current,voltage,unit_price
fuse,T-FU-400,400 A,600 V,90
disconnect,T-SW-400,400 A,600 V,1200
"""


def setup(tmp_path: Path, text: str = GOOD, catalog: str = CATALOG, name: str = "catalog.yaml") -> Path:
    proj = tmp_path / "p"
    proj.mkdir(exist_ok=True)
    (proj / "project.yaml").write_text(textwrap.dedent(text))
    (tmp_path / name).write_text(catalog)
    return proj


def run(proj: Path, capsys) -> tuple[int, list[str]]:
    code = main(["calc", str(proj)])
    err = capsys.readouterr().err
    assert "Traceback" not in err
    return code, [line for line in err.splitlines() if line]


def test_good_fixture_is_good(tmp_path, capsys):
    code, lines = run(setup(tmp_path), capsys)
    assert code == 0 and lines == []


@pytest.mark.parametrize("old, new, where, fragment", [
    # unknown rule set
    ("rules: nec", "rules: csa", "p/project.yaml:2:8", "rules: must be 'nec' or 'iec' (got 'csa')"),
    # catalog missing
    ("catalog: ../catalog.yaml", "catalog: ../prices.yaml", "p/project.yaml:3:10",
     "'../prices.yaml': no such file"),
    # catalog outside the allowed folders
    ("catalog: ../catalog.yaml", "catalog: ../../catalog.yaml", "p/project.yaml:3:10",
     "is outside the project folder or the folder holding the projects; refused"),
    # catalog of another type
    ("catalog: ../catalog.yaml", "catalog: ../catalog.json", "p/project.yaml:3:10",
     "expected a .yaml or .yml or .csv file"),
    # fuse multiple below 1
    ("fuse_multiple: 1.65", "fuse_multiple: 0.9", "p/project.yaml:19:18",
     "protection.fuse_multiple: must be greater than or equal to 1"),
    # ambient without a unit
    ("ambient: 40 degC", "ambient: 40", "p/project.yaml:20:25", "'40' has no unit"),
    # misspelt key
    ("built_in: true", "builtin: true", "p/project.yaml:21:15",
     "unknown key 'builtin' in protection.discharge (did you mean 'built_in'?)"),
    # negative length
    ("feeder_length: 10 m", "feeder_length: -10 m", "p/project.yaml:20:49", "'-10 m' is out of range: must be greater than 0"),
    # the IEC tables have no aluminium
    ("rules: nec", "rules: iec", None, None),
])
def test_project_key_errors(tmp_path, capsys, old, new, where, fragment):
    assert old in GOOD
    text = GOOD.replace(old, new)
    if where is None:  # aluminium with the IEC rule set: a located calculation error
        text = text.replace("{ambient: 40 degC,", "{material: aluminium, ambient: 40 degC,")
        where, fragment = "p/project.yaml:20:15", "conductor material 'al' is not available for rule set 'iec'"
    (tmp_path / "elsewhere").mkdir(exist_ok=True)
    code, lines = run(setup(tmp_path, text), capsys)
    assert code == 2
    hits = [x for x in lines if fragment in x]
    assert len(hits) == 1, lines
    assert ("/" + where + ": ") in hits[0], hits[0]


def test_motor_capacitor_on_a_load_that_is_not_a_motor(tmp_path, capsys):
    text = GOOD + "  motor_capacitors:\n    - {load: Load A, capacitor: 5 kvar}\n"
    code, lines = run(setup(tmp_path, text), capsys)
    assert code == 2 and len(lines) == 1
    assert "/p/project.yaml:24:14: " in lines[0] and "'Load A' is not a motor load" in lines[0]
    assert "motor loads: Pump" in lines[0]


@pytest.mark.parametrize("old, new, where, fragment", [
    # negative price
    ("unit_price: 90", "unit_price: -90", "catalog.yaml:12:17", "unit_price -90 is negative"),
    # a price that is not a number
    ("unit_price: 600", "unit_price: six hundred", "catalog.yaml:7:17", "is not a number"),
    # malformed YAML
    ("    voltage: 600 V\n", "    voltage: [600 V\n", "catalog.yaml:12:15", "YAML syntax error"),
    # rating without its unit
    ("current: 400 A", "current: 400", "catalog.yaml:10:14", "'400' has no unit"),
    # unknown kind
    ("kind: fuse", "kind: fuze", "catalog.yaml:8:11", "unknown kind 'fuze'"),
    # unknown field, with a close match
    ("current: 400 A", "curent: 400 A", "catalog.yaml:10:5", "unknown catalog field 'curent' (did you mean 'current'?)"),
    # entry without a part number
    ("    part_number: T-FU-400\n", "", "catalog.yaml:8:5", "catalog entry needs 'part_number'"),
    # a part number listed twice
    ("part_number: T-FU-400", "part_number: T-CAP-50", "catalog.yaml:8:5", "part number 'T-CAP-50' is listed twice"),
])
def test_yaml_catalog_errors(tmp_path, capsys, old, new, where, fragment):
    assert old in CATALOG
    code, lines = run(setup(tmp_path, catalog=CATALOG.replace(old, new)), capsys)
    assert code == 2
    hits = [x for x in lines if fragment in x]
    assert len(hits) == 1, lines
    assert ("/" + where + ": ") in hits[0], hits[0]


@pytest.mark.parametrize("old, new, where, fragment", [
    ("1200", "-1200", "catalog.csv:3:5", "unit_price '-1200' is negative"),
    ("400 A,600 V,90", "400,600 V,90", "catalog.csv:2:3", "'400' has no unit"),
    ("kind,part_number,current", "kind,part_number,currrent", "catalog.csv:1:3", "unknown column 'currrent'"),
    ("fuse,T-FU-400", "fuse,", "catalog.csv:2:2", "'part_number' is empty"),
    ("600 V,1200", "600 V,1200,extra", "catalog.csv:3:6", "6 fields, but the header has 5"),
])
def test_csv_catalog_errors(tmp_path, capsys, old, new, where, fragment):
    assert old in CSV_CATALOG
    proj = setup(tmp_path, GOOD.replace("catalog.yaml", "catalog.csv"), CSV_CATALOG.replace(old, new),
                 "catalog.csv")
    code, lines = run(proj, capsys)
    assert code == 2
    hits = [x for x in lines if fragment in x]
    assert len(hits) == 1, lines
    assert ("/" + where + ": ") in hits[0], hits[0]


def test_csv_catalog_is_good(tmp_path, capsys):
    proj = setup(tmp_path, GOOD.replace("catalog.yaml", "catalog.csv"), CSV_CATALOG, "catalog.csv")
    code, lines = run(proj, capsys)
    assert code == 0 and lines == []


def test_user_resistor_too_large_is_a_failed_check_not_an_input_error(tmp_path, capsys):
    text = GOOD.replace("discharge: {built_in: true}", "discharge: {built_in: false, resistance: 10 Mohm}")
    proj = setup(tmp_path, text)
    code = main(["calc", str(proj)])
    out = capsys.readouterr().out
    assert code == 0
    line = next(x for x in out.splitlines() if x.startswith("[fail] discharge"))
    assert "too large" in line and "FAILS" in line


def test_inrush_over_capability_fails_and_recommends_limiting(tmp_path, capsys):
    text = GOOD.replace("switching: {source_short_circuit: 25 MVA}",
                        "switching: {source_short_circuit: 25 MVA, device: {name: the test breaker, "
                        "peak_current: 1 kA}}")
    code = main(["calc", str(setup(tmp_path, text))])
    out = capsys.readouterr().out
    assert code == 0
    line = next(x for x in out.splitlines() if x.startswith("[fail] inrush"))
    assert "exceeds the test breaker's capability" in line and "inrush reactors" in line


@pytest.mark.parametrize("break_it", ["catalog", "project"])
def test_build_leaves_earlier_output_untouched(tmp_path, capsys, break_it):
    proj = setup(tmp_path)
    out = tmp_path / "out"
    assert main(["build", str(tmp_path), "--out", str(out), "--no-pdf", "--quiet"]) == 0
    assert (out / "p" / "bom.csv").is_file()
    before = {p.relative_to(out): p.read_bytes() for p in (out / "p").rglob("*") if p.is_file()}
    if break_it == "catalog":
        (tmp_path / "catalog.yaml").write_text(CATALOG.replace("unit_price: 90", "unit_price: -90"))
        fragment = "catalog.yaml:12:17: unit_price -90 is negative"
    else:
        y = proj / "project.yaml"
        y.write_text(y.read_text().replace("rules: nec", "rules: csa"))
        fragment = "p/project.yaml:2:8: rules: must be 'nec' or 'iec'"
    capsys.readouterr()
    code = main(["build", str(tmp_path), "--out", str(out), "--no-pdf"])
    captured = capsys.readouterr()
    assert code == 2
    assert fragment in captured.out + captured.err
    after = {p.relative_to(out): p.read_bytes() for p in (out / "p").rglob("*") if p.is_file()}
    assert after == before
