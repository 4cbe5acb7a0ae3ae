"""Waveform analysis against synthesized signals and numpy.fft / scipy; the CSV capture reader."""

from __future__ import annotations

import math

import numpy as np
import pytest

from reportgen.calc.errors import CalcError
from reportgen.calc.waveform import analyze_waveform, estimate_frequency
from reportgen.errors import InputError
from reportgen.readers import waveform as wr
from reportgen.readers.waveform import read_waveform_csv

# Synthesized capture: rms magnitudes and phases (cos reference at the first sample).
V_H = {1: (277.0, 0.3), 5: (8.0, -1.0), 7: (3.0, 2.0)}
I_H = {1: (100.0, 0.3 - 0.6), 3: (12.0, 1.1), 5: (30.0, 0.5), 7: (10.0, -2.5), 11: (5.0, 0.0)}


def synth(f=60.0, fs=7200.0, cycles=10.0, noise=0.0, dc=(0.0, 0.0), t0=0.25, seed=7):
    n = int(round(cycles * fs / f))
    t = t0 + np.arange(n) / fs
    tau = t - t0
    v = dc[0] + sum(math.sqrt(2) * a * np.cos(2 * math.pi * k * f * tau + ph) for k, (a, ph) in V_H.items())
    i = dc[1] + sum(math.sqrt(2) * a * np.cos(2 * math.pi * k * f * tau + ph) for k, (a, ph) in I_H.items())
    if noise:
        rng = np.random.default_rng(seed)
        v = v + noise * rng.standard_normal(n)
        i = i + noise * rng.standard_normal(n)
    return t, v, i


def exact():
    """Expected values from the synthesis parameters (hand calculation)."""
    v1, pv = V_H[1]
    i1, pi_ = I_H[1]
    phi = pv - pi_
    p = sum(V_H[k][0] * I_H[k][0] * math.cos(V_H[k][1] - I_H[k][1]) for k in V_H if k in I_H)
    vr = math.sqrt(sum(a * a for a, _ in V_H.values()))
    ir = math.sqrt(sum(a * a for a, _ in I_H.values()))
    return {
        "p": p, "v_rms": vr, "i_rms": ir, "pf": p / (vr * ir), "dpf": math.cos(phi),
        "p1": v1 * i1 * math.cos(phi), "q1": v1 * i1 * math.sin(phi),
        "thd_v": math.sqrt(sum(V_H[k][0] ** 2 for k in V_H if k > 1)) / v1 * 100,
        "thd_i": math.sqrt(sum(I_H[k][0] ** 2 for k in I_H if k > 1)) / i1 * 100,
    }


def check_exact(r, rel=1e-9, f=60.0):
    e = exact()
    assert r.f_hz == pytest.approx(f, rel=1e-10)
    assert r.p_w == pytest.approx(e["p"], rel=rel)
    assert r.v_rms_v == pytest.approx(e["v_rms"], rel=rel)
    assert r.i_rms_a == pytest.approx(e["i_rms"], rel=rel)
    assert r.true_pf == pytest.approx(e["pf"], rel=rel)
    assert r.displacement_pf == pytest.approx(e["dpf"], rel=1e-9)
    assert r.p1_w == pytest.approx(e["p1"], rel=1e-9)
    assert r.q1_var == pytest.approx(e["q1"], rel=1e-9)
    assert r.q1_var > 0  # current lags: inductive
    assert r.thd_v_pct == pytest.approx(e["thd_v"], rel=1e-8)
    assert r.thd_i_pct == pytest.approx(e["thd_i"], rel=1e-8)
    for k, (a, ph) in I_H.items():
        assert r.i_h_a[k - 1] == pytest.approx(a, rel=1e-8)
        assert math.remainder(r.i_h_phase_rad[k - 1] - ph, 2 * math.pi) == pytest.approx(0.0, abs=1e-8)
        assert r.i_h_pct[k - 1] == pytest.approx(a / I_H[1][0] * 100, rel=1e-8)
    for k, (a, ph) in V_H.items():
        assert r.v_h_v[k - 1] == pytest.approx(a, rel=1e-8)
    assert r.i_h_a[1] == pytest.approx(0.0, abs=1e-8)  # no 2nd harmonic was synthesized


