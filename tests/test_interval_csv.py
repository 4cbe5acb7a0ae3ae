"""Interval and billing CSV readers: values, time zones, gaps and file:line:col messages."""

import math

import numpy as np
import pytest

from reportgen.errors import InputError
from reportgen.readers import billing, interval
from reportgen.readers.billing import read_billing_csv
from reportgen.readers.interval import read_interval_csv


def write(tmp_path, text, name="meter.csv"):
    f = tmp_path / name
    f.write_text(text, encoding="utf-8")
    return f


def messages(exc_info):
    return [str(p) for p in exc_info.value.problems]


GOOD = """time,kW,kvar
2024-01-01 00:00,100.5,60
2024-01-01 00:15,110,70.25
2024-01-01 00:30,120,80

2024-01-01 01:15,130,-10
"""


def test_reads_values_in_si_and_gaps(tmp_path):
    d = read_interval_csv(write(tmp_path, GOOD), "meter.csv", "time", "kW", "kvar")
    assert d.p_w.tolist() == [100.5e3, 110e3, 120e3, 130e3]  # kW -> W
    assert d.q_var.tolist() == [60e3, 70.25e3, 80e3, -10e3]  # kvar -> var
    assert str(d.t[0]) == "2024-01-01T00:00:00" and d.t.dtype == np.dtype("datetime64[s]")
    assert d.lines.tolist() == [2, 3, 4, 6]  # the blank line 5 is ignored
    assert d.info.interval_s == 900.0
    # 00:30 -> 01:15 is 45 min: two 15-min intervals missing (00:45, 01:00).
    assert len(d.gaps) == 1 and d.gaps[0].missing_intervals == 2 and d.gaps[0].duration_s == 1800.0
    assert d.t_s[0] == np.datetime64("2024-01-01T00:00:00", "s").astype(np.int64)


def test_timestamp_forms_and_time_zones(tmp_path):
    text = """Timestamp,P,Q
2024-06-01T12:00:00Z,1,0.5
2024-06-01T13:15:00+01:00,1,0.5
2024-06-01 07:30-0500,1,0.5
2024-06-01T12:45:00.250,1,0.5
2024-06-01 13:00:00,1,0.5
"""
    d = read_interval_csv(write(tmp_path, text), "m.csv", "timestamp", "p", "q", power_unit="W")
    # All converted to UTC: 12:00, 12:15, 12:30, 12:45 (fraction dropped), 13:00 (no offset).
    assert [str(x) for x in d.t] == [
        "2024-06-01T12:00:00", "2024-06-01T12:15:00", "2024-06-01T12:30:00",
        "2024-06-01T12:45:00", "2024-06-01T13:00:00",
    ]
    assert d.p_w.tolist() == [1.0] * 5  # power_unit W: no scaling


def test_power_factor_column(tmp_path):
    text = "t,kw,pf\n2024-01-01 00:00,100,0.8\n2024-01-01 00:15,100,-0.8\n2024-01-01 00:30,100,1\n"
    d = read_interval_csv(write(tmp_path, text), "m.csv", "t", "kw", power_factor_column="pf")
    # Q = P tan(acos 0.8) = 75 kvar, negative where the PF is given negative (leading).
    assert d.q_var == pytest.approx([75e3, -75e3, 0.0])
    bad = "t,kw,pf\n2024-01-01 00:00,100,0.8\n2024-01-01 00:15,100,1.2\n"
    with pytest.raises(InputError) as ei:
        read_interval_csv(write(tmp_path, bad), "m.csv", "t", "kw", power_factor_column="pf")
    assert messages(ei) == ["m.csv:3:3: power factor '1.2' in column 'pf' must be between -1 and 1 and not 0"]


def test_empty_reading_skipped(tmp_path):
    text = "time,kW,kvar\n2024-01-01 00:00,100,60\n2024-01-01 00:15,,70\n2024-01-01 00:30,120,80\n"
    d = read_interval_csv(write(tmp_path, text), "m.csv", "time", "kW", "kvar")
    assert d.p_w.tolist() == [100e3, 120e3]
    assert [str(p) for p in d.skipped] == ["m.csv:3:2: empty value in column 'kW'; row skipped"]


