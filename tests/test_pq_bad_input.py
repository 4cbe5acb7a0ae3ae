"""Bad power-quality input: one located line per problem, exit code 2, earlier outputs untouched.

Every new key (system.source and its parts, loads[].harmonics, loads[].waveform and its CSV,
correction.detuning, correction.at_motor, motor.no_load_current, motor.at_motor) is broken once.
"""

from __future__ import annotations

import math
import shutil
import textwrap
from pathlib import Path

import numpy as np
import pytest

from reportgen.cli import main

GOOD = """\
format: 1
project:
  title: PQ bad-input fixture
system:
  frequency: 60 Hz
  phases: 3
  voltage: 480 V
  source:
    utility: {short_circuit_power: 250 MVA, x_r: 10, voltage: 13.8 kV}
    transformer: {rating: 1500 kVA, impedance: 5.75 %, x_r: 6}
loads:
  - name: Drives
    demand: {power: 300 kW, power_factor: 0.9}
    harmonics: {5: 25 %, 7: 10 %}
  - name: Capture
    waveform: {file: capture.csv, voltage_column: v, current_column: i, time_column: t}
  - name: Fan
    motor: {output: 50 hp, efficiency: 93 %, power_factor: 0.8, no_load_current: 20 A, at_motor: true}
correction:
  target_power_factor: 0.95
  detuning: 7 %
"""


def capture_rows(cycles: float = 3.0, fs: float = 10_000.0) -> list[str]:
    """An invented one-phase capture: 277 V, 50 A lagging 20 degrees with a 20 % 5th harmonic."""
    n = int(round(cycles * fs / 60.0))
    t = np.arange(n) / fs
    w = 2 * math.pi * 60.0
    v = 277 * math.sqrt(2) * np.cos(w * t)
    i = 50 * math.sqrt(2) * (np.cos(w * t - 0.35) + 0.2 * np.cos(5 * (w * t - 0.35)))
    return ["t,v,i"] + [f"{a:.6f},{b:.3f},{c:.4f}" for a, b, c in zip(t, v, i)]


def make(tmp_path: Path, text: str = GOOD, rows: list[str] | None = None, name: str = "p") -> Path:
    proj = tmp_path / name
    proj.mkdir(exist_ok=True)
    (proj / "project.yaml").write_text(textwrap.dedent(text))
    (proj / "capture.csv").write_text("\n".join(rows if rows is not None else capture_rows()) + "\n")
    return proj


def calc(proj: Path, capsys) -> tuple[int, list[str]]:
    code = main(["calc", str(proj)])
    err = capsys.readouterr().err
    assert "Traceback" not in err
    return code, [line for line in err.splitlines() if line]


def test_good_fixture_is_good(tmp_path, capsys):
    code, lines = calc(make(tmp_path), capsys)
    assert code == 0 and lines == []


