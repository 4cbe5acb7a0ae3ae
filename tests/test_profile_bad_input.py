"""Bad input to the profile feature: every new key, the CSV files and the money strings.

Each problem is one located line ``file:line:col: message``, exit code 2, no traceback; a
failed build leaves the project's earlier outputs as they were. Expected columns are found
from the text of the fixture (the position of the offending value), not from the code under test.
"""

from __future__ import annotations

import shutil
import textwrap
from pathlib import Path

import pytest

from reportgen.cli import main

GOOD = """\
format: 1
project:
  title: Profile bad-input fixture
system:
  frequency: 60 Hz
  phases: 3
  voltage: 480 V
loads:
  - name: Service
    interval: {file: interval.csv, timestamp_column: time, power_column: kw, reactive_column: kvar}
  - name: Bills
    billing: {file: bills.csv}
correction:
  target_power_factor: 0.95
  bank: automatic
  steps: {count: 4, size: 25 kvar}
  controller: {target_power_factor: 0.95, never_leading: true}
tariff:
  currency: USD
  demand_charge: 14.50 per kW-month
  power_factor_clause: {kind: adjusted_demand, reference_power_factor: 0.90}
  energy_charge: 0.11 per kWh
economics: {installed_cost: 30000 USD, discount_rate: 7 %, years: 15, capacitor_losses: 0.5 W/kvar}
"""


def interval_csv(rows: int = 48) -> str:
    out = ["time,kw,kvar"]
    for h in range(rows):
        day, hour = divmod(h, 24)
        p = 80 + 120 * (7 <= hour < 19)
        out.append(f"2025-01-{day + 1:02d} {hour:02d}:00,{p:.1f},{p * 0.75:.1f}")
    return "\n".join(out) + "\n"


BILLS = "month,kwh,kvarh,peak_kw,peak_kva\n2025-01,60000,45000,210,262\n"


def make(tmp_path: Path, text: str = GOOD, csv: str | None = None, bills: str = BILLS) -> Path:
    proj = tmp_path / "p"
    proj.mkdir(exist_ok=True)
    (proj / "project.yaml").write_text(textwrap.dedent(text))
    (proj / "interval.csv").write_text(interval_csv() if csv is None else csv)
    (proj / "bills.csv").write_text(bills)
    return proj


def run(proj: Path, capsys) -> tuple[int, list[str]]:
    capsys.readouterr()
    code = main(["calc", str(proj)])
    err = capsys.readouterr().err
    assert "Traceback" not in err
    return code, [line for line in err.splitlines() if line]


def at(text: str, token: str, nth: int = 1) -> tuple[int, int]:
    """1-based (line, col) of the nth occurrence of token in text."""
    i = -1
    for _ in range(nth):
        i = text.index(token, i + 1)
    line = text.count("\n", 0, i) + 1
    col = i - (text.rfind("\n", 0, i) + 1) + 1
    return line, col


def test_good_fixture_is_good(tmp_path, capsys):
    code, lines = run(make(tmp_path), capsys)
    assert code == 0 and lines == []


