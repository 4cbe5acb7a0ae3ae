"""Feature stage: load profiles, automatic stepped banks, bills and economics.

(See reportgen/stages/__init__.py for the stage contract.)

Load kinds registered here
--------------------------
``interval``  Interval meter data. At the correction point (the core sizing, the summary and the
              power triangle) it contributes the **design point**: the interval that needs the
              most kvar to reach the target PF, ``max(Q - |P| tan(acos PF_target))`` (the
              earliest on a tie), with the controller's target when one is given. The whole
              profile feeds the bank simulation, the statistics and the loss savings.
``billing``   Monthly bills. No power at the correction point (returns None); the bills feed the
              bill comparison.

Automatic bank (``correction.bank: automatic``)
-----------------------------------------------
A bank planner registered in ``reportgen.design.BANK_PLANNERS`` replaces the core unit choice:
the installed kvar of the report is the bank's total (steps x size), and the after-correction
figures of the summary are those of the steps the controller has in service at the design point
(the same controller rule as the simulation, applied to the total at the correction point).
With ``steps: design`` the planner runs the design search over the interval data first. The
planner puts ``parts["bank"]`` (the :class:`reportgen.calc.profile.Bank` at nameplate kvar)
and ``parts["bank_plan"]`` into the design before the feature stages run, so the protection
stage sees the steps it must protect.

The simulation runs on the interval data alone; other loads of the project add to the design
point only (a check says so). Capacitors used off their nameplate deliver
``(V/V_rated)^2 (f/f_rated)`` of their rating; the simulation uses the delivered kvar.

Installed cost
--------------
``economics.installed_cost: from_bom`` takes the total of the priced bill of materials that the
protection stage puts in ``parts["bom"]``. When there is no priced total, the stage falls back to
the core's placeholder cost model (:data:`reportgen.calc.profile.DEFAULT_COST`) with a *warn*
check saying the economics are indicative until the bank is priced from a catalog.
"""

from __future__ import annotations

import dataclasses
import math
import os
from collections import OrderedDict
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..calc import economics as ec
from ..calc import profile as pr
from ..calc import sizing
from ..calc import tariff as tf
from ..calc.errors import CalcError
from ..calc.loads import LoadPower, line_current
from ..calc.sheet import Note, Sheet
from ..design import BANK_PLANNERS, LOAD_COMPUTERS, BankPlan, Check
from ..errors import InputError
from ..project import resolve_data_file
from ..readers.billing import read_billing_csv
from ..readers.interval import read_interval_csv
from ..schema.profile import cross_problems

DESIGN_POINT_RULE = "the interval that needs the most kvar to reach the target power factor"

# --------------------------------------------------------------------------- reading (cached)

_CACHE: "OrderedDict[tuple, Any]" = OrderedDict()
_CACHE_SIZE = 8


def _cached(key: tuple, read):
    if key in _CACHE:
        _CACHE.move_to_end(key)
        return _CACHE[key]
    value = read()
    _CACHE[key] = value
    while len(_CACHE) > _CACHE_SIZE:
        _CACHE.popitem(last=False)
    return value


def _file_key(path) -> tuple:
    st = os.stat(path)
    return (str(path), st.st_mtime_ns, st.st_size)


def read_interval(project, index: int):
    """The interval data of ``loads[index]`` (parsed once per file version)."""
    src = project.model.loads[index].interval
    path, shown = resolve_data_file(project, src.file, ("loads", index, "interval", "file"), suffixes=(".csv",))
    cols = (src.timestamp_column, src.power_column, src.reactive_column, src.power_factor_column, src.power_unit)
    return _cached(("interval",) + _file_key(path) + cols + (shown,),
                   lambda: read_interval_csv(path, shown, src.timestamp_column, src.power_column,
                                             reactive_column=src.reactive_column,
                                             power_factor_column=src.power_factor_column,
                                             power_unit=src.power_unit))


def read_billing(project, index: int):
    src = project.model.loads[index].billing
    path, shown = resolve_data_file(project, src.file, ("loads", index, "billing", "file"), suffixes=(".csv",))
    return _cached(("billing",) + _file_key(path) + (shown,), lambda: read_billing_csv(path, shown))


def _indices(model, kind: str) -> list[int]:
    return [i for i, ld in enumerate(model.loads) if ld.kind == kind]


def _target(model) -> float:
    c = model.correction
    if c.controller is not None and c.controller.target_power_factor is not None:
        return c.controller.target_power_factor
    return c.target_power_factor


def _never_leading(model) -> bool:
    c = model.correction
    return c.controller.never_leading if c.controller is not None else True


def _only_one(load, ctx, kind: str) -> None:
    m = ctx.project.model
    problems = []
    first = _indices(m, kind)[0]
    if ctx.index != first:
        problems.append(ctx.project.locations.problem(
            ("loads", ctx.index, kind), f"loads[{ctx.index}].{kind}: only one {kind} load per project "
            f"(loads[{first}] is one already)"))
    if load.count != 1:
        problems.append(ctx.project.locations.problem(
            ("loads", ctx.index, "count"), f"loads[{ctx.index}].count: an {kind} load is one metered "
            "service; count must be 1"))
    if problems:
        raise InputError(problems)


