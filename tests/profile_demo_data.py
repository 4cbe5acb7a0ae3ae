"""Deterministic generator of the invented demo data of projects_demo/eastfield-dc-480v.

An invented distribution warehouse on a 480 V service, one calendar year (2025) of 15-minute
interval data: conveyor and sorter motors on two weekday shifts and a Saturday morning, rooftop
air handling that follows the season and the afternoon, LED lighting, night-time forklift
battery charging and a small base load. Five invented closure days. Two meter outages (gaps)
and one empty reading are left in the file so the report shows how they are handled. The
monthly bills are made from the complete data (the utility meter has no gaps) under the demo
tariff, plus an invented 4 % of taxes and riders in the billed amount.

Run ``python tests/profile_demo_data.py`` to rewrite the two CSV files; the output is the same
on every run (fixed random seed, fixed formatting). ``test_profile_integration`` checks that the
committed files are what this script writes.
"""

from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np

DEMO = Path(__file__).resolve().parent.parent / "projects_demo" / "eastfield-dc-480v"
SURVEY = DEMO.parent / "eastfield-dc-design-480v"
SURVEY_SPAN = ("2025-06-02", "2025-09-01")  # a 13-week summer logger survey, Monday to Monday
START = np.datetime64("2025-01-01T00:00")
N = 365 * 96
CLOSED = ("2025-01-01", "2025-05-26", "2025-07-04", "2025-11-27", "2025-12-25")
GAPS = (("2025-03-11T09:00", 24), ("2025-08-19T14:00", 192))  # (start, intervals missing)
EMPTY_READING = "2025-06-03T10:30"


def _smooth(rng, n, width):
    x = rng.normal(0.0, 1.0, n + width)
    k = np.ones(width) / width
    return np.convolve(x, k, mode="valid")[:n] * math.sqrt(width)