def test_exact_integer_cycles():
    # Synthesized signal with known harmonics and phases: exact expected values (hand calculation).
    r = analyze_waveform(*synth(), 60.0)
    check_exact(r)
    assert r.cycles_used == 10 and r.max_order == 50
    spec = r.harmonics_pct(0.1)
    assert sorted(spec) == [3, 5, 7, 11]
    assert [spec[k] for k in (3, 5, 7, 11)] == pytest.approx([12.0, 30.0, 10.0, 5.0], rel=1e-9)


def test_non_integer_cycles_and_dc_offset():
    # 7.37 cycles (whole-cycle power window: 7 cycles) with a DC offset on both channels; the fit removes it.
    r = analyze_waveform(*synth(cycles=7.37, dc=(4.0, -1.5)), 60.0)
    check_exact(r)
    assert r.cycles_used == 7
    assert r.v_dc_v == pytest.approx(4.0, abs=1e-9) and r.i_dc_a == pytest.approx(-1.5, abs=1e-9)


def test_off_nominal_frequency_non_integer_samples_per_cycle():
    # 59.93 Hz with 7680 S/s (128.15 samples per cycle), 12.6 cycles. Power and rms use a window of whole
    # cycles rounded to a whole sample (error below 1/(2*n) of the oscillating term): rel 1e-3.
    r = analyze_waveform(*synth(f=59.93, fs=7680.0, cycles=12.6), 60.0)
    check_exact(r, rel=1e-3, f=59.93)


def test_long_capture_is_truncated(monkeypatch):
    import reportgen.calc.waveform as w

    monkeypatch.setattr(w, "MAX_SAMPLES", 3000)
    r = analyze_waveform(*synth(cycles=40.0), 60.0)
    assert (r.samples_used, r.samples_total, r.cycles_used) == (3000, 4800, 25)
    check_exact(r)


def test_one_cycle_is_enough():
    r = analyze_waveform(*synth(cycles=1.0), 60.0)
    check_exact(r)


def test_against_numpy_fft():
    # Reference: numpy.fft on a record of exactly 10 cycles at 120 samples per cycle with noise;
    # bin 10*k holds order k. Same noisy samples into both methods.
    t, v, i = synth(noise=1.0, cycles=10.0)
    r = analyze_waveform(t, v, i, 60.0)
    n = v.size
    fv, fi = np.fft.rfft(v) / n, np.fft.rfft(i) / n
    for k in range(1, 51):
        ref_v = abs(fv[10 * k]) * 2 / math.sqrt(2)
        ref_i = abs(fi[10 * k]) * 2 / math.sqrt(2)
        # fitted f differs from 60 Hz by the noise; agreement within the noise level (1 V / sqrt(n) scale)
        assert r.v_h_v[k - 1] == pytest.approx(ref_v, abs=0.05)
        assert r.i_h_a[k - 1] == pytest.approx(ref_i, abs=0.05)
    ref_phase_i1 = np.angle(fi[10])
    assert math.remainder(r.i_h_phase_rad[0] - ref_phase_i1, 2 * math.pi) == pytest.approx(0.0, abs=2e-3)
    ref_thd_i = np.sqrt(np.sum(np.abs(fi[20:501:10]) ** 2)) / abs(fi[10]) * 100
    assert r.thd_i_pct == pytest.approx(ref_thd_i, rel=2e-3)
    # P as the mean of v*i over whole cycles (reference: numpy directly, offsets are ~0 here)
    assert r.p_w == pytest.approx(np.mean((v - r.v_dc_v) * (i - r.i_dc_a)), rel=1e-12)


def test_frequency_against_scipy_curve_fit():
    # Reference: scipy.optimize.curve_fit (Levenberg-Marquardt) of the same least-squares problem, DC plus
    # orders 1..16 (all below Nyquist: 1000/59.87 = 16.7) with free frequency, on a noisy capture of
    # 9.43 cycles at 59.87 Hz.
    so = pytest.importorskip("scipy.optimize")
    t, v, _ = synth(f=59.87, fs=2000.0, cycles=9.43, noise=2.0)
    tau = t - t[0]
    orders = np.arange(1, 17)

    def model(x, f, c0, *ab):
        ph = 2 * np.pi * f * x[:, None] * orders[None, :]
        ab = np.asarray(ab)
        return c0 + np.cos(ph) @ ab[: orders.size] + np.sin(ph) @ ab[orders.size :]

    p0 = np.zeros(2 + 2 * orders.size)
    p0[0], p0[2] = 60.0, 390.0
    popt, _ = so.curve_fit(model, tau, v, p0=p0)
    f = estimate_frequency(t, v, 60.0)
    assert f == pytest.approx(popt[0], rel=1e-9)
    assert f == pytest.approx(59.87, abs=5e-3)


