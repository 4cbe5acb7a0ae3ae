"""Complex power of each kind of load, with the calculation steps shown.

Every function returns a :class:`LoadPower` whose ``s_va`` is the complex
power of the whole load (all ``count`` copies), Q positive when inductive.
On 3 phases ``v_v`` is line-to-line and ``current_a`` is the line current.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from . import network as net
from .errors import CalcError
from .sheet import Sheet

SQRT2 = math.sqrt(2.0)
SQRT3 = math.sqrt(3.0)

#: how a scope reading relates to rms, for a sine (common practice)
RMS_FACTOR = {"rms": "X", "peak": "X / sqrt(2)", "peak_to_peak": "X / (2 * sqrt(2))"}


@dataclass(frozen=True)
class LoadPower:
    name: str
    kind: str
    count: int
    phases: int
    v_v: float
    s_va: complex
    current_a: float
    sheet: Sheet = field(compare=False)
    extras: dict = field(default_factory=dict, compare=False)

    @property
    def p_w(self) -> float:
        return self.s_va.real

    @property
    def q_var(self) -> float:
        return self.s_va.imag

    @property
    def pf(self) -> float:
        return power_factor(self.s_va)

    def as_dict(self) -> dict:
        return {
            "name": self.name,
            "kind": self.kind,
            "count": self.count,
            "v_v": self.v_v,
            "p_w": self.p_w,
            "q_var": self.q_var,
            "s_va": abs(self.s_va),
            "pf": self.pf,
            "leading": self.q_var < 0,
            "current_a": self.current_a,
            **self.extras,
        }


def power_factor(s: complex) -> float:
    mag = abs(s)
    if mag == 0:
        return 1.0
    return abs(s.real) / mag


def line_current(s_va: complex, v_v: float, phases: int) -> float:
    return abs(s_va) / (SQRT3 * v_v if phases == 3 else v_v)


def _apparent(sh: Sheet, phases: int, v: float, i: float) -> float:
    if phases == 3:
        return sh.calc("S", "sqrt(3) * V * I", "VA", "Apparent power (3 phases, line values)",
                       V=(v, "V"), I=(i, "A"))
    return sh.calc("S", "V * I", "VA", "Apparent power", V=(v, "V"), I=(i, "A"))


def _scaled(name, kind, phases, v, s_one: complex, count, sh: Sheet, extras=None) -> LoadPower:
    if count != 1:
        p = sh.calc("P_total", "n * P", "W", f"Real power of {count} loads", n=count, P=(s_one.real, "W"))
        q = sh.calc("Q_total", "n * Q", "var", f"Reactive power of {count} loads", n=count,
                    Q=(s_one.imag, "var"))
        s_tot = complex(p, q)
    else:
        s_tot = s_one
    return LoadPower(name, kind, count, phases, v, s_tot, line_current(s_tot, v, phases), sh, extras or {})


def meter(name: str, phases: int, v_v: float, i_a: float, *, p_w: float | None = None,
          pf: float | None = None, q_var: float | None = None, leading: bool = False,
          count: int = 1) -> LoadPower:
    """True-rms meter readings: V, I and one of P, PF or Q."""
    sh = Sheet(name)
    s = _apparent(sh, phases, v_v, i_a)
    sign = -1.0 if leading else 1.0
    if p_w is not None:
        if p_w > s * (1 + 1e-9):
            raise CalcError(f"load '{name}': the measured power {p_w / 1e3:g} kW exceeds the apparent "
                            f"power V·I = {s / 1e3:g} kVA; check the readings")
        p_w = min(p_w, s)
        p = p_w
        sh.calc("PF", "P / S", "", "Power factor", P=(p, "W"), S=(s, "VA"))
        q = sh.calc("Q", "sqrt(S**2 - P**2)", "var", "Reactive power magnitude", S=(s, "VA"), P=(p, "W"))
    elif pf is not None:
        p = sh.calc("P", "S * PF", "W", "Real power", S=(s, "VA"), PF=pf)
        q = sh.calc("Q", "sqrt(S**2 - P**2)", "var", "Reactive power magnitude", S=(s, "VA"), P=(p, "W"))
    else:
        assert q_var is not None
        if q_var > s * (1 + 1e-9):
            raise CalcError(f"load '{name}': the measured reactive power {q_var / 1e3:g} kvar exceeds the "
                            f"apparent power V·I = {s / 1e3:g} kVA; check the readings")
        q = min(q_var, s)
        p = sh.calc("P", "sqrt(S**2 - Q**2)", "W", "Real power", S=(s, "VA"), Q=(q, "var"))
        sh.calc("PF", "P / S", "", "Power factor", P=(p, "W"), S=(s, "VA"))
    if leading:
        sh.note("The current leads the voltage: the load is capacitive and its Q is negative.")
    return _scaled(name, "meter", phases, v_v, complex(p, sign * q), count, sh)


def motor(name: str, phases: int, v_v: float, output_w: float, efficiency: float, pf: float,
          count: int = 1) -> LoadPower:
    """A motor from its nameplate: input power = output / efficiency."""
    sh = Sheet(name)
    p = sh.calc("P", "P_out / eta", "W", "Electrical input power", P_out=(output_w, "W"), eta=efficiency)
    q = sh.calc("Q", "P * tan(acos(PF))", "var", "Reactive power", P=(p, "W"), PF=pf)
    s = sh.calc("S", "P / PF", "VA", "Apparent power", P=(p, "W"), PF=pf)
    if phases == 3:
        sh.calc("I", "S / (sqrt(3) * V)", "A", "Line current", S=(s, "VA"), V=(v_v, "V"))
    else:
        sh.calc("I", "S / V", "A", "Current", S=(s, "VA"), V=(v_v, "V"))
    return _scaled(name, "motor", phases, v_v, complex(p, q), count, sh)


def demand(name: str, phases: int, v_v: float, p_w: float, pf: float, leading: bool = False,
           count: int = 1) -> LoadPower:
    """A load known by P and PF."""
    sh = Sheet(name)
    q = sh.calc("Q", "P * tan(acos(PF))", "var", "Reactive power magnitude", P=(p_w, "W"), PF=pf)
    if leading:
        sh.note("The load is leading (capacitive): its Q is negative.")
    return _scaled(name, "demand", phases, v_v, complex(p_w, -q if leading else q), count, sh)


def to_rms(sh: Sheet, symbol: str, value: float, as_: str, what: str) -> float:
    """Scope reading to rms, for a sine (common practice)."""
    if as_ == "rms":
        sh.note(f"{what}: read as rms, {value:g} V.")
        return value
    return sh.calc(symbol, RMS_FACTOR[as_].replace("X", "V_read"), "V",
                   f"{what}: rms from the {as_.replace('_', '-')} reading (sine)", V_read=(value, "V"))


def scope(name: str, phases: int, f_hz: float, v_read: float, v_as: str, shunt_read: float,
          shunt_as: str, r_shunt_ohm: float, *, time_shift_s: float | None = None,
          phase_rad: float | None = None, leading: bool = False,
          shunt_in_measured_voltage: bool = False, count: int = 1) -> LoadPower:
    """Two scope channels across the load and across a series current shunt.

    On 3 phases the reading is one phase of a balanced load (voltage
    line-to-neutral) and the totals are three times the phase figures.
    """
    sh = Sheet(name)
    v_rms = to_rms(sh, "V_rms", v_read, v_as, "Voltage channel")
    vsh_rms = to_rms(sh, "V_sh", shunt_read, shunt_as, "Shunt channel")
    i = sh.calc("I", "V_sh / R_sh", "A", "Current through the shunt (Ohm's law)",
                V_sh=(vsh_rms, "V"), R_sh=(r_shunt_ohm, "ohm"))
    if time_shift_s is not None:
        phi = sh.calc("phi", "2 * pi * f * dt", "rad", "Phase angle from the time shift (360° · f · Δt)",
                      f=(f_hz, "Hz"), dt=(time_shift_s, "s"))
    else:
        phi = phase_rad
        sh.note(f"Phase angle given: {math.degrees(phi):.4g}°.")
    if phi > math.pi / 2 + 1e-12:
        raise CalcError(f"load '{name}': the phase angle {math.degrees(phi):.1f}° is more than 90°; a "
                        "passive load cannot take it (check the time shift and the frequency)")
    sign = -1.0 if leading else 1.0
    extras: dict = {"phase_angle_rad": phi}
    if shunt_in_measured_voltage:
        sh.note("The voltage channel spans the load and the shunt: the load voltage is the measured "
                "voltage less the shunt drop, taken as phasors with the current as reference.")
        # current as reference: I∠0; the measured voltage leads it by phi (lagging load)
        v_meas = sh.calc("V_m", "polar(V_rms, s * phi)", "V", "Measured voltage phasor (current at 0°)",
                         V_rms=(v_rms, "V"), s=sign, phi=(phi, "rad"))
        v_load = sh.calc("V_L", "V_m - I * R_sh", "V", "Load voltage phasor",
                         V_m=(v_meas, "V"), I=(i, "A"), R_sh=(r_shunt_ohm, "ohm"))
        s_phase = sh.calc("S_ph", "V_L * I", "VA", "Complex power of the load (S = V·I*, I real)",
                          V_L=(v_load, "V"), I=(i, "A"))
        extras["v_load_v"] = abs(v_load)
        v_basis = abs(v_load)
    else:
        s_mag = sh.calc("S_ph", "V_rms * I", "VA", "Apparent power", V_rms=(v_rms, "V"), I=(i, "A"))
        p = sh.calc("P_ph", "S_ph * cos(phi)", "W", "Real power, P = V·I·cos φ", S_ph=(s_mag, "VA"),
                    phi=(phi, "rad"))
        q = sh.calc("Q_ph", "S_ph * sin(phi)", "var", "Reactive power, Q = V·I·sin φ",
                    S_ph=(s_mag, "VA"), phi=(phi, "rad"))
        s_phase = complex(p, sign * q)
        v_basis = v_rms
    if leading:
        sh.note("The current leads the voltage: the load is capacitive and its Q is negative.")
    extras["v_rms_v"] = v_rms
    extras["i_rms_a"] = i
    if phases == 3:
        p3 = sh.calc("P", "3 * P_ph", "W", "Three balanced phases", P_ph=(s_phase.real, "W"))
        q3 = sh.calc("Q", "3 * Q_ph", "var", "Three balanced phases", Q_ph=(s_phase.imag, "var"))
        s_one = complex(p3, q3)
        v_ll = SQRT3 * v_basis
        return _scaled(name, "scope", 3, v_ll, s_one, count, sh, extras)
    return _scaled(name, "scope", 1, v_basis, complex(s_phase), count, sh, extras)


def network(name: str, phases: int, v_v: float, f_hz: float, node: net.Node,
            connection: str = "wye", count: int = 1) -> LoadPower:
    """A per-phase impedance tree fed from the system voltage."""
    sh = Sheet(name)
    w = sh.calc("omega", "2 * pi * f", "rad/s", "Angular frequency", f=(f_hz, "Hz"))
    z = net.impedance(node, w)
    net.check_load_impedance(z)
    sh.note(f"Per-phase impedance from the series/parallel reduction of the network: "
            f"Z = {z.real:.6g} {'+' if z.imag >= 0 else '-'} j{abs(z.imag):.6g} ohm.")
    z_val = (z, "ohm")
    if phases == 1:
        s = sh.calc("S", "V**2 / conj(Z)", "VA", "Complex power, S = V·I* = V²/Z*", V=(v_v, "V"), Z=z_val)
        sh.calc("I", "V / abs(Z)", "A", "Current", V=(v_v, "V"), Z=z_val)
    elif connection == "wye":
        v_ph = sh.calc("V_ph", "V / sqrt(3)", "V", "Phase voltage (wye)", V=(v_v, "V"))
        s = sh.calc("S", "3 * V_ph**2 / conj(Z)", "VA", "Complex power of three phases",
                    V_ph=(v_ph, "V"), Z=z_val)
        sh.calc("I", "V_ph / abs(Z)", "A", "Line current (wye)", V_ph=(v_ph, "V"), Z=z_val)
    else:
        s = sh.calc("S", "3 * V**2 / conj(Z)", "VA", "Complex power of three phases (delta: each Z "
                    "across the line voltage)", V=(v_v, "V"), Z=z_val)
        i_ph = sh.calc("I_ph", "V / abs(Z)", "A", "Phase current (delta)", V=(v_v, "V"), Z=z_val)
        sh.calc("I", "sqrt(3) * I_ph", "A", "Line current (delta)", I_ph=(i_ph, "A"))
    extras = {"z_ohm": {"re": z.real, "im": z.imag}, "connection": connection if phases == 3 else None}
    return _scaled(name, "network", phases, v_v, complex(s), count, sh, extras)