def test_missing_file(tmp_path):
    with pytest.raises(InputError) as ei:
        read_interval_csv(tmp_path / "nope.csv", "data/nope.csv", "time", "kW", "kvar")
    assert messages(ei) == ["data/nope.csv:1:1: file not found"]


def test_missing_column_names_the_columns_present(tmp_path):
    with pytest.raises(InputError) as ei:
        read_interval_csv(write(tmp_path, GOOD), "meter.csv", "time", "kW", "kVAr_total")
    assert messages(ei) == [
        "meter.csv:1:1: no reactive-power column 'kVAr_total'; the columns present are 'time', 'kW', 'kvar'"
    ]


def test_bad_timestamp(tmp_path):
    text = "time,kW,kvar\n2024-01-01 00:00,1,1\n2024-01-01 0:15,1,1\n2024-13-01 00:30,1,1\n"
    with pytest.raises(InputError) as ei:
        read_interval_csv(write(tmp_path, text), "meter.csv", "time", "kW", "kvar")
    example = "expected ISO 8601 such as 2024-01-31 13:45 or 2024-01-31T13:45:00+01:00"
    assert messages(ei) == [
        f"meter.csv:3:1: bad timestamp '2024-01-01 0:15' in column 'time'; {example}",
        f"meter.csv:4:1: bad timestamp '2024-13-01 00:30' in column 'time'; {example}",
    ]
    for junk in ("today", "NaT", "2024", "2024-01-01T10:00+25:00"):
        with pytest.raises(InputError, match=r"meter.csv:3:1: bad timestamp"):
            read_interval_csv(write(tmp_path, f"time,kW,kvar\n2024-01-01 00:00,1,1\n{junk},1,1\n"),
                              "meter.csv", "time", "kW", "kvar")


def test_text_in_a_number_column(tmp_path):
    text = "time,kW,kvar\n2024-01-01 00:00,1,1\n2024-01-01 00:15,1,n/a\n2024-01-01 00:30,inf,1\n"
    with pytest.raises(InputError) as ei:
        read_interval_csv(write(tmp_path, text), "meter.csv", "time", "kW", "kvar")
    assert messages(ei) == [
        "meter.csv:3:3: 'n/a' in column 'kvar' is not a number",
        "meter.csv:4:2: 'inf' in column 'kW' is not a number",
    ]


def test_duplicate_and_out_of_order_times(tmp_path):
    text = ("time,kW,kvar\n2024-01-01 00:00,1,1\n2024-01-01 00:15,1,1\n2024-01-01 00:15,1,1\n"
            "2024-01-01 00:45,1,1\n2024-01-01 00:30,1,1\n")
    with pytest.raises(InputError) as ei:
        read_interval_csv(write(tmp_path, text), "meter.csv", "time", "kW", "kvar")
    assert messages(ei) == [
        "meter.csv:4:1: duplicate time 2024-01-01T00:15:00 (also on line 3)",
        "meter.csv:6:1: time 2024-01-01T00:30:00 is earlier than 2024-01-01T00:45:00 on line 5; "
        "rows must be in time order",
    ]


def test_short_row_and_quoted_lines(tmp_path):
    text = 'time,kW,kvar\n2024-01-01 00:00,1,1\n"2024-01-01 00:15",1\n'
    with pytest.raises(InputError) as ei:
        read_interval_csv(write(tmp_path, text), "meter.csv", "time", "kW", "kvar")
    assert messages(ei) == ["meter.csv:3:3: row has 2 field(s); column 'kvar' (field 3) is missing"]
    # A quoted field spanning two lines: line numbers still count physical lines.
    text = 'time,note,kW,kvar\n2024-01-01 00:00,"two\nlines",1,1\n2024-01-01 00:15,x,1,oops\n'
    with pytest.raises(InputError) as ei:
        read_interval_csv(write(tmp_path, text), "meter.csv", "time", "kW", "kvar")
    assert messages(ei) == ["meter.csv:4:4: 'oops' in column 'kvar' is not a number"]


