"""Monthly bill items that the power factor changes, before and after correction.

Three kinds of power-factor clause are modelled, each a paraphrase of a
public tariff (REFERENCES §9); the numbers of a real tariff must be taken
from the utility's current rate schedule.

``adjusted_demand`` (:class:`AdjustedDemand`)
    The billed demand is raised when the PF is below a reference.
    ``form="ratio"``: billed kW = kW x reference_pf / pf (Norris Public Power
    District, Nebraska, newsletter: reference 0.93, the increase capped at
    +10 %, i.e. ``max_factor=1.10``). ``form="linear"``: billed kW = kW x
    [1 + slope x (reference_pf - pf)] (City of Batavia, Illinois, Large
    General Service: reference 0.90, slope 1; Schedule A-16-LP on crppd.com:
    "+2 % of demand for each 1 % below 95 %", i.e. reference 0.95, slope 2).
``kva_demand`` (:class:`KvaDemand`)
    The demand charge applies to the peak kVA instead of the peak kW (Flora,
    Indiana, code of ordinances: a charge per kVA of billing maximum demand).
    ``Tariff.demand_charge_per_w`` is then read as currency per VA-month.
``kvarh_charge`` (:class:`ReactiveCharge`)
    ``basis="energy"``: a charge per varh above ``ratio`` x Wh (a typical
    clause, from memory; ratio 0.5). ``basis="demand"``: a charge per var of
    peak reactive demand above ``ratio`` x peak W (a district tariff quoted on
    electrical-contractor.net: kvar above 62 % of kW, i.e. PF about 0.85;
    secondary source).

Month power factor
------------------
With a peak kVA on the bill the PF used is the PF at the peak,
``peak_w / peak_va``; otherwise it is the month's average PF,
``Wh / sqrt(Wh^2 + varh^2)``, and the peak reactive demand is taken as
``peak_w * varh / Wh`` (the PF at the peak assumed equal to the average).

After correction
----------------
A :class:`BankEffect` per month gives the varh the bank delivers and the var
it removes at the billing peak. ``varh_after = |varh - delivered|`` (leading
varh counted like lagging: conservative where the meter only counts lagging
varh) and ``peak_var_after = peak_var - reduction``. Build effects from an
interval simulation with :func:`effects_from_simulation` (measured
behaviour) or, without a profile, with :func:`effects_from_bank` (an
estimate: bank var x hours capped at the month's varh, documented there).

The energy charge is the same before and after here (loss savings are in
:mod:`reportgen.calc.economics`). Money is in the tariff currency as plain
floats; energies are in Wh and varh, demands in W, var and VA.
"""

from __future__ import annotations

import calendar
import math
import re
from dataclasses import dataclass
from typing import Any, Mapping, Sequence, Union

import numpy as np

from .errors import CalcError
from .sheet import Sheet

__all__ = [
    "MonthUsage",
    "AdjustedDemand",
    "KvaDemand",
    "ReactiveCharge",
    "Tariff",
    "BankEffect",
    "MonthBill",
    "BillComparison",
    "month_hours",
    "month_pf",
    "compare_bills",
    "effects_from_bank",
    "effects_from_simulation",
]

_MONTH = re.compile(r"^(\d{4})-(0[1-9]|1[0-2])$")


def month_hours(month: str) -> float:
    """Calendar hours in a ``YYYY-MM`` month."""
    m = _MONTH.match(month)
    if not m:
        raise CalcError(f"a month must be written YYYY-MM, got {month!r}")
    return calendar.monthrange(int(m.group(1)), int(m.group(2)))[1] * 24.0


