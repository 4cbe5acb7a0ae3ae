"""Rated currents, conductors, fuses and disconnects for capacitor banks.

Two rule sets are offered:

``"nec"`` (NFPA 70-2023, Article 460)
    conductor ampacity ≥ 1.35 × rated current (460.8(A)); an overcurrent
    device in each ungrounded conductor (460.8(B)), rated ``fuse_multiple`` ×
    rated current rounded up to a 240.6(A) rating; disconnect ≥ 1.35 × rated
    current (460.8(C)); conductors from Table 310.16 with 310.15(B)(1) ambient
    and 310.15(C)(1) bundling factors, and (by default) upsized until the fuse
    protects them (240.4, with the 240.4(B) next-size-up allowance and the
    240.4(D) small-conductor limits).
``"iec"`` (IEC 60831-1:2014 with IEC 60364)
    cables and switchgear sized for ``iec_sizing_factor`` × rated current
    (1.3 × In continuous times the capacitance tolerance: 1.43–1.5, default
    1.5, common practice); gG fuses ``fuse_multiple`` × rated current rounded
    up to an IEC 60269-1 rating; cables from IEC 60364-5-52 method C, and (by
    default) upsized until In ≤ Iz and I2 ≤ 1.45 Iz (60364-4-43, 433.1).

The "rated current" of a circuit is the larger of the nameplate line current
(rated kvar at rated voltage) and the line current at the applied voltage
(which exceeds nameplate on a detuned step, where the capacitor voltage is
raised by 1/(1 − p)).

All results are design aids: the authority having jurisdiction, the local
code, the equipment maker's instructions and a licensed engineer decide.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Sequence

from reportgen.calc import codes
from reportgen.calc.errors import CalcError
from reportgen.calc.sheet import Sheet

CONNECTIONS = ("delta", "wye")
#: highest system voltage the conductor and fuse tables cover: NEC Table 310.16 is for
#: conductors rated up to 2000 V; IEC 60364 covers low voltage up to 1000 V a.c.
CONDUCTOR_TABLE_MAX_V = {"nec": 2000.0, "iec": 1000.0}


def _pos(name: str, x: float) -> float:
    try:
        v = float(x)
    except (TypeError, ValueError):
        raise CalcError(f"{name} must be a number, not {x!r}") from None
    if not math.isfinite(v) or v <= 0:
        raise CalcError(f"{name} must be a positive number, not {x!r}")
    return v


# ---------------------------------------------------------------------------
# Inputs
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class CapacitorUnit:
    """One capacitor unit as named on its nameplate.

    Attributes
    ----------
    q_var : float
        Rated reactive power at ``v_rated_v`` and ``f_hz``, var.
    v_rated_v : float
        Rated voltage, V (line-to-line for a three-phase unit).
    f_hz : float
        Rated frequency, Hz.
    phases : int
        1 or 3.
    connection : {"delta", "wye"}
        Internal connection of a three-phase unit's elements.
    name : str
        Label used in sheets and the bill of materials.
    """

    q_var: float
    v_rated_v: float
    f_hz: float = 60.0
    phases: int = 3
    connection: str = "delta"
    name: str = ""

    def __post_init__(self):
        _pos("unit q_var", self.q_var)
        _pos("unit v_rated_v", self.v_rated_v)
        _pos("unit f_hz", self.f_hz)
        if self.phases not in (1, 3):
            raise CalcError(f"unit {self.name or ''} phases must be 1 or 3, not {self.phases!r}")
        if self.connection not in CONNECTIONS:
            raise CalcError(
                f"unit {self.name or ''} connection must be 'delta' or 'wye', not {self.connection!r}"
            )

    @property
    def c_element_f(self) -> float:
        """Capacitance of one element (per phase of the internal connection), F.

        Delta: C = Q/(3·ω·V²) across each line pair; wye: C = Q/(ω·V²) from
        each line to the star point; single phase: C = Q/(ω·V²).
        """
        w = 2 * math.pi * self.f_hz
        if self.phases == 3 and self.connection == "delta":
            return self.q_var / (3 * w * self.v_rated_v**2)
        return self.q_var / (w * self.v_rated_v**2)

    @property
    def c_wye_f(self) -> float:
        """Per-phase wye-equivalent capacitance Q/(ω·V²), F (= the unit C for single phase)."""
        return self.q_var / (2 * math.pi * self.f_hz * self.v_rated_v**2)

    @property
    def element_v_v(self) -> float:
        """Rated rms voltage across one element, V."""
        if self.phases == 3 and self.connection == "wye":
            return self.v_rated_v / math.sqrt(3)
        return self.v_rated_v


@dataclass(frozen=True)
class BankStep:
    """One switched step: ``count`` identical units, optionally behind a detuning reactor.

    ``detuning_pct`` is p = X_L/X_C in percent at the fundamental (e.g. 7).
    """

    name: str
    unit: CapacitorUnit
    count: int = 1
    detuning_pct: float | None = None

    def __post_init__(self):
        if int(self.count) != self.count or self.count < 1:
            raise CalcError(f"step {self.name!r}: unit count must be a whole number ≥ 1")
        if self.detuning_pct is not None and not (0 < self.detuning_pct < 100):
            raise CalcError(f"step {self.name!r}: detuning_pct must be between 0 and 100")

    @property
    def q_rated_var(self) -> float:
        """Nameplate kvar of the step's capacitors (at their rated voltage), var."""
        return self.count * self.unit.q_var

    @property
    def c_wye_f(self) -> float:
        """Per-phase wye-equivalent capacitance of the step, F."""
        return self.count * self.unit.c_wye_f

    @property
    def reactor_l_h(self) -> float | None:
        """Per-phase detuning reactor inductance L = p/(ω²·C_Y), H, or None."""
        if self.detuning_pct is None:
            return None
        w = 2 * math.pi * self.unit.f_hz
        return self.detuning_pct / 100 / (w**2 * self.c_wye_f)


