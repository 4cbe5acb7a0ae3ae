"""Bad input: one located line per problem, exit code 2, no traceback, all problems at once."""

import textwrap
from pathlib import Path

import pytest

from reportgen.cli import main

GOOD = """\
format: 1
project:
  title: Bad-input fixture
system:
  frequency: 60 Hz
  phases: 3
  voltage: 480 V
loads:
  - name: Load A
    demand: {power: 100 kW, power_factor: 0.8}
correction:
  target_power_factor: 0.95
"""


def run(tmp_path: Path, text: str, capsys) -> tuple[int, list[str]]:
    proj = tmp_path / "p"
    proj.mkdir(exist_ok=True)
    (proj / "project.yaml").write_text(textwrap.dedent(text))
    code = main(["calc", str(proj)])
    err = capsys.readouterr().err
    assert "Traceback" not in err
    return code, [line for line in err.splitlines() if line]


def test_good_fixture_is_good(tmp_path, capsys):
    code, lines = run(tmp_path, GOOD, capsys)
    assert code == 0 and lines == []


@pytest.mark.parametrize("old, new, line, col, fragment", [
    # YAML syntax error: an unclosed flow mapping
    ("demand: {power: 100 kW, power_factor: 0.8}", "demand: {power: 100 kW, power_factor: 0.8", 11, 11,
     "YAML syntax error"),
    # unknown key, with the close match and the allowed keys
    ("demand: {power: 100 kW,", "demand: {powr: 100 kW,", 10, 14,
     "unknown key 'powr' in loads[0].demand (did you mean 'power'?); allowed keys: power, power_factor, leading"),
    # missing required field: located at the mapping that lacks it
    ("  title: Bad-input fixture\n", "  client: Nobody\n", 3, 3, "missing required key 'title' in project"),
    # dimensioned field without a unit
    ("voltage: 480 V", "voltage: 480", 7, 12, "'480' has no unit"),
    # wrong dimension
    ("voltage: 480 V", "voltage: 480 A", 7, 12, "'480 A' is not a voltage"),
    # the wrong kind of power
    ("power: 100 kW", "power: 100 kvar", 10, 21, "wrong kind of power"),
    # out of range: pf > 1
    ("power_factor: 0.8}", "power_factor: 1.2}", 10, 43, "'1.2' is out of range: must be at most 1"),
    # out of range: zero frequency
    ("frequency: 60 Hz", "frequency: 0 Hz", 5, 14, "'0 Hz' is out of range: must be greater than 0"),
    # unknown phases
    ("phases: 3", "phases: 2", 6, 11, "system.phases: must be 1 or 3"),
    # target out of range
    ("target_power_factor: 0.95", "target_power_factor: 0", 12, 24, "out of range: must be greater than 0"),
    # two kinds of measurement for one load
    ("    demand: {power: 100 kW, power_factor: 0.8}",
     "    demand: {power: 100 kW, power_factor: 0.8}\n    meter: {current: 10 A, power: 1 kW}", 9, 5,
     "give exactly one of meter, motor, demand, scope, network"),
])
def test_each_error_class(tmp_path, capsys, old, new, line, col, fragment):
    assert old in GOOD
    code, lines = run(tmp_path, GOOD.replace(old, new), capsys)
    assert code == 2
    hits = [x for x in lines if fragment in x]
    assert len(hits) == 1, lines
    assert f"p/project.yaml:{line}:{col}: " in hits[0], hits[0]
    # every line is located; a renamed key also reports the then-missing required key
    assert all(":" in x.split(" ")[0] for x in lines) and len(lines) <= 2


def test_motor_efficiency_over_100_percent_and_negative_r_and_zero_shunt(tmp_path, capsys):
    text = GOOD.replace("""  - name: Load A
    demand: {power: 100 kW, power_factor: 0.8}
""", """  - name: Motor
    motor: {output: 10 kW, efficiency: 104 %, power_factor: 0.8}
  - name: Coil
    network: {series: [{resistor: -4 ohm}, {inductor: 10 mH}]}
  - name: Scope
    scope: {voltage: 10 V, shunt_voltage: 1 V, shunt_resistance: 0 ohm, phase_angle: 30 deg}
""")
    code, lines = run(tmp_path, text, capsys)
    assert code == 2
    assert len(lines) == 3, lines  # all problems in the file at once, one line each
    assert ":10:" in lines[0] and "efficiency" in lines[0] and "at most 1 (100 %)" in lines[0]
    assert ":12:" in lines[1] and "resistor" in lines[1] and "greater than 0" in lines[1]
    assert ":14:" in lines[2] and "shunt_resistance" in lines[2] and "greater than 0" in lines[2]


def test_duplicate_key_is_an_error(tmp_path, capsys):
    code, lines = run(tmp_path, GOOD.replace("  phases: 3\n", "  phases: 3\n  phases: 1\n"), capsys)
    assert code == 2 and "duplicate key 'phases' (first given on line 6)" in lines[0] and ":7:3:" in lines[0]


def test_measured_power_above_apparent_power_is_explained(tmp_path, capsys):
    text = GOOD.replace("demand: {power: 100 kW, power_factor: 0.8}", "meter: {current: 10 A, power: 100 kW}")
    code, lines = run(tmp_path, text, capsys)
    assert code == 2 and len(lines) == 1
    assert "exceeds the apparent power" in lines[0] and ":10:" in lines[0]


def test_missing_project_file(tmp_path, capsys):
    code = main(["calc", str(tmp_path / "nowhere")])
    err = capsys.readouterr().err
    assert code == 2 and "no project.yaml in this folder" in err and ":1:1:" in err