# --------------------------------------------------------------------------- load kinds


def _interval(load, ctx) -> LoadPower:
    _only_one(load, ctx, "interval")
    data = read_interval(ctx.project, ctx.index)
    target = _target(ctx.project.model)
    kt = math.tan(math.acos(target))
    need = data.q_var - np.abs(data.p_w) * kt
    k = int(np.argmax(need))
    p, q = float(data.p_w[k]), float(data.q_var[k])
    when = str(data.t[k]).replace("T", " ")
    sh = Sheet(load.name)
    sh.note(f"{data.info.count} intervals of {data.info.interval_s / 60:g} min read from "
            f"{load.interval.file}. Design point: {DESIGN_POINT_RULE}, the interval starting {when} "
            f"(file line {int(data.lines[k])}).", title="Interval data")
    p = sh.calc("P", "P_k", "W", "Real power in the design-point interval", P_k=(p, "W"))
    q = sh.calc("Q", "Q_k", "var", "Reactive power in the design-point interval (inductive +)", Q_k=(q, "var"))
    sh.calc("Q_need", "Q - abs(P) * tan(acos(PF_t))", "var", "kvar needed there to reach the target",
            "the largest over all intervals", Q=(q, "var"), P=(p, "W"), PF_t=target)
    s = complex(p, q)
    extras = {"interval_s": data.info.interval_s, "intervals": data.info.count,
              "design_point_time": when, "design_point_line": int(data.lines[k]),
              "design_point_rule": DESIGN_POINT_RULE}
    return LoadPower(load.name, "interval", 1, ctx.phases, ctx.v_v, s, line_current(s, ctx.v_v, ctx.phases), sh,
                     extras)


def _billing(load, ctx) -> None:
    _only_one(load, ctx, "billing")
    read_billing(ctx.project, ctx.index)  # read now so file problems are reported with the others
    return None


LOAD_COMPUTERS.update(interval=_interval, billing=_billing)


# --------------------------------------------------------------------------- bank planner


@dataclass(frozen=True)
class Plan:
    """What the planner decided (``parts["bank_plan"]``)."""

    bank: pr.Bank  # nameplate kvar
    delivered: pr.Bank  # kvar delivered at the applied voltage and frequency
    factor: float
    target_pf: float
    never_leading: bool
    steps_on: int  # steps in service at the design point
    level_on: int  # controller level index at the design point
    q_on_var: float  # delivered
    q_on_rated_var: float
    search: pr.DesignSearch | None
    search_source: str  # "catalog" | "project" | "placeholder" | ""
    search_met: bool  # the chosen candidate meets the required share
    unit_sizes_var: tuple[float, ...]


def _unit_sizes_var(model, v_r: float, f_r: float) -> tuple[tuple[float, ...], bool]:
    corr = model.correction
    if not corr.unit_sizes:
        return pr.LV_UNIT_SIZES_VAR, True
    out = []
    for u in corr.unit_sizes:
        if "c_f" in u:
            out.append(sizing.capacitance_unit_q(u["c_f"], v_r, f_r, model.system.phases, corr.connection))
        else:
            out.append(u["q_var"])
    return tuple(sorted(set(out))), False


def _cost_model(model, factor: float) -> tuple[pr.CostModel, str]:
    """Cost per candidate, in terms of delivered var (the search works in delivered var)."""
    sd = model.correction.step_design
    if sd is not None and sd.cost is not None:
        c = sd.cost
        return pr.CostModel(c.fixed["amount"], c.per_kvar["amount"] / 1000.0 / factor, c.per_step["amount"]), "project"
    d = pr.DEFAULT_COST
    return pr.CostModel(d.fixed, d.per_var / factor, d.per_step), "placeholder"