@dataclass(frozen=True)
class ProtectionOptions:
    """Choices for conductor, fuse and disconnect selection.

    Attributes
    ----------
    rules : {"nec", "iec"}
        Rule set (see module docstring).
    fuse_multiple : float or None
        Fuse rating as a multiple of rated current before rounding up; None:
        1.65 (common practice range 1.65–2.5).
    iec_sizing_factor : float or None
        IEC rule set: cable and switchgear current as a multiple of rated
        current; None: 1.5 (common practice range 1.43–1.5).
    material : {"cu", "al"}
        Conductor material (IEC tables: copper only).
    insulation_temp_c : int or None
        Conductor temperature rating: nec 60, 75 or 90; iec 70 (PVC) or 90
        (XLPE). None: nec 75, iec 70.
    termination_temp_c : int or None
        NEC 110.14(C): the terminal temperature rating; the chosen ampacity
        is also limited to the table value in that column (uncorrected).
        None: no separate limit.
    ambient_c : float
        Ambient temperature along the run, °C (30 °C basis).
    bundled_count : int or None
        nec: current-carrying conductors in one raceway or cable (default 3);
        iec: circuits bunched together (default 1). Parallel sets are assumed
        to run in separate raceways.
    largest_size : str or None
        Largest single conductor to use before paralleling (e.g. "500 kcmil");
        None: the largest in the table.
    max_parallel : int
        Most parallel sets tried.
    coordinate_with_fuse : bool
        Upsize the conductor until the selected fuse protects it.
    fused_disconnect : bool
        The circuit's fuses sit in its disconnect switch, so the switch rating
        must also be at least the fuse rating.
    """

    rules: str = "nec"
    fuse_multiple: float | None = None
    iec_sizing_factor: float | None = None
    material: str = "cu"
    insulation_temp_c: int | None = None
    termination_temp_c: int | None = None
    ambient_c: float = 30.0
    bundled_count: int | None = None
    largest_size: str | None = None
    max_parallel: int = 8
    coordinate_with_fuse: bool = True
    fused_disconnect: bool = True

    def __post_init__(self):
        r = codes.check_rules(self.rules)
        object.__setattr__(self, "rules", r)
        if self.fuse_multiple is not None:
            _pos("fuse_multiple", self.fuse_multiple)
            if self.fuse_multiple < 1:
                raise CalcError("fuse_multiple must be at least 1 (the fuse must carry rated current)")
        if self.iec_sizing_factor is not None:
            _pos("iec_sizing_factor", self.iec_sizing_factor)
            if self.iec_sizing_factor < codes.IEC_CONTINUOUS.value:
                raise CalcError(
                    f"iec_sizing_factor {self.iec_sizing_factor} is below the 1.3 × In a unit may "
                    "carry continuously (IEC 60831-1)"
                )
        if self.max_parallel < 1:
            raise CalcError("max_parallel must be at least 1")

    @property
    def fuse_multiple_used(self) -> float:
        return codes.FUSE_MULTIPLE.value if self.fuse_multiple is None else float(self.fuse_multiple)

    @property
    def iec_sizing_used(self) -> float:
        return codes.IEC_SIZING.value if self.iec_sizing_factor is None else float(self.iec_sizing_factor)

    @property
    def temp_c(self) -> int:
        if self.insulation_temp_c is None:
            return codes.DEFAULT_INSULATION_TEMP_C[self.rules]
        return int(self.insulation_temp_c)

    @property
    def grouped(self) -> int:
        if self.bundled_count is None:
            return 3 if self.rules == "nec" else 1
        return int(self.bundled_count)


# ---------------------------------------------------------------------------
# Currents
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class Currents:
    """Currents of a unit, step or bank at rated and at applied voltage (SI)."""

    q_rated_var: float
    v_rated_v: float
    v_applied_v: float
    phases: int
    connection: str
    line_rated_a: float
    line_applied_a: float
    element_rated_a: float
    element_applied_a: float
    q_applied_var: float
    v_capacitor_v: float
    detuning_pct: float | None = None

    @property
    def basis_a(self) -> float:
        """The current protection is sized on: max(nameplate, applied), A."""
        return max(self.line_rated_a, self.line_applied_a)

    def as_dict(self) -> dict:
        return {
            "q_rated_var": self.q_rated_var,
            "v_rated_v": self.v_rated_v,
            "v_applied_v": self.v_applied_v,
            "phases": self.phases,
            "connection": self.connection,
            "line_rated_a": self.line_rated_a,
            "line_applied_a": self.line_applied_a,
            "element_rated_a": self.element_rated_a,
            "element_applied_a": self.element_applied_a,
            "q_applied_var": self.q_applied_var,
            "v_capacitor_v": self.v_capacitor_v,
            "detuning_pct": self.detuning_pct,
            "basis_a": self.basis_a,
        }