@dataclass(frozen=True)
class MonthUsage:
    """One billing month: energies in Wh / varh, peak demand in W (and VA)."""

    month: str
    energy_wh: float
    reactive_energy_varh: float
    peak_w: float
    peak_va: float | None = None
    billed_amount: float | None = None

    def __post_init__(self) -> None:
        month_hours(self.month)
        if self.energy_wh < 0 or self.reactive_energy_varh < 0 or self.peak_w < 0:
            raise CalcError(f"{self.month}: energies and peak demand must not be negative")
        if self.peak_va is not None and self.peak_va < self.peak_w * (1 - 1e-9):
            raise CalcError(
                f"{self.month}: the peak kVA ({self.peak_va / 1000:g}) is below the peak kW "
                f"({self.peak_w / 1000:g}); kVA can never be less than kW"
            )

    def as_dict(self) -> dict[str, Any]:
        return {
            "month": self.month,
            "energy_wh": self.energy_wh,
            "reactive_energy_varh": self.reactive_energy_varh,
            "peak_w": self.peak_w,
            "peak_va": self.peak_va,
            "billed_amount": self.billed_amount,
        }


@dataclass(frozen=True)
class AdjustedDemand:
    """Billed demand raised below a reference PF (see the module docstring)."""

    reference_pf: float = 0.93
    form: str = "ratio"  # "ratio" | "linear"
    slope: float = 1.0
    max_factor: float | None = None
    kind: str = "adjusted_demand"

    def __post_init__(self) -> None:
        if self.form not in ("ratio", "linear"):
            raise CalcError(f"adjusted-demand form must be ratio or linear, got {self.form!r}")
        if not 0.0 < self.reference_pf <= 1.0:
            raise CalcError(f"the reference PF must be in (0, 1], got {self.reference_pf}")

    def factor(self, pf: float) -> float:
        if pf >= self.reference_pf:
            return 1.0
        f = self.reference_pf / pf if self.form == "ratio" else 1.0 + self.slope * (self.reference_pf - pf)
        return min(f, self.max_factor) if self.max_factor is not None else f


@dataclass(frozen=True)
class KvaDemand:
    """Demand charge on peak kVA (see the module docstring)."""

    kind: str = "kva_demand"


@dataclass(frozen=True)
class ReactiveCharge:
    """Charge for reactive energy or demand above a share of the real one.

    ``rate`` is currency per varh (``basis="energy"``) or per var-month
    (``basis="demand"``).
    """

    rate: float
    ratio: float = 0.5
    basis: str = "energy"  # "energy" | "demand"
    kind: str = "kvarh_charge"

    def __post_init__(self) -> None:
        if self.basis not in ("energy", "demand"):
            raise CalcError(f"reactive charge basis must be energy or demand, got {self.basis!r}")
        if self.ratio < 0 or self.rate < 0:
            raise CalcError("the reactive charge rate and ratio must not be negative")


Clause = Union[AdjustedDemand, KvaDemand, ReactiveCharge]


@dataclass(frozen=True)
class Tariff:
    """The parts of a rate schedule that the PF affects.

    Parameters
    ----------
    demand_charge_per_w : float
        Currency per W-month of billed demand (per VA-month under
        :class:`KvaDemand`). A price of 23.80 per kW is 0.0238 per W.
    energy_charge_per_wh : float
        Currency per Wh.
    clause : AdjustedDemand, KvaDemand, ReactiveCharge or None
    currency : str
    demand_round_w : float, optional
        Round the billed demand to this step (e.g. 10 W = 0.01 kW).
    customer_charge : float
        Fixed monthly charge.
    name : str
    """

    demand_charge_per_w: float
    energy_charge_per_wh: float
    clause: Clause | None = None
    currency: str = "USD"
    demand_round_w: float | None = None
    customer_charge: float = 0.0
    name: str = ""

    def rounded(self, x: float) -> float:
        if self.demand_round_w:
            return float(round(x / self.demand_round_w) * self.demand_round_w)
        return float(x)