def _plan(project, total: complex, sz: sizing.Sizing, v_r: float, f_r: float) -> BankPlan | None:
    m = project.model
    corr = m.correction
    if corr.bank != "automatic":
        return None
    factor = sz.factor
    target = _target(m)
    nl = _never_leading(m)
    search = None
    source = ""
    met_share = True
    sizes, _ = _unit_sizes_var(m, v_r, f_r)
    if corr.steps.design:
        iv = _indices(m, "interval")
        if not iv:
            exc = CalcError("correction.steps: 'design' searches the steps over interval data; add a load with "
                            "interval: {file: ..., timestamp_column: ..., power_column: ..., reactive_column: ...}")
            exc.path = ("correction", "steps")
            raise exc
        data = read_interval(project, iv[0])
        sd = corr.step_design
        share = sd.share if sd else 0.95
        cost, source = _cost_model(m, factor)
        search = pr.design_search(
            data.t, data.p_w, data.q_var, target, [s * factor for s in sizes], share=share,
            max_steps=sd.max_steps if sd else 12, binary=sd.binary if sd else True,
            max_binary_steps=sd.max_binary_steps if sd else 6, never_leading=nl, cost=cost,
            max_total_var=(sd.max_total * factor) if sd and sd.max_total else None,
            interval_s=data.info.interval_s)
        best = search.best
        if best is None:
            met_share = False
            ok = [c for c in search.candidates if c.bank_leading_hours == 0.0 or not nl]
            best = max(ok or search.candidates, key=lambda c: (c.met_fraction, -c.cost, -c.switching_per_day))
        kind, step_rated, count = best.kind, best.step_var / factor, best.step_count
    else:
        kind, step_rated, count = corr.steps.weighting, corr.steps.size, corr.steps.count
    bank = pr.Bank(kind, step_rated, count)
    delivered = pr.Bank(kind, step_rated * factor, count)
    # the controller at the design point: the same rule as the simulation, on the total there
    one = pr.simulate(np.array([0.0]), np.array([total.real]), np.array([total.imag]), delivered, target,
                      never_leading=nl, interval_s=3600.0)
    level = int(one.steps[0])
    mask = int(one.masks[0])
    steps_on = bin(mask).count("1")
    q_on = float(one.q_bank_var[0])
    q_on_rated = q_on / factor
    plan = Plan(bank, delivered, factor, target, nl, steps_on, level, q_on, q_on_rated, search, source, met_share,
                tuple(sizes))

    # the sizing of the installed bank
    sh = Sheet("Sizing")
    for s in sz.sheet.steps:
        if isinstance(s, Note) and s.title == "Choice of units":
            continue
        sh.steps.append(s)
    if corr.steps.design:
        sh.note(f"Steps chosen by the design search over the interval data (see the bank design section): "
                f"{count} {kind} steps of {step_rated / 1000:g} kvar.", title="Automatic bank")
    else:
        sh.note(f"Automatic bank as given: {count} {kind} steps of {step_rated / 1000:g} kvar.",
                title="Automatic bank")
    if kind == "equal":
        q_rated = sh.calc("Q_bank", "N * Q_step", "var", "Installed bank (nameplate)", N=count,
                          Q_step=(step_rated, "var"))
    else:
        q_rated = sh.calc("Q_bank", "(2**N - 1) * Q_step", "var", "Installed binary-weighted bank (nameplate)",
                          "steps 1 : 2 : 4 : ... of the smallest step", N=count, Q_step=(step_rated, "var"))
    q_inst = sh.calc("Q_bank_d", "k * Q_bank", "var", "Installed bank, delivered at the applied voltage",
                     k=factor, Q_bank=(q_rated, "var"))
    sh.note(f"Controller at the design point (fewest steps reaching PF {target:g}, "
            + ("never leading" if nl else "leading allowed down to the target") + f"): {steps_on} of {count} "
            f"steps in service, {q_on / 1000:.4g} kvar delivered. The figures after correction are for those steps.",
            title="Steps in service at the design point")
    need = total.imag - total.real * math.tan(math.acos(target))
    if need <= 0:
        status, msg = "not_needed", f"the design point already meets PF {target:g}; no step is needed there"
    elif one.met[0]:
        status, msg = "met", f"{steps_on} of {count} steps reach the target at the design point"
    elif q_on > 0:
        status, msg = "short", (f"all the steps that can be in service without leading ({steps_on} of {count}) "
                                f"do not reach PF {target:g} at the design point")
    else:
        status, msg = "none_fits", "no step can be switched in at the design point without leading"
    if kind == "equal":
        choices = (sizing.Choice(sizing.UnitType(step_rated), count, step_rated * factor),)
    else:
        choices = tuple(sizing.Choice(sizing.UnitType(x), 1, x * factor) for x in reversed(bank.steps_var))
    new = dataclasses.replace(sz, choices=choices, q_installed_var=float(q_inst), q_rated_installed_var=float(q_rated),
                              status=status, message=msg, sheet=sh)
    return BankPlan(new, q_on, q_on_rated, {"bank": bank, "bank_plan": plan})


BANK_PLANNERS.append(_plan)


# --------------------------------------------------------------------------- fixed bank over the profile


@dataclass(frozen=True, eq=False)
class FixedRun:
    """A fixed bank always in service over every interval (the fields the core's bill and loss
    functions read from a simulation)."""

    q_fixed_var: float
    t_s: np.ndarray
    p_w: np.ndarray
    q_var: np.ndarray
    q_bank_var: np.ndarray
    q_after_var: np.ndarray
    pf_after: np.ndarray
    met: np.ndarray
    interval_s: float
    intervals: int
    hours: float
    met_fraction: float
    met_energy_fraction: float
    leading_hours: float
    bank_leading_hours: float
    switching_per_day: float
    min_kvar: float
    max_kvar: float
    pf_before_average: float
    pf_after_average: float
    s_before_peak_va: float
    s_after_peak_va: float