def capacitor_currents(
    q_rated_var: float,
    v_rated_v: float,
    v_applied_v: float | None = None,
    *,
    phases: int = 3,
    connection: str = "delta",
    detuning_pct: float | None = None,
    name: str = "",
    sheet: Sheet | None = None,
) -> Currents:
    """Line and element currents of capacitors at rated and applied voltage.

    Parameters
    ----------
    q_rated_var : float
        Nameplate reactive power at ``v_rated_v``, var.
    v_rated_v : float
        Rated voltage (line-to-line for three phase), V.
    v_applied_v : float, optional
        System voltage the capacitors are connected to; default ``v_rated_v``.
    phases : {1, 3}
    connection : {"delta", "wye"}
        Three phase: delta element current = line current/√3; wye element
        current = line current.
    detuning_pct : float, optional
        Series reactor p = X_L/X_C (%). The line current at applied voltage
        becomes I_rated·(V/V_rated)/(1 − p) and the capacitor voltage V/(1 − p).
    name : str
        Label for the sheet.
    sheet : Sheet, optional
        Records the steps.

    Returns
    -------
    Currents
    """
    q = _pos("q_rated_var", q_rated_var)
    vr = _pos("v_rated_v", v_rated_v)
    va = vr if v_applied_v is None else _pos("v_applied_v", v_applied_v)
    if phases not in (1, 3):
        raise CalcError(f"{name or 'capacitor'}: phases must be 1 or 3, not {phases!r}")
    if connection not in CONNECTIONS:
        raise CalcError(f"{name or 'capacitor'}: connection must be 'delta' or 'wye'")
    p = 0.0 if detuning_pct is None else float(detuning_pct) / 100.0
    if not 0 <= p < 1:
        raise CalcError(f"{name or 'capacitor'}: detuning_pct must be between 0 and 100")
    s = sheet if sheet is not None else Sheet()
    t = f"{name}: " if name else ""
    if phases == 3:
        i_r = s.calc("I_r", "Q / (sqrt(3) * V_r)", "A", t + "rated line current",
                     Q=(q, "var"), V_r=(vr, "V"))
    else:
        i_r = s.calc("I_r", "Q / V_r", "A", t + "rated current", Q=(q, "var"), V_r=(vr, "V"))
    if detuning_pct is None:
        i_a = s.calc("I_a", "I_r * V_a / V_r", "A", t + "current at applied voltage",
                     I_r=(i_r, "A"), V_a=(va, "V"), V_r=(vr, "V"))
        q_a = s.calc("Q_a", "Q * (V_a / V_r)**2", "var", t + "reactive power at applied voltage",
                     Q=(q, "var"), V_a=(va, "V"), V_r=(vr, "V"))
        v_c = va
    else:
        i_a = s.calc("I_a", "I_r * V_a / V_r / (1 - p)", "A",
                     t + "current at applied voltage with detuning reactor",
                     I_r=(i_r, "A"), V_a=(va, "V"), V_r=(vr, "V"), p=(p, "pu"))
        q_a = s.calc("Q_a", "Q * (V_a / V_r)**2 / (1 - p)", "var",
                     t + "reactive power delivered by capacitor and reactor at applied voltage",
                     Q=(q, "var"), V_a=(va, "V"), V_r=(vr, "V"), p=(p, "pu"))
        v_c = s.calc("V_c", "V_a / (1 - p)", "V", t + "capacitor voltage raised by the reactor",
                     V_a=(va, "V"), p=(p, "pu"))
        if v_c > vr * (1 + 1e-9):
            s.note(
                f"Caution: capacitor voltage {v_c:.0f} V exceeds the units' rated {vr:.0f} V; "
                "units for a detuned step must be rated for the raised voltage.",
                title=t + "capacitor voltage",
            )
    div = math.sqrt(3) if (phases == 3 and connection == "delta") else 1.0
    return Currents(
        q_rated_var=q, v_rated_v=vr, v_applied_v=va, phases=phases, connection=connection,
        line_rated_a=float(i_r), line_applied_a=float(i_a),
        element_rated_a=float(i_r) / div, element_applied_a=float(i_a) / div,
        q_applied_var=float(q_a), v_capacitor_v=float(v_c), detuning_pct=detuning_pct,
    )


def step_currents(step: BankStep, v_applied_v: float | None = None,
                  sheet: Sheet | None = None) -> Currents:
    """:func:`capacitor_currents` for a :class:`BankStep`."""
    u = step.unit
    return capacitor_currents(
        step.q_rated_var, u.v_rated_v, v_applied_v, phases=u.phases, connection=u.connection,
        detuning_pct=step.detuning_pct, name=step.name, sheet=sheet,
    )


# ---------------------------------------------------------------------------
# Conductors
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class ConductorChoice:
    """The conductor chosen for a circuit.

    ``ampacity_a`` is the corrected ampacity of all parallel sets together
    (per phase); ``table_ampacity_a`` the table value of one conductor.
    """

    size: str
    sets: int
    material: str
    insulation_temp_c: int
    table_ampacity_a: float
    ambient_factor: float
    bundling_factor: float
    ampacity_a: float
    required_a: float
    protected_by_a: float | None
    clause: str
    confidence: str
    notes: tuple[str, ...] = field(default=())

    def as_dict(self) -> dict:
        return {
            "size": self.size,
            "sets": self.sets,
            "material": self.material,
            "insulation_temp_c": self.insulation_temp_c,
            "table_ampacity_a": self.table_ampacity_a,
            "ambient_factor": self.ambient_factor,
            "bundling_factor": self.bundling_factor,
            "ampacity_a": self.ampacity_a,
            "required_a": self.required_a,
            "protected_by_a": self.protected_by_a,
            "clause": self.clause,
            "confidence": self.confidence,
            "notes": list(self.notes),
        }