@dataclass(frozen=True)
class BankEffect:
    """What the bank changes in one month: varh delivered and var removed at the peak."""

    delivered_varh: float
    peak_var_reduction: float
    source: str = "estimate"  # "profile" | "estimate" | "none"

    def as_dict(self) -> dict[str, Any]:
        return {
            "delivered_varh": self.delivered_varh,
            "peak_var_reduction": self.peak_var_reduction,
            "source": self.source,
        }


NO_EFFECT = BankEffect(0.0, 0.0, "none")


@dataclass(frozen=True)
class MonthBill:
    """One row of the monthly bill table (money in the tariff currency)."""

    month: str
    pf_before: float
    pf_after: float
    reactive_energy_after_varh: float
    peak_va_before: float
    peak_va_after: float
    billed_demand_before: float  # W, or VA under a kVA clause
    billed_demand_after: float
    billed_demand_unit: str  # "W" | "VA"
    demand_charge_before: float
    demand_charge_after: float
    pf_charge_before: float  # the part of the bill due to PF (included in the totals)
    pf_charge_after: float
    energy_charge: float
    total_before: float
    total_after: float
    saving: float
    billed_amount: float | None
    effect_source: str

    def as_dict(self) -> dict[str, Any]:
        return dict(self.__dict__)


@dataclass(frozen=True)
class BillComparison:
    """Monthly bills before and after correction, with the annualised saving.

    ``annual_saving = sum(saving) * 12 / months`` (months present, so a
    partial year is scaled to twelve months).
    """

    months: tuple[MonthBill, ...]
    currency: str
    clause_kind: str
    total_before: float
    total_after: float
    saving: float
    annual_saving: float

    def as_dict(self) -> dict[str, Any]:
        return {
            "currency": self.currency,
            "clause_kind": self.clause_kind,
            "total_before": self.total_before,
            "total_after": self.total_after,
            "saving": self.saving,
            "annual_saving": self.annual_saving,
            "months": [m.as_dict() for m in self.months],
        }


def month_pf(u: MonthUsage) -> float:
    """Billing PF: ``peak_w / peak_va`` when the bill gives a peak kVA, else ``Wh / sqrt(Wh^2 + varh^2)``."""
    if u.peak_va is not None:
        return u.peak_w / u.peak_va if u.peak_va > 0 else 1.0
    s = math.hypot(u.energy_wh, u.reactive_energy_varh)
    return u.energy_wh / s if s > 0 else 1.0


def _peak_var(u: MonthUsage) -> float:
    if u.peak_va is not None:
        return math.sqrt(max(u.peak_va**2 - u.peak_w**2, 0.0))
    if u.energy_wh > 0:
        return u.peak_w * u.reactive_energy_varh / u.energy_wh
    return 0.0


