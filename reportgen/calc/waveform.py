"""Harmonic analysis of a sampled voltage and current capture.

Method: a least-squares fit of a harmonic series with frequency estimation,
not a DFT. The model is

    x(t) = c0 + sum_{k=1..n} a_k*cos(2*pi*k*f*t) + b_k*sin(2*pi*k*f*t)

with ``n = min(50, highest order below the Nyquist frequency)``. The
fundamental frequency ``f`` is first located from the FFT peak of the
voltage near the nominal frequency (given as a hint), then refined by
Gauss-Newton on the full harmonic model: the multi-harmonic extension of
the four-parameter sine fit of IEEE Std 1057. The voltage (normally the
cleaner signal) sets ``f``; the current is fitted at the same ``f``.

Why a fit rather than a DFT over whole cycles: a real capture rarely holds a
whole number of cycles, and the grid frequency is rarely exactly nominal,
so a DFT window never spans exactly whole cycles of the true frequency and
leaks between orders. The fit has no leakage for any record length of one
cycle or more, absorbs the DC offset in ``c0``, and averages noise over the
whole record. Its cost (a linear least-squares problem with ``2n + 2``
columns per iteration) is bounded by analysing at most
:data:`MAX_SAMPLES` leading samples.

The DC offset is treated as an artefact of the measuring chain (probe or
shunt offset): it is reported, and removed before the rms values and the
real power are computed. Real power is the mean of ``v*i`` over the whole
cycles at the start of the record (the largest whole number that fits);
rms values are taken over the same window. Signs: current lagging the
voltage gives positive (inductive) fundamental reactive power ``Q1``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from .errors import CalcError
from .sheet import Sheet

__all__ = ["MAX_ORDER", "MAX_SAMPLES", "WaveformAnalysis", "analyze_waveform", "estimate_frequency"]

MAX_ORDER = 50
MAX_SAMPLES = 100_000
"""At most this many leading samples are analysed (bounds time and memory)."""

TIME_JITTER = 0.01
"""Largest allowed deviation of a sample interval from the mean interval, as a fraction.