def fixed_run(t_s, p, q, q_fixed: float, target_pf: float, interval_s: float) -> FixedRun:
    kt = math.tan(math.acos(target_pf))
    qa = q - q_fixed
    allow = np.abs(p) * kt
    met = (qa <= allow) & (qa >= -allow)
    h = interval_s / 3600.0
    pa = np.abs(p)
    et = float(pa.sum())
    sa = np.sqrt(p * p + qa * qa)
    with np.errstate(invalid="ignore", divide="ignore"):
        pf_a = np.where(sa > 0, pa / np.where(sa > 0, sa, 1.0), 1.0)
    e_p, e_q, e_qa = float(p.sum() * h), float(q.sum() * h), float(qa.sum() * h)
    lead = float(np.count_nonzero(qa < 0) * h)
    return FixedRun(q_fixed, t_s, p, q, np.full(p.shape, q_fixed), qa, pf_a, met, interval_s, int(p.size),
                    p.size * h, float(np.count_nonzero(met) / p.size), float(pa[met].sum() / et) if et else 1.0,
                    lead, lead if q_fixed > 0 else 0.0, 0.0, float(q.min()), float(q.max()),
                    e_p / math.hypot(e_p, e_q) if (e_p or e_q) else 1.0,
                    e_p / math.hypot(e_p, e_qa) if (e_p or e_qa) else 1.0,
                    float(np.sqrt(p * p + q * q).max()), float(sa.max()))


# --------------------------------------------------------------------------- the stage


@dataclass
class ProfilePart:
    """``parts["profile"]``: everything the templates and figures of this feature read."""

    data: Any  # IntervalData
    stats: pr.ProfileStats
    sim: Any  # BankSimulation or FixedRun
    automatic: bool
    target_pf: float
    share: float
    fixed: pr.FixedBankCheck
    hist_before: pr.PFHistogram
    hist_after: pr.PFHistogram
    week: tuple[int, int]
    load_index: int
    other_loads: int
    gap_rows: list  # [{"start", "end", "hours", "intervals", "line"}] for the report


@dataclass
class EconomicsPart:
    """``parts["economics"]``."""

    currency: str
    usage_source: str  # "billing" | "interval"
    effect_source: str  # "profile" | "estimate"
    bills: tf.BillComparison
    losses: ec.ProfileLosses | None
    econ: ec.Economics | None
    cost_source: str  # "bom" | "project" | "placeholder" | ""
    tariff_text: dict


def _located(project, items) -> InputError:
    return InputError([project.locations.problem(path, msg) for path, msg in items])


def run(d) -> None:
    m = d.model
    cross = cross_problems(m)
    if cross:
        raise _located(d.project, cross)
    iv = _indices(m, "interval")
    bl = _indices(m, "billing")
    plan: Plan | None = d.parts.get("bank_plan")
    if not iv and not bl and m.tariff is None and plan is None:
        return
    sheets: list[Sheet] = []
    prof = None
    if iv:
        prof = _profile(d, iv[0], plan, sheets)
    if plan is not None:
        _bank_json(d, plan, prof)
        _design_point_check(d, plan, prof)
    elif prof is not None:
        sz = d.sizing
        d.json["bank"] = {"kind": "fixed", "step_var": sz.q_rated_installed_var, "step_count": 1,
                          "switching": "fixed", "total_var": sz.q_rated_installed_var,
                          "total_delivered_var": sz.q_installed_var}
    if m.tariff is not None:
        _money(d, prof, plan, bl, sheets)
    elif bl:
        d.checks.append(Check("billing", "warn", "A billing history is given but no tariff: the bills are not "
                              "compared. Add tariff: to price the power-factor clause."))
    d.sheets.extend(sheets)
    if plan is not None:
        d.cautions.append(
            "Automatic bank. Step contactors must be rated for capacitor switching, and the controller must "
            "wait after a step is switched out until the step has discharged (by its discharge resistors or "
            "reactors) before switching it in again; a step re-energised while charged can fail violently. "
            "The simulation assumes an ideal controller sampling once per interval, without its time delays.")
    if "economics" in d.parts:
        d.cautions.append(
            "Savings are estimates. The bill comparison models only the tariff items named in the project; "
            "confirm the power-factor clause and the prices against the utility's current rate schedule "
            "before relying on the payback.")
    if prof is not None:
        d.sections.append("sections/profile.html")
    if plan is not None or prof is not None:
        d.sections.append("sections/profile_bank.html")
    if "economics" in d.parts:
        d.sections.append("sections/profile_economics.html")
    _figures(d)