def test_noise_statistics():
    # White noise of 2 (V and A rms per sample): estimates stay within a few standard errors
    # (standard error of an rms harmonic amplitude ~ sigma/sqrt(n)).
    t, v, i = synth(noise=2.0, cycles=20.0)
    r = analyze_waveform(t, v, i, 60.0)
    se = 2.0 / math.sqrt(v.size)
    for k, (a, _) in I_H.items():
        assert abs(r.i_h_a[k - 1] - a) < 6 * se
    assert abs(r.displacement_pf - exact()["dpf"]) < 1e-3
    # true rms includes the noise power: sqrt(Irms^2 + sigma^2)
    assert r.i_rms_a == pytest.approx(math.sqrt(exact()["i_rms"] ** 2 + 4.0), rel=2e-3)


def test_against_scipy_signal_periodogram_thd():
    # Reference: scipy.signal.periodogram (boxcar window) of an exactly 12-cycle record: power at the
    # harmonic bins gives the THD of the current.
    ss = pytest.importorskip("scipy.signal")
    t, v, i = synth(cycles=12.0, fs=7200.0)
    fr, pxx = ss.periodogram(i, fs=7200.0, window="boxcar", scaling="spectrum")
    idx = [int(round(k * 60.0 / (fr[1] - fr[0]))) for k in range(1, 51)]
    ref = math.sqrt(sum(pxx[j] for j in idx[1:]) / pxx[idx[0]]) * 100
    r = analyze_waveform(t, v, i, 60.0)
    assert r.thd_i_pct == pytest.approx(ref, rel=1e-9)


def test_nyquist_limits_orders():
    # 1920 S/s at 60 Hz: orders below 960 Hz, i.e. up to the 15th.
    t, v, i = synth(fs=1920.0)
    r = analyze_waveform(t, v, i, 60.0)
    assert r.max_order == 15 and r.orders[-1] == 15
    check_exact(r)


def test_as_dict_json_ready():
    import json

    d = analyze_waveform(*synth(), 60.0).as_dict()
    json.dumps(d)
    assert {"thd_i_pct", "true_pf", "displacement_pf", "p1_w", "q1_var", "i_h_pct"} <= set(d)


def test_errors():
    t, v, i = synth()
    t2 = t.copy()
    t2[50:] += 0.2 / 6000.0  # one interval 20 % long
    with pytest.raises(CalcError, match="not evenly spaced"):
        analyze_waveform(t2, v, i, 60.0)
    t3 = t.copy()
    t3[10] = t3[9]
    with pytest.raises(CalcError, match="does not increase"):
        analyze_waveform(t3, v, i, 60.0)
    tt, vv, ii = synth(cycles=0.8)
    with pytest.raises(CalcError, match="at least one"):
        analyze_waveform(tt, vv, ii, 60.0)
    with pytest.raises(CalcError, match="different lengths"):
        analyze_waveform(t, v, i[:-1], 60.0)
    with pytest.raises(CalcError, match="constant"):
        analyze_waveform(t, np.zeros_like(v), i, 60.0)
    with pytest.raises(CalcError, match="not a finite"):
        analyze_waveform(t, np.where(np.arange(v.size) == 3, np.nan, v), i, 60.0)
    with pytest.raises(CalcError, match="no fundamental"):
        analyze_waveform(t, v, np.zeros_like(i), 60.0)


def test_timestamp_rounding_jitter_is_tolerated():
    # Times written with 6 decimals (rounding jitter up to 0.5 us on 166.7 us): still evenly spaced.
    t, v, i = synth()
    r = analyze_waveform(np.round(t, 6), v, i, 60.0)
    assert r.f_hz == pytest.approx(60.0, rel=1e-6)
    assert r.i_h_a[4] == pytest.approx(30.0, rel=1e-4)


# ---------------------------------------------------------------- CSV reader