def _items(
    tariff: Tariff,
    peak_w: float,
    peak_var: float,
    energy_wh: float,
    varh: float,
    pf: float,
    sheet: Sheet | None,
    label: str,
) -> tuple[float, float, float, str]:
    """(billed demand, demand charge, PF part of the bill, unit) for one month state."""
    cl = tariff.clause
    rate = tariff.demand_charge_per_w
    base = tariff.rounded(peak_w) * rate
    if isinstance(cl, AdjustedDemand):
        f = cl.factor(pf)
        if sheet is not None:
            if pf >= cl.reference_pf:
                sheet.note(f"{label}: PF {pf:.3f} is not below {cl.reference_pf:g}; billed demand = peak demand.")
                billed = peak_w
            elif cl.form == "ratio":
                billed = sheet.calc(
                    "P_bill", "P_pk * PF_ref / PF", "W", f"{label}: adjusted demand",
                    "billed demand raised in the ratio of reference to actual PF",
                    P_pk=(peak_w, "W"), PF_ref=cl.reference_pf, PF=pf,
                )
            else:
                billed = sheet.calc(
                    "P_bill", "P_pk * (1 + k * (PF_ref - PF))", "W", f"{label}: adjusted demand",
                    "billed demand raised in proportion to the PF shortfall",
                    P_pk=(peak_w, "W"), k=cl.slope, PF_ref=cl.reference_pf, PF=pf,
                )
            if cl.max_factor is not None and f == cl.max_factor and pf < cl.reference_pf:
                billed = peak_w * cl.max_factor
                sheet.note(f"{label}: increase capped at x{cl.max_factor:g}.")
        else:
            billed = peak_w * f
        billed = tariff.rounded(billed)
        charge = billed * rate
        return billed, charge, charge - base, "W"
    if isinstance(cl, KvaDemand):
        s = math.hypot(peak_w, peak_var)
        if sheet is not None:
            s = sheet.calc("S_pk", "sqrt(P_pk**2 + Q_pk**2)", "VA", f"{label}: peak kVA billed",
                           P_pk=(peak_w, "W"), Q_pk=(peak_var, "var"))
        billed = tariff.rounded(s)
        charge = billed * rate
        return billed, charge, charge - base, "VA"
    billed = tariff.rounded(peak_w)
    charge = billed * rate
    pf_part = 0.0
    if isinstance(cl, ReactiveCharge):
        if cl.basis == "energy":
            if sheet is not None:
                excess = sheet.calc("E_Q_x", "max(E_Q - r * E_P, 0)", "varh", f"{label}: varh above the free share",
                                    E_Q=(varh, "varh"), r=cl.ratio, E_P=(energy_wh, "Wh"))
            else:
                excess = max(varh - cl.ratio * energy_wh, 0.0)
        else:
            if sheet is not None:
                excess = sheet.calc("Q_x", "max(Q_pk - r * P_pk, 0)", "var", f"{label}: kvar above the free share",
                                    Q_pk=(peak_var, "var"), r=cl.ratio, P_pk=(peak_w, "W"))
            else:
                excess = max(peak_var - cl.ratio * peak_w, 0.0)
        pf_part = excess * cl.rate
        charge += pf_part
    return billed, charge, pf_part, "W"


def compare_bills(
    usage: Sequence[MonthUsage],
    tariff: Tariff,
    effects: Mapping[str, BankEffect] | None = None,
    *,
    sheet: Sheet | None = None,
    record_month: str | None = None,
) -> BillComparison:
    """Bill each month before and after correction under ``tariff``.

    Parameters
    ----------
    usage : sequence of MonthUsage
        The billing months.
    tariff : Tariff
    effects : mapping of month -> BankEffect, optional
        The bank's effect per month; months without one are unchanged (a note
        is recorded). None: no correction (after = before).
    sheet : Sheet, optional
        Records one month worked in full (``record_month``, default the month
        with the largest saving) and the annual total.
    record_month : str, optional

    Returns
    -------
    BillComparison
    """
    if not usage:
        raise CalcError("no billing months were given")
    seen: set[str] = set()
    for u in usage:
        if u.month in seen:
            raise CalcError(f"billing month {u.month} appears twice")
        seen.add(u.month)
    effects = effects or {}
    rows: list[MonthBill] = []
    states = []
    for u in usage:
        e = effects.get(u.month, NO_EFFECT)
        pf_b = month_pf(u)
        q_pk = _peak_var(u)
        varh_a = abs(u.reactive_energy_varh - e.delivered_varh)
        q_pk_a = q_pk - e.peak_var_reduction
        s_b = math.hypot(u.peak_w, q_pk)
        s_a = math.hypot(u.peak_w, q_pk_a)
        if u.peak_va is not None:
            pf_a = u.peak_w / s_a if s_a > 0 else 1.0
        else:
            s = math.hypot(u.energy_wh, varh_a)
            pf_a = u.energy_wh / s if s > 0 else 1.0
        states.append((u, e, pf_b, q_pk, varh_a, q_pk_a, pf_a))
        bd_b, dc_b, pfc_b, unit = _items(tariff, u.peak_w, q_pk, u.energy_wh, u.reactive_energy_varh, pf_b, None, "")
        bd_a, dc_a, pfc_a, _ = _items(tariff, u.peak_w, q_pk_a, u.energy_wh, varh_a, pf_a, None, "")
        energy = u.energy_wh * tariff.energy_charge_per_wh
        tot_b = dc_b + energy + tariff.customer_charge
        tot_a = dc_a + energy + tariff.customer_charge
        rows.append(
            MonthBill(
                month=u.month, pf_before=pf_b, pf_after=pf_a, reactive_energy_after_varh=varh_a,
                peak_va_before=s_b, peak_va_after=s_a,
                billed_demand_before=bd_b, billed_demand_after=bd_a, billed_demand_unit=unit,
                demand_charge_before=dc_b, demand_charge_after=dc_a,
                pf_charge_before=pfc_b, pf_charge_after=pfc_a, energy_charge=energy,
                total_before=tot_b, total_after=tot_a, saving=tot_b - tot_a,
                billed_amount=u.billed_amount, effect_source=e.source,
            )
        )
    saving = sum(r.saving for r in rows)
    result = BillComparison(
        months=tuple(rows),
        currency=tariff.currency,
        clause_kind=tariff.clause.kind if tariff.clause is not None else "none",
        total_before=sum(r.total_before for r in rows),
        total_after=sum(r.total_after for r in rows),
        saving=saving,
        annual_saving=saving * 12.0 / len(rows),
    )
    if sheet is not None:
        _record(result, states, tariff, sheet, record_month)
    return result