def _profile(d, index: int, plan: Plan | None, sheets: list) -> ProfilePart:
    m = d.model
    data = read_interval(d.project, index)
    target = plan.target_pf if plan else _target(m)
    share = (m.correction.step_design.share if m.correction.step_design else 0.95)
    sh = Sheet("Load profile")
    stats = pr.profile_stats(data.t, data.p_w, data.q_var, target_pf=target, interval_s=data.info.interval_s,
                             sheet=sh)
    if data.skipped:
        sh.note(f"{len(data.skipped)} row(s) skipped for an empty reading: "
                + "; ".join(f"line {p.line}" for p in data.skipped[:10]) + ("; ..." if len(data.skipped) > 10 else ""))
    sheets.append(sh)
    sh_b = Sheet("Bank over the profile")
    if plan is not None:
        sim = pr.simulate(data.t, data.p_w, data.q_var, plan.delivered, target, never_leading=plan.never_leading,
                          interval_s=data.info.interval_s, sheet=sh_b)
        automatic = True
    else:
        q_fixed = d.sizing.q_installed_var
        sim = fixed_run(data.t_s, data.p_w, data.q_var, q_fixed, target, data.info.interval_s)
        sh_b.note(f"Fixed bank of {q_fixed / 1000:.4g} kvar (delivered) in service in every one of {sim.intervals} "
                  f"intervals: PF {target:g} or better in {sim.met_fraction * 100:.1f} % of them; leading during "
                  f"{sim.leading_hours:.1f} h.", title="Fixed bank over the profile")
        automatic = False
    sizes, _ = _unit_sizes_var(m, d.v_rated_v, d.f_rated_hz)
    fixed = pr.fixed_bank_check(data.p_w, data.q_var, [s * d.sizing.factor for s in sizes], target_pf=target,
                                sheet=sh_b)
    sheets.append(sh_b)
    hb = pr.pf_histogram(data.p_w, data.q_var, interval_s=data.info.interval_s)
    ha = pr.pf_histogram(data.p_w, sim.q_after_var, interval_s=data.info.interval_s)
    week = pr.typical_week(data.t, data.p_w, data.info.interval_s)
    others = sum(1 for i, ld in enumerate(m.loads) if i != index and ld.kind not in ("billing",))
    gap_rows = []
    for g in data.info.gaps:
        start = np.datetime64(int(round(g.start_s)), "s")
        end = start + np.timedelta64(int(round(g.duration_s)), "s")
        gap_rows.append({"start": str(start).replace("T", " ")[:16], "end": str(end).replace("T", " ")[:16],
                         "hours": g.duration_s / 3600.0, "intervals": g.missing_intervals,
                         "line": int(data.lines[g.index])})
    part = ProfilePart(data, stats, sim, automatic, target, share, fixed, hb, ha, week, index, others, gap_rows)
    d.parts["profile"] = part
    info = data.info
    d.json["profile"] = {
        "intervals": sim.intervals,
        "met_fraction": sim.met_fraction,
        "leading_hours": sim.leading_hours,
        "switching_per_day": sim.switching_per_day,
        "min_kvar": sim.min_kvar,
        "max_kvar": sim.max_kvar,
        "units_note": "min_kvar and max_kvar are in var (the load's reactive demand before correction)",
        "interval_s": info.interval_s,
        "hours": info.hours,
        "first": str(data.t[0]),
        "last": str(data.t[-1]),
        "gaps": [g.as_dict() for g in info.gaps],
        "missing_s": info.missing_s,
        "skipped_rows": [{"line": p.line, "message": p.message} for p in data.skipped],
        "target_pf": target,
        "met_energy_fraction": sim.met_energy_fraction,
        "bank_leading_hours": sim.bank_leading_hours,
        "pf_before_average": sim.pf_before_average,
        "pf_after_average": sim.pf_after_average,
        "p_max_w": stats.p_max_w,
        "p_min_w": stats.p_min_w,
        "energy_wh": stats.energy_wh,
        "q_needed_max_var": stats.q_needed_max_var,
        "s_before_peak_va": sim.s_before_peak_va,
        "s_after_peak_va": sim.s_after_peak_va,
        "design_point_rule": DESIGN_POINT_RULE,
        "fixed_bank_check": fixed.as_dict(),
        "pf_hist_before": hb.as_dict(),
        "pf_hist_after": ha.as_dict(),
        "duration_pct": stats.as_dict()["duration_pct"],
        "p_duration_w": stats.as_dict()["p_duration_w"],
        "q_duration_var": stats.as_dict()["q_duration_var"],
    }
    _profile_checks(d, part)
    return part