# (old, new, token whose position the problem must name, message fragment)
YAML_CASES = [
    # money strings
    ("demand_charge: 14.50 per kW-month", "demand_charge: 14.50 kW-month", "14.50 kW-month",
     "tariff.demand_charge: '14.50 kW-month' is not a price such as '14.50 per kW-month'"),
    ("demand_charge: 14.50 per kW-month", "demand_charge: 14.50 per kWh", "14.50 per kWh",
     "'kWh' is not a unit this price can be per; use one of W-month, kW-month, MW-month, VA-month"),
    ("demand_charge: 14.50 per kW-month", "demand_charge: 14.50", "14.50",
     "tariff.demand_charge: '14.5' has no unit; write the price with 'per' and its unit"),
    ("energy_charge: 0.11 per kWh", "energy_charge: eleven per kWh", "eleven per kWh",
     "tariff.energy_charge: 'eleven per kWh' is not a price such as '0.11 per kWh'"),
    ("energy_charge: 0.11 per kWh", "energy_charge: -0.11 per kWh", "-0.11 per kWh",
     "'-0.11 per kWh': a price must not be negative"),
    ("installed_cost: 30000 USD", 'installed_cost: "30,000 USD"', '"30,000 USD"',
     "economics.installed_cost: '30,000 USD': write the amount without thousands separators"),
    ("installed_cost: 30000 USD", "installed_cost: 30000", "30000",
     "economics.installed_cost: '30000' has no currency; write an amount with its currency code"),
    ("installed_cost: 30000 USD", "installed_cost: $30000", "$30000",
     "'$30000' is not an amount such as '30000 USD'"),
    ("installed_cost: 30000 USD", "installed_cost: 30000 EUR", "30000 EUR",
     "economics.installed_cost: '30000 EUR' is in EUR, but tariff.currency is USD"),
    ("energy_charge: 0.11 per kWh", "energy_charge: 0.11 CAD per kWh", "0.11 CAD per kWh",
     "tariff.energy_charge: '0.11 CAD per kWh' is in CAD, but tariff.currency is USD"),
    ("currency: USD", "currency: usd", "usd", "tariff.currency: String should match pattern"),
    ("capacitor_losses: 0.5 W/kvar", "capacitor_losses: 0.5 W", "0.5 W}",
     "economics.capacitor_losses: '0.5 W' is not a loss per kvar such as '0.5 W/kvar'"),
    # economics and tariff keys
    ("years: 15", "years: 0", "0,", "economics.years: must be greater than or equal to 1"),
    ("discount_rate: 7 %", "discount_rate: -5 %", "-5 %", "economics.discount_rate: '-5 %' is out of range"),
    ("capacitor_losses: 0.5 W/kvar}", "capacitor_losses: 0.5 W/kvar, transformer_rating: 750 kVA}",
     "{installed_cost", "economics: give transformer_rating and transformer_load_loss together"),
    ("kind: adjusted_demand, reference_power_factor: 0.90", "kind: adjusted_demand", "{kind",
     "tariff.power_factor_clause: adjusted_demand needs reference_power_factor"),
    ("kind: adjusted_demand, reference_power_factor: 0.90", "kind: kva_demand", "14.50 per kW-month",
     "tariff.demand_charge: under a kva_demand clause the demand charge is per kVA-month"),
    ("kind: adjusted_demand,", "kind: power_factor_penalty,", "power_factor_penalty",
     "tariff.power_factor_clause.kind: must be 'adjusted_demand', 'kva_demand' or 'kvarh_charge'"),
    ("reference_power_factor: 0.90}", "reference_power_factor: 0.90, rate: 0.02 per kvarh}", "0.02 per kvarh",
     "tariff.power_factor_clause.rate does not apply to adjusted_demand"),
    # correction keys
    ("  steps: {count: 4, size: 25 kvar}\n", "  steps: auto\n", "auto\n",
     "correction.steps: 'auto': write steps: design to let reportgen choose the steps"),
    ("steps: {count: 4, size: 25 kvar}", "steps: {count: 4}", "{count: 4}",
     "correction.steps: give count and size (missing size), or write steps: design"),
    ("size: 25 kvar}", "size: 25 kW}", "25 kW", "correction.steps.size: '25 kW' is the wrong kind of power"),
    ("steps: {count: 4,", "steps: {count: 0,", "0,", "correction.steps.count: must be greater than or equal to 1"),
    ("steps: {count: 4, size: 25 kvar}", "steps: {count: 20, size: 5 kvar, weighting: binary}", "{count: 20",
     "a binary-weighted bank has at most 16 steps, got 20"),
    ("  bank: automatic\n", "  bank: fixed\n", "target_power_factor",
     "correction: steps applies to an automatic bank only; add bank: automatic"),
    ("  bank: automatic\n", "  bank: switched\n", "switched", "correction.bank: must be 'fixed' or 'automatic'"),
    ("controller: {target_power_factor: 0.95,", "controller: {target_power_factor: 1.2,", "1.2",
     "correction.controller.target_power_factor: '1.2' is out of range: must be at most 1"),
    ("never_leading: true}", "never_leading: sometimes}", "sometimes",
     "correction.controller.never_leading: must be a valid boolean"),
    # load keys
    ("reactive_column: kvar}", "reactive_column: kvar, power_factor_column: pf}", "{file: interval.csv",
     "loads[0].interval: give exactly one of reactive_column, power_factor_column (got reactive_column, power_factor_column)"),
    ("power_column: kw, ", "", "{file: interval.csv", "missing required key 'power_column' in loads[0].interval"),
    ("power_column: kw,", "power_colum: kw,", "power_colum", "unknown key 'power_colum' in loads[0].interval "
     "(did you mean 'power_column'?)"),
    ("{file: interval.csv,", "{file: ../interval.csv,", "../interval.csv",
     "'../interval.csv' is outside the project folder; refused"),
    ("{file: interval.csv,", "{file: missing.csv,", "missing.csv", "'missing.csv': no such file beside project.yaml"),
    ("billing: {file: bills.csv}", "billing: {file: bills.txt}", "bills.txt", "'bills.txt': expected a .csv file"),
    ("  - name: Bills\n", "  - name: Bills\n    count: 2\n", "2\n", "loads[1].count: an billing load is one "
     "metered service; count must be 1"),
]