# (old text, new text, line, col, message fragment); lines and columns are 1-based in project.yaml
YAML_CASES = [
    # source: both fault-level forms for the utility
    ("short_circuit_power: 250 MVA, x_r: 10", "short_circuit_power: 250 MVA, fault_current: 10 kA, x_r: 10", 9, 14,
     "system.source.utility: utility: give exactly one of short_circuit_power, fault_current"),
    # source: the wrong kind of power
    ("short_circuit_power: 250 MVA", "short_circuit_power: 250 MW", 9, 36, "'250 MW' is the wrong kind of power"),
    # source: fault current without a unit
    ("short_circuit_power: 250 MVA", "fault_current: 10500", 9, 30, "'10500' has no unit"),
    # source: X/R not positive
    ("x_r: 10,", "x_r: -10,", 9, 50, "system.source.utility.x_r: must be greater than 0"),
    # source: utility voltage missing
    (", voltage: 13.8 kV}", "}", 9, 14, "missing required key 'voltage' in system.source.utility"),
    # source: unknown key with a hint
    ("transformer: {rating:", "transformer: {ratng:", 10, 19, "unknown key 'ratng' in system.source.transformer "
     "(did you mean 'rating'?)"),
    # source: transformer impedance out of range
    ("impedance: 5.75 %", "impedance: 60 %", 10, 48, "'60 %' is out of range: must be at most 0.5 (50 %)"),
    # source: transformer without the utility
    ("    utility: {short_circuit_power: 250 MVA, x_r: 10, voltage: 13.8 kV}\n", "", 9, 5,
     "system.source: a transformer needs the utility"),
    # source: utility and the bus's own fault level together
    ("    transformer: {rating: 1500 kVA, impedance: 5.75 %, x_r: 6}\n",
     "    short_circuit_power: 24 MVA\n    x_r: 7\n", 9, 5, "system.source: give either utility (and transformer) or the bus's own"),
    # source: bus fault level without X/R
    ("    utility: {short_circuit_power: 250 MVA, x_r: 10, voltage: 13.8 kV}\n"
     "    transformer: {rating: 1500 kVA, impedance: 5.75 %, x_r: 6}\n", "    short_circuit_power: 24 MVA\n", 9, 5,
     "short_circuit_power and x_r of the bus together"),
    # harmonics: order out of range
    ("harmonics: {5: 25 %, 7: 10 %}", "harmonics: {1: 25 %, 7: 10 %}", 14, 16,
     "harmonic order 1 is not a whole number from 2 to 50"),
    ("harmonics: {5: 25 %, 7: 10 %}", "harmonics: {fifth: 25 %}", 14, 16,
     "harmonic order 'fifth' is not a whole number from 2 to 50"),
    # harmonics: a negative or absurd percentage
    ("harmonics: {5: 25 %, 7: 10 %}", "harmonics: {5: -25 %}", 14, 16,
     "order 5: '-25 %' is out of range: must be at least 0"),
    ("harmonics: {5: 25 %, 7: 10 %}", "harmonics: {5: 250 %}", 14, 16, "order 5: '250 %' is out of range"),
    # harmonics: not a mapping
    ("harmonics: {5: 25 %, 7: 10 %}", "harmonics: [25 %, 10 %]", 14, 16, "expected a mapping of harmonic order"),
    # harmonics on a waveform load
    ("current_column: i, time_column: t}", "current_column: i, time_column: t}\n    harmonics: {5: 3 %}", 15, 5,
     "a waveform load takes its harmonics from the capture"),
    # waveform: current and shunt columns together; shunt without its resistance
    ("current_column: i,", "current_column: i, shunt_column: i,", 16, 15,
     "waveform: give exactly one of current_column, shunt_column"),
    ("current_column: i,", "shunt_column: i,", 16, 15, "loads[1].waveform: shunt_column needs shunt_resistance"),
    # waveform: missing required column key
    (", time_column: t}", "}", 16, 15, "missing required key 'time_column' in loads[1].waveform"),
    # waveform: the file missing, absolute, not a CSV
    ("file: capture.csv", "file: nothere.csv", 16, 22, "'nothere.csv': no such file beside project.yaml"),
    ("file: capture.csv", "file: /etc/passwd.csv", 16, 22, "file names must be relative to the project folder"),
    ("file: capture.csv", "file: capture.txt", 16, 22, "'capture.txt': expected a .csv file"),
    # detuning out of range
    ("detuning: 7 %", "detuning: 0 %", 21, 13, "'0 %' is out of range: must be greater than 0"),
    ("detuning: 7 %", "detuning: 7", 21, 13, "'7' is out of range: must be at most 0.5 (50 %)"),
    ("detuning: 7 %", "detuning: seven", 21, 13, "'seven' is not a detuning such as 0.84 or '84 %'"),
    # at_motor not a boolean
    ("  detuning: 7 %", "  detuning: 7 %\n  at_motor: perhaps", 22, 13, "correction.at_motor: must be a valid boolean"),
    # motor keys
    ("no_load_current: 20 A", "no_load_current: 20", 18, 82, "'20' has no unit"),
    ("no_load_current: 20 A", "no_load_current: -2 A", 18, 82, "'-2 A' is out of range: must be greater than 0"),
    ("at_motor: true}", "at_motor: often}", 18, 98, "loads[2].motor.at_motor: must be a valid boolean"),
]


@pytest.mark.parametrize("old, new, line, col, fragment", YAML_CASES)
def test_each_new_key(tmp_path, capsys, old, new, line, col, fragment):
    assert old in GOOD
    code, lines = calc(make(tmp_path, GOOD.replace(old, new)), capsys)
    assert code == 2
    hits = [x for x in lines if fragment in x]
    assert len(hits) == 1, lines
    assert f"p/project.yaml:{line}:{col}: " in hits[0], hits[0]
    assert len(lines) <= 2, lines