def _profile_checks(d, part: ProfilePart) -> None:
    sim, data = part.sim, part.data
    info = data.info
    gap_h = info.missing_s / 3600.0
    if info.gaps or data.skipped or info.irregular_count:
        d.checks.append(Check("interval_data", "warn", f"{info.count} intervals of {info.interval_s / 60:g} min; "
                              f"{len(info.gaps)} gap(s) totalling {gap_h:.1f} h left unfilled, {len(data.skipped)} "
                              f"row(s) skipped for an empty reading, {info.irregular_count} irregular step(s). "
                              "Statistics and the simulation use the intervals present."))
    else:
        d.checks.append(Check("interval_data", "pass", f"{info.count} intervals of {info.interval_s / 60:g} min, "
                              "no gaps, no rows skipped."))
    what = "automatic bank" if part.automatic else "fixed bank"
    met = sim.met_fraction
    d.checks.append(Check(
        "profile_target", "pass" if met >= part.share - 1e-12 else "warn",
        f"With the {what}, PF {part.target_pf:.3f} or better in {met * 100:.1f} % of the intervals "
        f"({sim.met_energy_fraction * 100:.1f} % of the energy); required share {part.share * 100:g} %."))
    if part.automatic:
        nl = d.parts["bank_plan"].never_leading
        if sim.bank_leading_hours > 0:
            d.checks.append(Check("profile_leading", "fail" if nl else "warn",
                                  f"Steps in service make the PF leading during {sim.bank_leading_hours:.2f} h."))
        else:
            load_lead = sim.leading_hours
            d.checks.append(Check("profile_leading", "pass", "No step in service ever makes the PF leading"
                                  + (f" (the load itself leads during {load_lead:.2f} h)." if load_lead else ".")))
    else:
        fx = part.fixed
        if sim.bank_leading_hours > 0:
            d.checks.append(Check(
                "profile_leading", "fail",
                f"The fixed bank of {sim.q_fixed_var / 1000:.4g} kvar makes the PF leading during "
                f"{sim.bank_leading_hours:.1f} h ({sim.bank_leading_hours / sim.hours * 100:.1f} % of the time) at "
                f"light load. The largest fixed bank that never overcorrects is {fx.bank_var / 1000:.4g} kvar "
                f"(minimum observed demand {fx.q_min_var / 1000:.4g} kvar); consider an automatic bank."))
        else:
            d.checks.append(Check("profile_leading", "pass", f"The fixed bank never makes the PF leading over "
                                  "the profile."))
    if part.other_loads:
        d.checks.append(Check("profile_scope", "warn", f"{part.other_loads} other load(s) add to the design point "
                              "only; the profile simulation uses the interval data alone."))


def _design_point_check(d, plan: Plan, prof: ProfilePart | None) -> None:
    """For an automatic bank the core's target check speaks of 'units on hand'; restate it for steps.

    The design point is the single interval that needs the most kvar, so a bank chosen for a share
    of the intervals may fall short there: that is a warning (the share check says how often the
    target is met), not a failure of the unit choice.
    """
    if d.sizing.status not in ("short", "none_fits"):
        return
    b = plan.bank
    where = "At the design point (the interval needing the most kvar)" if prof is not None else "At the design load"
    msg = (f"{where} the {plan.steps_on} of {b.step_count} steps that can be in service without leading give PF "
           f"{d.after.pf_after:.3f} < {plan.target_pf:.3f}")
    if prof is not None:
        msg += f"; over the profile the target is met in {prof.sim.met_fraction * 100:.1f} % of the intervals."
        status = "warn" if prof.sim.met_fraction >= prof.share - 1e-12 else "fail"
    else:
        msg += "; add steps or use larger steps."
        status = "fail"
    d.checks[:] = [Check("target_pf", status, msg) if c.id == "target_pf" else c for c in d.checks]


def _bank_json(d, plan: Plan, prof: ProfilePart | None) -> None:
    b = plan.bank
    out = {
        "kind": b.kind,
        "step_var": b.step_var,
        "step_count": b.step_count,
        "switching": "automatic",
        "steps_var": list(b.steps_var),
        "total_var": b.total_var,
        "delivered_fraction": plan.factor,
        "total_delivered_var": plan.delivered.total_var,
        "target_pf": plan.target_pf,
        "never_leading": plan.never_leading,
        "steps_in_service_at_design_point": plan.steps_on,
        "q_in_service_at_design_point_var": plan.q_on_var,
        "levels_var": [float(x) for x in plan.delivered.levels()[0]],
    }
    if plan.search is not None:
        out["design"] = {
            "cost_model": plan.search_source,
            "share": plan.search.share,
            "met_share": plan.search_met,
            "candidates": [c.as_dict() for c in plan.search.candidates],
            "best": plan.search.best.as_dict() if plan.search.best else None,
        }
        d.files["bank_candidates.csv"] = _candidates_csv(plan)
        if not plan.search_met:
            d.checks.append(Check("bank_design", "fail", f"No candidate bank reaches PF {plan.target_pf:.3f} in "
                                  f"{plan.search.share * 100:g} % of the intervals without leading; the bank with the "
                                  "highest share is shown. Add smaller unit sizes or lower the required share."))
        else:
            d.checks.append(Check("bank_design", "pass", f"Least-cost bank meeting PF {plan.target_pf:.3f} in at least "
                                  f"{plan.search.share * 100:g} % of the intervals: {b.step_count} {b.kind} steps of "
                                  f"{b.step_var / 1000:g} kvar, out of {len(plan.search.candidates)} candidates."))
        if plan.search_source == "placeholder":
            d.checks.append(Check("bank_cost_model", "warn", "The candidate banks are ranked with an indicative "
                                  "placeholder cost model, not prices: give correction.step_design.cost."))
    else:
        d.checks.append(Check("bank_steps", "pass", f"Automatic bank of {b.step_count} {b.kind} steps of "
                              f"{b.step_var / 1000:g} kvar ({b.total_var / 1000:g} kvar); {plan.steps_on} of "
                              f"{b.step_count} steps in service at the design point."))
    d.json["bank"] = out