@pytest.mark.parametrize("old, new, token, fragment", YAML_CASES, ids=[c[3][:40] for c in YAML_CASES])
def test_each_new_key(tmp_path, capsys, old, new, token, fragment):
    assert old in GOOD
    text = GOOD.replace(old, new, 1)
    code, lines = run(make(tmp_path, text), capsys)
    assert code == 2
    hits = [x for x in lines if fragment in x]
    assert len(hits) == 1, lines
    line, col = at(text, token)
    assert f"p/project.yaml:{line}:{col}: " in hits[0], (hits[0], line, col)
    assert len(lines) <= 2, lines


def test_two_interval_loads_and_design_without_interval(tmp_path, capsys):
    text = GOOD.replace("  - name: Bills\n", "  - name: Second meter\n    interval: {file: interval.csv, "
                        "timestamp_column: time, power_column: kw, reactive_column: kvar}\n  - name: Bills\n")
    code, lines = run(make(tmp_path, text), capsys)
    assert code == 2 and len(lines) == 1
    line, col = at(text, "{file: interval.csv", 2)
    assert f"p/project.yaml:{line}:{col}: loads[1].interval: only one interval load per project" in lines[0]

    text = GOOD.replace("  - name: Service\n    interval: {file: interval.csv, timestamp_column: time, "
                        "power_column: kw, reactive_column: kvar}\n",
                        "  - name: Service\n    demand: {power: 200 kW, power_factor: 0.8}\n")
    text = text.replace("steps: {count: 4, size: 25 kvar}", "steps: design")
    code, lines = run(make(tmp_path, text), capsys)
    line, col = at(text, "design\n")
    assert code == 2 and len(lines) == 1
    assert f"p/project.yaml:{line}:{col}: correction.steps: 'design' searches the steps over interval data" in lines[0]


def test_economics_without_tariff(tmp_path, capsys):
    text = GOOD[:GOOD.index("tariff:")] + GOOD[GOOD.index("economics:"):]
    code, lines = run(make(tmp_path, text), capsys)
    line, col = at(text, "{installed_cost")
    assert code == 2 and len(lines) == 1
    assert f"p/project.yaml:{line}:{col}: economics needs a tariff (the prices of demand and energy)" in lines[0]


def _shift(csv: str, line: int, new: str) -> str:
    rows = csv.splitlines()
    rows[line - 1] = new
    return "\n".join(rows) + "\n"


