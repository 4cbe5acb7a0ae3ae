"""Power quality at the correction point: source, voltage rise, resonance, harmonics, duty.

Everything here works on the per-phase (wye-equivalent) circuit at the bus
where the bank connects, at the fundamental and at harmonic order ``h``:

* the supply is an ideal source at nominal voltage behind a Thevenin
  impedance ``R + j*h*X`` (R constant with frequency, X proportional to h);
* loads draw constant P and Q at the fundamental and inject harmonic currents
  (they are *not* counted as damping at harmonic orders: conservative);
* the bank is a constant admittance at the fundamental and the reactance
  ``j*h*X_L - j*X_C/h`` at order h (``X_L = 0`` without a detuning reactor).

Impedances are referred to the bus voltage ``V`` (line-to-line on three
phases). On three phases ``Z = V**2/S`` is the per-phase wye-equivalent
impedance, since ``S = 3*(V/sqrt(3))**2/Z``. On a single-phase system the
same ``Z = V**2/S`` is the loop impedance seen by a load at voltage ``V``;
every formula below is then used unchanged with ``V`` the line voltage.

Bank size convention: ``q_bank_var`` is the fundamental reactive power the
bank delivers at nominal bus voltage, *including* its detuning reactor when
it has one. With a reactor of relative impedance ``p = X_L/X_C`` the
capacitor reactance is ``X_C = V**2/(q_bank_var*(1 - p))``.

Sources of the rules and limits (named again beside each constant):
IEEE Std 1036 guide formulas for voltage rise and resonance (from memory,
secondary sources), IEEE Std 519-2014 Table 1 voltage distortion limits,
IEEE Std 18-2002/2012 continuous capacitor limits, NEMA MG 1 Part 14 and
IEEE Std 141 ch. 8 for capacitors at motor terminals, and the Electrical
Installation Guide for the overload-relay setting after correction.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Mapping, Sequence

import numpy as np

from .errors import CalcError
from .sheet import Sheet

__all__ = [
    "SourceImpedance",
    "source_from_utility",
    "source_from_bus",
    "BusVoltage",
    "bus_voltage",
    "voltage_rise_estimate_pct",
    "bank_reactances",
    "bus_impedance",
    "resonance_order_estimate",
    "resonance_order",
    "near_harmonic",
    "StepResonance",
    "step_resonance",
    "ImpedanceScan",
    "impedance_scan",
    "BusLoad",
    "harmonic_currents",
    "VoltageDistortionLimits",
    "ieee519_voltage_limits",
    "HarmonicDistortion",
    "harmonic_distortion",
    "CAPACITOR_LIMITS_PU",
    "WARN_FRACTION",
    "CapacitorDuty",
    "capacitor_duty",
    "COMMON_LV_CAPACITOR_RATED_V",
    "DETUNING_OPTIONS",
    "DetunedBank",
    "detuned_bank",
    "detuned_delivered_var",
    "tuning_order",
    "DetuningProposal",
    "propose_detuning",
    "MotorCapacitor",
    "motor_capacitor",
    "motor_current_after_correction",
    "PowerQuality",
    "assess",
]

MAX_ORDER = 50
"""Highest harmonic order considered (IEEE Std 519 evaluates to the 50th)."""

DEFAULT_ORDERS = (5, 7, 11, 13)
"""Characteristic orders of six-pulse converters, always checked for resonance."""

RESONANCE_BAND = 0.10
"""A resonance within 10 % of a harmonic order is flagged (common practice)."""


def _sheet(sheet: Sheet | None) -> Sheet:
    return sheet if sheet is not None else Sheet()


def _f(x: Any) -> float | None:
    """Plain float for JSON; None for non-finite values."""
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def _check_positive(name: str, value: float) -> None:
    if not (isinstance(value, (int, float, np.floating, np.integer)) and value > 0 and math.isfinite(value)):
        raise CalcError(f"{name} must be a positive number, got {value!r}")


def _check_phases(phases: int) -> None:
    if phases not in (1, 3):
        raise CalcError(f"phases must be 1 or 3, got {phases!r}")


def _check_p(p: float) -> None:
    if not (0.0 <= p < 1.0):
        raise CalcError(f"the detuning reactor's relative impedance p = X_L/X_C must be between 0 and 1, got {p!r}")


# ---------------------------------------------------------------------------
# 1. Thevenin source at the bus
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class SourceImpedance:
    """Thevenin impedance of the supply at the bus, per phase, at the fundamental.

    Attributes
    ----------
    v_bus_v : float
        Nominal bus voltage (line-to-line on three phases) the impedance is referred to.
    r_ohm, x_ohm : float
        Per-phase (wye-equivalent) resistance and fundamental reactance.
    phases : int
        1 or 3.
    """

    v_bus_v: float
    r_ohm: float
    x_ohm: float
    phases: int = 3

    @property
    def z_ohm(self) -> complex:
        return complex(self.r_ohm, self.x_ohm)

    @property
    def s_sc_va(self) -> float:
        """Short-circuit power at the bus, ``V**2/|Z|``."""
        return self.v_bus_v**2 / abs(self.z_ohm)

    @property
    def x_r(self) -> float:
        return self.x_ohm / self.r_ohm if self.r_ohm > 0 else math.inf

    def at_order(self, h: Any) -> np.ndarray:
        """Complex source impedance ``R + j*h*X`` at harmonic order(s) ``h``."""
        return self.r_ohm + 1j * np.asarray(h, dtype=float) * self.x_ohm

    def as_dict(self) -> dict[str, Any]:
        return {
            "v_bus_v": float(self.v_bus_v),
            "r_ohm": float(self.r_ohm),
            "x_ohm": float(self.x_ohm),
            "s_sc_va": float(self.s_sc_va),
            "x_r": _f(self.x_r),
            "phases": int(self.phases),
        }


def _split(sh: Sheet, tag: str, z: float, x_r: float, what: str) -> tuple[float, float]:
    r = sh.calc(f"R_{tag}", f"Z_{tag} / sqrt(1 + XR_{tag}**2)", "ohm", f"{what} resistance",
                **{f"Z_{tag}": (z, "ohm"), f"XR_{tag}": (x_r, "")})
    x = sh.calc(f"X_{tag}", f"sqrt(Z_{tag}**2 - R_{tag}**2)", "ohm", f"{what} reactance",
                **{f"Z_{tag}": (z, "ohm"), f"R_{tag}": (r, "ohm")})
    return float(r), float(x)


def source_from_utility(
    v_bus_v: float,
    utility_v_v: float,
    utility_x_r: float,
    utility_s_sc_va: float | None = None,
    utility_fault_current_a: float | None = None,
    transformer_s_va: float | None = None,
    transformer_z_pct: float | None = None,
    transformer_x_r: float | None = None,
    phases: int = 3,
    sheet: Sheet | None = None,
) -> SourceImpedance:
    """Thevenin impedance at the bus from the utility and an optional transformer.

    Parameters
    ----------
    v_bus_v : float
        Nominal voltage of the bus where the bank connects, V (line-to-line on 3 phases).
    utility_v_v : float
        Utility voltage at which the fault level is given, V.
    utility_x_r : float
        X/R ratio of the utility source.
    utility_s_sc_va : float, optional
        Utility short-circuit power, VA. Give this or ``utility_fault_current_a``.
    utility_fault_current_a : float, optional
        Utility fault current at ``utility_v_v``, A; ``S = sqrt(3)*V*I`` on 3
        phases, ``S = V*I`` on 1 phase.
    transformer_s_va, transformer_z_pct, transformer_x_r : float, optional
        Transformer rating (VA), impedance (% on its rating) and X/R, in series
        with the utility. Omit all three when the bus is fed directly.
    phases : int
        1 or 3.
    sheet : Sheet, optional
        Records the source impedances and the bus short-circuit power.

    Returns
    -------
    SourceImpedance
        Per-phase R and X at the fundamental referred to ``v_bus_v``.
    """
    _check_phases(phases)
    _check_positive("bus voltage", v_bus_v)
    _check_positive("utility voltage", utility_v_v)
    _check_positive("utility X/R", utility_x_r)
    sh = _sheet(sheet)
    if (utility_s_sc_va is None) == (utility_fault_current_a is None):
        raise CalcError("give the utility's short-circuit power or its fault current (exactly one of them)")
    if utility_s_sc_va is None:
        _check_positive("utility fault current", utility_fault_current_a)
        if phases == 3:
            s_u = sh.calc("S_sc_u", "sqrt(3) * V_u * I_f", "VA", "Utility short-circuit power",
                          "three-phase fault level", V_u=(utility_v_v, "V"), I_f=(utility_fault_current_a, "A"))
        else:
            s_u = sh.calc("S_sc_u", "V_u * I_f", "VA", "Utility short-circuit power",
                          "single-phase fault level", V_u=(utility_v_v, "V"), I_f=(utility_fault_current_a, "A"))
    else:
        _check_positive("utility short-circuit power", utility_s_sc_va)
        s_u = float(utility_s_sc_va)
    z_u = sh.calc("Z_u", "V_bus**2 / S_sc_u", "ohm", "Utility impedance referred to the bus",
                  V_bus=(v_bus_v, "V"), S_sc_u=(s_u, "VA"))
    r_u, x_u = _split(sh, "u", z_u, utility_x_r, "Utility")
    r, x = r_u, x_u
    given = [v is not None for v in (transformer_s_va, transformer_z_pct, transformer_x_r)]
    if any(given):
        if not all(given):
            raise CalcError("give the transformer's rating, impedance % and X/R together (or none of them)")
        _check_positive("transformer rating", transformer_s_va)
        _check_positive("transformer impedance %", transformer_z_pct)
        _check_positive("transformer X/R", transformer_x_r)
        z_t = sh.calc("Z_t", "z_pct / 100 * V_bus**2 / S_t", "ohm", "Transformer impedance referred to the bus",
                      z_pct=(transformer_z_pct, "%"), V_bus=(v_bus_v, "V"), S_t=(transformer_s_va, "VA"))
        r_t, x_t = _split(sh, "t", z_t, transformer_x_r, "Transformer")
        r = sh.calc("R_s", "R_u + R_t", "ohm", "Source resistance at the bus",
                    R_u=(r_u, "ohm"), R_t=(r_t, "ohm"))
        x = sh.calc("X_s", "X_u + X_t", "ohm", "Source reactance at the bus",
                    X_u=(x_u, "ohm"), X_t=(x_t, "ohm"))
    src = SourceImpedance(float(v_bus_v), float(r), float(x), phases)
    sh.calc("S_sc", "V_bus**2 / sqrt(R_s**2 + X_s**2)", "VA", "Short-circuit power at the bus",
            "per-phase wye-equivalent impedance" if phases == 3 else "single phase: loop impedance, S = V^2/Z",
            V_bus=(v_bus_v, "V"), R_s=(src.r_ohm, "ohm"), X_s=(src.x_ohm, "ohm"))
    return src


def source_from_bus(
    v_bus_v: float, s_sc_va: float, x_r: float, phases: int = 3, sheet: Sheet | None = None
) -> SourceImpedance:
    """Thevenin impedance from the bus's own short-circuit power and X/R.

    Parameters
    ----------
    v_bus_v : float
        Nominal bus voltage, V (line-to-line on 3 phases).
    s_sc_va : float
        Short-circuit power at the bus, VA.
    x_r : float
        X/R ratio at the bus.
    phases : int
        1 or 3 (single phase: ``Z = V**2/S`` is the loop impedance).
    sheet : Sheet, optional
        Records ``Z``, ``R`` and ``X``.

    Returns
    -------
    SourceImpedance
    """
    _check_phases(phases)
    _check_positive("bus voltage", v_bus_v)
    _check_positive("bus short-circuit power", s_sc_va)
    _check_positive("bus X/R", x_r)
    sh = _sheet(sheet)
    z = sh.calc("Z_s", "V_bus**2 / S_sc", "ohm", "Source impedance at the bus",
                "per-phase wye-equivalent impedance" if phases == 3 else "single phase: loop impedance, Z = V^2/S",
                V_bus=(v_bus_v, "V"), S_sc=(s_sc_va, "VA"))
    r, x = _split(sh, "s", z, x_r, "Source")
    return SourceImpedance(float(v_bus_v), r, x, phases)


# ---------------------------------------------------------------------------
# 2. Bus voltage before and after the bank
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class BusVoltage:
    """Bus voltage magnitude and angle before and after the bank, per unit of nominal."""

    v_before_pu: float
    v_after_pu: float
    angle_before_rad: float
    angle_after_rad: float
    rise_pct: float
    rise_estimate_pct: float
    iterations_before: int
    iterations_after: int

    def as_dict(self) -> dict[str, Any]:
        return {
            "v_before_pu": float(self.v_before_pu),
            "v_after_pu": float(self.v_after_pu),
            "angle_before_rad": float(self.angle_before_rad),
            "angle_after_rad": float(self.angle_after_rad),
            "rise_pct": float(self.rise_pct),
            "rise_estimate_pct": float(self.rise_estimate_pct),
            "iterations_before": int(self.iterations_before),
            "iterations_after": int(self.iterations_after),
        }


def _solve_bus(z_pu: complex, s_pu: complex, y_pu: complex, tol: float, max_iter: int) -> tuple[complex, int]:
    """Newton solution of V = 1 - Z*(conj(S/V) + Y*V) from a flat start.

    Multiplying by conj(V) gives the polynomial form
    ``g(V) = (1 + Z*Y)*|V|**2 - conj(V) + Z*conj(S) = 0``, solved in the real
    unknowns (Re V, Im V) with its exact Jacobian.
    """
    k = 1.0 + z_pu * y_pu
    c = z_pu * s_pu.conjugate()
    v = 1.0 + 0.0j
    for it in range(1, max_iter + 1):
        x, y = v.real, v.imag
        g = k * (x * x + y * y) - (x - 1j * y) + c
        gx = 2.0 * k * x - 1.0
        gy = 2.0 * k * y + 1j
        det = gx.real * gy.imag - gy.real * gx.imag
        if det == 0.0 or not math.isfinite(det):
            break
        dx = (-g.real * gy.imag + gy.real * g.imag) / det
        dy = (-gx.real * g.imag + gx.imag * g.real) / det
        v = complex(x + dx, y + dy)
        if not (math.isfinite(v.real) and math.isfinite(v.imag)):
            break
        if math.hypot(dx, dy) < tol:
            return v, it
    raise CalcError(
        f"the bus voltage did not converge after {it} iterations (tolerance {tol:g} pu): the load "
        f"({s_pu:.4g} pu of the short-circuit power) is beyond what the source impedance can carry "
        "(voltage collapse); check the loads, the source impedance and the bank size"
    )


def voltage_rise_estimate_pct(s_sc_va: Any, q_bank_var: Any) -> Any:
    """Handbook voltage rise ``Q_bank/S_sc*100`` in %, vectorised.

    IEEE Std 1036 guide formula (from memory; also USDA RUS Bulletin 1724D-112).

    Parameters
    ----------
    s_sc_va : float or array
        Short-circuit power at the bus, VA.
    q_bank_var : float or array
        Bank reactive power, var.

    Returns
    -------
    ndarray
        Voltage rise in % (0-d array for scalar input).
    """
    return np.asarray(q_bank_var, dtype=float) / np.asarray(s_sc_va, dtype=float) * 100.0


def bus_voltage(
    source: SourceImpedance,
    s_load_va: complex,
    q_bank_var: float,
    v_nom_v: float | None = None,
    tol_pu: float = 1e-10,
    max_iter: int = 50,
    sheet: Sheet | None = None,
) -> BusVoltage:
    """Bus voltage before and after the bank by solving the phasor circuit.

    An ideal source at nominal voltage behind the Thevenin impedance feeds the
    loads (constant P and Q) and, after correction, the bank (constant
    admittance ``B = Q_bank/V_nom**2``). Solved by Newton's method in per unit.

    Parameters
    ----------
    source : SourceImpedance
    s_load_va : complex
        Total complex power of all loads, ``P + jQ`` in VA, Q positive inductive.
    q_bank_var : float
        Bank reactive power delivered at nominal voltage, var (>= 0).
    v_nom_v : float, optional
        Nominal voltage of the ideal source; defaults to ``source.v_bus_v``.
    tol_pu : float
        Newton step tolerance in pu.
    max_iter : int
        Iterations before giving up (raises :class:`CalcError`).
    sheet : Sheet, optional
        Records the handbook estimate and both voltages.

    Returns
    -------
    BusVoltage
    """
    if q_bank_var < 0:
        raise CalcError(f"bank reactive power must not be negative, got {q_bank_var!r}")
    v_nom = float(source.v_bus_v if v_nom_v is None else v_nom_v)
    _check_positive("nominal voltage", v_nom)
    s_base = source.s_sc_va
    z_base = v_nom**2 / s_base
    z_pu = source.z_ohm / z_base
    s_pu = complex(s_load_va) / s_base
    b_pu = float(q_bank_var) / s_base  # B*Z_base = (Q/V^2)*(V^2/S_base)
    v0, n0 = _solve_bus(z_pu, s_pu, 0.0j, tol_pu, max_iter)
    v1, n1 = _solve_bus(z_pu, s_pu, 1j * b_pu, tol_pu, max_iter)
    sh = _sheet(sheet)
    est = sh.calc("dV_est", "Q_bank / S_sc * 100", "%", "Voltage rise estimate",
                  "IEEE Std 1036 guide formula (from memory)",
                  Q_bank=(float(q_bank_var), "var"), S_sc=(s_base, "VA"))
    sh.note(f"Bus voltage from the phasor circuit (Newton, tolerance {tol_pu:g} pu): "
            f"{abs(v0):.5f} pu without the bank ({n0} iterations), {abs(v1):.5f} pu with it ({n1} iterations).",
            "Bus voltage")
    rise = sh.calc("dV", "(V_after - V_before) * 100", "%", "Voltage rise from the phasor circuit",
                   V_after=(abs(v1), "pu"), V_before=(abs(v0), "pu"))
    return BusVoltage(abs(v0), abs(v1), math.atan2(v0.imag, v0.real), math.atan2(v1.imag, v1.real),
                      float(rise), float(est), n0, n1)


# ---------------------------------------------------------------------------
# 3./4. Bank reactances, bus impedance, resonance, scan
# ---------------------------------------------------------------------------


def bank_reactances(v_bus_v: float, q_bank_var: Any, detuning_p: float = 0.0) -> tuple[np.ndarray, np.ndarray]:
    """Per-phase capacitor and reactor reactances ``(X_C, X_L)`` at the fundamental.

    ``X_C - X_L = V**2/Q`` (the bank delivers ``Q`` at ``V``), ``X_L = p*X_C``.

    Parameters
    ----------
    v_bus_v : float
        Nominal bus voltage, V.
    q_bank_var : float or array
        Bank delivered var at ``v_bus_v``; a zero bank gives infinite reactances.
    detuning_p : float
        Reactor relative impedance ``X_L/X_C`` (0 without reactor).

    Returns
    -------
    (ndarray, ndarray)
        ``X_C`` and ``X_L`` in ohm, wye-equivalent per phase.
    """
    _check_p(detuning_p)
    q = np.asarray(q_bank_var, dtype=float)
    with np.errstate(divide="ignore"):
        x_c = v_bus_v**2 / (q * (1.0 - detuning_p))
    x_l = np.where(np.isfinite(x_c), detuning_p * np.where(np.isfinite(x_c), x_c, 0.0), np.inf)
    return x_c, x_l


def bus_impedance(source: SourceImpedance, q_bank_var: Any, detuning_p: float = 0.0, h: Any = 1.0) -> np.ndarray:
    """Complex impedance seen from the bus at order(s) ``h``: source in parallel with the bank.

    ``Z(h) = (R + j*h*X_s) || (j*h*X_L - j*X_C/h)``; loads are not counted as
    damping (conservative).

    Parameters
    ----------
    source : SourceImpedance
    q_bank_var : float or array
        Bank delivered var at nominal voltage (broadcast against ``h``); 0 gives
        the source impedance alone.
    detuning_p : float
        Reactor relative impedance (0 without reactor).
    h : float or array
        Harmonic order(s), h = f/f_1.

    Returns
    -------
    ndarray of complex
        Impedance in ohm, per phase.
    """
    h = np.asarray(h, dtype=float)
    zs = source.at_order(h)
    x_c, x_l = bank_reactances(source.v_bus_v, q_bank_var, detuning_p)
    with np.errstate(divide="ignore", invalid="ignore"):
        yb = 1.0 / (1j * (h * x_l - x_c / h))
        yb = np.where(np.isfinite(x_c), yb, 0.0)
        z = 1.0 / (1.0 / zs + yb)
    return z


def resonance_order_estimate(s_sc_va: Any, q_bank_var: Any, sheet: Sheet | None = None) -> Any:
    """Parallel resonance order ``h_r = sqrt(S_sc/Q_bank)``, vectorised.

    IEEE Std 1036 guide formula (from memory); ignores any detuning reactor.

    Parameters
    ----------
    s_sc_va : float or array
        Short-circuit power at the bus, VA.
    q_bank_var : float or array
        Bank reactive power, var (0 gives inf).
    sheet : Sheet, optional
        A scalar call records the step.

    Returns
    -------
    float or ndarray
    """
    s = np.asarray(s_sc_va, dtype=float)
    q = np.asarray(q_bank_var, dtype=float)
    if sheet is not None and s.ndim == 0 and q.ndim == 0 and q > 0:
        return sheet.calc("h_r_est", "sqrt(S_sc / Q_bank)", "", "Resonance order estimate",
                          "IEEE Std 1036 guide formula (from memory)",
                          S_sc=(float(s), "VA"), Q_bank=(float(q), "var"))
    with np.errstate(divide="ignore"):
        h = np.sqrt(s / q)
    return float(h) if h.ndim == 0 else h


def resonance_order(source: SourceImpedance, q_bank_var: Any, detuning_p: float = 0.0,
                    sheet: Sheet | None = None) -> Any:
    """Parallel resonance order from the reactances, vectorised over bank sizes.

    The order where the bus impedance ``(R + j*h*X_s) || j*(h*X_L - X_C/h)`` is
    purely resistive (imaginary part zero), outside the series resonance of a
    detuned bank: ``h = sqrt((X_C - R**2/X_s)/(X_s + X_L))``. Without R and
    without reactor this is ``sqrt(X_C/X_s) = sqrt(S_sc/Q_bank)`` (for a pure
    reactance source). NaN where no parallel resonance exists, inf for a zero bank.

    Parameters
    ----------
    source : SourceImpedance
    q_bank_var : float or array
        Bank reactive power delivered at nominal voltage, var.
    detuning_p : float
        Reactor relative impedance ``X_L/X_C`` (0 without a reactor).
    sheet : Sheet, optional
        A scalar call records the step.

    Returns
    -------
    float or ndarray
    """
    x_c, x_l = bank_reactances(source.v_bus_v, q_bank_var, detuning_p)
    r, xs = source.r_ohm, source.x_ohm
    if (sheet is not None and np.ndim(x_c) == 0 and math.isfinite(float(x_c))
            and float(x_c) - r * r / xs > 0):
        return sheet.calc("h_r", "sqrt((X_C - R_s**2 / X_s) / (X_s + X_L))", "", "Parallel resonance order",
                          "where the bus impedance is purely resistive",
                          X_C=(float(x_c), "ohm"), R_s=(r, "ohm"), X_s=(xs, "ohm"), X_L=(float(x_l), "ohm"))
    with np.errstate(invalid="ignore"):
        num = x_c - r * r / xs
        h = np.where(num > 0, np.sqrt(np.where(num > 0, num, 0.0) / (xs + x_l)), np.nan)
        h = np.where(np.isfinite(x_c), h, np.inf)
    return float(h) if np.ndim(h) == 0 else h


def near_harmonic(h_r: Any, load_orders: Sequence[int] = (), band: float = RESONANCE_BAND,
                  default_orders: Sequence[int] = DEFAULT_ORDERS) -> Any:
    """The harmonic order a resonance lies within ``band`` of, or 0 when none, vectorised.

    ``|h_r - n| <= band*n`` flags order n; the nearest such order is returned.

    Parameters
    ----------
    h_r : float or array
        Resonance order(s); non-finite values give 0.
    load_orders : sequence of int
        Orders the loads carry.
    band : float
        Relative band (0.10: within 10 %, common practice).
    default_orders : sequence of int
        Always checked (5, 7, 11, 13).

    Returns
    -------
    int or ndarray of int
    """
    orders = np.array(sorted(set(int(o) for o in load_orders) | set(int(o) for o in default_orders)), dtype=float)
    h = np.asarray(h_r, dtype=float)
    if orders.size == 0:
        out = np.zeros(h.shape, dtype=int)
        return int(out) if out.ndim == 0 else out
    hh = np.where(np.isfinite(h), h, -1e9)[..., None]
    dist = np.abs(hh - orders)
    within = dist <= band * orders
    dist = np.where(within, dist, np.inf)
    idx = np.argmin(dist, axis=-1)
    out = np.where(within.any(axis=-1), orders[idx], 0).astype(int)
    return int(out) if out.ndim == 0 else out


@dataclass(frozen=True)
class StepResonance:
    """Resonance order for each cumulative step of a stepped bank."""

    q_cumulative_var: tuple[float, ...]
    resonance_order: tuple[float, ...]
    resonance_order_estimate: tuple[float, ...]
    near_order: tuple[int, ...]

    def as_dict(self) -> dict[str, Any]:
        return {
            "q_cumulative_var": [float(q) for q in self.q_cumulative_var],
            "resonance_order": [_f(h) for h in self.resonance_order],
            "resonance_order_estimate": [_f(h) for h in self.resonance_order_estimate],
            "near_order": [int(n) for n in self.near_order],
        }


def step_resonance(source: SourceImpedance, step_q_var: Sequence[float], detuning_p: float = 0.0,
                   load_orders: Sequence[int] = ()) -> StepResonance:
    """Resonance order for each cumulative step of a stepped bank (vectorised).

    Parameters
    ----------
    source : SourceImpedance
    step_q_var : sequence of float
        Delivered var of each step, in switching order.
    detuning_p : float
        Reactor relative impedance of every step (0 without reactor).
    load_orders : sequence of int
        Harmonic orders the loads carry (added to 5, 7, 11, 13 for the flag).

    Returns
    -------
    StepResonance
    """
    q = np.cumsum(np.asarray(step_q_var, dtype=float))
    if q.size == 0 or np.any(np.asarray(step_q_var, dtype=float) <= 0):
        raise CalcError("every bank step must have a positive kvar")
    h = resonance_order(source, q, detuning_p)
    h_est = resonance_order_estimate(source.s_sc_va, q)
    near = near_harmonic(h, load_orders)
    return StepResonance(tuple(float(x) for x in q), tuple(float(x) for x in h),
                         tuple(float(x) for x in h_est), tuple(int(x) for x in near))


def _peak_order(h: np.ndarray, mag: np.ndarray, h_hi: float | None = None) -> float | None:
    """Order of the highest |Z| peak on a grid, refined by a parabola through 3 points."""
    m = mag if h_hi is None else np.where(h < h_hi, mag, -np.inf)
    i = int(np.argmax(m))
    if i == 0 or i == len(h) - 1 or not np.isfinite(m[i]):
        return None
    y0, y1, y2 = np.log(mag[i - 1 : i + 2])
    den = y0 - 2 * y1 + y2
    d = 0.5 * (y0 - y2) / den if den != 0 else 0.0
    return float(h[i] + d * (h[i + 1] - h[i]))


@dataclass(frozen=True)
class ImpedanceScan:
    """|Z| seen from the bus versus harmonic order.

    ``h`` is the fine grid (orders 1 to 50 in 0.01 steps, integers exactly on
    it); ``orders`` the integer orders 1..50 with the same quantities at them.
    ``*_detuned_*`` fields are None without a detuning reactor.
    """

    h: np.ndarray
    z_source_ohm: np.ndarray
    z_bank_ohm: np.ndarray
    z_detuned_ohm: np.ndarray | None
    orders: np.ndarray
    z_source_at_orders_ohm: np.ndarray
    z_bank_at_orders_ohm: np.ndarray
    z_detuned_at_orders_ohm: np.ndarray | None
    peak_order_bank: float | None
    peak_order_detuned: float | None
    detuning_p: float | None

    def as_dict(self) -> dict[str, Any]:
        lst = lambda a: None if a is None else [float(x) for x in a]  # noqa: E731
        return {
            "h": lst(self.h),
            "z_source_ohm": lst(self.z_source_ohm),
            "z_bank_ohm": lst(self.z_bank_ohm),
            "z_detuned_ohm": lst(self.z_detuned_ohm),
            "orders": [int(o) for o in self.orders],
            "z_source_at_orders_ohm": lst(self.z_source_at_orders_ohm),
            "z_bank_at_orders_ohm": lst(self.z_bank_at_orders_ohm),
            "z_detuned_at_orders_ohm": lst(self.z_detuned_at_orders_ohm),
            "peak_order_bank": _f(self.peak_order_bank),
            "peak_order_detuned": _f(self.peak_order_detuned),
            "detuning_p": _f(self.detuning_p),
        }


def impedance_scan(source: SourceImpedance, q_bank_var: float, detuning_p: float | None = None,
                   h_max: int = MAX_ORDER, steps_per_order: int = 100) -> ImpedanceScan:
    """Scan |Z(h)| at the bus from order 1 to ``h_max``: without bank, with bank, with detuned bank.

    Parameters
    ----------
    source : SourceImpedance
    q_bank_var : float
        Bank delivered var at nominal voltage (the same for the plain and the detuned bank).
    detuning_p : float, optional
        Reactor relative impedance; when given, the detuned curve is computed too.
    h_max : int
        Highest order (50).
    steps_per_order : int
        Grid points per unit order (100 gives 0.01 steps).

    Returns
    -------
    ImpedanceScan
    """
    h = np.arange(steps_per_order, h_max * steps_per_order + 1) / steps_per_order
    orders = np.arange(1, h_max + 1)
    z0 = np.abs(source.at_order(h))
    z1 = np.abs(bus_impedance(source, q_bank_var, 0.0, h))
    z2 = None if detuning_p is None else np.abs(bus_impedance(source, q_bank_var, detuning_p, h))
    idx = (orders - 1) * steps_per_order
    peak1 = _peak_order(h, z1) if q_bank_var > 0 else None
    peak2 = None
    if z2 is not None and q_bank_var > 0:
        peak2 = _peak_order(h, z2, h_hi=1.0 / math.sqrt(detuning_p) if detuning_p > 0 else None)
    return ImpedanceScan(h, z0, z1, z2, orders, z0[idx], z1[idx], None if z2 is None else z2[idx],
                         peak1, peak2, detuning_p)


# ---------------------------------------------------------------------------
# 5. Harmonic currents and voltages
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class BusLoad:
    """A load at the bus: fundamental complex power and harmonic spectrum.

    Attributes
    ----------
    s_va : complex
        Fundamental complex power ``P + jQ``, VA (Q positive inductive).
    harmonics_pct : Mapping[int, float]
        Harmonic current of each order (2..50) in % of the load's fundamental current.
    phases : int, optional
        1 or 3; defaults to the system's.
    v_v : float, optional
        Voltage the load is rated at; defaults to the bus voltage.
    """

    s_va: complex
    harmonics_pct: Mapping[int, float] = field(default_factory=dict)
    phases: int | None = None
    v_v: float | None = None


def harmonic_currents(loads: Sequence[BusLoad], v_bus_v: float, phases: int = 3,
                      h_max: int = MAX_ORDER) -> np.ndarray:
    """Harmonic current per order, summed over loads, A; index = order (0..h_max).

    Each load's fundamental current is ``|S|/(sqrt(3)*V)`` on 3 phases or
    ``|S|/V`` on 1 phase; its order-h current is that times ``pct/100``. Currents
    of the same order add arithmetically (phase angles unknown: conservative).
    Every order, triplens included, is applied to the per-phase circuit: on a
    3-wire system or with a delta bank the zero-sequence triplens would in
    fact not flow there, so this overstates them (conservative).

    Parameters
    ----------
    loads : sequence of BusLoad
    v_bus_v : float
        Bus voltage, used for loads without their own ``v_v``.
    phases : int
        System phases, used for loads without their own ``phases``.
    h_max : int
        Highest order (50).

    Returns
    -------
    ndarray
        Length ``h_max + 1``; index 1 holds the sum of the loads' fundamental currents.
    """
    out = np.zeros(h_max + 1)
    for ld in loads:
        ph = phases if ld.phases is None else ld.phases
        _check_phases(ph)
        v = v_bus_v if ld.v_v is None else ld.v_v
        _check_positive("load voltage", v)
        i1 = abs(complex(ld.s_va)) / (math.sqrt(3) * v if ph == 3 else v)
        out[1] += i1
        for order, pct in ld.harmonics_pct.items():
            n = int(order)
            if n != order or n < 2 or n > h_max:
                raise CalcError(f"harmonic order {order!r} is outside 2..{h_max}")
            if pct < 0 or not math.isfinite(pct):
                raise CalcError(f"harmonic current of order {n} must be a non-negative %, got {pct!r}")
            out[n] += i1 * pct / 100.0
    return out


@dataclass(frozen=True)
class VoltageDistortionLimits:
    """IEEE Std 519-2014 Table 1 voltage distortion limits for a bus voltage class."""

    individual_pct: float
    thd_pct: float
    voltage_class: str
    source: str

    def as_dict(self) -> dict[str, Any]:
        return {"individual_pct": self.individual_pct, "thd_pct": self.thd_pct,
                "voltage_class": self.voltage_class, "source": self.source}


# IEEE Std 519-2014 Table 1 (voltage distortion limits at the PCC). The <=1 kV
# and 1-69 kV rows: secondary source summary of the 2014 edition; the rows above
# 69 kV from memory. Columns: (upper bound of the class in V, individual %, THD %, label).
IEEE519_TABLE1 = (
    (1_000.0, 5.0, 8.0, "V <= 1 kV"),
    (69_000.0, 3.0, 5.0, "1 kV < V <= 69 kV"),
    (161_000.0, 1.5, 2.5, "69 kV < V <= 161 kV"),
    (math.inf, 1.0, 1.5, "V > 161 kV"),
)


def ieee519_voltage_limits(v_bus_v: float, sheet: Sheet | None = None) -> VoltageDistortionLimits:
    """IEEE Std 519-2014 Table 1 limits (individual harmonic and THD, %) for ``v_bus_v``.

    Rows up to 69 kV from a secondary summary of the 2014 edition; rows above
    69 kV from memory. A table look-up is noted in ``sheet``.
    """
    _check_positive("bus voltage", v_bus_v)
    for top, ind, thd, label in IEEE519_TABLE1:
        if v_bus_v <= top:
            conf = "secondary source" if top <= 69_000.0 else "from memory"
            lim = VoltageDistortionLimits(ind, thd, label, f"IEEE Std 519-2014 Table 1 ({conf})")
            if sheet is not None:
                sheet.note(f"IEEE Std 519-2014 Table 1, bus {v_bus_v:g} V ({label}): individual harmonic "
                           f"{ind:g} %, THD {thd:g} %.", "Voltage distortion limits")
            return lim
    raise AssertionError("unreachable")  # pragma: no cover


@dataclass(frozen=True)
class HarmonicDistortion:
    """Harmonic voltages at the bus (phase-voltage basis) before and after the bank."""

    orders: np.ndarray
    i_h_a: np.ndarray
    v_h_before_v: np.ndarray
    v_h_after_v: np.ndarray
    v1_before_v: float
    v1_after_v: float
    thd_v_before_pct: float
    thd_v_after_pct: float
    max_individual_before_pct: float
    max_individual_after_pct: float
    limits: VoltageDistortionLimits
    status_before: str
    status_after: str
    """'pass', 'warn' (above 95 % of a limit, our margin) or 'fail' against IEEE 519 Table 1."""

    def as_dict(self) -> dict[str, Any]:
        return {
            "orders": [int(o) for o in self.orders],
            "i_h_a": [float(x) for x in self.i_h_a],
            "v_h_before_v": [float(x) for x in self.v_h_before_v],
            "v_h_after_v": [float(x) for x in self.v_h_after_v],
            "v1_before_v": float(self.v1_before_v),
            "v1_after_v": float(self.v1_after_v),
            "thd_v_before_pct": float(self.thd_v_before_pct),
            "thd_v_after_pct": float(self.thd_v_after_pct),
            "max_individual_before_pct": float(self.max_individual_before_pct),
            "max_individual_after_pct": float(self.max_individual_after_pct),
            "limits": self.limits.as_dict(),
            "status_before": self.status_before,
            "status_after": self.status_after,
        }


def _limit_status(value: float, limit: float, warn_fraction: float) -> str:
    if value > limit:
        return "fail"
    if value > warn_fraction * limit:
        return "warn"
    return "pass"


def _thd_pct(v_h: np.ndarray, v1: float) -> float:
    return float(np.sqrt(np.sum(v_h**2)) / v1 * 100.0)


def harmonic_distortion(
    source: SourceImpedance,
    i_h_a: np.ndarray,
    q_bank_var: float,
    detuning_p: float = 0.0,
    v_before_pu: float = 1.0,
    v_after_pu: float = 1.0,
    sheet: Sheet | None = None,
) -> HarmonicDistortion:
    """Harmonic voltages ``V_h = I_h*|Z(h)|`` and voltage THD before and after the bank.

    Parameters
    ----------
    source : SourceImpedance
    i_h_a : ndarray
        Harmonic current per order, index = order (from :func:`harmonic_currents`);
        indices 0 and 1 are ignored.
    q_bank_var : float
        Bank delivered var at nominal voltage.
    detuning_p : float
        Reactor relative impedance of the bank (0 without reactor).
    v_before_pu, v_after_pu : float
        Fundamental bus voltage before/after, pu (from :func:`bus_voltage`).
    sheet : Sheet, optional
        Records both THD values and the IEEE 519 look-up.

    Returns
    -------
    HarmonicDistortion
        THD on the phase-voltage basis, ``sqrt(sum V_h**2)/V_1*100``.
    """
    i_h = np.asarray(i_h_a, dtype=float)
    orders = np.arange(2, i_h.size)
    ih = i_h[2:]
    v_ph = source.v_bus_v / math.sqrt(3) if source.phases == 3 else source.v_bus_v
    v1b, v1a = v_before_pu * v_ph, v_after_pu * v_ph
    vb = ih * np.abs(source.at_order(orders))
    va = ih * np.abs(bus_impedance(source, q_bank_var, detuning_p, orders))
    thd_b, thd_a = _thd_pct(vb, v1b), _thd_pct(va, v1a)
    ind_b = float(np.max(vb) / v1b * 100.0) if vb.size else 0.0
    ind_a = float(np.max(va) / v1a * 100.0) if va.size else 0.0
    lim = ieee519_voltage_limits(source.v_bus_v, sheet)
    if sheet is not None:
        sheet.note(f"Harmonic voltages V_h = I_h*|Z(h)| on the phase-voltage basis (V_1 = {v1a:.1f} V after): "
                   f"THD {thd_b:.2f} % without the bank, {thd_a:.2f} % with it; largest single order "
                   f"{ind_b:.2f} % / {ind_a:.2f} %.", "Voltage distortion")
    st = lambda ind, thd: max((_limit_status(ind, lim.individual_pct, WARN_FRACTION),  # noqa: E731
                               _limit_status(thd, lim.thd_pct, WARN_FRACTION)), key=["pass", "warn", "fail"].index)
    return HarmonicDistortion(orders, ih, vb, va, v1b, v1a, thd_b, thd_a, ind_b, ind_a, lim,
                              st(ind_b, thd_b), st(ind_a, thd_a))


# ---------------------------------------------------------------------------
# 6. Capacitor duty against IEEE Std 18
# ---------------------------------------------------------------------------

# IEEE Std 18-2002 (unchanged in 2012) continuous operating limits, per unit of
# the capacitor's rating: contingency limits, not a design basis (secondary
# source). Older guides allowed 180 % rms current; the 2002 edition lowered it
# to 135 %.
CAPACITOR_LIMITS_PU = {"v_rms_pu": 1.10, "v_peak_pu": 1.20, "i_rms_pu": 1.35, "q_pu": 1.35}

WARN_FRACTION = 0.95
"""Our margin: 'warn' above 95 % of a limit (not from a standard)."""


@dataclass(frozen=True)
class CapacitorDuty:
    """Capacitor duty in per unit of its rating and its status against IEEE Std 18."""

    v_rms_pu: float
    v_peak_pu: float
    i_rms_pu: float
    q_pu: float
    status: dict[str, str]
    v_cap_rated_v: float
    q_cap_rated_var: float
    i_cap_rms_a: float
    i_cap_rated_a: float

    @property
    def worst(self) -> str:
        return max(self.status.values(), key=["pass", "warn", "fail"].index)

    def as_dict(self) -> dict[str, Any]:
        return {
            "v_rms_pu": float(self.v_rms_pu),
            "v_peak_pu": float(self.v_peak_pu),
            "i_rms_pu": float(self.i_rms_pu),
            "q_pu": float(self.q_pu),
            "limits_pu": dict(CAPACITOR_LIMITS_PU),
            "status": dict(self.status),
            "v_cap_rated_v": float(self.v_cap_rated_v),
            "q_cap_rated_var": float(self.q_cap_rated_var),
            "i_cap_rms_a": float(self.i_cap_rms_a),
            "i_cap_rated_a": float(self.i_cap_rated_a),
        }


def capacitor_duty(
    source: SourceImpedance,
    i_h_a: np.ndarray,
    q_bank_var: float,
    detuning_p: float = 0.0,
    v_bus_pu: float = 1.0,
    v_cap_rated_v: float | None = None,
    sheet: Sheet | None = None,
) -> CapacitorDuty:
    """Capacitor voltage, current and kvar in per unit of its rating, checked against IEEE Std 18.

    The fundamental capacitor voltage is ``V_bus/(1 - p)``; at order h the bus
    harmonic voltage ``V_h = I_h*|Z(h)|`` drives the bank current
    ``V_h/|h*X_L - X_C/h|``, of which the capacitor sees ``I*X_C/h``.
    Peak voltage is the arithmetic sum of the harmonic peaks; kvar is
    ``sum V_h*I_h``. Status per limit: 'fail' above it, 'warn' above 95 % of it
    (our margin), else 'pass'.

    Parameters
    ----------
    source : SourceImpedance
    i_h_a : ndarray
        Harmonic current per order injected by the loads, index = order.
    q_bank_var : float
        Bank delivered var at nominal voltage (> 0).
    detuning_p : float
        Reactor relative impedance (0 without reactor).
    v_bus_pu : float
        Fundamental bus voltage with the bank in service, pu.
    v_cap_rated_v : float, optional
        Capacitor rated voltage (line-to-line on 3 phases). Defaults to the bus
        nominal voltage without reactor; with a reactor, to the next common LV
        rating at or above ``V/(1 - p)`` (see :func:`detuned_bank`).
    sheet : Sheet, optional

    Returns
    -------
    CapacitorDuty
    """
    _check_positive("bank reactive power", q_bank_var)
    _check_p(detuning_p)
    v = source.v_bus_v
    if v_cap_rated_v is None:
        v_cap_rated_v = v if detuning_p == 0 else _next_rated_voltage(v / (1.0 - detuning_p))
    _check_positive("capacitor rated voltage", v_cap_rated_v)
    x_c, x_l = (float(a) for a in bank_reactances(v, q_bank_var, detuning_p))
    k = 1.0 / math.sqrt(3) if source.phases == 3 else 1.0
    v_rated_ph = v_cap_rated_v * k
    i_rated = v_rated_ph / x_c
    q_rated_ph = v_rated_ph**2 / x_c
    i_h = np.asarray(i_h_a, dtype=float)
    orders = np.arange(2, i_h.size)
    v_bus_h = i_h[2:] * np.abs(bus_impedance(source, q_bank_var, detuning_p, orders))
    i_bank_h = v_bus_h / np.abs(orders * x_l - x_c / orders)
    v_cap_h = i_bank_h * x_c / orders
    v_cap_1 = v_bus_pu * v * k * x_c / (x_c - x_l)
    i_1 = v_cap_1 / x_c
    vc = np.concatenate(([v_cap_1], v_cap_h))
    ic = np.concatenate(([i_1], i_bank_h))
    v_rms = float(np.sqrt(np.sum(vc**2)) / v_rated_ph)
    v_peak = float(np.sum(vc) / v_rated_ph)
    i_rms_a = float(np.sqrt(np.sum(ic**2)))
    i_rms = i_rms_a / i_rated
    q = float(np.sum(vc * ic) / q_rated_ph)
    vals = {"v_rms_pu": v_rms, "v_peak_pu": v_peak, "i_rms_pu": i_rms, "q_pu": q}
    status = {n: _limit_status(vals[n], CAPACITOR_LIMITS_PU[n], WARN_FRACTION) for n in vals}
    q_rated = q_rated_ph * (3 if source.phases == 3 else 1)
    if sheet is not None:
        sheet.note(
            f"Capacitor duty against IEEE Std 18-2002/2012 continuous limits (rated {v_cap_rated_v:g} V, "
            f"{q_rated:.0f} var): rms voltage {v_rms:.3f} pu (limit 1.10), peak voltage {v_peak:.3f} pu "
            f"(1.20), rms current {i_rms:.3f} pu (1.35), reactive power {q:.3f} pu (1.35). "
            "'warn' marks values above 95 % of a limit (our margin).", "Capacitor duty")
    return CapacitorDuty(v_rms, v_peak, i_rms, q, status, float(v_cap_rated_v), float(q_rated), i_rms_a,
                         float(i_rated))


# ---------------------------------------------------------------------------
# 7. Detuned bank
# ---------------------------------------------------------------------------

COMMON_LV_CAPACITOR_RATED_V = (240.0, 400.0, 415.0, 440.0, 480.0, 525.0, 550.0, 600.0, 690.0, 800.0)
"""Common low-voltage capacitor rated voltages (common practice, not a standard)."""

DETUNING_OPTIONS = (0.0567, 0.07, 0.14)
"""Usual reactor relative impedances p; tuning orders 4.2, 3.78, 2.67 (common practice)."""


def _next_rated_voltage(v: float, ratings: Sequence[float] = COMMON_LV_CAPACITOR_RATED_V) -> float:
    for r in sorted(ratings):
        if r >= v * (1 - 1e-9):
            return float(r)
    return float(v)


def tuning_order(detuning_p: Any) -> Any:
    """Series tuning order ``1/sqrt(p)`` of a detuned bank, vectorised.

    Parameters
    ----------
    detuning_p : float or array
        Reactor relative impedance ``X_L/X_C`` at the fundamental.

    Returns
    -------
    float or ndarray
    """
    p = np.asarray(detuning_p, dtype=float)
    with np.errstate(divide="ignore"):
        h = 1.0 / np.sqrt(p)
    return float(h) if h.ndim == 0 else h


def detuned_delivered_var(q_cap_rated_var: float, v_cap_rated_v: float, v_bus_v: float, detuning_p: float) -> float:
    """Fundamental var a detuned bank delivers at ``v_bus_v``: ``Q_r*(V/V_r)**2/(1 - p)``.

    Parameters
    ----------
    q_cap_rated_var : float
        Capacitor nameplate var at its rated voltage.
    v_cap_rated_v : float
        Capacitor rated voltage, V.
    v_bus_v : float
        Bus voltage, V.
    detuning_p : float
        Reactor relative impedance ``X_L/X_C``.

    Returns
    -------
    float
        Delivered var (use it as ``q_bank_var`` elsewhere in this module).
    """
    _check_p(detuning_p)
    return float(q_cap_rated_var * (v_bus_v / v_cap_rated_v) ** 2 / (1.0 - detuning_p))


@dataclass(frozen=True)
class DetunedBank:
    """A bank with a series detuning reactor of relative impedance ``p = X_L/X_C``.

    Per-phase values are wye-equivalent (a delta capacitor has ``c_f/3`` per leg).
    ``i_rms_a`` includes the harmonic currents when they were given, else equals ``i_fund_a``.
    """

    detuning_p: float
    tuning_order: float
    tuning_f_hz: float
    v_cap_v: float
    v_cap_rated_v: float
    rated_voltage_basis: str
    q_delivered_var: float
    q_cap_rated_var: float
    x_c_ohm: float
    x_l_ohm: float
    c_f: float
    l_h: float
    i_fund_a: float
    i_rms_a: float

    def as_dict(self) -> dict[str, Any]:
        return {k: (v if isinstance(v, str) else float(v)) for k, v in self.__dict__.items()}


def detuned_bank(
    v_bus_v: float,
    q_bank_var: float,
    detuning_p: float,
    f_hz: float,
    phases: int = 3,
    i_bank_h_a: np.ndarray | None = None,
    rated_voltages: Sequence[float] = COMMON_LV_CAPACITOR_RATED_V,
    v_cap_rated_v: float | None = None,
    sheet: Sheet | None = None,
) -> DetunedBank:
    """Capacitor and reactor of a detuned bank delivering ``q_bank_var`` at ``v_bus_v``.

    Parameters
    ----------
    v_bus_v : float
        Nominal bus voltage, V.
    q_bank_var : float
        Fundamental var delivered at ``v_bus_v`` (capacitor and reactor together).
    detuning_p : float
        ``X_L/X_C`` at the fundamental, 0 < p < 1.
    f_hz : float
        System frequency.
    phases : int
        1 or 3.
    i_bank_h_a : ndarray, optional
        Harmonic currents through the bank (index = order, 0 and 1 ignored),
        for the reactor rms current rating.
    rated_voltages : sequence of float
        Capacitor rated voltages to choose from (common LV ratings by default).
    v_cap_rated_v : float, optional
        Use this capacitor rated voltage instead of choosing one.
    sheet : Sheet, optional
        Records tuning order, capacitor voltage and reactor values.

    Returns
    -------
    DetunedBank
    """
    _check_positive("bus voltage", v_bus_v)
    _check_positive("bank reactive power", q_bank_var)
    _check_positive("frequency", f_hz)
    _check_phases(phases)
    if not (0.0 < detuning_p < 1.0):
        raise CalcError(f"detuning p = X_L/X_C must be between 0 and 1 (e.g. 0.07), got {detuning_p!r}")
    sh = _sheet(sheet)
    h_t = sh.calc("h_t", "1 / sqrt(p)", "", "Tuning order of the detuned bank", p=(detuning_p, ""))
    f_t = h_t * f_hz
    v_c = sh.calc("V_C", "V_bus / (1 - p)", "V", "Fundamental voltage across the capacitor",
                  "the series reactor raises the capacitor voltage", V_bus=(v_bus_v, "V"), p=(detuning_p, ""))
    if v_cap_rated_v is None:
        v_r = _next_rated_voltage(v_c, rated_voltages)
        if v_r == v_c:
            basis = "computed (above the common low-voltage ratings; choose the next standard rating)"
        else:
            basis = "common practice"
        sh.note(f"Capacitor rated voltage: next common rating at or above {v_c:.1f} V is {v_r:g} V "
                f"({basis}).", "Capacitor rated voltage")
    else:
        _check_positive("capacitor rated voltage", v_cap_rated_v)
        v_r, basis = float(v_cap_rated_v), "given"
        if v_r < v_c:
            sh.note(f"Caution: the given capacitor rated voltage {v_r:g} V is below the {v_c:.1f} V "
                    "it will see at the fundamental.", "Capacitor rated voltage")
    x_c = sh.calc("X_C", "V_bus**2 / (Q_bank * (1 - p))", "ohm", "Capacitor reactance per phase",
                  V_bus=(v_bus_v, "V"), Q_bank=(q_bank_var, "var"), p=(detuning_p, ""))
    x_l = sh.calc("X_L", "p * X_C", "ohm", "Reactor reactance per phase", p=(detuning_p, ""), X_C=(x_c, "ohm"))
    q_r = sh.calc("Q_C_r", "V_r**2 / X_C", "var", "Capacitor var at its rated voltage",
                  V_r=(v_r, "V"), X_C=(x_c, "ohm"))
    c_f = sh.calc("C", "1 / (2 * pi * f * X_C)", "F", "Capacitance per phase (wye equivalent)",
                  f=(f_hz, "Hz"), X_C=(x_c, "ohm"))
    l_h = sh.calc("L", "X_L / (2 * pi * f)", "H", "Reactor inductance per phase", X_L=(x_l, "ohm"), f=(f_hz, "Hz"))
    if phases == 3:
        i_1 = sh.calc("I_1", "Q_bank / (sqrt(3) * V_bus)", "A", "Fundamental bank current",
                      Q_bank=(q_bank_var, "var"), V_bus=(v_bus_v, "V"))
    else:
        i_1 = sh.calc("I_1", "Q_bank / V_bus", "A", "Fundamental bank current",
                      Q_bank=(q_bank_var, "var"), V_bus=(v_bus_v, "V"))
    i_rms = float(i_1)
    if i_bank_h_a is not None:
        ih = np.asarray(i_bank_h_a, dtype=float)[2:]
        i_h_rss = float(np.sqrt(np.sum(ih**2)))
        i_rms = sh.calc("I_rms", "sqrt(I_1**2 + I_h**2)", "A", "Reactor rms current with harmonics",
                        I_1=(i_1, "A"), I_h=(i_h_rss, "A"))
    return DetunedBank(float(detuning_p), float(h_t), float(f_t), float(v_c), float(v_r), basis, float(q_bank_var),
                       float(q_r), float(x_c), float(x_l), float(c_f), float(l_h), float(i_1), float(i_rms))


@dataclass(frozen=True)
class DetuningProposal:
    """A proposed detuning when a resonance is flagged."""

    detuning_p: float
    tuning_order: float
    lowest_significant_order: int | None
    adequate: bool
    reason: str

    def as_dict(self) -> dict[str, Any]:
        return {"detuning_p": self.detuning_p, "tuning_order": self.tuning_order,
                "lowest_significant_order": self.lowest_significant_order, "adequate": self.adequate,
                "reason": self.reason}


SIGNIFICANT_PCT = 1.0
"""A harmonic order is 'significant' when its total current is at least 1 % of the total
fundamental load current (our threshold, not from a standard)."""


def _significant_orders(i_h_a: np.ndarray, significant_pct: float) -> list[int]:
    i_h = np.asarray(i_h_a, dtype=float)
    i1 = float(i_h[1]) if i_h.size > 1 else 0.0
    return [n for n in range(2, i_h.size) if i1 > 0 and i_h[n] / i1 * 100.0 >= significant_pct]


def propose_detuning(i_h_a: np.ndarray, significant_pct: float = SIGNIFICANT_PCT,
                     sheet: Sheet | None = None) -> DetuningProposal:
    """Propose a detuning reactor: 14 % when the 3rd harmonic is significant, otherwise 7 %.

    Common practice: the tuning order ``1/sqrt(p)`` must lie below the lowest
    significant harmonic (7 % tunes to 3.78, 14 % to 2.67, 5.67 % to 4.2).

    Parameters
    ----------
    i_h_a : ndarray
        Harmonic currents per order, index = order, index 1 the total fundamental current.
    significant_pct : float
        Threshold in % of the fundamental current.
    sheet : Sheet, optional
        The decision is noted.

    Returns
    -------
    DetuningProposal
    """
    sig = _significant_orders(i_h_a, significant_pct)
    low = min(sig) if sig else None
    p = 0.14 if 3 in sig else 0.07
    h_t = float(tuning_order(p))
    adequate = low is None or h_t < low
    if adequate:
        reason = (f"p = {p * 100:g} % tunes to order {h_t:.2f}, below the lowest significant harmonic"
                  f" ({low if low is not None else 'none above the threshold; 5th assumed'})")
    else:
        reason = (f"p = {p * 100:g} % tunes to order {h_t:.2f}, not below the significant order {low}: "
                  "a harmonic filter study by a qualified engineer is needed")
    if sheet is not None:
        sheet.note(f"Detuning proposal (common practice): {reason}.", "Detuning")
    return DetuningProposal(p, h_t, low, adequate, reason)


# ---------------------------------------------------------------------------
# 8. Capacitor at motor terminals
# ---------------------------------------------------------------------------

MOTOR_PRACTICE_FRACTION = 0.90
"""Practice limit: 90 % of the no-load magnetizing var (secondary source, from memory)."""


@dataclass(frozen=True)
class MotorCapacitor:
    """Limit for a capacitor switched with a motor, and the reduced line current."""

    q_max_var: float
    q_practice_var: float
    status: str | None
    i_after_a: float | None

    def as_dict(self) -> dict[str, Any]:
        return {"q_max_var": float(self.q_max_var), "q_practice_var": float(self.q_practice_var),
                "status": self.status, "i_after_a": _f(self.i_after_a)}


def motor_current_after_correction(i_before_a: float, pf_before: float, pf_after: float,
                                   sheet: Sheet | None = None) -> float:
    """Line current after correcting at the terminals: ``I_before*PF_before/PF_after``.

    The overload relay is set on this current (Electrical Installation Guide;
    NEC 460.9 requires the setting on the improved power factor).
    """
    _check_positive("motor current", i_before_a)
    for name, pf in (("power factor before", pf_before), ("power factor after", pf_after)):
        if not (0 < pf <= 1):
            raise CalcError(f"{name} must be in (0, 1], got {pf!r}")
    return float(_sheet(sheet).calc("I_after", "I_before * PF_before / PF_after", "A",
                                    "Motor line current after correction",
                                    "set the overload relay on this current (Electrical Installation Guide)",
                                    I_before=(i_before_a, "A"), PF_before=(pf_before, ""),
                                    PF_after=(pf_after, "")))


def motor_capacitor(
    v_v: float,
    i_no_load_a: float,
    phases: int = 3,
    q_bank_var: float | None = None,
    i_before_a: float | None = None,
    pf_before: float | None = None,
    pf_after: float | None = None,
    sheet: Sheet | None = None,
) -> MotorCapacitor:
    """Largest capacitor to switch with a motor, and the line current after correction.

    ``Q_max = sqrt(3)*V*I_nl`` (1 phase ``V*I_nl``): the var that raises the
    no-load power factor to unity; practice limits the capacitor to 90 % of it
    to avoid self-excitation (NEMA MG 1 Part 14 and IEEE Std 141 ch. 8 state
    the rule; secondary source / from memory). Never exceed the motor maker's
    maximum safe value.

    Parameters
    ----------
    v_v : float
        Motor rated voltage, V.
    i_no_load_a : float
        No-load (magnetizing) current, A.
    phases : int
        1 or 3.
    q_bank_var : float, optional
        Capacitor proposed at the terminals; gives ``status``: 'pass' up to the
        practice limit, 'warn' up to ``Q_max``, 'fail' above.
    i_before_a, pf_before, pf_after : float, optional
        Full-load current and power factors, for the relay setting note.
    sheet : Sheet, optional

    Returns
    -------
    MotorCapacitor
    """
    _check_positive("motor voltage", v_v)
    _check_positive("motor no-load current", i_no_load_a)
    _check_phases(phases)
    sh = _sheet(sheet)
    note = "no-load magnetizing var (NEMA MG 1 Part 14, IEEE Std 141 ch. 8; secondary source)"
    if phases == 3:
        q_max = sh.calc("Q_max", "sqrt(3) * V * I_nl", "var", "Capacitor limit at motor terminals", note,
                        V=(v_v, "V"), I_nl=(i_no_load_a, "A"))
    else:
        q_max = sh.calc("Q_max", "V * I_nl", "var", "Capacitor limit at motor terminals", note,
                        V=(v_v, "V"), I_nl=(i_no_load_a, "A"))
    q_pr = sh.calc("Q_pr", "0.9 * Q_max", "var", "Practice limit at motor terminals",
                   "90 % of the no-load var (common practice, from memory)", Q_max=(q_max, "var"))
    status = None
    if q_bank_var is not None:
        status = "pass" if q_bank_var <= q_pr else ("warn" if q_bank_var <= q_max else "fail")
    i_after = None
    if i_before_a is not None and pf_before is not None and pf_after is not None:
        i_after = motor_current_after_correction(i_before_a, pf_before, pf_after, sh)
    return MotorCapacitor(float(q_max), float(q_pr), status, i_after)


# ---------------------------------------------------------------------------
# Convenience: the whole assessment at the correction point
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class PowerQuality:
    """Power quality at the correction point; ``as_dict()`` gives the report's JSON object.

    Attributes beyond the JSON keys (``bus``, ``scan``, ``harmonics``, ``duty``,
    ``detuned``, ``steps``, ``proposal``, ``proposed``) carry the details for
    tables and figures; :meth:`detail_dict` serialises them.
    """

    s_sc_va: float
    v_before_pu: float
    v_after_pu: float
    voltage_rise_estimate_pct: float
    resonance_order: float | None
    resonance_order_estimate: float | None
    near_order: int
    thd_v_before_pct: float
    thd_v_after_pct: float
    capacitor_duty: CapacitorDuty | None
    source: SourceImpedance
    bus: BusVoltage
    scan: ImpedanceScan
    harmonics: HarmonicDistortion
    detuned: DetunedBank | None
    steps: StepResonance | None
    proposal: DetuningProposal | None
    proposed: "PowerQuality | None"

    @property
    def resonance_flagged(self) -> bool:
        return self.near_order > 0

    def as_dict(self) -> dict[str, Any]:
        d = self.capacitor_duty
        return {
            "s_sc_va": float(self.s_sc_va),
            "v_before_pu": float(self.v_before_pu),
            "v_after_pu": float(self.v_after_pu),
            "voltage_rise_estimate_pct": float(self.voltage_rise_estimate_pct),
            "resonance_order": _f(self.resonance_order),
            "thd_v_before_pct": float(self.thd_v_before_pct),
            "thd_v_after_pct": float(self.thd_v_after_pct),
            "capacitor_duty": None if d is None else {
                "v_rms_pu": float(d.v_rms_pu), "v_peak_pu": float(d.v_peak_pu),
                "i_rms_pu": float(d.i_rms_pu), "q_pu": float(d.q_pu)},
        }

    def detail_dict(self) -> dict[str, Any]:
        out = self.as_dict()
        out.update({
            "resonance_order_estimate": _f(self.resonance_order_estimate),
            "near_order": int(self.near_order),
            "resonance_flagged": self.resonance_flagged,
            "capacitor_duty_detail": None if self.capacitor_duty is None else self.capacitor_duty.as_dict(),
            "source": self.source.as_dict(),
            "bus": self.bus.as_dict(),
            "scan": self.scan.as_dict(),
            "harmonics": self.harmonics.as_dict(),
            "detuned": None if self.detuned is None else self.detuned.as_dict(),
            "steps": None if self.steps is None else self.steps.as_dict(),
            "proposal": None if self.proposal is None else self.proposal.as_dict(),
            "proposed": None if self.proposed is None else self.proposed.detail_dict(),
        })
        return out


def assess(
    source: SourceImpedance,
    loads: Sequence[BusLoad],
    q_bank_var: float,
    f_hz: float,
    detuning_p: float | None = None,
    step_q_var: Sequence[float] | None = None,
    v_cap_rated_v: float | None = None,
    propose: bool = True,
    sheet: Sheet | None = None,
) -> PowerQuality:
    """Power quality at the correction point: voltage, resonance, distortion, capacitor duty.

    Parameters
    ----------
    source : SourceImpedance
        From :func:`source_from_utility` or :func:`source_from_bus`.
    loads : sequence of BusLoad
        Loads at the bus: fundamental complex power and harmonic spectrum.
    q_bank_var : float
        Bank delivered var at nominal voltage (per bank; its connection, wye or
        delta, does not matter on the per-phase equivalent).
    f_hz : float
        System frequency (for reactor and capacitor values).
    detuning_p : float, optional
        Reactor relative impedance ``X_L/X_C``; None (or 0) for a plain bank.
    step_q_var : sequence of float, optional
        Steps of a stepped bank; resonance is evaluated at every cumulative step.
    v_cap_rated_v : float, optional
        Capacitor rated voltage; default: bus nominal, or with a reactor the next
        common LV rating above ``V/(1 - p)``.
    propose : bool
        When the resonance (of the whole bank or of any cumulative step) is
        flagged and the bank has no reactor, compute a detuning proposal and the
        whole assessment again with it (``proposed``).
    sheet : Sheet, optional
        Records the key steps.

    Returns
    -------
    PowerQuality
    """
    _check_positive("frequency", f_hz)
    if q_bank_var < 0:
        raise CalcError(f"bank reactive power must not be negative, got {q_bank_var!r}")
    p = 0.0 if detuning_p is None else float(detuning_p)
    _check_p(p)
    sh = _sheet(sheet)
    s_total = complex(sum(complex(ld.s_va) for ld in loads))
    bus = bus_voltage(source, s_total, q_bank_var, sheet=sh)
    i_h = harmonic_currents(loads, source.v_bus_v, source.phases)
    load_orders = _significant_orders(i_h, SIGNIFICANT_PCT)
    if q_bank_var > 0:
        h_est = resonance_order_estimate(source.s_sc_va, q_bank_var, sheet=sh)
        h_r = resonance_order(source, q_bank_var, p, sheet=sh)
    else:
        h_est = h_r = math.inf
    near = near_harmonic(h_r, load_orders)
    if near:
        sh.note(f"Caution: the parallel resonance at order {h_r:.2f} lies within 10 % of harmonic order {near}.",
                "Resonance")
    steps = step_resonance(source, step_q_var, p, load_orders) if step_q_var else None
    if steps is not None and any(steps.near_order):
        bad = [f"{q:.0f} var (order {h:.2f})" for q, h, n in
               zip(steps.q_cumulative_var, steps.resonance_order, steps.near_order) if n]
        sh.note("Caution: resonance near a harmonic order at bank steps " + ", ".join(bad) + ".", "Resonance")
    scan = impedance_scan(source, q_bank_var, p if p > 0 else None)
    harm = harmonic_distortion(source, i_h, q_bank_var, p, bus.v_before_pu, bus.v_after_pu, sheet=sh)
    duty = None
    detuned = None
    if q_bank_var > 0:
        if p > 0:
            x_c, x_l = (float(a) for a in bank_reactances(source.v_bus_v, q_bank_var, p))
            v_bus_h = harm.v_h_after_v
            i_bank_h = np.concatenate(([0.0, 0.0], v_bus_h / np.abs(harm.orders * x_l - x_c / harm.orders)))
            detuned = detuned_bank(source.v_bus_v, q_bank_var, p, f_hz, source.phases, i_bank_h,
                                   v_cap_rated_v=v_cap_rated_v, sheet=sh)
            v_cap_rated_v = detuned.v_cap_rated_v
        duty = capacitor_duty(source, i_h, q_bank_var, p, bus.v_after_pu, v_cap_rated_v, sheet=sh)
    proposal = proposed = None
    flagged = bool(near) or (steps is not None and any(steps.near_order))
    if propose and flagged and p == 0 and q_bank_var > 0:
        proposal = propose_detuning(i_h, sheet=sh)
        proposed = assess(source, loads, q_bank_var, f_hz, proposal.detuning_p, step_q_var, None, False, None)
    return PowerQuality(
        source.s_sc_va, bus.v_before_pu, bus.v_after_pu, bus.rise_estimate_pct,
        None if not math.isfinite(h_r) else float(h_r), None if not math.isfinite(h_est) else float(h_est),
        int(near), harm.thd_v_before_pct, harm.thd_v_after_pct, duty, source, bus, scan, harm, detuned, steps,
        proposal, proposed)