def test_file_outside_the_project_is_refused(tmp_path, capsys):
    (tmp_path / "outside.csv").write_text("\n".join(capture_rows()) + "\n")
    code, lines = calc(make(tmp_path, GOOD.replace("file: capture.csv", "file: ../outside.csv")), capsys)
    assert code == 2 and len(lines) == 1
    assert "p/project.yaml:16:22: '../outside.csv' is outside the project folder; refused" in lines[0]


def test_capture_shorter_than_one_cycle(tmp_path, capsys):
    code, lines = calc(make(tmp_path, rows=capture_rows(cycles=0.5)), capsys)
    assert code == 2 and len(lines) == 1
    # a file-level problem: located at the YAML key that names the file
    assert "p/project.yaml:16:22: capture.csv: the capture spans 0.50 cycles of 60 Hz" in lines[0], lines


def test_non_numeric_cell_is_located_in_the_csv(tmp_path, capsys):
    rows = capture_rows()
    t, v, i = rows[9].split(",")
    rows[9] = f"{t},12..5,{i}"  # file line 10
    code, lines = calc(make(tmp_path, rows=rows), capsys)
    assert code == 2 and len(lines) == 1
    assert f"p/capture.csv:10:{len(t) + 2}: column 'v': '12..5' is not a finite number" in lines[0], lines


def test_uneven_time_is_located_in_the_csv(tmp_path, capsys):
    rows = capture_rows()
    t, v, i = rows[101].split(",")  # file line 102, sample 101
    rows[101] = f"{float(t) + 3e-5:.6f},{v},{i}"
    code, lines = calc(make(tmp_path, rows=rows), capsys)
    assert code == 2 and len(lines) == 1
    assert "p/capture.csv:102:1: column 't': the samples are not evenly spaced" in lines[0], lines


def test_time_going_backwards_is_located_in_the_csv(tmp_path, capsys):
    rows = capture_rows()
    rows[50], rows[51] = rows[51], rows[50]
    code, lines = calc(make(tmp_path, rows=rows), capsys)
    assert code == 2 and len(lines) == 1
    assert "p/capture.csv:52:1: column 't': the time does not increase" in lines[0], lines


def test_missing_column_lists_the_columns(tmp_path, capsys):
    code, lines = calc(make(tmp_path, GOOD.replace("current_column: i", "current_column: amps")), capsys)
    assert code == 2 and len(lines) == 1
    assert "p/capture.csv:1:1: no current column 'amps'; the columns present are 't', 'v', 'i'" in lines[0]


# ------------------------------------------------------------------ build keeps the earlier good output


BUILD_CASES = [
    ("short_circuit_power: 250 MVA", "short_circuit_power: 250 MW", None),
    ("harmonics: {5: 25 %, 7: 10 %}", "harmonics: {60: 1 %}", None),
    ("file: capture.csv", "file: nothere.csv", None),
    ("detuning: 7 %", "detuning: 70 %", None),
    ("no_load_current: 20 A", "no_load_current: 20 V", None),
    (None, None, "csv"),
]


@pytest.fixture(scope="module")
def good_site(tmp_path_factory):
    base = tmp_path_factory.mktemp("pqsite")
    src = base / "src"
    src.mkdir()
    make(src, name="p")
    out = base / "out"
    assert main(["build", str(src), "--out", str(out), "--no-pdf", "--quiet"]) == 0
    assert (out / "p" / "results.json").is_file()
    return src, out


@pytest.mark.parametrize("old, new, what", BUILD_CASES)
def test_build_leaves_the_earlier_output_untouched(tmp_path, capsys, good_site, old, new, what):
    src0, out0 = good_site
    src, out = tmp_path / "src", tmp_path / "out"
    shutil.copytree(src0, src)
    shutil.copytree(out0, out)
    before = {p.relative_to(out): p.read_bytes() for p in (out / "p").rglob("*") if p.is_file()}
    y = src / "p" / "project.yaml"
    if what == "csv":
        rows = capture_rows()
        rows[20] = rows[20].replace(",", ",x", 1)
        (src / "p" / "capture.csv").write_text("\n".join(rows) + "\n")
    else:
        y.write_text(y.read_text().replace(old, new))
    capsys.readouterr()
    code = main(["build", str(src), "--out", str(out), "--no-pdf"])
    captured = capsys.readouterr()
    assert code == 2
    msg = captured.out + captured.err
    assert ("p/capture.csv:21:" if what == "csv" else "p/project.yaml:") in msg, msg
    after = {p.relative_to(out): p.read_bytes() for p in (out / "p").rglob("*") if p.is_file()}
    assert after == before