CSV_CASES = [
    # (change the interval file, expected "file:line:col: message" tail)
    (lambda c: _shift(c, 5, "2025-01-01 0x:00,80.0,60.0"), "interval.csv:5:1: bad timestamp '2025-01-01 0x:00' in "
     "column 'time'; expected ISO 8601 such as 2024-01-31 13:45"),
    (lambda c: c.replace("time,kw,kvar", "time,kw,kva"), "interval.csv:1:1: no reactive-power column 'kvar'; the "
     "columns present are 'time', 'kw', 'kva'"),
    (lambda c: _shift(c, 7, "2025-01-01 05:00,abc,60.0"), "interval.csv:7:2: 'abc' in column 'kw' is not a number"),
    (lambda c: _shift(c, 8, "2025-01-01 05:00,80.0,60.0"), "interval.csv:8:1: duplicate time 2025-01-01T05:00:00 "
     "(also on line 7)"),
    (lambda c: _shift(c, 8, "2025-01-01 04:00,80.0,60.0"), "interval.csv:8:1: time 2025-01-01T04:00:00 is earlier "
     "than 2025-01-01T05:00:00 on line 7; rows must be in time order"),
    (lambda c: _shift(c, 9, "2025-01-01 07:00,80.0"), "interval.csv:9:3: row has 2 field(s); column 'kvar' "
     "(field 3) is missing"),
]


@pytest.mark.parametrize("change, expected", CSV_CASES, ids=[c[1][13:50] for c in CSV_CASES])
def test_interval_csv_errors_through_the_cli(tmp_path, capsys, change, expected):
    proj = make(tmp_path, csv=change(interval_csv()))
    code, lines = run(proj, capsys)
    assert code == 2
    assert len(lines) == 1 and expected in lines[0], lines
    assert lines[0].startswith(str(proj / "interval.csv")) or lines[0].startswith("p/interval.csv") or \
        lines[0].split(":")[0].endswith("p/interval.csv")


@pytest.mark.parametrize("bills, expected", [
    ("month,kwh,kvarh,peak_kw\n2025-13,1,1,1\n", "bills.csv:2:1: bad month '2025-13'; write it as YYYY-MM"),
    ("month,kwh,kvarh,peak_kw\n2025-01,lots,1,1\n", "bills.csv:2:2: 'lots' in column 'kwh' is not a number"),
    ("month,kwh,peak_kw\n2025-01,1,1\n", "bills.csv:1:1: no column 'kvarh'; the columns present are"),
    ("month,kwh,kvarh,peak_kw\n2025-01,1,1,1\n2025-01,2,2,2\n", "bills.csv:3:1: month 2025-01 appears twice "
     "(also on line 2)"),
])
def test_billing_csv_errors_through_the_cli(tmp_path, capsys, bills, expected):
    code, lines = run(make(tmp_path, bills=bills), capsys)
    assert code == 2 and len(lines) == 1 and expected in lines[0], lines


def test_build_leaves_earlier_output_untouched(tmp_path, capsys):
    src = tmp_path / "src"
    src.mkdir()
    proj = make(src)
    out = tmp_path / "out"
    assert main(["build", str(src), "--out", str(out), "--no-pdf", "--quiet"]) == 0
    before = {p.relative_to(out): p.read_bytes() for p in (out / "p").rglob("*") if p.is_file()}
    assert before
    for breakage in ("csv", "money"):
        if breakage == "csv":
            (proj / "interval.csv").write_text(_shift(interval_csv(), 6, "2025-01-01 04:00,80.0,oops"))
        else:
            (proj / "interval.csv").write_text(interval_csv())
            y = proj / "project.yaml"
            y.write_text(y.read_text().replace("0.11 per kWh", "0.11 per kW"))
        capsys.readouterr()
        code = main(["build", str(src), "--out", str(out), "--no-pdf"])
        captured = capsys.readouterr()
        assert code == 2
        assert ("interval.csv:6:3:" if breakage == "csv" else "project.yaml:22:18:") in captured.out + captured.err
        after = {p.relative_to(out): p.read_bytes() for p in (out / "p").rglob("*") if p.is_file()}
        assert after == before  # untouched