def _nec_protects(ampacity_a: float, ocpd_a: float, size: str, material: str, sets: int) -> bool:
    """NEC 240.4: does an OCPD of ``ocpd_a`` protect a conductor of ``ampacity_a``?"""
    if sets == 1:
        lim = codes.NEC_SMALL_CONDUCTOR_OCPD_A.get((material, size))
        if lim is not None and ocpd_a > lim:
            return False
    if ocpd_a <= ampacity_a + 1e-9:
        return True
    # 240.4(B): next higher standard rating when the ampacity is not a standard rating, ≤ 800 A.
    std = codes.NEC_STANDARD_RATINGS.ratings_a
    if ocpd_a > codes.NEC_240_4B.value:
        return False
    if any(abs(ampacity_a - r) < 1e-9 for r in std):
        return False
    nxt = next((r for r in std if r > ampacity_a), None)
    return nxt is not None and ocpd_a <= nxt


def _iec_protects(iz_a: float, in_a: float) -> bool:
    """IEC 60364-4-43 433.1: In ≤ Iz and I2 = k·In ≤ 1.45·Iz for a gG fuse."""
    return in_a <= iz_a + 1e-9 and codes.gg_conventional_factor(in_a) * in_a <= 1.45 * iz_a + 1e-9


def select_conductor(
    required_a: float,
    *,
    rules: str = "nec",
    material: str = "cu",
    insulation_temp_c: int | None = None,
    termination_temp_c: int | None = None,
    ambient_c: float = 30.0,
    bundled_count: int | None = None,
    largest_size: str | None = None,
    max_parallel: int = 8,
    protected_by_a: float | None = None,
    name: str = "",
    sheet: Sheet | None = None,
) -> ConductorChoice:
    """Smallest conductor (then fewest parallel sets) whose corrected ampacity suffices.

    Corrected ampacity of one conductor = table ampacity × ambient factor ×
    bundling factor, limited (nec, when ``termination_temp_c`` is given) to the
    uncorrected table value in the termination column. One set is tried with
    every size up to ``largest_size``; then 2, 3, … sets of sizes from the
    table's smallest paralleling size (nec 1/0 AWG, 310.10(G); iec 50 mm²,
    common practice). The first size (smallest sets, then smallest size) with
    sets × corrected ampacity ≥ ``required_a`` — and, when ``protected_by_a``
    is given, protected by that fuse — is chosen.

    Parameters
    ----------
    required_a : float
        Minimum ampacity per phase, A.
    rules : {"nec", "iec"}
    material : {"cu", "al"}
    insulation_temp_c : int, optional
        nec 60/75/90 (default 75); iec 70/90 (default 70).
    termination_temp_c : int, optional
        nec terminal temperature rating (110.14(C)).
    ambient_c : float
        °C.
    bundled_count : int, optional
        nec current-carrying conductors per raceway (default 3); iec grouped circuits (default 1).
    largest_size : str, optional
        Largest size used before paralleling.
    max_parallel : int
    protected_by_a : float, optional
        Rating of the fuse that must protect the conductor (nec 240.4; iec 433.1).
    name : str
    sheet : Sheet, optional

    Returns
    -------
    ConductorChoice

    Raises
    ------
    CalcError
        If no size and set count within the limits is enough.
    """
    r = codes.check_rules(rules)
    req = _pos("required ampacity", required_a)
    temp = codes.DEFAULT_INSULATION_TEMP_C[r] if insulation_temp_c is None else int(insulation_temp_c)
    tab = codes.ampacity_table(r, material, temp)
    term = None
    if termination_temp_c is not None:
        if r != "nec":
            raise CalcError("termination_temp_c applies to the nec rule set only")
        term = codes.ampacity_table(r, material, int(termination_temp_c))
    grouped = (3 if r == "nec" else 1) if bundled_count is None else int(bundled_count)
    k_t, row_t = codes.ambient_factor(r, temp, ambient_c)
    k_b, row_b = codes.bundling_factor(r, grouped)
    sizes = list(tab.sizes)
    if largest_size is not None:
        codes.size_index(r, largest_size)
        if largest_size not in sizes:
            raise CalcError(f"largest_size {largest_size!r} is not in {tab.clause} for {material}")
        sizes = sizes[: sizes.index(largest_size) + 1]
    par_from = tab.sizes.index(tab.parallel_min_size)
    s = sheet if sheet is not None else Sheet()
    t = f"{name}: " if name else ""
    amb_clause = codes.NEC_AMBIENT_SOURCE[0] if r == "nec" else codes.IEC_AMBIENT_SOURCE[0]
    bun_clause = codes.NEC_BUNDLING_SOURCE[0] if r == "nec" else codes.IEC_GROUPING_SOURCE[0]

    def each(size: str) -> float:
        a = tab.ampacity(size) * k_t * k_b
        if term is not None:
            a = min(a, term.ampacity(size))
        return a

    choice = None
    for n in range(1, int(max_parallel) + 1):
        cand = sizes if n == 1 else [z for z in sizes if tab.sizes.index(z) >= par_from]
        for z in cand:
            tot = n * each(z)
            if tot + 1e-9 < req:
                continue
            if protected_by_a is not None:
                ok = (_nec_protects(tot, protected_by_a, z, tab.material, n) if r == "nec"
                      else _iec_protects(tot, protected_by_a))
                if not ok:
                    continue
            choice = (n, z)
            break
        if choice:
            break
    if choice is None:
        raise CalcError(
            f"{t}no conductor up to {sizes[-1]} × {max_parallel} parallel sets reaches "
            f"{req:.1f} A ({material}, {temp} °C, ambient {ambient_c:g} °C, "
            f"{grouped} grouped); allow more parallel sets or split the circuit"
        )
    n, z = choice
    a_tab = tab.ampacity(z)
    notes = [
        f"{tab.clause} ({tab.edition}; {tab.confidence}): {z} {material} {temp} °C = {a_tab:g} A",
        f"{amb_clause}: ambient {ambient_c:g} °C, row {row_t}, factor {k_t:g}",
        f"{bun_clause}: {row_b}, factor {k_b:g}",
    ]
    if n > 1:
        notes.append(
            f"{n} parallel sets of {z} (paralleling from {tab.parallel_min_size}"
            f"{', NEC 310.10(G)' if r == 'nec' else ', common practice'}); each set assumed in "
            "its own raceway, so the bundling factor applies per raceway"
        )
    for text in notes:
        s.note(t + text, title=t + "conductor table look-up")
    amp = s.calc("I_z", "n * A_t * k_t * k_b", "A", t + "corrected ampacity of the chosen conductor",
                 n=(n, ""), A_t=(a_tab, "A"), k_t=(k_t, ""), k_b=(k_b, ""))
    if term is not None and term.ampacity(z) < a_tab * k_t * k_b:
        amp = s.calc("I_z", "n * A_term", "A", t + "limited by termination temperature rating",
                     note=f"NEC 110.14(C): {termination_temp_c} °C terminations",
                     n=(n, ""), A_term=(term.ampacity(z), "A"))
    if protected_by_a is not None:
        rule = ("NEC 240.4 (240.4(B) next size up ≤ 800 A, 240.4(D) small conductors)"
                if r == "nec" else "IEC 60364-4-43 433.1: In ≤ Iz and I2 ≤ 1.45·Iz")
        s.note(f"{t}{rule}: {protected_by_a:g} A fuse protects {n} × {z} (Iz {amp:.1f} A)",
               title=t + "conductor protection")
        notes.append(f"protected by {protected_by_a:g} A per {rule}")
    return ConductorChoice(
        size=z, sets=n, material=tab.material, insulation_temp_c=temp, table_ampacity_a=a_tab,
        ambient_factor=k_t, bundling_factor=k_b, ampacity_a=float(amp), required_a=req,
        protected_by_a=None if protected_by_a is None else float(protected_by_a),
        clause=tab.clause, confidence=tab.confidence, notes=tuple(notes),
    )