def _record(result: BillComparison, states, tariff: Tariff, sheet: Sheet, record_month: str | None) -> None:
    missing = [u.month for (u, e, *_r) in states if e.source == "none"]
    if missing and result.clause_kind != "none":
        sheet.note("No bank effect for " + ", ".join(missing) + ": those months are billed unchanged.")
    if record_month is None:
        record_month = max(result.months, key=lambda r: r.saving).month
    for (u, e, pf_b, q_pk, varh_a, q_pk_a, pf_a), row in zip(states, result.months):
        if u.month != record_month:
            continue
        sheet.note(
            f"Month {u.month} worked in full ({tariff.name or 'tariff'}, clause {result.clause_kind}).",
            title="Power factor on the bill",
        )
        if u.peak_va is not None:
            sheet.calc("PF", "P_pk / S_pk", "", f"{u.month} before: PF at the peak", P_pk=(u.peak_w, "W"), S_pk=(u.peak_va, "VA"))
        else:
            sheet.calc("PF", "E_P / sqrt(E_P**2 + E_Q**2)", "", f"{u.month} before: average PF",
                       E_P=(u.energy_wh, "Wh"), E_Q=(u.reactive_energy_varh, "varh"))
        _items(tariff, u.peak_w, q_pk, u.energy_wh, u.reactive_energy_varh, pf_b, sheet, f"{u.month} before")
        sheet.calc("E_Q_after", "abs(E_Q - E_bank)", "varh", f"{u.month} after: reactive energy",
                   f"bank effect from the {e.source}",
                   E_Q=(u.reactive_energy_varh, "varh"), E_bank=(e.delivered_varh, "varh"))
        if u.peak_va is not None:
            sheet.calc("PF_after", "P_pk / sqrt(P_pk**2 + (Q_pk - Q_red)**2)", "", f"{u.month} after: PF at the peak",
                       P_pk=(u.peak_w, "W"), Q_pk=(q_pk, "var"), Q_red=(e.peak_var_reduction, "var"))
        else:
            sheet.calc("PF_after", "E_P / sqrt(E_P**2 + E_Q_after**2)", "", f"{u.month} after: average PF",
                       E_P=(u.energy_wh, "Wh"), E_Q_after=(varh_a, "varh"))
        _items(tariff, u.peak_w, q_pk_a, u.energy_wh, varh_a, pf_a, sheet, f"{u.month} after")
        sheet.calc("saving_month", "C_before - C_after", tariff.currency, f"{u.month}: bill saving",
                   C_before=(row.total_before, tariff.currency), C_after=(row.total_after, tariff.currency))
    sheet.calc("saving_year", "saving_sum * 12 / N_months", tariff.currency, "Annual bill saving",
               saving_sum=(result.saving, tariff.currency), N_months=len(result.months))