def test_size_and_row_limits(tmp_path, monkeypatch):
    f = write(tmp_path, GOOD)
    monkeypatch.setattr(interval, "MAX_BYTES", 50)
    with pytest.raises(InputError) as ei:
        read_interval_csv(f, "meter.csv", "time", "kW", "kvar")
    assert messages(ei)[0].startswith("meter.csv:1:1: file is 0.0 MB; the limit is 0 MB")
    monkeypatch.setattr(interval, "MAX_BYTES", 10_000)
    monkeypatch.setattr(interval, "MAX_ROWS", 3)
    with pytest.raises(InputError) as ei:
        read_interval_csv(f, "meter.csv", "time", "kW", "kvar")
    assert messages(ei) == [
        "meter.csv:6:1: more than 3 data rows; the limit is 3 (split the data or use a longer interval)"
    ]


def test_year_of_15_minute_data(tmp_path):
    n = 35040
    t = np.datetime64("2023-01-01T00:00:00") + np.arange(n) * np.timedelta64(900, "s")
    p = 200 + 100 * np.sin(np.arange(n) / 40)
    lines = ["time,kW,kvar"] + [f"{str(a).replace('T', ' ')[:16]},{b:.2f},{0.6 * b:.2f}" for a, b in zip(t, p)]
    d = read_interval_csv(write(tmp_path, "\n".join(lines) + "\n"), "y.csv", "time", "kW", "kvar")
    assert d.t.size == n and d.info.interval_s == 900.0 and not d.gaps
    assert np.array_equal(d.t, t)
    assert d.p_w == pytest.approx(np.round(p, 2) * 1e3)


BILLS = """month,kWh,kvarh,peak_kW,peak_kVA,billed_amount
2024-02,90000,60000,380,,8500.10
2024-01,100000,75000,400,500,9120.55
"""


def test_billing_reader(tmp_path):
    u = read_billing_csv(write(tmp_path, BILLS, "bills.csv"), "bills.csv")
    assert [m.month for m in u] == ["2024-01", "2024-02"]
    assert u[0].energy_wh == 100_000e3 and u[0].reactive_energy_varh == 75_000e3
    assert u[0].peak_w == 400e3 and u[0].peak_va == 500e3 and u[0].billed_amount == 9120.55
    assert u[1].peak_va is None
    # PF from the bill: 400 / 500 = 0.80 (peak kVA present).
    from reportgen.calc.tariff import month_pf
    assert month_pf(u[0]) == pytest.approx(0.8)
    assert month_pf(u[1]) == pytest.approx(90 / math.hypot(90, 60))


def test_billing_reader_errors(tmp_path):
    text = ("month,kwh,kvarh,peak_kw,peak_kva\n2024-1,1,1,1,\n2024-02,1,x,1,\n2024-03,1,1,-4,\n"
            "2024-04,1,1,100,90\n2024-03,1,1,1,\n")
    with pytest.raises(InputError) as ei:
        read_billing_csv(write(tmp_path, text, "b.csv"), "b.csv")
    assert messages(ei) == [
        "b.csv:2:1: bad month '2024-1'; write it as YYYY-MM, e.g. 2024-03",
        "b.csv:3:3: 'x' in column 'kvarh' is not a number",
        "b.csv:4:4: '-4' in column 'peak_kw' must not be negative",
        "b.csv:5:5: peak kVA is below peak kW; kVA can never be less than kW",
        "b.csv:6:1: month 2024-03 appears twice (also on line 4)",
    ]
    with pytest.raises(InputError) as ei:
        read_billing_csv(write(tmp_path, "month,kwh,peak_kw\n2024-01,1,1\n", "b.csv"), "b.csv")
    assert messages(ei) == ["b.csv:1:1: no column 'kvarh'; the columns present are 'month', 'kwh', 'peak_kw'"]
    assert billing.REQUIRED == ("month", "kwh", "kvarh", "peak_kw")