# ---------------------------------------------------------------------------
# Circuit protection
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class CircuitProtection:
    """Conductor, fuse and disconnect for one capacitor circuit (a step or the bank feeder).

    Attributes
    ----------
    rated_current_a : float
        Nameplate line current (rated kvar at rated voltage), A.
    basis_current_a : float
        Current the ratings are based on: max(nameplate, applied), A.
    conductor_min_a, fuse_min_a, disconnect_min_a : float
        Minimum ratings from the rules before rounding up, A.
    fuse_a, disconnect_a : float
        Selected standard ratings, A.
    clauses : dict
        Rule or calculation behind each rating (keys conductor, fuse, disconnect).
    """

    name: str
    rules: str
    currents: Currents
    rated_current_a: float
    basis_current_a: float
    conductor_min_a: float
    conductor: ConductorChoice
    fuse_min_a: float
    fuse_a: float
    disconnect_min_a: float
    disconnect_a: float
    disconnect_required: bool
    clauses: dict

    def as_dict(self) -> dict:
        return {
            "name": self.name,
            "rules": self.rules,
            "rated_current_a": self.rated_current_a,
            "applied_current_a": self.currents.line_applied_a,
            "basis_current_a": self.basis_current_a,
            "currents": self.currents.as_dict(),
            "conductor_min_a": self.conductor_min_a,
            "conductor": self.conductor.as_dict(),
            "fuse_min_a": self.fuse_min_a,
            "fuse_a": self.fuse_a,
            "disconnect_min_a": self.disconnect_min_a,
            "disconnect_a": self.disconnect_a,
            "disconnect_required": self.disconnect_required,
            "clauses": dict(self.clauses),
        }