def effects_from_bank(
    usage: Sequence[MonthUsage],
    bank_var: float,
    *,
    operating_hours: float | Mapping[str, float] | None = None,
    target_pf: float | None = None,
    sheet: Sheet | None = None,
) -> dict[str, BankEffect]:
    """Estimate the bank's monthly effect without an interval profile.

    ``delivered = min(bank_var * hours, varh)`` and ``peak reduction =
    min(bank_var, peak_var)``, where ``hours`` is ``operating_hours`` (a
    number for every month, or per month) or the calendar hours of the month.
    With ``target_pf`` (an automatic bank that stops at the target) both are
    further capped at what reaching the target needs: ``varh - Wh *
    tan(acos target)`` and ``peak_var - peak_w * tan(acos target)``. This is
    an estimate; an interval profile gives the real behaviour.
    """
    if bank_var < 0:
        raise CalcError("the bank size must not be negative")
    kt = math.tan(math.acos(target_pf)) if target_pf is not None else None
    out: dict[str, BankEffect] = {}
    for u in usage:
        if isinstance(operating_hours, Mapping):
            hrs = float(operating_hours.get(u.month, month_hours(u.month)))
        elif operating_hours is not None:
            hrs = float(operating_hours)
        else:
            hrs = month_hours(u.month)
        q_pk = _peak_var(u)
        dv = min(bank_var * hrs, u.reactive_energy_varh)
        pr = min(bank_var, q_pk)
        if kt is not None:
            dv = min(dv, max(u.reactive_energy_varh - u.energy_wh * kt, 0.0))
            pr = min(pr, max(q_pk - u.peak_w * kt, 0.0))
        out[u.month] = BankEffect(dv, pr, "estimate")
    if sheet is not None:
        sheet.note(
            f"No interval profile: the bank's monthly effect is estimated as {bank_var / 1000:g} kvar x "
            "operating hours, capped at the month's kvarh"
            + (f" and at what PF {target_pf:g} needs" if target_pf is not None else "")
            + "."
        )
    return out


def effects_from_simulation(sim: Any, sheet: Sheet | None = None) -> dict[str, BankEffect]:
    """Monthly bank effect from a :class:`reportgen.calc.profile.BankSimulation`.

    Per calendar month (UTC) of the interval timestamps: ``delivered_varh``
    is the bank var in service summed over the month's intervals times the
    interval length; ``peak_var_reduction`` is the bank var in service in the
    month's interval of highest P (the billing peak). Timestamps must be
    seconds since 1970-01-01 UTC (datetime64 input gives that).
    """
    t_s = np.asarray(sim.t_s, dtype=float)
    months = np.floor(t_s).astype(np.int64).astype("datetime64[s]").astype("datetime64[M]")
    h = sim.interval_s / 3600.0
    out: dict[str, BankEffect] = {}
    uniq, start = np.unique(months, return_index=True)
    order = np.argsort(start)
    bounds = list(start[order]) + [len(t_s)]
    for k, i0 in enumerate(start[order]):
        i1 = bounds[k + 1]
        sl = slice(int(i0), int(i1))
        qb = sim.q_bank_var[sl]
        ipk = int(np.argmax(sim.p_w[sl]))
        out[str(uniq[order][k])] = BankEffect(float(qb.sum() * h), float(qb[ipk]), "profile")
    if sheet is not None:
        sheet.note(
            "Bank effect per month from the interval simulation: kvarh delivered, and the kvar in "
            "service at each month's highest-kW interval."
        )
    return out