def write_csv(path, t, v, i, header="time_s,v,i"):
    rows = "\n".join(f"{float(a)!r},{float(b)!r},{float(c)!r}" for a, b, c in zip(t, v, i))
    path.write_text(header + "\n" + rows + "\n")


def test_read_round_trip(tmp_path):
    t, v, i = synth()
    p = tmp_path / "cap.csv"
    write_csv(p, t, v, i)
    d = read_waveform_csv(p, "cap.csv", "time_s", "v", current_column="i")
    np.testing.assert_array_equal(d.t_s, t)
    np.testing.assert_array_equal(d.v_v, v)
    np.testing.assert_array_equal(d.i_a, i)
    check_exact(analyze_waveform(d.t_s, d.v_v, d.i_a, 60.0))


def test_read_shunt(tmp_path):
    t, v, i = synth()
    p = tmp_path / "cap.csv"
    write_csv(p, t, v, i * 0.001, header="t,ch1,ch2")  # 1 mohm shunt: V = I*R
    d = read_waveform_csv(p, "cap.csv", "t", "ch1", shunt_column="ch2", shunt_resistance_ohm=0.001)
    np.testing.assert_allclose(d.i_a, i, rtol=1e-12)
    with pytest.raises(InputError, match="shunt resistance"):
        read_waveform_csv(p, "cap.csv", "t", "ch1", shunt_column="ch2")


def test_read_semicolon_and_blank_lines(tmp_path):
    p = tmp_path / "c.csv"
    body = "\n".join(f"{k / 1000};{math.sin(k)};{math.cos(k)}" for k in range(20))
    p.write_text("\n\nt;v;i\n" + body + "\n\n")
    d = read_waveform_csv(p, "c.csv", "t", "v", current_column="i")
    assert d.samples == 20


def test_read_errors(tmp_path):
    with pytest.raises(InputError) as ei:
        read_waveform_csv(tmp_path / "nope.csv", "nope.csv", "t", "v", current_column="i")
    assert "nope.csv:1:1: file not found" in ei.value.show()

    p = tmp_path / "c.csv"
    p.write_text("t,volts,amps\n" + "\n".join(f"{k},1,2" for k in range(20)) + "\n")
    with pytest.raises(InputError) as ei:
        read_waveform_csv(p, "c.csv", "t", "v", current_column="amps")
    msg = ei.value.show()
    assert "no voltage column 'v'" in msg and "'t', 'volts', 'amps'" in msg

    rows = [f"{k},1.0,2.0" for k in range(20)]
    rows[4] = "4,1.0,abc"
    rows[9] = "9,,2.0"
    p.write_text("t,v,i\n" + "\n".join(rows) + "\n")
    with pytest.raises(InputError) as ei:
        read_waveform_csv(p, "c.csv", "t", "v", current_column="i")
    probs = ei.value.problems
    # 'abc' on file line 6 (header is line 1), starting at character 7; the empty cell on line 11, col 3
    assert (probs[0].line, probs[0].col) == (6, 7) and "'abc' is not a finite number" in probs[0].message
    assert (probs[1].line, probs[1].col) == (11, 3) and "empty cell" in probs[1].message

    p.write_text("t,v,i\n1,2,3\n2,3,4\n")
    with pytest.raises(InputError, match="only 2 data rows"):
        read_waveform_csv(p, "c.csv", "t", "v", current_column="i")

    p.write_text("")
    with pytest.raises(InputError, match="empty"):
        read_waveform_csv(p, "c.csv", "t", "v", current_column="i")

    with pytest.raises(InputError, match="exactly one"):
        read_waveform_csv(p, "c.csv", "t", "v")


def test_read_limits(tmp_path, monkeypatch):
    p = tmp_path / "c.csv"
    p.write_text("t,v,i\n" + "\n".join(f"{k},1,2" for k in range(30)) + "\n")
    monkeypatch.setattr(wr, "MAX_ROWS", 25)
    with pytest.raises(InputError, match="more than 25 data rows"):
        read_waveform_csv(p, "c.csv", "t", "v", current_column="i")
    monkeypatch.setattr(wr, "MAX_FILE_BYTES", 100)
    with pytest.raises(InputError, match="limited to"):
        read_waveform_csv(p, "c.csv", "t", "v", current_column="i")