def protect_circuit(
    currents: Currents,
    options: ProtectionOptions | None = None,
    *,
    name: str = "",
    disconnect_required: bool = True,
    disconnect_reason: str = "",
    sheet: Sheet | None = None,
) -> CircuitProtection:
    """Conductor, fuse and disconnect ratings for a capacitor circuit.

    Parameters
    ----------
    currents : Currents
        From :func:`capacitor_currents` or :func:`step_currents` (or summed by
        :func:`protect_bank`).
    options : ProtectionOptions, optional
    name : str
    disconnect_required : bool
        False where no separate disconnecting means is needed: a step inside a
        bank (the bank's disconnect serves every step; the minimum rating then
        applies to the step's switching device), or on the load side of a motor
        controller (NEC 460.8(C) exception). The minimum rating is still reported.
    disconnect_reason : str
        Why no disconnect is needed, for the sheet.
    sheet : Sheet, optional

    Returns
    -------
    CircuitProtection
    """
    o = options or ProtectionOptions()
    v_max = CONDUCTOR_TABLE_MAX_V[o.rules]
    if currents.v_applied_v > v_max:
        raise CalcError(
            f"{name or 'circuit'}: {currents.v_applied_v:.0f} V is above the {v_max:.0f} V covered "
            f"by the {o.rules} conductor and fuse tables used here; medium-voltage cables, fuses "
            "and switchgear must be selected by an engineer from the applicable tables"
        )
    s = sheet if sheet is not None else Sheet()
    t = f"{name}: " if name else ""
    i_b = currents.basis_a
    if currents.line_applied_a > currents.line_rated_a * (1 + 1e-9):
        s.note(f"{t}ratings based on the current at applied voltage {i_b:.2f} A, "
               f"above nameplate {currents.line_rated_a:.2f} A", title=t + "basis current")
    clauses: dict[str, str] = {}
    if o.rules == "nec":
        i_c = s.calc("I_min", "1.35 * I_r", "A", t + "minimum conductor ampacity",
                     note=codes.NEC_460_8A.clause, I_r=(i_b, "A"))
        clauses["conductor"] = f"{codes.NEC_460_8A.clause}: ≥ 135 % of rated current"
        i_d = s.calc("I_sw", "1.35 * I_r", "A", t + "minimum disconnect rating",
                     note=codes.NEC_460_8C.clause, I_r=(i_b, "A"))
        clauses["disconnect"] = f"{codes.NEC_460_8C.clause}: ≥ 135 % of rated current"
    else:
        k = o.iec_sizing_used
        i_c = s.calc("I_min", "k * I_r", "A", t + "cable design current",
                     note=f"{codes.IEC_SIZING.clause}, {codes.IEC_SIZING.confidence}",
                     k=(k, ""), I_r=(i_b, "A"))
        clauses["conductor"] = (f"{codes.IEC_SIZING.clause}: {k:g} × rated current "
                                f"({codes.IEC_SIZING.confidence})")
        i_d = s.calc("I_sw", "k * I_r", "A", t + "minimum switch-disconnector rating",
                     note=f"{codes.IEC_SIZING.clause}, {codes.IEC_SIZING.confidence}",
                     k=(k, ""), I_r=(i_b, "A"))
        clauses["disconnect"] = clauses["conductor"]
    m = o.fuse_multiple_used
    i_f = s.calc("I_f,min", "m * I_r", "A", t + "minimum fuse rating",
                 note=f"capacitor-duty fusing, {codes.FUSE_MULTIPLE.confidence} "
                      f"({codes.FUSE_MULTIPLE_RANGE[0]}–{codes.FUSE_MULTIPLE_RANGE[1]} × rated)",
                 m=(m, ""), I_r=(i_b, "A"))
    ftab = codes.fuse_table(o.rules)
    fuse = ftab.next_at_least(i_f)
    s.note(f"{t}{ftab.clause}: next standard rating ≥ {i_f:.1f} A is {fuse:g} A",
           title=t + "fuse rating")
    clauses["fuse"] = (f"{codes.NEC_460_8B.clause if o.rules == 'nec' else 'IEC 60269 gG'}: "
                       f"{m:g} × rated current ({codes.FUSE_MULTIPLE.confidence}), "
                       f"next {ftab.clause} rating")
    stab = codes.switch_table(o.rules)
    need_d = float(i_d)
    if o.fused_disconnect and disconnect_required and fuse > need_d:
        need_d = fuse
        s.note(f"{t}fused disconnect: switch rating at least the {fuse:g} A fuse",
               title=t + "disconnect rating")
        clauses["disconnect"] += f"; fused switch, at least the {fuse:g} A fuse"
    disc = stab.next_at_least(need_d)
    s.note(f"{t}{stab.clause} ({stab.confidence}): next switch rating ≥ {need_d:.1f} A is {disc:g} A",
           title=t + "disconnect rating")
    if not disconnect_required:
        s.note(f"{t}no separate disconnecting means for this circuit"
               f"{': ' + disconnect_reason if disconnect_reason else ''}; its switching device "
               f"is rated at least {i_d:.1f} A", title=t + "disconnect")
    cond = select_conductor(
        i_c, rules=o.rules, material=o.material, insulation_temp_c=o.temp_c,
        termination_temp_c=o.termination_temp_c, ambient_c=o.ambient_c,
        bundled_count=o.grouped, largest_size=o.largest_size, max_parallel=o.max_parallel,
        protected_by_a=fuse if o.coordinate_with_fuse else None, name=name, sheet=s,
    )
    if o.coordinate_with_fuse:
        clauses["conductor"] += ("; upsized so the fuse protects it (NEC 240.4)" if o.rules == "nec"
                                 else "; upsized so the fuse protects it (IEC 60364-4-43 433.1)")
    return CircuitProtection(
        name=name, rules=o.rules, currents=currents, rated_current_a=currents.line_rated_a,
        basis_current_a=i_b, conductor_min_a=float(i_c), conductor=cond, fuse_min_a=float(i_f),
        fuse_a=fuse, disconnect_min_a=float(i_d), disconnect_a=disc,
        disconnect_required=disconnect_required, clauses=clauses,
    )


@dataclass(frozen=True)
class BankProtection:
    """Protection of the bank feeder and of each step."""

    feeder: CircuitProtection
    steps: tuple[CircuitProtection, ...]

    def as_dict(self) -> dict:
        return {"feeder": self.feeder.as_dict(), "steps": [p.as_dict() for p in self.steps]}


def _sum_currents(cs: Sequence[Currents], steps: Sequence[BankStep]) -> Currents:
    vr = max(c.v_rated_v for c in cs)
    return Currents(
        q_rated_var=sum(c.q_rated_var for c in cs), v_rated_v=vr, v_applied_v=cs[0].v_applied_v,
        phases=cs[0].phases, connection="mixed" if len({c.connection for c in cs}) > 1 else cs[0].connection,
        line_rated_a=sum(c.line_rated_a for c in cs), line_applied_a=sum(c.line_applied_a for c in cs),
        element_rated_a=sum(c.element_rated_a for c in cs),
        element_applied_a=sum(c.element_applied_a for c in cs),
        q_applied_var=sum(c.q_applied_var for c in cs), v_capacitor_v=max(c.v_capacitor_v for c in cs),
        detuning_pct=None,
    )