def _candidates_csv(plan: Plan) -> str:
    """Every candidate of the design search, nameplate kvar, one row each."""
    rows = ["kind,step_count,step_kvar,total_kvar,met_fraction,met_energy_fraction,bank_leading_hours,"
            "switching_per_day,cost,cost_model,qualifies\n"]
    for c in plan.search.candidates:
        rows.append(f"{c.kind},{c.step_count},{c.step_var / plan.factor / 1000:.6g},{c.total_var / plan.factor / 1000:.6g},"
                    f"{c.met_fraction:.6f},{c.met_energy_fraction:.6f},{c.bank_leading_hours:.4f},"
                    f"{c.switching_per_day:.4f},{c.cost:.2f},{plan.search_source},{'yes' if c.feasible else 'no'}\n")
    return "".join(rows)


def _fig(name: str):
    """A figure callable; matplotlib and the figure module load only when the figure is drawn."""

    def draw(dd):
        import importlib

        return getattr(importlib.import_module("reportgen.render.figures_profile"), name)(dd)

    return draw


def _figures(d) -> None:
    if "profile" in d.parts:
        for name in ("duration", "pf_hist", "week", "steps"):
            d.figures[f"profile_{name}"] = _fig(name)
    if "bank_plan" in d.parts:
        d.figures["triangle"] = _fig("triangle")  # the arrow shows the steps in service, not the whole bank
        if d.parts["bank_plan"].search is not None:
            d.figures["profile_design"] = _fig("design")
    if "economics" in d.parts and d.parts["economics"].econ is not None:
        d.figures["profile_cash"] = _fig("cash")


# --------------------------------------------------------------------------- bills and economics


def _tariff(m) -> tf.Tariff:
    t = m.tariff
    cl = t.power_factor_clause
    clause = None
    if cl is not None:
        if cl.kind == "adjusted_demand":
            clause = tf.AdjustedDemand(cl.reference_power_factor, cl.form, cl.slope,
                                       1.0 + cl.max_increase if cl.max_increase is not None else None)
        elif cl.kind == "kva_demand":
            clause = tf.KvaDemand()
        else:
            clause = tf.ReactiveCharge(cl.rate["rate"], cl.free_ratio,
                                       "energy" if cl.rate["per"] == "varh" else "demand")
    return tf.Tariff(t.demand_charge["rate"], t.energy_charge["rate"], clause, t.currency,
                     customer_charge=t.customer_charge["amount"] if t.customer_charge else 0.0, name=t.name or "")


def usage_from_profile(data) -> tuple[tf.MonthUsage, ...]:
    """Monthly usage from interval data: kWh, lagging kvarh, the highest interval kW and kVA."""
    months = data.t.astype("datetime64[M]")
    h = data.info.interval_s / 3600.0
    out = []
    for mo in np.unique(months):
        sel = months == mo
        p, q = data.p_w[sel], data.q_var[sel]
        out.append(tf.MonthUsage(str(mo), float(np.clip(p, 0, None).sum() * h), float(np.clip(q, 0, None).sum() * h),
                                 float(p.max()), float(np.hypot(p, q).max())))
    return tuple(out)


