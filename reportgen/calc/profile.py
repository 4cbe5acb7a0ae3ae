"""Interval load profiles and automatic stepped capacitor banks.

Inputs are arrays of interval timestamps (``numpy.datetime64`` or float
seconds), real power ``p_w`` (W) and reactive power ``q_var`` (var, positive
when inductive). Each sample is read as the average demand over one interval
of the detected length (``interval_s``); energy is ``sum(p_w) * interval_s``.
Missing intervals (gaps) are reported, never filled: statistics and the bank
simulation run over the samples present.

Controller rule (one rule, used by :func:`simulate`, :func:`simulate_loop` and
:func:`design_search`)
-------------------------------------------------------------------------------
A bank offers *levels*: the total kvar of each combination of steps its
controller can switch, sorted ascending, starting at 0. For each interval,
with ``q_allow = |P| * tan(acos(target_pf))`` (the lagging var still allowed
at the target):

1. ``need = Q - q_allow``. The controller picks the smallest level
   ``>= need`` (the fewest steps that reach the target); if no level is large
   enough it picks the largest level (all steps in).
2. ``cap = Q`` when ``never_leading`` is true, otherwise ``cap = Q + q_allow``.
   If the pick exceeds ``cap`` the controller backs off to the largest level
   ``<= cap`` (or to 0). With ``never_leading`` the bank therefore never makes
   the PF leading; with ``never_leading=False`` it may make it leading, but
   never beyond the target PF on the leading side.

An interval *meets the target* when ``-q_allow <= Q_after <= q_allow``, i.e.
``|PF_after| >= target_pf`` on either side (an interval with no load, S = 0,
counts as PF 1). The rule is static: no time delay or dead band, so switching
counts are those of an ideal controller sampling once per interval.

Bank kinds and their levels
---------------------------
``equal``   ``step_count`` steps of ``step_var``: levels ``k * step_var``,
            ``k = 0..step_count`` (steps switched in order 1, 2, ..., k).
``binary``  steps ``step_var * 2**i`` for ``i = 0..step_count-1`` (1:2:4:...):
            the controller counts in binary, so the levels are again
            ``k * step_var`` for ``k = 0..2**step_count - 1`` and level ``k``
            has the steps of the set bits of ``k`` in service.
``custom``  any list of step sizes: the levels are all distinct subset totals;
            for a total reachable in several ways the combination with the
            fewest steps (then the lowest step numbers) is used.

Switching operations count contactor operations: each step switched in or
out between consecutive intervals counts one. For equal steps this is
``sum(|delta steps|)``; for binary and custom banks it is the number of bits
that differ between the consecutive step patterns. ``switching_per_day`` is
that count divided by the days covered by the samples (``count *
interval_s / 86400``). ``level_changes`` counts the intervals in which the
level changed at all.

This module is pure (standard library and NumPy only).
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass
from typing import Any, Callable, Sequence

import numpy as np

from .errors import CalcError
from .sheet import Sheet

__all__ = [
    "Gap",
    "IntervalInfo",
    "PFHistogram",
    "ProfileStats",
    "Bank",
    "BankSimulation",
    "CostModel",
    "DEFAULT_COST",
    "DesignCandidate",
    "DesignSearch",
    "FixedBankCheck",
    "to_seconds",
    "kw_multiplier",
    "power_factor",
    "interval_info",
    "pf_histogram",
    "duration_curve",
    "profile_stats",
    "typical_week",
    "simulate",
    "simulate_loop",
    "design_search",
    "fixed_bank_check",
    "LV_UNIT_SIZES_VAR",
    "DEFAULT_PF_EDGES",
]

#: Common low-voltage capacitor unit ratings (REFERENCES §8, common practice), in var.
LV_UNIT_SIZES_VAR: tuple[float, ...] = tuple(
    x * 1000.0
    for x in (1, 1.5, 2, 2.5, 3, 4, 5, 7.5, 10, 12.5, 15, 20, 25, 30, 40, 50, 60, 75, 100)
)

#: Default PF histogram bin edges: one bin below 0.5, then 0.02 wide up to 1.0.
DEFAULT_PF_EDGES: np.ndarray = np.concatenate(([0.0], np.linspace(0.5, 1.0, 26)))

_MAX_BITS = 16  # binary/custom banks: at most this many steps (2**16 levels)
_MAX_EQUAL = 60


# --------------------------------------------------------------------------- helpers


def to_seconds(t: Any) -> np.ndarray:
    """Timestamps as float seconds (since 1970-01-01 UTC for datetime64 input).

    Parameters
    ----------
    t : array_like of numpy.datetime64 or float
        Interval timestamps. Floats are taken as seconds on any time base.

    Returns
    -------
    numpy.ndarray
        float64 seconds.
    """
    a = np.asarray(t)
    if np.issubdtype(a.dtype, np.datetime64):
        if np.isnat(a).any():
            raise CalcError("a timestamp is missing (NaT) in the interval data")
        return a.astype("datetime64[us]").astype(np.int64) / 1e6
    out = np.asarray(a, dtype=float)
    if not np.all(np.isfinite(out)):
        raise CalcError("a timestamp is not a finite number in the interval data")
    return out


def kw_multiplier(pf_from: float, pf_to: float) -> float:
    """kvar needed per kW to raise the PF: ``tan(acos pf_from) - tan(acos pf_to)``.

    Parameters
    ----------
    pf_from, pf_to : float
        Present and target lagging power factors in (0, 1].

    Returns
    -------
    float
        var per W (equal to kvar per kW).
    """
    for name, pf in (("present PF", pf_from), ("target PF", pf_to)):
        if not 0.0 < pf <= 1.0:
            raise CalcError(f"the {name} must be between 0 and 1, got {pf}")
    return math.tan(math.acos(pf_from)) - math.tan(math.acos(pf_to))


def power_factor(p_w: Any, q_var: Any) -> np.ndarray:
    """Magnitude of the power factor ``|P| / S`` per interval (1 where S = 0)."""
    p = np.atleast_1d(np.asarray(p_w, dtype=float))
    q = np.atleast_1d(np.asarray(q_var, dtype=float))
    s = np.sqrt(p * p + q * q)
    with np.errstate(invalid="ignore", divide="ignore"):
        pf = np.abs(p) / s
    pf[s == 0.0] = 1.0
    return pf


def _target_tan(target_pf: float) -> float:
    if not 0.0 < target_pf <= 1.0:
        raise CalcError(f"the target power factor must be between 0 and 1, got {target_pf}")
    return math.tan(math.acos(target_pf))


def _arrays(t: Any, p_w: Any, q_var: Any) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    t_s = to_seconds(t)
    p = np.asarray(p_w, dtype=float)
    q = np.asarray(q_var, dtype=float)
    if not (t_s.ndim == p.ndim == q.ndim == 1) or not (len(t_s) == len(p) == len(q)):
        raise CalcError(
            f"timestamps, P and Q must be 1-D arrays of one length "
            f"(got {t_s.shape}, {p.shape}, {q.shape})"
        )
    if len(t_s) == 0:
        raise CalcError("the interval data holds no samples")
    if not (np.all(np.isfinite(p)) and np.all(np.isfinite(q))):
        raise CalcError("P or Q holds a value that is not a finite number")
    return t_s, p, q


# --------------------------------------------------------------------------- intervals


@dataclass(frozen=True)
class Gap:
    """Missing time between two samples.

    ``index`` is the position (0-based) of the first sample after the gap,
    ``start_s`` the time one interval after the previous sample, ``duration_s``
    the missing time and ``missing_intervals`` how many intervals it spans.
    """

    index: int
    start_s: float
    duration_s: float
    missing_intervals: int

    def as_dict(self) -> dict[str, Any]:
        return {
            "index": self.index,
            "start_s": self.start_s,
            "duration_s": self.duration_s,
            "missing_intervals": self.missing_intervals,
        }


@dataclass(frozen=True)
class IntervalInfo:
    """Interval length, coverage and gaps of a sample series."""

    count: int
    interval_s: float
    first_s: float
    last_s: float
    covered_s: float  # count * interval_s
    span_s: float  # last_s - first_s + interval_s
    gaps: tuple[Gap, ...]
    irregular_count: int  # steps neither ~one interval nor a gap

    @property
    def hours(self) -> float:
        return self.covered_s / 3600.0

    @property
    def missing_s(self) -> float:
        return float(sum(g.duration_s for g in self.gaps))

    def as_dict(self) -> dict[str, Any]:
        return {
            "count": self.count,
            "interval_s": self.interval_s,
            "first_s": self.first_s,
            "last_s": self.last_s,
            "covered_s": self.covered_s,
            "span_s": self.span_s,
            "missing_s": self.missing_s,
            "gaps": [g.as_dict() for g in self.gaps],
            "irregular_count": self.irregular_count,
        }


def interval_info(
    t: Any, interval_s: float | None = None, sheet: Sheet | None = None
) -> IntervalInfo:
    """Detect the interval length and the gaps of a timestamp series.

    The interval length is the most common step between consecutive
    timestamps (rounded to 1 ms; ties go to the shorter). A step longer than
    1.5 intervals is a gap; a step within 1 % of the interval is regular; any
    other step is counted as irregular (the samples still count one interval
    each).

    Parameters
    ----------
    t : array_like
        Timestamps (datetime64 or float seconds), strictly increasing.
    interval_s : float, optional
        Interval length to use instead of detecting it (needed for one sample).
    sheet : Sheet, optional
        Records the detected interval and the gaps as notes.

    Returns
    -------
    IntervalInfo
    """
    t_s = to_seconds(t)
    n = len(t_s)
    if n == 0:
        raise CalcError("the interval data holds no samples")
    d = np.diff(t_s)
    bad = np.flatnonzero(d <= 0.0)
    if bad.size:
        i = int(bad[0]) + 1
        raise CalcError(
            f"timestamps must increase: sample {i + 1} is not later than sample {i}"
        )
    if interval_s is None:
        if n < 2:
            raise CalcError("one sample: the interval length cannot be detected; give it")
        if d.min() == d.max():
            dr = d[:1]  # evenly spaced: the one step is the interval
        else:
            dr = np.round(d, 3)
        med = float(np.median(dr))
        if np.count_nonzero(dr == med) * 2 > len(dr):
            interval_s = med  # more than half the steps: it is the most common one
        else:
            vals, counts = np.unique(dr, return_counts=True)
            interval_s = float(vals[np.argmax(counts)])
    interval_s = float(interval_s)
    if not interval_s > 0.0:
        raise CalcError(f"the interval length must be positive, got {interval_s} s")
    gap_idx = np.flatnonzero(d > 1.5 * interval_s)
    gaps = tuple(
        Gap(
            index=int(i) + 1,
            start_s=float(t_s[i] + interval_s),
            duration_s=float(d[i] - interval_s),
            missing_intervals=int(round(d[i] / interval_s)) - 1,
        )
        for i in gap_idx
    )
    irregular = int(np.count_nonzero((np.abs(d - interval_s) > 0.01 * interval_s) & (d <= 1.5 * interval_s)))
    info = IntervalInfo(
        count=n,
        interval_s=interval_s,
        first_s=float(t_s[0]),
        last_s=float(t_s[-1]),
        covered_s=n * interval_s,
        span_s=float(t_s[-1] - t_s[0] + interval_s),
        gaps=gaps,
        irregular_count=irregular,
    )
    if sheet is not None:
        sheet.note(
            f"Interval data: {n} samples of {interval_s:g} s "
            f"({info.hours:.1f} h covered); {len(gaps)} gap(s) totalling "
            f"{info.missing_s / 3600.0:.2f} h left unfilled; {irregular} irregular step(s).",
            title="Interval data",
        )
    return info


# --------------------------------------------------------------------------- statistics


@dataclass(frozen=True, eq=False)
class PFHistogram:
    """Time at each power-factor magnitude, lagging and leading apart.

    ``edges`` has one more entry than the count arrays; the last bin includes
    PF = 1. ``*_hours`` are counts times the interval length.
    """

    edges: np.ndarray
    lagging_counts: np.ndarray
    leading_counts: np.ndarray
    interval_s: float

    @property
    def lagging_hours(self) -> np.ndarray:
        return self.lagging_counts * (self.interval_s / 3600.0)

    @property
    def leading_hours(self) -> np.ndarray:
        return self.leading_counts * (self.interval_s / 3600.0)

    def as_dict(self) -> dict[str, Any]:
        return {
            "edges": [float(x) for x in self.edges],
            "lagging_counts": [int(x) for x in self.lagging_counts],
            "leading_counts": [int(x) for x in self.leading_counts],
            "lagging_hours": [float(x) for x in self.lagging_hours],
            "leading_hours": [float(x) for x in self.leading_hours],
        }


def pf_histogram(
    p_w: Any, q_var: Any, edges: Any = None, interval_s: float = 1.0
) -> PFHistogram:
    """Histogram of interval power factors, split into lagging (Q >= 0) and leading (Q < 0).

    Parameters
    ----------
    p_w, q_var : array_like
        Per-interval P (W) and Q (var, + inductive), before or after correction.
    edges : array_like, optional
        Ascending bin edges in [0, 1]; default :data:`DEFAULT_PF_EDGES`.
    interval_s : float
        Interval length, for the hours.

    Returns
    -------
    PFHistogram
    """
    e = DEFAULT_PF_EDGES if edges is None else np.asarray(edges, dtype=float)
    q = np.asarray(q_var, dtype=float)
    pf = power_factor(p_w, q)
    lead = q < 0.0
    lag_c, _ = np.histogram(pf[~lead], bins=e)
    lead_c, _ = np.histogram(pf[lead], bins=e)
    return PFHistogram(e.copy(), lag_c, lead_c, float(interval_s))


def duration_curve(values: Any, points: int = 101) -> tuple[np.ndarray, np.ndarray]:
    """Load duration curve sampled at ``points`` shares of time.

    Returns ``(pct, v)``: ``v[i]`` is the value equalled or exceeded during
    ``pct[i]`` % of the intervals (linear interpolation between order
    statistics), so ``v[0]`` is the maximum and ``v[-1]`` the minimum.
    """
    a = np.asarray(values, dtype=float)
    pct = np.linspace(0.0, 100.0, points)
    v = np.quantile(a, 1.0 - pct / 100.0)
    return pct, v


@dataclass(frozen=True, eq=False)
class ProfileStats:
    """Statistics of an interval profile (SI units; energies in Wh and varh).

    ``p_duration_w`` and ``q_duration_var`` hold every sample sorted from
    highest to lowest (the duration curves); ``as_dict`` samples them at 101
    shares of time. ``q_needed_*`` are the bank var needed per interval to
    reach ``target_pf`` (``Q - |P| tan(acos target)``, not below 0), present
    only when a target is given.
    """

    info: IntervalInfo
    energy_wh: float
    reactive_energy_varh: float  # net (lagging minus leading)
    p_max_w: float
    p_min_w: float
    p_mean_w: float
    q_max_var: float
    q_min_var: float
    q_mean_var: float
    pf_average: float  # Wh / sqrt(Wh^2 + varh^2)
    pf_min: float  # lowest interval PF magnitude
    leading_hours: float  # load itself leading (Q < 0)
    p_duration_w: np.ndarray
    q_duration_var: np.ndarray
    pf_hist: PFHistogram
    target_pf: float | None = None
    q_needed_max_var: float | None = None
    q_needed_min_var: float | None = None
    hours_below_target: float | None = None

    def as_dict(self) -> dict[str, Any]:
        pct, pd = duration_curve(self.p_duration_w)
        _, qd = duration_curve(self.q_duration_var)
        return {
            "intervals": self.info.count,
            "interval_s": self.info.interval_s,
            "hours": self.info.hours,
            "gaps": [g.as_dict() for g in self.info.gaps],
            "energy_wh": self.energy_wh,
            "reactive_energy_varh": self.reactive_energy_varh,
            "p_max_w": self.p_max_w,
            "p_min_w": self.p_min_w,
            "p_mean_w": self.p_mean_w,
            "q_max_var": self.q_max_var,
            "q_min_var": self.q_min_var,
            "q_mean_var": self.q_mean_var,
            "pf_average": self.pf_average,
            "pf_min": self.pf_min,
            "leading_hours": self.leading_hours,
            "duration_pct": [float(x) for x in pct],
            "p_duration_w": [float(x) for x in pd],
            "q_duration_var": [float(x) for x in qd],
            "pf_hist": self.pf_hist.as_dict(),
            "target_pf": self.target_pf,
            "q_needed_max_var": self.q_needed_max_var,
            "q_needed_min_var": self.q_needed_min_var,
            "hours_below_target": self.hours_below_target,
        }


def profile_stats(
    t: Any,
    p_w: Any,
    q_var: Any,
    *,
    target_pf: float | None = None,
    pf_edges: Any = None,
    interval_s: float | None = None,
    sheet: Sheet | None = None,
) -> ProfileStats:
    """Duration curves, PF distribution, kvar demand and energy of a profile.

    Parameters
    ----------
    t : array_like
        Timestamps (datetime64 or float seconds), strictly increasing.
    p_w, q_var : array_like
        Average P (W) and Q (var, + inductive) per interval.
    target_pf : float, optional
        When given, the var needed per interval to reach it is summarised.
    pf_edges : array_like, optional
        PF histogram bin edges (default :data:`DEFAULT_PF_EDGES`).
    interval_s : float, optional
        Interval length instead of detecting it.
    sheet : Sheet, optional
        Records energy, average PF and the kvar demand range.

    Returns
    -------
    ProfileStats
    """
    t_s, p, q = _arrays(t, p_w, q_var)
    info = interval_info(t_s, interval_s, sheet=sheet)
    h = info.interval_s / 3600.0
    e_wh = float(np.sum(p) * h)
    e_varh = float(np.sum(q) * h)
    pf = power_factor(p, q)
    p_mean, q_mean = float(p.mean()), float(q.mean())
    if p_mean == 0.0 and q_mean == 0.0:
        pf_avg = 1.0
    elif sheet is not None:
        pf_avg = sheet.calc(
            "PF_avg",
            "P_mean / sqrt(P_mean**2 + Q_mean**2)",
            "",
            "Average power factor over the profile",
            "equal to E_P / sqrt(E_P^2 + E_Q^2) over the samples present",
            P_mean=(p_mean, "W"),
            Q_mean=(q_mean, "var"),
        )
    else:
        pf_avg = p_mean / math.hypot(p_mean, q_mean)
    qn_max = qn_min = hb = None
    if target_pf is not None:
        kt = _target_tan(target_pf)
        need = np.maximum(q - np.abs(p) * kt, 0.0)
        qn_max, qn_min = float(need.max()), float(need.min())
        hb = float(np.count_nonzero(pf < target_pf) * h)
        if sheet is not None:
            sheet.note(
                f"Bank var needed to reach PF {target_pf:g}: {qn_min:.0f} var to {qn_max:.0f} var "
                f"over the intervals; PF below target for {hb:.1f} h.",
                title="kvar demand",
            )
    return ProfileStats(
        info=info,
        energy_wh=e_wh,
        reactive_energy_varh=e_varh,
        p_max_w=float(p.max()),
        p_min_w=float(p.min()),
        p_mean_w=p_mean,
        q_max_var=float(q.max()),
        q_min_var=float(q.min()),
        q_mean_var=q_mean,
        pf_average=float(pf_avg),
        pf_min=float(pf.min()),
        leading_hours=float(np.count_nonzero(q < 0.0) * h),
        p_duration_w=np.sort(p)[::-1].copy(),
        q_duration_var=np.sort(q)[::-1].copy(),
        pf_hist=pf_histogram(p, q, pf_edges, info.interval_s),
        target_pf=target_pf,
        q_needed_max_var=qn_max,
        q_needed_min_var=qn_min,
        hours_below_target=hb,
    )


def typical_week(t: Any, p_w: Any, interval_s: float | None = None) -> tuple[int, int]:
    """Index range ``(start, stop)`` of a typical 7-day window for a time-series plot.

    Candidate windows start at each UTC midnight present in the data and must
    hold a full week of samples (no gaps); the one whose energy is closest to
    the median of all candidates is chosen (the earliest on a tie). With less
    than a complete week, the whole range is returned.
    """
    t_s = to_seconds(t)
    p = np.asarray(p_w, dtype=float)
    n = len(t_s)
    if n == 0:
        return 0, 0
    if interval_s is None:
        interval_s = interval_info(t_s).interval_s if n > 1 else 86400.0
    week = 7 * 86400.0
    full = int(round(week / interval_s))
    day0 = np.unique(np.floor(t_s / 86400.0) * 86400.0)
    starts = np.searchsorted(t_s, day0, side="left")
    stops = np.searchsorted(t_s, day0 + week, side="left")
    ok = (stops - starts) == full
    if not ok.any():
        return 0, n
    cum = np.concatenate(([0.0], np.cumsum(p)))
    e = cum[stops[ok]] - cum[starts[ok]]
    med = np.median(e)
    k = int(np.argmin(np.abs(e - med)))
    return int(starts[ok][k]), int(stops[ok][k])


# --------------------------------------------------------------------------- bank


@dataclass(frozen=True)
class Bank:
    """An automatic stepped capacitor bank (var are delivered, positive).

    Build with :meth:`equal`, :meth:`binary` or :meth:`custom`. ``step_var``
    is the size of every step (``equal``), of the smallest step (``binary``,
    ``custom``); ``steps_var`` lists each step's size in switching order.
    """

    kind: str
    step_var: float
    step_count: int
    steps_var: tuple[float, ...] = ()

    def __post_init__(self) -> None:
        if self.kind not in ("equal", "binary", "custom"):
            raise CalcError(f"bank kind must be equal, binary or custom, got {self.kind!r}")
        if self.kind == "custom":
            steps = tuple(float(x) for x in self.steps_var)
            if not steps or any(not x > 0.0 for x in steps):
                raise CalcError("a custom bank needs one or more positive step sizes")
            if len(steps) > _MAX_BITS:
                raise CalcError(f"a custom bank may have at most {_MAX_BITS} steps")
            object.__setattr__(self, "steps_var", steps)
            object.__setattr__(self, "step_var", min(steps))
            object.__setattr__(self, "step_count", len(steps))
            return
        if not float(self.step_var) > 0.0:
            raise CalcError(f"the step size must be positive, got {self.step_var} var")
        n = int(self.step_count)
        limit = _MAX_EQUAL if self.kind == "equal" else _MAX_BITS
        if not 1 <= n <= limit:
            raise CalcError(f"a {self.kind} bank needs 1 to {limit} steps, got {self.step_count}")
        s = float(self.step_var)
        steps = tuple(s for _ in range(n)) if self.kind == "equal" else tuple(s * 2**i for i in range(n))
        object.__setattr__(self, "step_var", s)
        object.__setattr__(self, "step_count", n)
        object.__setattr__(self, "steps_var", steps)

    @classmethod
    def equal(cls, step_var: float, step_count: int) -> "Bank":
        """``step_count`` equal steps of ``step_var``."""
        return cls("equal", step_var, step_count)

    @classmethod
    def binary(cls, step_var: float, step_count: int) -> "Bank":
        """Binary-weighted steps ``step_var * (1, 2, 4, ...)``."""
        return cls("binary", step_var, step_count)

    @classmethod
    def custom(cls, steps_var: Sequence[float]) -> "Bank":
        """Steps of any sizes."""
        return cls("custom", 0.0, 0, tuple(steps_var))

    @property
    def total_var(self) -> float:
        return float(sum(self.steps_var))

    def levels(self) -> tuple[np.ndarray, np.ndarray]:
        """``(levels_var, masks)``: reachable totals ascending and their step patterns.

        Bit ``i`` of ``masks[k]`` is set when step ``i`` (0-based, in
        ``steps_var`` order) is in service at level ``k``.
        """
        n = self.step_count
        if self.kind == "equal":
            k = np.arange(n + 1)
            return k * self.step_var, (np.int64(1) << k.astype(np.int64)) - 1
        if self.kind == "binary":
            k = np.arange(2**n)
            return k * self.step_var, k.astype(np.int64)
        steps = np.asarray(self.steps_var)
        masks = np.arange(2**n, dtype=np.int64)
        bits = (masks[:, None] >> np.arange(n)) & 1
        totals = bits @ steps
        order = np.lexsort((masks, bits.sum(axis=1), np.round(totals, 6)))
        totals, masks = totals[order], masks[order]
        keep = np.concatenate(([True], np.diff(np.round(totals, 6)) > 0))
        return totals[keep], masks[keep]

    def as_dict(self) -> dict[str, Any]:
        d: dict[str, Any] = {"kind": self.kind, "step_var": self.step_var, "step_count": self.step_count}
        if self.kind == "custom":
            d["steps_var"] = list(self.steps_var)
        return d


@dataclass(frozen=True, eq=False)
class BankSimulation:
    """Result of running the controller rule over every interval.

    Arrays (one entry per interval): ``steps`` (int: level index; for equal
    steps the number of steps in service, for binary banks the count of
    base-step units, which is also the step pattern), ``masks`` (step
    pattern bits), ``q_bank_var`` (var in service), ``q_after_var``,
    ``pf_after`` (magnitude), ``leading`` (``q_after_var < 0``) and ``met``.

    ``min_kvar`` / ``max_kvar`` are the least and greatest reactive demand of
    the load before correction, in **var** (the key names are kept for the
    report JSON). ``leading_hours`` counts every interval whose PF after is
    leading; ``bank_leading_hours`` those with at least one step in service
    (always 0 when ``never_leading``; ``leading_hours`` can exceed it only
    where the load itself leads).
    """

    bank: Bank
    target_pf: float
    never_leading: bool
    interval_s: float
    t_s: np.ndarray
    p_w: np.ndarray
    q_var: np.ndarray
    levels_var: np.ndarray
    steps: np.ndarray
    masks: np.ndarray
    q_bank_var: np.ndarray
    q_after_var: np.ndarray
    pf_after: np.ndarray
    leading: np.ndarray
    met: np.ndarray
    intervals: int
    hours: float
    met_fraction: float
    met_energy_fraction: float
    leading_hours: float
    bank_leading_hours: float
    switching_ops: int
    level_changes: int
    switching_per_day: float
    min_kvar: float
    max_kvar: float
    energy_wh: float
    delivered_varh: float
    pf_before_average: float
    pf_after_average: float
    s_before_peak_va: float
    s_after_peak_va: float

    def as_dict(self, detail: bool = False) -> dict[str, Any]:
        d: dict[str, Any] = {
            "intervals": self.intervals,
            "met_fraction": self.met_fraction,
            "leading_hours": self.leading_hours,
            "switching_per_day": self.switching_per_day,
            "min_kvar": self.min_kvar,
            "max_kvar": self.max_kvar,
        }
        if detail:
            d.update(
                {
                    "bank": self.bank.as_dict(),
                    "target_pf": self.target_pf,
                    "never_leading": self.never_leading,
                    "interval_s": self.interval_s,
                    "hours": self.hours,
                    "met_energy_fraction": self.met_energy_fraction,
                    "bank_leading_hours": self.bank_leading_hours,
                    "switching_ops": self.switching_ops,
                    "level_changes": self.level_changes,
                    "energy_wh": self.energy_wh,
                    "delivered_varh": self.delivered_varh,
                    "pf_before_average": self.pf_before_average,
                    "pf_after_average": self.pf_after_average,
                    "s_before_peak_va": self.s_before_peak_va,
                    "s_after_peak_va": self.s_after_peak_va,
                    "levels_var": [float(x) for x in self.levels_var],
                }
            )
        return d


def _finish(
    bank: Bank,
    target_pf: float,
    never_leading: bool,
    interval_s: float,
    t_s: np.ndarray,
    p: np.ndarray,
    q: np.ndarray,
    levels: np.ndarray,
    masks_lv: np.ndarray,
    idx: np.ndarray,
    met: np.ndarray,
    sheet: Sheet | None,
) -> BankSimulation:
    """Vectorised summary of a per-interval level choice."""
    n = len(p)
    h = interval_s / 3600.0
    qb = levels[idx]
    qa = q - qb
    masks = masks_lv[idx]
    leading = qa < 0.0
    ops = int(np.bitwise_count(masks[1:] ^ masks[:-1]).sum()) if n > 1 else 0
    changes = int(np.count_nonzero(idx[1:] != idx[:-1])) if n > 1 else 0
    pabs = np.abs(p)
    e_tot = float(pabs.sum())
    e_met = float(pabs[met].sum())
    hours = n * h
    e_p, e_q, e_qa = float(p.sum() * h), float(q.sum() * h), float(qa.sum() * h)
    s_after = np.sqrt(p * p + qa * qa)
    with np.errstate(invalid="ignore", divide="ignore"):
        pf_after = pabs / s_after
    pf_after[s_after == 0.0] = 1.0
    sim = BankSimulation(
        bank=bank,
        target_pf=float(target_pf),
        never_leading=bool(never_leading),
        interval_s=float(interval_s),
        t_s=t_s,
        p_w=p,
        q_var=q,
        levels_var=levels,
        steps=idx.astype(np.int64),
        masks=masks,
        q_bank_var=qb,
        q_after_var=qa,
        pf_after=pf_after,
        leading=leading,
        met=met,
        intervals=n,
        hours=hours,
        met_fraction=float(np.count_nonzero(met) / n),
        met_energy_fraction=e_met / e_tot if e_tot > 0.0 else 1.0,
        leading_hours=float(np.count_nonzero(leading) * h),
        bank_leading_hours=float(np.count_nonzero(leading & (idx > 0)) * h),
        switching_ops=ops,
        level_changes=changes,
        switching_per_day=ops / (hours / 24.0),
        min_kvar=float(q.min()),
        max_kvar=float(q.max()),
        energy_wh=e_p,
        delivered_varh=float(qb.sum() * h),
        pf_before_average=e_p / math.hypot(e_p, e_q) if (e_p or e_q) else 1.0,
        pf_after_average=e_p / math.hypot(e_p, e_qa) if (e_p or e_qa) else 1.0,
        s_before_peak_va=float(np.sqrt(p * p + q * q).max()),
        s_after_peak_va=float(s_after.max()),
    )
    if sheet is not None:
        _record_simulation(sim, sheet)
    return sim


def _record_simulation(sim: BankSimulation, sheet: Sheet) -> None:
    b = sim.bank
    rule = "never leading" if sim.never_leading else f"leading allowed down to PF {sim.target_pf:g}"
    sheet.note(
        f"Controller rule: the fewest steps that reach PF {sim.target_pf:g}, at most "
        f"{b.step_count} steps, {rule}; applied to each of {sim.intervals} intervals "
        f"of {sim.interval_s:g} s.",
        title="Automatic bank simulation",
    )
    sheet.calc(
        "Q_bank",
        "Q_step_total",
        "var",
        "Installed bank",
        f"{b.kind} steps: " + ", ".join(f"{x:g}" for x in b.steps_var) + " var",
        Q_step_total=(b.total_var, "var"),
    )
    sheet.calc(
        "f_met",
        "N_met / N",
        "",
        "Share of intervals at or above the target PF",
        N_met=int(np.count_nonzero(sim.met)),
        N=sim.intervals,
    )
    sheet.calc(
        "ops_day",
        "N_ops / (N * t_int / 86400)",
        "",
        "Switching operations per day",
        "each step switched in or out counts one operation",
        N_ops=sim.switching_ops,
        N=sim.intervals,
        t_int=(sim.interval_s, "s"),
    )
    sheet.note(
        f"PF after correction is leading for {sim.leading_hours:.2f} h "
        f"({sim.bank_leading_hours:.2f} h with steps in service)."
    )


def _check_inputs(target_pf: float, bank: Bank) -> float:
    if not isinstance(bank, Bank):
        raise CalcError("the bank must be a Bank (equal, binary or custom steps)")
    return _target_tan(target_pf)


def simulate(
    t: Any,
    p_w: Any,
    q_var: Any,
    bank: Bank,
    target_pf: float,
    *,
    never_leading: bool = True,
    interval_s: float | None = None,
    sheet: Sheet | None = None,
) -> BankSimulation:
    """Run the automatic bank controller over every interval (vectorised).

    See the module docstring for the rule.

    Parameters
    ----------
    t : array_like
        Timestamps (datetime64 or float seconds), strictly increasing.
    p_w, q_var : array_like
        Average P (W) and Q (var, + inductive) per interval.
    bank : Bank
        The steps installed.
    target_pf : float
        Target power factor in (0, 1].
    never_leading : bool
        When true the bank never makes the PF leading; when false it may, down
        to the target PF leading.
    interval_s : float, optional
        Interval length instead of detecting it.
    sheet : Sheet, optional
        Records the rule, the installed kvar, met share and switching rate.

    Returns
    -------
    BankSimulation
    """
    t_s, p, q = _arrays(t, p_w, q_var)
    kt = _check_inputs(target_pf, bank)
    info = interval_info(t_s, interval_s)
    levels, masks = bank.levels()
    q_allow = np.abs(p) * kt
    need = q - q_allow
    cap = q + q_allow if not never_leading else q
    if bank.kind == "custom":
        i_need = np.searchsorted(levels, need, side="left")
        i_cap = np.searchsorted(levels, cap, side="right") - 1
        idx = np.minimum(np.minimum(i_need, len(levels) - 1), i_cap)
        np.maximum(idx, 0, out=idx)
        lv = levels[idx]
    else:
        # Levels are k * step_var: integer division with exact corrections gives the
        # same choice as a search of the level list, faster.
        b = bank.step_var
        idx = np.minimum(_int_ceil_div(need, b), _int_floor_div(cap, b))
        np.clip(idx, 0, len(levels) - 1, out=idx)
        lv = idx * b
    met = (lv >= need) & (lv <= q + q_allow)
    return _finish(bank, target_pf, never_leading, info.interval_s, t_s, p, q, levels, masks, idx, met, sheet)


def simulate_loop(
    t: Any,
    p_w: Any,
    q_var: Any,
    bank: Bank,
    target_pf: float,
    *,
    never_leading: bool = True,
    interval_s: float | None = None,
) -> BankSimulation:
    """The same controller rule as :func:`simulate`, one interval at a time in plain Python.

    For tests and the benchmark only (it is far slower). Every summary figure
    is computed here by its own loop too.
    """
    t_s, p, q = _arrays(t, p_w, q_var)
    kt = _check_inputs(target_pf, bank)
    info = interval_info(t_s, interval_s)
    levels_a, masks_a = bank.levels()
    levels = levels_a.tolist()
    masks = masks_a.tolist()
    top = len(levels) - 1
    n = len(p)
    h = info.interval_s / 3600.0
    idx = [0] * n
    met = [False] * n
    n_met = 0
    e_tot = e_met = 0.0
    n_lead = n_bank_lead = 0
    ops = changes = 0
    prev = None
    for i, (pi, qi) in enumerate(zip(p.tolist(), q.tolist())):
        q_allow = abs(pi) * kt
        need = qi - q_allow
        cap = qi if never_leading else qi + q_allow
        choice = top
        for j, lv in enumerate(levels):
            if lv >= need:
                choice = j
                break
        while choice > 0 and levels[choice] > cap:
            choice -= 1
        idx[i] = choice
        lv = levels[choice]
        qa = qi - lv
        ok = need <= lv <= qi + q_allow
        met[i] = ok
        e_tot += abs(pi)
        if ok:
            n_met += 1
            e_met += abs(pi)
        if qa < 0.0:
            n_lead += 1
            if choice > 0:
                n_bank_lead += 1
        if prev is not None:
            ops += bin(masks[choice] ^ masks[prev]).count("1")
            changes += choice != prev
        prev = choice
    sim = _finish(
        bank, target_pf, never_leading, info.interval_s, t_s, p, q, levels_a, masks_a,
        np.array(idx, dtype=np.int64), np.array(met, dtype=bool), None,
    )
    # Replace the summary figures with the loop's own counts.
    hours = n * h
    return _replace(
        sim,
        met_fraction=n_met / n,
        met_energy_fraction=e_met / e_tot if e_tot > 0.0 else 1.0,
        leading_hours=n_lead * h,
        bank_leading_hours=n_bank_lead * h,
        switching_ops=ops,
        level_changes=changes,
        switching_per_day=ops / (hours / 24.0),
    )


def _replace(obj: Any, **changes: Any) -> Any:
    import dataclasses

    return dataclasses.replace(obj, **changes)


# --------------------------------------------------------------------------- design


@dataclass(frozen=True)
class CostModel:
    """Bank cost = ``fixed + per_var * total_var + per_step * step_count`` (tariff currency).

    The default figures of :data:`DEFAULT_COST` are rough planning
    placeholders, not prices: replace them with the catalog or bill of
    materials prices.
    """

    fixed: float = 0.0
    per_var: float = 0.0
    per_step: float = 0.0

    def __call__(self, kind: str, step_var: float, step_count: int, total_var: float) -> float:
        return self.fixed + self.per_var * total_var + self.per_step * step_count

    def as_dict(self) -> dict[str, float]:
        return {"fixed": self.fixed, "per_var": self.per_var, "per_step": self.per_step}


#: Placeholder planning cost: 1500 fixed (enclosure, controller), 30 per kvar,
#: 250 per step (contactor, fuses). Not prices; the caller should supply real ones.
DEFAULT_COST = CostModel(fixed=1500.0, per_var=0.030, per_step=250.0)

CostFn = Callable[[str, float, int, float], float]


@dataclass(frozen=True)
class DesignCandidate:
    """One row of the design trade-off table."""

    kind: str
    step_var: float
    step_count: int
    total_var: float
    met_fraction: float
    met_energy_fraction: float
    leading_hours: float
    bank_leading_hours: float
    switching_ops: int
    switching_per_day: float
    cost: float
    feasible: bool

    @property
    def bank(self) -> Bank:
        return Bank(self.kind, self.step_var, self.step_count)

    def as_dict(self) -> dict[str, Any]:
        return {
            "kind": self.kind,
            "step_var": self.step_var,
            "step_count": self.step_count,
            "total_var": self.total_var,
            "met_fraction": self.met_fraction,
            "met_energy_fraction": self.met_energy_fraction,
            "leading_hours": self.leading_hours,
            "bank_leading_hours": self.bank_leading_hours,
            "switching_ops": self.switching_ops,
            "switching_per_day": self.switching_per_day,
            "cost": self.cost,
            "feasible": self.feasible,
        }


@dataclass(frozen=True)
class DesignSearch:
    """All candidates evaluated and the least-cost feasible one (``best``, or None)."""

    candidates: tuple[DesignCandidate, ...]
    best: DesignCandidate | None
    target_pf: float
    share: float
    never_leading: bool

    @property
    def best_bank(self) -> Bank | None:
        return self.best.bank if self.best is not None else None

    def as_dict(self) -> dict[str, Any]:
        return {
            "target_pf": self.target_pf,
            "share": self.share,
            "never_leading": self.never_leading,
            "best": self.best.as_dict() if self.best is not None else None,
            "bank": self.best.bank.as_dict() if self.best is not None else None,
            "candidates": [c.as_dict() for c in self.candidates],
        }


def _int_ceil_div(x: np.ndarray, b: float) -> np.ndarray:
    """Smallest integer k with ``k * b >= x`` (exactly as the float product is compared)."""
    k = np.ceil(x / b).astype(np.int64)
    k -= ((k - 1) * b >= x).astype(np.int64)
    k += (k * b < x).astype(np.int64)
    return k


def _int_floor_div(x: np.ndarray, b: float) -> np.ndarray:
    """Largest integer k with ``k * b <= x``."""
    k = np.floor(x / b).astype(np.int64)
    k += ((k + 1) * b <= x).astype(np.int64)
    k -= (k * b > x).astype(np.int64)
    return k


def design_search(
    t: Any,
    p_w: Any,
    q_var: Any,
    target_pf: float,
    unit_sizes_var: Sequence[float] = LV_UNIT_SIZES_VAR,
    *,
    share: float = 0.95,
    max_steps: int = 12,
    binary: bool = True,
    max_binary_steps: int = 6,
    never_leading: bool = True,
    cost: CostFn | None = None,
    max_total_var: float | None = None,
    interval_s: float | None = None,
    sheet: Sheet | None = None,
) -> DesignSearch:
    """Search step size and count for the least-cost bank meeting the target.

    Candidates: every unit size with 1..``max_steps`` equal steps and, when
    ``binary``, every unit size as the base of a binary-weighted bank with
    2..``max_binary_steps`` steps. Each candidate is judged with the same
    controller rule as :func:`simulate`. A candidate is feasible when its
    share of intervals meeting the target is at least ``share``, no step in
    service ever makes the PF leading (when ``never_leading``), and its total
    does not exceed ``max_total_var`` (if given). The least-cost feasible
    candidate wins; ties go to fewer switching operations, then the smaller
    total, then fewer steps.

    The evaluation is vectorised over intervals and candidates: for each
    step size, the per-interval choice without a step-count limit ``a`` is
    computed once; for a limit ``K`` the choice is ``min(a, K)``, so the met
    count, leading count and (for equal steps) the switching count for every
    ``K`` follow from histograms of ``a`` and of consecutive pairs.

    Parameters
    ----------
    t, p_w, q_var : array_like
        The interval profile (see :func:`simulate`).
    target_pf : float
        Target power factor.
    unit_sizes_var : sequence of float
        Unit ratings on hand, in var (default the common LV ratings).
    share : float
        Required share of intervals meeting the target (default 0.95).
    max_steps, max_binary_steps : int
        Largest step counts tried.
    binary : bool
        Also try binary-weighted banks.
    never_leading : bool
        Controller setting (see :func:`simulate`).
    cost : callable, optional
        ``cost(kind, step_var, step_count, total_var) -> money``; a
        :class:`CostModel` fits. Default :data:`DEFAULT_COST` (placeholder).
    max_total_var : float, optional
        Largest total bank size allowed.
    interval_s : float, optional
        Interval length instead of detecting it.
    sheet : Sheet, optional
        Records the search space and the choice.

    Returns
    -------
    DesignSearch
    """
    t_s, p, q = _arrays(t, p_w, q_var)
    kt = _target_tan(target_pf)
    if not 0.0 < share <= 1.0:
        raise CalcError(f"the required share of intervals must be in (0, 1], got {share}")
    sizes = sorted({float(x) for x in unit_sizes_var})
    if not sizes or sizes[0] <= 0.0:
        raise CalcError("the unit sizes on hand must be one or more positive kvar ratings")
    max_steps = int(max_steps)
    max_binary_steps = int(max_binary_steps) if binary else 1
    if not 1 <= max_steps <= _MAX_EQUAL or not 1 <= max_binary_steps <= _MAX_BITS:
        raise CalcError("step counts out of range")
    cost_fn: CostFn = cost if cost is not None else DEFAULT_COST
    info = interval_info(t_s, interval_s)
    n = len(p)
    h = info.interval_s / 3600.0
    days = n * h / 24.0
    q_allow = np.abs(p) * kt
    need = q - q_allow
    cap = q if never_leading else q + q_allow
    cap_met = q + q_allow
    pabs = np.abs(p)
    e_tot = float(pabs.sum())
    kmax = max(max_steps, 2**max_binary_steps - 1)
    rows: list[DesignCandidate] = []
    for b in sizes:
        k_need = np.maximum(_int_ceil_div(need, b), 0)
        k_cap = _int_floor_div(cap, b)
        a = np.maximum(np.minimum(k_need, k_cap), 0)
        ab = a * b
        met_unl = (ab >= need) & (ab <= cap_met)
        a_c = np.minimum(a, kmax + 1)  # a > kmax behaves like "above every K"
        met_hist = np.bincount(a_c[met_unl], minlength=kmax + 2)
        met_e_hist = np.bincount(a_c[met_unl], weights=pabs[met_unl], minlength=kmax + 2)
        met_cum = np.cumsum(met_hist)  # met_cum[K]: met intervals with limit K
        met_e_cum = np.cumsum(met_e_hist)
        # leading: q - k*b < 0 first at k = m
        m = np.where(q < 0.0, 0, _int_floor_div(q, b) + 1)
        m = np.maximum(m, 0)
        m_c = np.minimum(m, kmax + 1)
        lead_any = np.cumsum(np.bincount(m_c[a >= m], minlength=kmax + 2))
        mb = np.maximum(m, 1)
        lead_bank = np.cumsum(np.bincount(np.minimum(mb, kmax + 1)[a >= mb], minlength=kmax + 2))
        # equal-step switching: sum over levels l <= K of crossings of l
        if n > 1:
            lo = np.minimum(a[1:], a[:-1])
            hi = np.maximum(a[1:], a[:-1])
            d = np.bincount(np.minimum(lo + 1, kmax + 1), minlength=kmax + 2) - np.bincount(
                np.minimum(hi + 1, kmax + 1), minlength=kmax + 2
            )
            cross = np.cumsum(d)  # cross[l]: pairs with lo < l <= hi
            ops_equal = np.concatenate(([0], np.cumsum(cross[1:])))  # ops_equal[K]
        else:
            ops_equal = np.zeros(kmax + 2, dtype=np.int64)

        def row(kind: str, count: int, K: int, ops: int) -> DesignCandidate:
            total = K * b
            met_f = float(met_cum[K] / n)
            met_e = float(met_e_cum[K] / e_tot) if e_tot > 0.0 else 1.0
            bl = float(lead_bank[K] * h)
            c = float(cost_fn(kind, b, count, total))
            ok = met_f >= share - 1e-12 and (bl == 0.0 or not never_leading)
            if max_total_var is not None and total > max_total_var:
                ok = False
            return DesignCandidate(
                kind=kind,
                step_var=b,
                step_count=count,
                total_var=total,
                met_fraction=met_f,
                met_energy_fraction=met_e,
                leading_hours=float(lead_any[K] * h),
                bank_leading_hours=bl,
                switching_ops=int(ops),
                switching_per_day=float(ops / days),
                cost=c,
                feasible=bool(ok),
            )

        for count in range(1, max_steps + 1):
            rows.append(row("equal", count, count, int(ops_equal[count])))
        for count in range(2, max_binary_steps + 1):
            K = 2**count - 1
            lv = np.minimum(a, K)
            ops = int(np.bitwise_count(lv[1:] ^ lv[:-1]).sum()) if n > 1 else 0
            rows.append(row("binary", count, K, ops))
    feasible = [c for c in rows if c.feasible]
    best = (
        min(feasible, key=lambda c: (c.cost, c.switching_per_day, c.total_var, c.step_count))
        if feasible
        else None
    )
    if sheet is not None:
        sheet.note(
            f"Design search: {len(rows)} candidate banks from unit sizes "
            + ", ".join(f"{x / 1000.0:g}" for x in sizes)
            + f" kvar (1 to {max_steps} equal steps"
            + (f"; binary 2 to {max_binary_steps} steps" if max_binary_steps > 1 else "")
            + f"), target PF {target_pf:g} in at least {share * 100:g} % of intervals"
            + (", never leading." if never_leading else "."),
            title="Bank design search",
        )
        if best is None:
            sheet.note("No candidate meets the requirement; see the trade-off table.")
        else:
            sheet.note(
                f"Least-cost feasible bank: {best.step_count} {best.kind} steps of "
                f"{best.step_var / 1000.0:g} kvar ({best.total_var / 1000.0:g} kvar), meeting the "
                f"target in {best.met_fraction * 100:.1f} % of intervals, "
                f"{best.switching_per_day:.1f} switching operations per day, cost {best.cost:.2f}."
            )
    return DesignSearch(tuple(rows), best, float(target_pf), float(share), bool(never_leading))


# --------------------------------------------------------------------------- fixed bank


@dataclass(frozen=True)
class FixedBankCheck:
    """Largest fixed bank that never overcorrects at the minimum observed Q.

    ``allowed_var`` is the var the minimum load allows (``max(Q_min, 0)``);
    ``bank_var`` the largest total of at most ``max_units`` units on hand not
    above it (``units_var`` lists them; empty when even the smallest unit is
    too big). ``met_fraction`` is the share of intervals at the target with
    that fixed bank always on (None without a target).
    """

    q_min_var: float
    allowed_var: float
    bank_var: float
    units_var: tuple[float, ...]
    met_fraction: float | None
    target_pf: float | None

    def as_dict(self) -> dict[str, Any]:
        return {
            "q_min_var": self.q_min_var,
            "allowed_var": self.allowed_var,
            "bank_var": self.bank_var,
            "units_var": list(self.units_var),
            "met_fraction": self.met_fraction,
            "target_pf": self.target_pf,
        }


def fixed_bank_check(
    p_w: Any,
    q_var: Any,
    unit_sizes_var: Sequence[float] = LV_UNIT_SIZES_VAR,
    *,
    max_units: int = 3,
    target_pf: float | None = None,
    sheet: Sheet | None = None,
) -> FixedBankCheck:
    """Largest fixed (always-on) bank that never makes the PF leading.

    Parameters
    ----------
    p_w, q_var : array_like
        Per-interval P (W) and Q (var, + inductive).
    unit_sizes_var : sequence of float
        Unit ratings on hand (var); a fixed bank is up to ``max_units`` of them.
    max_units : int
        Most units combined in the fixed bank.
    target_pf : float, optional
        Also report the share of intervals meeting this PF with the bank on.
    sheet : Sheet, optional
        Records the minimum Q and the choice.

    Returns
    -------
    FixedBankCheck
    """
    p = np.asarray(p_w, dtype=float)
    q = np.asarray(q_var, dtype=float)
    if q.size == 0:
        raise CalcError("the interval data holds no samples")
    sizes = sorted({float(x) for x in unit_sizes_var})
    if not sizes or sizes[0] <= 0.0:
        raise CalcError("the unit sizes on hand must be one or more positive kvar ratings")
    q_min = float(q.min())
    allowed = max(q_min, 0.0)
    best_total, best_units = 0.0, ()
    for r in range(1, int(max_units) + 1):
        for combo in itertools.combinations_with_replacement(sizes[::-1], r):
            tot = float(sum(combo))
            if tot <= allowed and (tot > best_total or (tot == best_total and len(combo) < len(best_units))):
                best_total, best_units = tot, combo
    met = None
    if target_pf is not None:
        kt = _target_tan(target_pf)
        qa = q - best_total
        qal = np.abs(p) * kt
        met = float(np.count_nonzero((qa <= qal) & (qa >= -qal)) / q.size)
    if sheet is not None:
        sheet.calc(
            "Q_fixed_max",
            "max(Q_min, 0)",
            "var",
            "Most fixed var without leading PF at the lightest load",
            Q_min=(q_min, "var"),
        )
        sheet.note(
            f"Largest fixed bank from the unit sizes on hand (up to {max_units} units) not above "
            f"{allowed / 1000.0:.2f} kvar: "
            + (" + ".join(f"{u / 1000.0:g}" for u in best_units) + f" = {best_total / 1000.0:g} kvar"
               if best_units else "none (the smallest unit is larger)")
            + "."
        )
    return FixedBankCheck(q_min, allowed, best_total, tuple(best_units), met, target_pf)