def profile() -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(t as datetime64[m], P in kW, Q in kvar) for every interval of the year, no gaps."""
    rng = np.random.default_rng(20250101)
    k = np.arange(N)
    t = START + k * np.timedelta64(15, "m")
    hour = (k % 96) / 4.0
    day = k // 96
    dow = (day + 2) % 7  # 2025-01-01 is a Wednesday; 0 = Monday
    doy = day.astype(float)
    closed = np.isin(t.astype("datetime64[D]"), np.array(CLOSED, dtype="datetime64[D]"))
    # shifts: weekdays 06:00-22:00 (two shifts), Saturday 06:00-14:00
    weekday_shift = (dow < 5) & (hour >= 6) & (hour < 22)
    saturday = (dow == 5) & (hour >= 6) & (hour < 14)
    working = (weekday_shift | saturday) & ~closed
    # daily throughput varies (busier before the holidays), smooth within a day
    daily = 1.0 + 0.08 * np.repeat(rng.normal(0.0, 1.0, 366), 96)[:N] + 0.10 * np.exp(-((doy - 335) / 20) ** 2)
    wander = _smooth(rng, N, 8) * 0.04
    conveyor_kw = np.where(working, 165.0 * daily * (1 + wander), 0.0)
    conveyor_kw *= np.where((hour >= 13.5) & (hour < 14.5) & weekday_shift, 0.55, 1.0)  # shift change
    conveyor_pf = 0.70 + 0.03 * np.clip(wander * 5, -1, 1)
    # air handling: season (peak late July) and afternoon
    season = 0.5 + 0.5 * np.cos(2 * math.pi * (doy - 205) / 365)
    afternoon = np.exp(-((hour - 15.0) / 4.0) ** 2)
    hvac_kw = 18.0 + 95.0 * season * (0.35 + 0.65 * afternoon) * np.where(working, 1.0, 0.6)
    hvac_kw *= 1 + _smooth(rng, N, 16) * 0.05
    hvac_pf = 0.83
    # LED lighting and offices
    light_kw = np.where(working, 52.0, 14.0) + np.where((dow < 5) & (hour >= 7) & (hour < 18) & ~closed, 12.0, 0.0)
    light_pf = 0.95
    # forklift chargers: nights after a working day, 22:00-05:00
    day_working = (dow <= 5) & ~closed
    charging = ((hour >= 22) & day_working) | ((hour < 5) & np.roll(day_working, 96))
    charger_kw = np.where(charging, 48.0 * (1 + 0.1 * rng.normal(0, 1, N).clip(-2, 2)), 0.0)
    charger_pf = 0.93
    base_kw = 16.0 + 2.0 * rng.normal(0, 1, N).clip(-2, 2)
    base_pf = 0.86

    def q(p, pf):
        return p * np.tan(np.arccos(pf))

    p_kw = conveyor_kw + hvac_kw + light_kw + charger_kw + base_kw
    q_kvar = (q(conveyor_kw, conveyor_pf) + q(hvac_kw, hvac_pf) + q(light_kw, light_pf)
              + q(charger_kw, charger_pf) + q(base_kw, base_pf))
    return t, np.round(p_kw, 1), np.round(q_kvar, 1)


def write(folder: Path = DEMO) -> None:
    t, p, q = profile()
    keep = np.ones(N, dtype=bool)
    for start, count in GAPS:
        i = int((np.datetime64(start) - START) / np.timedelta64(15, "m"))
        keep[i: i + count] = False
    ts = np.datetime_as_string(t, unit="m")
    ts = np.char.replace(ts, "T", " ")
    empty = str(np.datetime64(EMPTY_READING)).replace("T", " ")
    lines = ["time,kw,kvar\n"]
    for a, b, c, k in zip(ts.tolist(), p.tolist(), q.tolist(), keep.tolist()):
        if not k:
            continue
        lines.append(f"{a},{b:.1f},\n" if a == empty else f"{a},{b:.1f},{c:.1f}\n")
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "interval.csv").write_text("".join(lines), encoding="utf-8")
    (folder / "bills.csv").write_text(bills(t, p, q), encoding="utf-8")


def bills(t, p_kw, q_kvar) -> str:
    """Monthly bills from the complete data: 0.11 per kWh, 14.50 per kW-month of demand adjusted
    by 0.90 / PF below 0.90 (PF at the peak, from the peak kVA), 95 customer charge, +4 %."""
    months = t.astype("datetime64[M]")
    rows = ["month,kwh,kvarh,peak_kw,peak_kva,billed_amount\n"]
    for m in np.unique(months):
        sel = months == m
        kwh = float(p_kw[sel].sum() * 0.25)
        kvarh = float(np.clip(q_kvar[sel], 0, None).sum() * 0.25)
        i = int(np.argmax(p_kw[sel]))
        peak_kw = float(p_kw[sel][i])
        peak_kva = float(np.hypot(p_kw[sel], q_kvar[sel]).max())
        pf = peak_kw / peak_kva
        billed_kw = peak_kw * (0.90 / pf if pf < 0.90 else 1.0)
        amount = (kwh * 0.11 + billed_kw * 14.50 + 95.0) * 1.04
        rows.append(f"{m},{kwh:.0f},{kvarh:.0f},{peak_kw:.1f},{peak_kva:.1f},{amount:.2f}\n")
    return "".join(rows)


def write_survey(folder: Path = SURVEY) -> None:
    """The design-mode variant: thirteen summer weeks from a portable logger that records kW and
    the power factor (rounded to three decimals), no bills."""
    t, p, q = profile()
    sel = (t >= np.datetime64(SURVEY_SPAN[0])) & (t < np.datetime64(SURVEY_SPAN[1]))
    t, p, q = t[sel], p[sel], q[sel]
    pf = p / np.hypot(p, q)
    ts = np.char.replace(np.datetime_as_string(t, unit="s"), "T", " ")
    lines = ["timestamp,kW,PF\n"] + [f"{a},{b:.1f},{c:.3f}\n" for a, b, c in zip(ts.tolist(), p.tolist(), pf.tolist())]
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "survey.csv").write_text("".join(lines), encoding="utf-8")


if __name__ == "__main__":
    if len(sys.argv) > 1:
        write(Path(sys.argv[1]))
    else:
        write()
        write_survey()