def _money(d, prof: ProfilePart | None, plan: Plan | None, bl: list[int], sheets: list) -> None:
    m = d.model
    tariff = _tariff(m)
    if bl:
        usage = read_billing(d.project, bl[0])
        usage_source = "billing"
    elif prof is not None:
        usage = usage_from_profile(prof.data)
        usage_source = "interval"
    else:
        d.checks.append(Check("billing", "warn", "A tariff is given but neither bills nor interval data: the bills "
                              "are not compared."))
        return
    sh = Sheet("Bills before and after")
    if usage_source == "interval":
        sh.note("No billing history: the monthly kWh, kvarh (lagging), peak kW and peak kVA are taken from the "
                "interval data (months with gaps are under-counted).", title="Monthly usage")
    if prof is not None:
        effects = tf.effects_from_simulation(prof.sim, sheet=sh)
        effect_source = "profile"
    else:
        effects = tf.effects_from_bank(usage, d.sizing.q_installed_var,
                                       target_pf=plan.target_pf if plan else None, sheet=sh)
        effect_source = "estimate"
    try:
        bills = tf.compare_bills(usage, tariff, effects, sheet=sh)
    except CalcError as exc:
        exc.path = ("tariff",)
        raise
    sheets.append(sh)
    if len(usage) < 12:
        d.checks.append(Check("billing_period", "warn", f"The annual bill saving is scaled from {len(usage)} "
                              "month(s) to twelve; seasonal changes in load and power factor are not captured."))
    missing = [u.month for u in usage if u.month not in effects]
    if missing:
        d.checks.append(Check("billing_months", "warn", "No interval data for " + ", ".join(missing)
                              + ": those months are billed unchanged (no saving counted)."))
    losses = econ = None
    cost_source = ""
    e = m.economics
    if e is not None:
        sh_e = Sheet("Economics")
        if prof is not None:
            losses = ec.profile_losses(prof.sim, feeder_r_ohm=e.feeder_resistance, v_v=d.v_v, phases=d.phases,
                                       transformer_load_loss_w=e.transformer_load_loss,
                                       transformer_s_va=e.transformer_rating,
                                       capacitor_w_per_var=e.capacitor_losses, sheet=sh_e)
            loss_red = losses.feeder_wh_per_year + losses.transformer_wh_per_year
            cap_loss = losses.capacitor_loss_wh_per_year
        else:
            sh_e.note("No interval data: feeder and transformer loss savings and capacitor losses are not "
                      "estimated.", title="Losses")
            loss_red = cap_loss = 0.0
        investment, cost_source = _investment(d, e, plan, sh_e)
        econ = ec.evaluate(investment, bill_saving=bills.annual_saving, discount_rate=e.discount_rate, years=e.years,
                           energy_charge_per_wh=tariff.energy_charge_per_wh, loss_reduction_wh_per_year=loss_red,
                           capacitor_loss_wh_per_year=cap_loss, sheet=sh_e)
        sheets.append(sh_e)
        d.json["economics"] = {**econ.as_dict(), **{k: v for k, v in econ.as_dict(detail=True).items()},
                               "currency": tariff.currency, "installed_cost_source": cost_source,
                               "losses": losses.as_dict() if losses else None}
        if econ.payback_years is None:
            d.checks.append(Check("payback", "warn", "The annual saving is not positive: the bank does not pay back "
                                  "on these bills."))
        else:
            ok = econ.payback_years <= e.years
            d.checks.append(Check("payback", "pass" if ok else "warn",
                                  f"Simple payback {econ.payback_years:.1f} years"
                                  + (" within" if ok else ", beyond") + f" the {e.years}-year period; NPV at "
                                  f"{e.discount_rate * 100:g} % {econ.npv:,.0f} {tariff.currency}."))
    d.json["bills"] = {**bills.as_dict(), "usage_source": usage_source, "effect_source": effect_source}
    d.parts["economics"] = EconomicsPart(tariff.currency, usage_source, effect_source, bills, losses, econ,
                                         cost_source, {"demand": m.tariff.demand_charge["text"],
                                                       "energy": m.tariff.energy_charge["text"]})


def _investment(d, e, plan: Plan | None, sh: Sheet) -> tuple[float, str]:
    cost = e.installed_cost
    currency = d.model.tariff.currency
    if not cost.get("from_bom"):
        sh.note(f"Installed cost as given: {cost['text']}.", title="Installed cost")
        return float(cost["amount"]), "project"
    bom = d.parts.get("bom")
    total = getattr(bom, "total", None) if bom is not None else None
    if total is not None:
        cur = getattr(bom, "currency", None)
        if cur is not None and cur != currency:
            exc = CalcError(f"economics.installed_cost: the bill of materials is priced in {cur}, but "
                            f"tariff.currency is {currency}")
            exc.path = ("economics", "installed_cost")
            raise exc
        unpriced = getattr(bom, "unpriced", 0)
        sh.note(f"Installed cost from the priced bill of materials: {total:,.2f} {currency}"
                + (f" ({unpriced} line(s) unpriced and not included)." if unpriced else "."), title="Installed cost")
        if unpriced:
            d.checks.append(Check("installed_cost", "warn", f"{unpriced} line(s) of the bill of materials have no "
                                  "price; the installed cost and the payback leave them out."))
        return float(total), "bom"
    if plan is not None:
        b = plan.bank
        kind, step, count, tot = b.kind, b.step_var, b.step_count, b.total_var
    else:
        kind, step, count, tot = "fixed", d.sizing.q_rated_installed_var, 1, d.sizing.q_rated_installed_var
    c = pr.DEFAULT_COST
    value = sh.calc("C_inst", "C_fixed + c_var * Q_bank + c_step * N", "", "Installed cost, indicative placeholder",
                    "not a price: no priced bill of materials is available", C_fixed=c.fixed,
                    c_var=(c.per_var, "1/var"), Q_bank=(tot, "var"), c_step=c.per_step, N=count)
    d.checks.append(Check("installed_cost", "warn", "installed_cost: from_bom needs a priced bill of materials "
                          "(a catalog with prices); none is available, so an indicative placeholder cost of "
                          f"{value:,.0f} {currency} is used. The payback, NPV and IRR are indicative only."))
    return float(value), "placeholder"