Timestamps written with few decimals jitter by rounding; within this tolerance
the samples are taken as evenly spaced at the mean interval."""


@dataclass(frozen=True)
class WaveformAnalysis:
    """Result of :func:`analyze_waveform` (SI; rms values; phases in rad).

    Spectrum arrays are indexed by ``orders`` (1..max_order); phases are those
    of ``cos(k*w*(t - t0) + phase)`` with ``t0`` the first sample. Powers are
    those of the captured channel pair: for one phase of a three-phase load
    (line-to-neutral voltage and line current) multiply P, Q by 3.
    """

    f_hz: float
    cycles: float
    cycles_used: int
    samples_used: int
    samples_total: int
    fs_hz: float
    max_order: int
    v_rms_v: float
    i_rms_a: float
    p_w: float
    s_va: float
    true_pf: float
    displacement_pf: float
    p1_w: float
    q1_var: float
    thd_v_pct: float
    thd_i_pct: float
    v_dc_v: float
    i_dc_a: float
    orders: np.ndarray
    v_h_v: np.ndarray
    v_h_phase_rad: np.ndarray
    i_h_a: np.ndarray
    i_h_phase_rad: np.ndarray
    i_h_pct: np.ndarray
    fit_residual_v_v: float
    fit_residual_i_a: float

    def harmonics_pct(self, min_pct: float = 0.0) -> dict[int, float]:
        """Harmonic currents (orders 2..max_order) in % of the fundamental, for a load's spectrum.

        Orders below ``min_pct`` are left out (e.g. 0.1 to drop the noise floor).
        """
        return {int(n): float(p) for n, p in zip(self.orders[1:], self.i_h_pct[1:]) if p >= min_pct}

    def as_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {}
        for k, v in self.__dict__.items():
            if isinstance(v, np.ndarray):
                out[k] = [int(x) for x in v] if k == "orders" else [float(x) for x in v]
            elif isinstance(v, (int, np.integer)) and not isinstance(v, bool):
                out[k] = int(v)
            else:
                out[k] = float(v)
        return out


def _as_arrays(t, v, i) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    arrs = []
    for name, x in (("time", t), ("voltage", v), ("current", i)):
        a = np.asarray(x, dtype=float)
        if a.ndim != 1:
            raise CalcError(f"the {name} samples must be a one-dimensional array")
        if not np.all(np.isfinite(a)):
            k = int(np.flatnonzero(~np.isfinite(a))[0])
            raise CalcError(f"the {name} sample {k + 1} is not a finite number")
        arrs.append(a)
    if not (arrs[0].size == arrs[1].size == arrs[2].size):
        raise CalcError(f"time, voltage and current have different lengths "
                        f"({arrs[0].size}, {arrs[1].size}, {arrs[2].size})")
    if arrs[0].size < 8:
        raise CalcError(f"the capture has {arrs[0].size} samples; at least 8 are needed")
    return arrs[0], arrs[1], arrs[2]


def _sample_interval(t: np.ndarray) -> float:
    dt = np.diff(t)
    if np.any(dt <= 0):
        k = int(np.flatnonzero(dt <= 0)[0])
        raise CalcError(f"the time column does not increase at sample {k + 2} "
                        f"(t = {t[k + 1]!r} s after {t[k]!r} s)")
    mean = (t[-1] - t[0]) / (t.size - 1)
    dev = np.abs(dt - mean)
    k = int(np.argmax(dev))
    if dev[k] > TIME_JITTER * mean:
        raise CalcError(f"the samples are not evenly spaced: the interval before sample {k + 2} is "
                        f"{dt[k]:.6g} s against a mean of {mean:.6g} s (more than {TIME_JITTER:.0%} apart); "
                        "resample the capture to a fixed rate")
    # The interval is the least-squares slope of t against the sample index: it averages out the
    # rounding of written timestamps better than the end points alone.
    k = np.arange(t.size, dtype=float) - 0.5 * (t.size - 1)
    return float(np.dot(k, t - t.mean()) / np.dot(k, k))


def _n_orders(fs: float, f: float) -> int:
    """Harmonic orders that lie below the Nyquist frequency (at most 50)."""
    n = int(math.floor(0.5 * fs / f * (1 - 1e-9)))
    if n * f >= 0.5 * fs:
        n -= 1
    return max(0, min(MAX_ORDER, n))


def _basis(tau: np.ndarray, f: float, n: int) -> np.ndarray:
    """Design matrix [1, cos(k w t) for k = 1..n, sin(k w t) for k = 1..n]."""
    return _basis_orders(tau, f, np.arange(1, n + 1))


def _basis_orders(tau: np.ndarray, f: float, k: np.ndarray) -> np.ndarray:
    """Design matrix [1, cos(k w t), sin(k w t)] for the given orders k."""
    b = np.empty((tau.size, 2 * k.size + 1))
    b[:, 0] = 1.0
    ph = ((2 * math.pi * f) * tau)[:, None] * k[None, :]
    np.cos(ph, out=b[:, 1 : k.size + 1])
    np.sin(ph, out=b[:, k.size + 1 :])
    return b


def _lstsq(a: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Least squares by the normal equations, columns scaled to unit norm.

    The harmonic basis over one cycle or more is close to orthogonal, so the
    normal equations lose no useful precision and are much faster than an
    SVD on long records; a rank-deficient case falls back to ``lstsq``.
    """
    norm = np.sqrt(np.einsum("ij,ij->j", a, a))
    norm[norm == 0] = 1.0
    an = a / norm
    g = an.T @ an
    try:
        c = np.linalg.solve(g, an.T @ y)
        if np.linalg.cond(g) > 1e10:
            raise np.linalg.LinAlgError
    except np.linalg.LinAlgError:
        c, *_ = np.linalg.lstsq(an, y, rcond=None)
    return c / (norm if c.ndim == 1 else norm[:, None])


def estimate_frequency(t_s: Any, v: Any, f_nominal_hz: float, max_iter: int = 30) -> float:
    """Fundamental frequency of a sampled signal, Hz.

    FFT peak of the Hann-windowed signal within +/-20 % of the nominal
    frequency (records of fewer than 4 nominal cycles start from the nominal
    frequency), refined by Gauss-Newton on the harmonic-series model
    (multi-harmonic IEEE Std 1057 sine fit).

    Parameters
    ----------
    t_s : array
        Evenly spaced sample times, s.
    v : array
        Samples.
    f_nominal_hz : float
        Nominal frequency, used as a hint.
    max_iter : int
        Gauss-Newton iterations before giving up (raises :class:`CalcError`).

    Returns
    -------
    float
    """
    t = np.asarray(t_s, dtype=float)
    x = np.asarray(v, dtype=float)
    dt = _sample_interval(t)
    return _estimate_frequency(t - t[0], x, 1.0 / dt, f_nominal_hz, max_iter)