def protect_bank(
    steps: Sequence[BankStep],
    v_applied_v: float,
    options: ProtectionOptions | None = None,
    *,
    feeder_name: str = "bank feeder",
    sheet: Sheet | None = None,
) -> BankProtection:
    """Protection of each step and of the feeder to the whole bank.

    The feeder's rated current is the sum of the steps' basis currents (all
    steps draw leading current in phase at the fundamental, so they add).

    Parameters
    ----------
    steps : sequence of BankStep
        All steps must have the same number of phases.
    v_applied_v : float
        System voltage, V (line-to-line for three phase).
    options : ProtectionOptions, optional
    feeder_name : str
    sheet : Sheet, optional

    Returns
    -------
    BankProtection
    """
    if not steps:
        raise CalcError("a capacitor bank needs at least one step")
    if len({st.unit.phases for st in steps}) > 1:
        raise CalcError("all steps of a bank must have the same number of phases")
    names = [st.name for st in steps]
    if len(set(names)) != len(names):
        raise CalcError(f"step names must be unique: {names}")
    o = options or ProtectionOptions()
    s = sheet if sheet is not None else Sheet()
    per = []
    cs = []
    for st in steps:
        c = step_currents(st, v_applied_v, sheet=s)
        cs.append(c)
        per.append(protect_circuit(
            c, o, name=st.name, disconnect_required=False,
            disconnect_reason="the bank's disconnecting means opens every step", sheet=s))
    total = _sum_currents(cs, steps)
    basis = s.calc("I_bank", " + ".join(f"I_{k + 1}" for k in range(len(cs))), "A",
                   f"{feeder_name}: rated current, sum of step basis currents",
                   **{f"I_{k + 1}": (c.basis_a, "A") for k, c in enumerate(cs)})
    # The feeder basis is the sum of step bases (a detuned step's applied current may exceed
    # its nameplate while another step's is below), carried as the feeder's applied current.
    div = math.sqrt(3) if total.connection == "delta" else 1.0
    total = replace(total, line_applied_a=max(float(basis), total.line_applied_a),
                    element_applied_a=max(float(basis), total.line_applied_a) / div)
    feeder = protect_circuit(total, o, name=feeder_name, sheet=s)
    return BankProtection(feeder=feeder, steps=tuple(per))


# ---------------------------------------------------------------------------
# Capacitor switched with a motor
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class MotorCapacitorResult:
    """A capacitor connected on the load side of a motor controller."""

    i_before_a: float
    i_after_a: float
    pf_before: float
    pf_after: float
    capacitor_rated_a: float
    conductor_min_a: float
    disconnect_required: bool
    ocpd_required: bool
    overload_setting_basis_a: float
    q_no_load_limit_var: float | None
    q_within_limit: bool | None
    overload_note: str
    notes: tuple[str, ...]

    def as_dict(self) -> dict:
        return {
            "i_before_a": self.i_before_a,
            "i_after_a": self.i_after_a,
            "pf_before": self.pf_before,
            "pf_after": self.pf_after,
            "capacitor_rated_a": self.capacitor_rated_a,
            "conductor_min_a": self.conductor_min_a,
            "disconnect_required": self.disconnect_required,
            "ocpd_required": self.ocpd_required,
            "overload_setting_basis_a": self.overload_setting_basis_a,
            "q_no_load_limit_var": self.q_no_load_limit_var,
            "q_within_limit": self.q_within_limit,
            "overload_note": self.overload_note,
            "notes": list(self.notes),
        }


