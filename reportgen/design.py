"""From a validated project to a computed design: the compute stage of a build.

``compute(project)`` turns the schema model into calls of the pure numeric
core (``reportgen.calc``) and gathers the results, the calculation sheets and
the design checks into one :class:`Design`. Nothing here reads or writes
files; nothing here formats for display.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from . import schema
from .calc import loads as L
from .calc import network as net
from .calc import sizing
from .calc.errors import CalcError
from .calc.sheet import Sheet
from .errors import InputError, Problem
from .project import Project

STATUS_ORDER = {"pass": 0, "warn": 1, "fail": 2}


@dataclass(frozen=True)
class LoadContext:
    """What a load computer may use besides the load itself."""

    phases: int
    v_v: float
    f_hz: float
    project: Project
    index: int  # position in loads[], for locating problems


#: bank delivery hooks (feature stage modules append): fn(model, v_v, f_hz) -> BankDelivery or None.
#: A hook changes what each unit delivers at the bus beyond (V/V_r)^2 (f/f_r), e.g. a detuning
#: reactor's 1/(1 - p), and may propose the capacitor rated voltage when the file gives none.
BANK_DELIVERY: list = []


@dataclass(frozen=True)
class BankDelivery:
    factor: float  # multiplies the delivered kvar of every unit
    expr: str  # the factor as a sheet expression in the names of ``values``
    values: dict  # sheet values for ``expr``
    title: str  # what the factor is, for the sizing sheet
    v_rated_default_v: float | None = None  # capacitor rated voltage to use when the file gives none
    note: str = ""  # why that rated voltage


#: load kind -> computer(load, ctx) -> LoadPower, or None for a load that adds no power at the
#: correction point (e.g. billing history). Feature stage modules register their kinds here.
LOAD_COMPUTERS: dict = {}


@dataclass(frozen=True)
class BankPlan:
    """A feature's replacement for the core unit choice (e.g. an automatic stepped bank).

    ``sizing`` describes the whole installed bank (its ``q_installed_var`` is the bank's total);
    the after-correction figures of the report are computed with ``q_in_service_var`` (delivered)
    and ``q_rated_in_service_var`` (nameplate), the part of the bank in service at the design
    point. ``parts`` are put into ``Design.parts`` before the feature stages run.
    """

    sizing: sizing.Sizing
    q_in_service_var: float
    q_rated_in_service_var: float
    parts: dict = field(default_factory=dict)


#: planners fn(project, total_s_va, core_sizing, v_rated_v, f_rated_hz) -> BankPlan | None, run after the
#: core sizing; the first plan returned replaces it. Feature stage modules register them at import.
BANK_PLANNERS: list = []


@dataclass(frozen=True)
class Check:
    id: str
    status: str  # pass | warn | fail
    message: str
    basis: str = ""  # the rule or standard that the check applies

    def as_dict(self) -> dict:
        return {"id": self.id, "status": self.status, "message": self.message, "basis": self.basis}


@dataclass
class Design:
    project: Project
    phases: int
    v_v: float
    f_hz: float
    loads: list[L.LoadPower]
    total_s_va: complex
    total_current_a: float
    sizing: sizing.Sizing
    after: sizing.After
    v_rated_v: float
    f_rated_hz: float
    connection: str
    phasors: dict
    checks: list[Check] = field(default_factory=list)
    sheets: list[Sheet] = field(default_factory=list)
    bom: list[dict] = field(default_factory=list)
    units_default: bool = False
    #: results that feature stages add, by JSON key (e.g. "power_quality"); SI, JSON-ready
    json: dict = field(default_factory=dict)
    #: result objects of feature stages, by name, for templates and figures
    parts: dict = field(default_factory=dict)
    #: report sections added by feature stages: template names, in order
    sections: list[str] = field(default_factory=list)
    #: figures to draw: key -> callable(design) returning SVG text (called at render time)
    figures: dict = field(default_factory=dict)
    #: caution paragraphs added by feature stages (plain text)
    cautions: list[str] = field(default_factory=list)
    #: extra output files for the project folder: relative name -> text or bytes (e.g. "bom.csv")
    files: dict = field(default_factory=dict)

    @property
    def model(self) -> schema.ProjectFile:
        return self.project.model

    @property
    def worst_status(self) -> str:
        worst = "pass"
        for c in self.checks:
            if STATUS_ORDER[c.status] > STATUS_ORDER[worst]:
                worst = c.status
        return worst


def compute(project: Project) -> Design:
    """Run the numeric core on a project; calc errors become located input problems."""
    m = project.model
    sys_ = m.system
    phases, v, f = sys_.phases, sys_.voltage, sys_.frequency
    results: list[L.LoadPower] = []
    problems: list[Problem] = []
    from . import stages  # noqa: F401  (registers the feature load kinds)

    for i, load in enumerate(m.loads):
        try:
            lp = LOAD_COMPUTERS[load.kind](load, LoadContext(phases, v, f, project, i))
        except CalcError as exc:
            problems.append(project.locations.problem(("loads", i, load.kind) + tuple(getattr(exc, "path", ())),
                                                      str(exc)))
            continue
        except InputError as exc:
            problems.extend(exc.problems)
            continue
        if lp is not None:
            results.append(lp)
    if problems:
        raise InputError(problems)
    if not results:
        raise InputError([project.locations.problem(("loads",), "no load adds power at the correction point")])
    tot_sheet = Sheet("Total at the correction point")
    p_tot = tot_sheet.calc("P", " + ".join(f"P_{k + 1}" for k in range(len(results))), "W",
                           "Total real power", **{f"P_{k + 1}": (r.p_w, "W") for k, r in enumerate(results)})
    q_tot = tot_sheet.calc("Q_1", " + ".join(f"Q_{k + 1}" for k in range(len(results))), "var",
                           "Total reactive power (inductive +)",
                           **{f"Q_{k + 1}": (r.q_var, "var") for k, r in enumerate(results)})
    total = complex(p_tot, q_tot)

    corr = m.correction
    deliveries = [b for b in (hook(m, v, f) for hook in BANK_DELIVERY) if b is not None]
    v_r_default = next((b.v_rated_default_v for b in deliveries if b.v_rated_default_v), None)
    v_r = corr.rated_voltage or v_r_default or v
    f_r = corr.rated_frequency or f
    conn = corr.connection if phases == 3 else "single"
    if corr.unit_sizes:
        units = []
        for u in corr.unit_sizes:
            if "c_f" in u:
                units.append(sizing.UnitType(sizing.capacitance_unit_q(u["c_f"], v_r, f_r, phases, corr.connection),
                                             c_f=u["c_f"]))
            else:
                units.append(sizing.UnitType(u["q_var"]))
        units_default = False
    else:
        units = sizing.default_units(max(total.imag, 0.0), v_r, f_r, phases, corr.connection)
        units_default = True
    try:
        sz = _size(total, corr, units, deliveries, v, f, v_r, f_r, corr.rated_voltage is None)
    except CalcError as exc:
        raise InputError([project.locations.problem(("correction",), str(exc))]) from None
    q_on, q_on_rated, plan_parts = sz.q_installed_var, sz.q_rated_installed_var, {}
    for planner in BANK_PLANNERS:
        try:
            plan = planner(project, total, sz, v_r, f_r)
        except CalcError as exc:
            raise InputError([project.locations.problem(getattr(exc, "path", ("correction",)), str(exc))]) from None
        if plan is not None:
            sz, q_on, q_on_rated, plan_parts = plan.sizing, plan.q_in_service_var, plan.q_rated_in_service_var, plan.parts
            break
    after = sizing.after_correction(total.real, total.imag, q_on, q_on_rated,
                                    v_v=v, f_hz=f, v_rated_v=v_r, phases=phases, connection=corr.connection)
    d = Design(project, phases, v, f, results, total, L.line_current(total, v, phases), sz, after, v_r, f_r,
               conn, sizing.phasors(total.real, total.imag, q_on, v, phases),
               units_default=units_default)
    d.parts.update(plan_parts)
    d.sheets = [r.sheet for r in results] + [tot_sheet, sz.sheet, after.sheet]
    d.checks = core_checks(d)
    d.bom = capacitor_bom(d)
    for stage in stages.STAGES:
        try:
            stage(d)
        except CalcError as exc:
            raise InputError([project.locations.problem(getattr(exc, "path", ()), str(exc))]) from None
    return d


def _size(total: complex, corr, units: list, deliveries: list, v: float, f: float, v_r: float, f_r: float,
          v_r_defaulted: bool) -> sizing.Sizing:
    """Size the bank; with delivery hooks each unit is sized on what it delivers with them."""
    if not deliveries:
        return sizing.size_bank(total.real, total.imag, corr.target_power_factor, units, v_v=v, f_hz=f,
                                v_rated_v=v_r, f_rated_hz=f_r, allow_leading=corr.allow_leading)
    import dataclasses

    pre = Sheet("Sizing")
    mult = 1.0
    for b in deliveries:
        if v_r_defaulted and b.v_rated_default_v and b.note:
            pre.note(b.note, "Capacitor rated voltage")
        mult *= pre.calc("m", b.expr, "", b.title, **b.values)
    scaled = [dataclasses.replace(u, q_rated_var=u.q_rated_var * mult) for u in units]
    sz = sizing.size_bank(total.real, total.imag, corr.target_power_factor, scaled, v_v=v, f_hz=f,
                          v_rated_v=v_r, f_rated_hz=f_r, allow_leading=corr.allow_leading)
    back = {id(s): u for s, u in zip(scaled, units)}
    choices = tuple(dataclasses.replace(c, unit=back[id(c.unit)]) for c in sz.choices)
    pre.note(f"Each unit delivers its nameplate kvar times k·m = {sz.factor * mult:.6g} at the bus "
             f"(k from the voltage and frequency below, m = {mult:.6g} above); the choice below is made "
             "on the delivered kvar.", "Delivered kvar")
    pre.extend(sz.sheet)
    return dataclasses.replace(sz, choices=choices, factor=sz.factor * mult,
                               q_rated_installed_var=float(sum(c.count * c.unit.q_rated_var for c in choices)),
                               sheet=pre)


def _meter(load, c: LoadContext) -> L.LoadPower:
    mt = load.meter
    return L.meter(load.name, c.phases, mt.voltage or c.v_v, mt.current, p_w=mt.power, pf=mt.power_factor,
                   q_var=mt.reactive_power, leading=mt.leading, count=load.count)


def _motor(load, c: LoadContext) -> L.LoadPower:
    mo = load.motor
    return L.motor(load.name, c.phases, c.v_v, mo.output, mo.efficiency, mo.power_factor, count=load.count)


def _demand(load, c: LoadContext) -> L.LoadPower:
    de = load.demand
    return L.demand(load.name, c.phases, c.v_v, de.power, de.power_factor, de.leading, count=load.count)


def _scope(load, c: LoadContext) -> L.LoadPower:
    sc = load.scope
    return L.scope(load.name, c.phases, c.f_hz, sc.voltage, sc.voltage_as, sc.shunt_voltage, sc.shunt_voltage_as,
                   sc.shunt_resistance, time_shift_s=sc.time_shift, phase_rad=sc.phase_angle,
                   leading=sc.current == "leading", shunt_in_measured_voltage=sc.shunt_in_measured_voltage,
                   count=load.count)


def _network(load, c: LoadContext) -> L.LoadPower:
    nw = load.network
    return L.network(load.name, c.phases, c.v_v, c.f_hz, to_node(nw), nw.connection, count=load.count)


LOAD_COMPUTERS.update(meter=_meter, motor=_motor, demand=_demand, scope=_scope, network=_network)


def to_node(e: schema.Element) -> net.Node:
    if e.resistor is not None:
        return net.R(e.resistor)
    if e.inductor is not None:
        return net.L(e.inductor)
    if e.capacitor is not None:
        return net.C(e.capacitor)
    if e.series is not None:
        return net.Series(tuple(to_node(x) for x in e.series))
    return net.Parallel(tuple(to_node(x) for x in e.parallel))


def core_checks(d: Design) -> list[Check]:
    sz, af = d.sizing, d.after
    out: list[Check] = []
    tgt = sz.target_pf
    if sz.status == "not_needed":
        out.append(Check("target_pf", "pass", f"Present PF {sz.pf_before:.3f} already meets the target "
                         f"{tgt:.3f}; no bank needed."))
    elif sz.status == "met":
        out.append(Check("target_pf", "pass", f"PF after {af.pf_after:.3f} "
                         f"{'leading' if af.leading_after else 'lagging'} meets the target {tgt:.3f}."))
    elif sz.status == "short":
        out.append(Check("target_pf", "fail", f"The units on hand cannot reach the target without leading: "
                         f"PF after {af.pf_after:.3f} < {tgt:.3f}. Add smaller or other unit sizes."))
    else:
        out.append(Check("target_pf", "fail", "Even the smallest unit on hand would turn the PF leading; no "
                         "bank chosen. Add smaller unit sizes."))
    if af.leading_after:
        ok = d.model.correction.allow_leading
        out.append(Check("not_leading", "warn" if ok else "fail",
                         f"The PF after correction is leading ({af.pf_after:.3f})"
                         + ("; allowed by allow_leading." if ok else ".")))
    else:
        out.append(Check("not_leading", "pass", "The PF after correction is not leading at the design load."))
    ratio = d.v_v / d.v_rated_v
    if sz.q_installed_var > 0:
        if ratio > 1.10 + 1e-9:
            out.append(Check("unit_voltage", "fail", f"Capacitors applied at {ratio * 100:.1f} % of their rated "
                             "voltage; above the 110 % continuous limit.", "IEEE Std 18-2012, continuous rms "
                             "voltage 110 %"))
        elif ratio > 1.0 + 1e-9:
            out.append(Check("unit_voltage", "warn", f"Capacitors applied at {ratio * 100:.1f} % of their rated "
                             "voltage; choose units rated at least for the system voltage.",
                             "IEEE Std 18-2012 (110 % is a contingency limit, not a design basis)"))
        else:
            out.append(Check("unit_voltage", "pass", f"Capacitors applied at {ratio * 100:.1f} % of their rated "
                             f"voltage (they deliver {sz.factor * 100:.1f} % of rated kvar)."))
    out.append(Check("power_quality", "warn", "Harmonics, resonance and voltage rise are not assessed: the "
                     "project gives no source data.", "IEEE Std 519-2014; IEEE Std 1036"))
    return out


def capacitor_bom(d: Design) -> list[dict]:
    rows = []
    conn = d.connection
    for c in d.sizing.choices:
        q_r = c.unit.q_rated_var
        if d.phases == 3:
            i_r = q_r / (math.sqrt(3) * d.v_rated_v)
            c_ph = c.unit.c_f if c.unit.c_f else (
                q_r / (3 * 2 * math.pi * d.f_rated_hz * d.v_rated_v**2) if conn == "delta"
                else q_r / (2 * math.pi * d.f_rated_hz * d.v_rated_v**2))
        else:
            i_r = q_r / d.v_rated_v
            c_ph = c.unit.c_f if c.unit.c_f else q_r / (2 * math.pi * d.f_rated_hz * d.v_rated_v**2)
        rows.append({
            "item": "capacitor unit",
            "quantity": c.count,
            "q_rated_var": q_r,
            "q_delivered_var": c.q_delivered_each_var,
            "v_rated_v": d.v_rated_v,
            "f_rated_hz": d.f_rated_hz,
            "connection": conn,
            "phases": d.phases,
            "rated_current_a": i_r,
            "c_per_phase_f": c_ph,
            "rating": "",
            "unit_price": None,
            "extended_price": None,
        })
    return rows