def _estimate_frequency(tau: np.ndarray, x: np.ndarray, fs: float, f_nom: float, max_iter: int) -> float:
    m = x.size
    duration = m / fs
    if duration * f_nom >= 4:
        nfft = 1 << int(math.ceil(math.log2(m * 8)))
        spec = np.abs(np.fft.rfft((x - x.mean()) * np.hanning(m), nfft))
        freqs = np.fft.rfftfreq(nfft, 1.0 / fs)
        band = (freqs >= 0.8 * f_nom) & (freqs <= 1.2 * f_nom)
        if not band.any():
            raise CalcError(f"the sampling rate {fs:g} Hz is too low for a {f_nom:g} Hz fundamental")
        k = int(np.flatnonzero(band)[np.argmax(spec[band])])
        f = float(freqs[k])
        if 0 < k < spec.size - 1:
            y0, y1, y2 = np.log(spec[k - 1 : k + 2] + 1e-300)
            den = y0 - 2 * y1 + y2
            if den != 0:
                f += float(0.5 * (y0 - y2) / den) * (freqs[1] - freqs[0])
    else:
        f = float(f_nom)
    scale = float(np.max(np.abs(x - x.mean())))
    if scale == 0:
        raise CalcError("the voltage samples are constant; no fundamental can be found")
    orders: np.ndarray | None = None
    for _ in range(max_iter):
        n = _n_orders(fs, f)
        if n < 1:
            raise CalcError(f"the sampling rate {fs:g} Hz is too low for a {f:g} Hz fundamental")
        if orders is None:
            # First pass with every order; later passes keep only the orders
            # present above 1e-5 of the fundamental (the others cannot bias f).
            k = np.arange(1, n + 1)
        else:
            k = orders[orders <= n]
        b = _basis_orders(tau, f, k)
        c = _lstsq(b, x)
        nk = k.size
        a_k, b_k = c[1 : nk + 1], c[nk + 1 :]
        if orders is None:
            amp = np.hypot(a_k, b_k)
            orders = k[(amp >= 1e-5 * amp[0]) | (k == 1)]
        # d(model)/df = 2*pi*t * sum_k k*(-a_k*sin(k w t) + b_k*cos(k w t))
        d = (2 * math.pi * tau) * (b[:, nk + 1 :] @ (-k * a_k) + b[:, 1 : nk + 1] @ (k * b_k))
        r = x - b @ c
        step = _lstsq(np.hstack([b, d[:, None]]), r)[-1]
        # Keep the step within a fraction of the resolution 1/duration.
        lim = 0.25 / duration
        step = float(np.clip(step, -lim, lim))
        f += step
        if not (0.5 * f_nom < f < 2.0 * f_nom):
            break
        if abs(step) < 1e-12 * f:
            return f
    raise CalcError(f"the fundamental frequency could not be estimated near {f_nom:g} Hz "
                    f"(the fit did not converge in {max_iter} iterations); check the nominal frequency "
                    "and that the voltage column holds a voltage waveform")