def motor_capacitor(
    i_before_a: float,
    pf_before: float,
    pf_after: float,
    q_cap_var: float,
    v_v: float,
    *,
    phases: int = 3,
    load_side_of_overload: bool = True,
    i_no_load_a: float | None = None,
    motor_conductor_ampacity_a: float | None = None,
    sheet: Sheet | None = None,
) -> MotorCapacitorResult:
    """Line current and overload setting for a capacitor switched with its motor.

    The capacitor sits on the load side of the motor controller (NEC 460.8(C)
    exception: no separate disconnect). On the load side of the overload
    device too (``load_side_of_overload``), the overload sees the improved
    current and is set on it (NEC 460.9): I_after = I_before · PF_before /
    PF_after (same real power), and no separate overcurrent device is needed
    (460.8(B) exception). Between the controller and the overload device, the
    overload sees the motor's own current (set on I_before) and the capacitor
    needs its own overcurrent protection. Either way its conductors need
    ≥ 135 % of the capacitor's rated current and ≥ 1/3 of the motor circuit
    conductor ampacity (460.8(A)).

    Parameters
    ----------
    i_before_a : float
        Motor full-load line current before correction, A.
    pf_before, pf_after : float
        Power factor before and after (0 < pf ≤ 1).
    q_cap_var : float
        Capacitor rating, var.
    v_v : float
        Voltage (line-to-line for three phase), V.
    phases : {1, 3}
    load_side_of_overload : bool
        The capacitor connects between the overload device and the motor.
    i_no_load_a : float, optional
        Motor no-load current; checks the capacitor against the no-load
        magnetising kvar √3·V·I0 (common practice: ≤ 90 % of it, so the motor
        cannot self-excite after disconnection; the motor maker's table
        governs, NEMA MG 1 from memory).
    motor_conductor_ampacity_a : float, optional
        Ampacity of the motor circuit conductors (for the 1/3 rule).
    sheet : Sheet, optional

    Returns
    -------
    MotorCapacitorResult
    """
    ib = _pos("i_before_a", i_before_a)
    for nm, pf in (("pf_before", pf_before), ("pf_after", pf_after)):
        if not (0 < pf <= 1):
            raise CalcError(f"{nm} must be in (0, 1], not {pf!r}")
    if pf_after < pf_before:
        raise CalcError(f"pf_after {pf_after} is below pf_before {pf_before}: a capacitor raises PF")
    s = sheet if sheet is not None else Sheet()
    ia = s.calc("I_after", "I_before * PF_before / PF_after", "A",
                "motor line current at improved power factor", note="NEC 460.9",
                I_before=(ib, "A"), PF_before=(pf_before, ""), PF_after=(pf_after, ""))
    c = capacitor_currents(q_cap_var, v_v, phases=phases, name="motor capacitor", sheet=s)
    i_min = s.calc("I_min", "1.35 * I_r", "A", "minimum capacitor conductor ampacity",
                   note="NEC 460.8(A)", I_r=(c.line_rated_a, "A"))
    notes = ["NEC 460.8(C) exception: no separate disconnect on the load side of the motor controller"]
    if load_side_of_overload:
        notes.append("NEC 460.8(B) exception: no separate overcurrent device on the load side of "
                     "the motor overload device")
    else:
        notes.append("NEC 460.8(B): the capacitor is on the line side of the overload device and "
                     "needs its own overcurrent protection in each ungrounded conductor")
    if motor_conductor_ampacity_a is not None:
        third = s.calc("I_min,motor", "A_m / 3", "A", "one third of motor circuit conductor ampacity",
                       note="NEC 460.8(A)", A_m=(_pos("motor_conductor_ampacity_a",
                                                      motor_conductor_ampacity_a), "A"))
        i_min = max(i_min, third)
    q_lim = None
    within = None
    if i_no_load_a is not None:
        i0 = _pos("i_no_load_a", i_no_load_a)
        q_lim = s.calc("Q_0", "sqrt(3) * V * I_0" if phases == 3 else "V * I_0", "var",
                       "motor no-load magnetising reactive power (capacitor limit)",
                       note="common practice: capacitor ≤ 90 % of it; the motor maker's maximum governs",
                       V=(float(v_v), "V"), I_0=(i0, "A"))
        within = q_cap_var <= 0.9 * q_lim
        if not within:
            notes.append(
                f"Caution: {q_cap_var:.0f} var exceeds 90 % of the no-load magnetising "
                f"{q_lim:.0f} var: risk of self-excitation and overvoltage when the motor is "
                "disconnected while turning; use the motor maker's maximum capacitor rating"
            )
    if load_side_of_overload:
        basis = float(ia)
        ol = (f"Set the motor overload on the improved-power-factor current {ia:.1f} A "
              f"(not the nameplate {ib:.1f} A), applying the usual service-factor and "
              "temperature-rise rules of NEC 430.32 (NEC 460.9)")
    else:
        basis = ib
        ol = (f"The overload device sees the motor current only: set it on {ib:.1f} A per "
              "NEC 430.32 as without the capacitor")
    s.note(ol, title="motor overload setting")
    return MotorCapacitorResult(
        i_before_a=ib, i_after_a=float(ia), pf_before=float(pf_before), pf_after=float(pf_after),
        capacitor_rated_a=c.line_rated_a, conductor_min_a=float(i_min), disconnect_required=False,
        ocpd_required=not load_side_of_overload, overload_setting_basis_a=basis,
        q_no_load_limit_var=None if q_lim is None else float(q_lim), q_within_limit=within,
        overload_note=ol, notes=tuple(notes),
    )


def protection_summary(feeder: CircuitProtection, discharge=None, inrush=None) -> dict:
    """The ``protection`` object of the project JSON.

    Parameters
    ----------
    feeder : CircuitProtection
        Usually ``protect_bank(...).feeder``.
    discharge : DischargeResult or sequence of them, optional
        From :func:`reportgen.calc.discharge.discharge_check`. For several
        units the governing values are reported: the smallest
        ``max_resistance_ohm`` and the longest ``seconds_to_limit``.
    inrush : InrushResult or BankInrush, optional
        From :mod:`reportgen.calc.switching`; for a BankInrush its worst case.

    Returns
    -------
    dict
        ``{rated_current_a, basis_current_a, conductor: {size, ampacity_a,
        sets, material}, fuse_a, disconnect_a, discharge:
        {max_resistance_ohm, seconds_to_limit} | None, inrush: {peak_a,
        frequency_hz} | None}``.
    """
    out = {
        "rated_current_a": feeder.rated_current_a,
        "basis_current_a": feeder.basis_current_a,
        "conductor": {
            "size": feeder.conductor.size,
            "ampacity_a": feeder.conductor.ampacity_a,
            "sets": feeder.conductor.sets,
            "material": feeder.conductor.material,
        },
        "fuse_a": feeder.fuse_a,
        "disconnect_a": feeder.disconnect_a,
        "discharge": None,
        "inrush": None,
    }
    if discharge is not None:
        ds = list(discharge) if isinstance(discharge, (list, tuple)) else [discharge]
        if ds:
            out["discharge"] = {
                "max_resistance_ohm": min(d.max_resistance_ohm for d in ds),
                "seconds_to_limit": max(d.seconds_to_limit for d in ds),
            }
    if inrush is not None:
        w = getattr(inrush, "worst", inrush)
        out["inrush"] = {"peak_a": w.peak_a, "frequency_hz": w.frequency_hz}
    return out