def analyze_waveform(
    t_s: Any,
    v_v: Any,
    i_a: Any,
    f_nominal_hz: float,
    sheet: Sheet | None = None,
) -> WaveformAnalysis:
    """Harmonic spectrum, THD, power and power factors of a voltage/current capture.

    Parameters
    ----------
    t_s : array
        Sample times, s; must be evenly spaced (within 1 % jitter).
    v_v : array
        Voltage samples, V.
    i_a : array
        Current samples, A.
    f_nominal_hz : float
        Nominal system frequency (50 or 60 Hz), used as a hint.
    sheet : Sheet, optional
        Records the true and displacement power factors.

    Returns
    -------
    WaveformAnalysis

    Raises
    ------
    CalcError
        Uneven time steps, less than one cycle, too low a sampling rate, or no
        convergence of the frequency estimate.
    """
    if not (f_nominal_hz > 0 and math.isfinite(f_nominal_hz)):
        raise CalcError(f"the nominal frequency must be positive, got {f_nominal_hz!r}")
    t, v, i = _as_arrays(t_s, v_v, i_a)
    dt = _sample_interval(t)
    fs = 1.0 / dt
    m_total = t.size
    m = min(m_total, MAX_SAMPLES)
    t, v, i = t[:m], v[:m], i[:m]
    duration = m * dt
    if duration * f_nominal_hz < 1.0 - 1e-9:
        raise CalcError(f"the capture spans {duration * f_nominal_hz:.2f} cycles of {f_nominal_hz:g} Hz; "
                        "at least one whole cycle is needed")
    tau = (np.arange(m) * dt)  # evenly spaced grid at the mean interval
    f = _estimate_frequency(tau, v, fs, f_nominal_hz, 30)
    cycles = duration * f
    # Whole cycles in the record, allowing half a sample short of the last one.
    k_used = int(math.floor((m + 0.5) * f / fs))
    if k_used < 1:
        raise CalcError(f"the capture spans {cycles:.2f} cycles of the measured {f:.3f} Hz fundamental; "
                        "at least one whole cycle is needed")
    n = _n_orders(fs, f)
    b = _basis(tau, f, n)
    coef = _lstsq(b, np.column_stack([v, i]))
    resid = np.column_stack([v, i]) - b @ coef
    c0 = coef[0]
    a, bb = coef[1 : n + 1], coef[n + 1 :]
    amp = np.hypot(a, bb) / math.sqrt(2.0)
    phase = np.arctan2(-bb, a)
    vh, ih = amp[:, 0], amp[:, 1]
    vph, iph = phase[:, 0], phase[:, 1]
    n_w = min(m, int(round(k_used * fs / f)))
    vw = v[:n_w] - c0[0]
    iw = i[:n_w] - c0[1]
    p = float(np.mean(vw * iw))
    v_rms = float(np.sqrt(np.mean(vw**2)))
    i_rms = float(np.sqrt(np.mean(iw**2)))
    s = v_rms * i_rms
    if v_rms == 0 or i_rms == 0 or vh[0] == 0 or ih[0] == 0:
        raise CalcError("the voltage or the current has no fundamental component; check the columns")
    phi = float(vph[0] - iph[0])
    phi = math.atan2(math.sin(phi), math.cos(phi))
    sh = sheet if sheet is not None else Sheet()
    true_pf = sh.calc("PF", "P / (V_rms * I_rms)", "", "True power factor",
                      f"from {k_used} whole cycles at {f:.4f} Hz",
                      P=(p, "W"), V_rms=(v_rms, "V"), I_rms=(i_rms, "A"))
    dpf = sh.calc("DPF", "cos(phi_1)", "", "Displacement power factor",
                  "phi_1: angle by which the fundamental current lags the voltage", phi_1=(phi, ""))
    p1 = float(vh[0] * ih[0] * math.cos(phi))
    q1 = float(vh[0] * ih[0] * math.sin(phi))
    thd_v = float(np.sqrt(np.sum(vh[1:] ** 2)) / vh[0] * 100.0)
    thd_i = float(np.sqrt(np.sum(ih[1:] ** 2)) / ih[0] * 100.0)
    if sheet is not None:
        if m < m_total:
            sheet.note(f"Only the first {m} of {m_total} samples were analysed (limit of the analysis).",
                       "Waveform analysis")
        sheet.note(f"Capture: {m} samples at {fs:g} Hz, {cycles:.2f} cycles of {f:.4f} Hz "
                   f"(least-squares harmonic fit to order {n}); THD voltage {thd_v:.2f} %, current {thd_i:.2f} %.",
                   "Waveform analysis")
    return WaveformAnalysis(
        f_hz=float(f), cycles=float(cycles), cycles_used=k_used, samples_used=int(m),
        samples_total=int(m_total), fs_hz=float(fs),
        max_order=int(n), v_rms_v=v_rms, i_rms_a=i_rms, p_w=p, s_va=float(s), true_pf=float(true_pf),
        displacement_pf=float(dpf), p1_w=p1, q1_var=q1, thd_v_pct=thd_v, thd_i_pct=thd_i,
        v_dc_v=float(c0[0]), i_dc_a=float(c0[1]), orders=np.arange(1, n + 1), v_h_v=vh, v_h_phase_rad=vph,
        i_h_a=ih, i_h_phase_rad=iph, i_h_pct=ih / ih[0] * 100.0,
        fit_residual_v_v=float(np.sqrt(np.mean(resid[:, 0] ** 2))),
        fit_residual_i_a=float(np.sqrt(np.mean(resid[:, 1] ** 2))))
