"""Savings, losses, released capacity and the investment figures of a correction.

* Feeder conductor losses: ``dP = 3 R (I_before^2 - I_after^2)`` with
  ``I = S / (sqrt(3) V_LL)`` for a three-phase feeder of ``R`` ohm per phase
  conductor (``dP = 2 R (I_b^2 - I_a^2)``, ``I = S / V`` single-phase),
  vectorised over the intervals of a profile.
* Transformer load losses scale with the square of the load:
  ``dP = P_load_loss (S_b^2 - S_a^2) / S_rated^2``.
* Capacitor losses (dielectric, resistors, reactors) are a cost:
  ``W/var x var in service x hours``.
* Capacity released: ``S_before_peak - S_after_peak``.
* Simple payback = investment / annual saving; NPV with end-of-year cash
  flows; IRR by bisection on the NPV (None when the cash flows never change
  sign).

Energy from a profile is annualised with ``8760 h / hours covered``. Money is
in the tariff currency as plain floats. Pure: standard library and NumPy.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Sequence

import numpy as np

from .errors import CalcError
from .sheet import Sheet

__all__ = [
    "HOURS_PER_YEAR",
    "LossReduction",
    "Economics",
    "ProfileLosses",
    "payback_years",
    "npv",
    "annuity_npv",
    "irr",
    "feeder_loss_reduction",
    "transformer_loss_reduction",
    "capacitor_loss_wh",
    "capacity_released_va",
    "profile_losses",
    "evaluate",
]

HOURS_PER_YEAR = 8760.0


@dataclass(frozen=True)
class LossReduction:
    """Loss reduction: at the peak interval (W) and as energy over the data (Wh)."""

    peak_w: float  # at the interval of highest S before correction
    energy_wh: float

    def as_dict(self) -> dict[str, float]:
        return {"peak_w": self.peak_w, "energy_wh": self.energy_wh}


def _arr(x: Any) -> np.ndarray:
    return np.atleast_1d(np.asarray(x, dtype=float))


def feeder_loss_reduction(
    r_ohm: float,
    v_v: float,
    p_w: Any,
    q_before_var: Any,
    q_after_var: Any,
    interval_s: float,
    *,
    phases: int = 3,
    sheet: Sheet | None = None,
) -> LossReduction:
    """I^2 R loss reduction in a feeder when its reactive current falls.

    Parameters
    ----------
    r_ohm : float
        Resistance of one phase conductor of the feeder (ohm).
    v_v : float
        Line-to-line voltage (three-phase) or line voltage (single-phase).
    p_w, q_before_var, q_after_var : array_like or float
        Per-interval P and Q before and after correction (scalars for one
        operating point).
    interval_s : float
        Duration of each interval (for one operating point: its hours x 3600).
    phases : int
        3 (three conductors carry I) or 1 (two conductors carry I).
    sheet : Sheet, optional
        Records the calculation at the interval of highest apparent power.

    Returns
    -------
    LossReduction
    """
    if r_ohm < 0 or not v_v > 0:
        raise CalcError("the feeder resistance must not be negative and the voltage must be positive")
    if phases not in (1, 3):
        raise CalcError(f"phases must be 1 or 3, got {phases}")
    p, qb, qa = _arr(p_w), _arr(q_before_var), _arr(q_after_var)
    sb2 = p * p + qb * qb
    sa2 = p * p + qa * qa
    if phases == 3:
        dp = 3.0 * r_ohm * (sb2 - sa2) / (3.0 * v_v * v_v)
    else:
        dp = 2.0 * r_ohm * (sb2 - sa2) / (v_v * v_v)
    dp = np.broadcast_to(dp, np.broadcast_shapes(p.shape, qb.shape, qa.shape))
    k = int(np.argmax(np.broadcast_to(sb2, dp.shape)))
    energy = float(dp.sum() * interval_s / 3600.0)
    peak = float(dp[k])
    if sheet is not None:
        pk, qbk, qak = (float(np.broadcast_to(x, dp.shape)[k]) for x in (p, qb, qa))
        if phases == 3:
            ib = sheet.calc("I_b", "sqrt(P**2 + Q_b**2) / (sqrt(3) * V)", "A", "Feeder current before (peak interval)",
                            P=(pk, "W"), Q_b=(qbk, "var"), V=(v_v, "V"))
            ia = sheet.calc("I_a", "sqrt(P**2 + Q_a**2) / (sqrt(3) * V)", "A", "Feeder current after",
                            P=(pk, "W"), Q_a=(qak, "var"), V=(v_v, "V"))
            peak = sheet.calc("dP_feeder", "3 * R * (I_b**2 - I_a**2)", "W", "Feeder loss reduction at the peak",
                              R=(r_ohm, "ohm"), I_b=(ib, "A"), I_a=(ia, "A"))
        else:
            ib = sheet.calc("I_b", "sqrt(P**2 + Q_b**2) / V", "A", "Feeder current before (peak interval)",
                            P=(pk, "W"), Q_b=(qbk, "var"), V=(v_v, "V"))
            ia = sheet.calc("I_a", "sqrt(P**2 + Q_a**2) / V", "A", "Feeder current after",
                            P=(pk, "W"), Q_a=(qak, "var"), V=(v_v, "V"))
            peak = sheet.calc("dP_feeder", "2 * R * (I_b**2 - I_a**2)", "W", "Feeder loss reduction at the peak",
                              R=(r_ohm, "ohm"), I_b=(ib, "A"), I_a=(ia, "A"))
        sheet.note(f"Feeder loss reduction summed over {dp.size} interval(s): {energy / 1000.0:.1f} kWh.")
    return LossReduction(float(peak), energy)


def transformer_loss_reduction(
    load_loss_w: float,
    s_rated_va: float,
    s_before_va: Any,
    s_after_va: Any,
    interval_s: float,
    *,
    sheet: Sheet | None = None,
) -> LossReduction:
    """Transformer load-loss reduction, losses scaling with (S / S_rated)^2.

    Parameters
    ----------
    load_loss_w : float
        Load (copper) loss at rated kVA, from the transformer test report.
    s_rated_va : float
        Rated apparent power.
    s_before_va, s_after_va : array_like or float
        Apparent power per interval before and after correction.
    interval_s : float
        Duration of each interval.
    sheet : Sheet, optional

    Returns
    -------
    LossReduction
    """
    if load_loss_w < 0 or not s_rated_va > 0:
        raise CalcError("the transformer load loss must not be negative and its rating must be positive")
    sb, sa = _arr(s_before_va), _arr(s_after_va)
    dp = load_loss_w * (sb * sb - sa * sa) / (s_rated_va * s_rated_va)
    k = int(np.argmax(np.broadcast_to(sb, dp.shape)))
    energy = float(dp.sum() * interval_s / 3600.0)
    peak = float(dp[k])
    if sheet is not None:
        peak = sheet.calc("dP_tx", "P_LL * (S_b**2 - S_a**2) / S_r**2", "W", "Transformer load-loss reduction at the peak",
                          P_LL=(load_loss_w, "W"), S_b=(float(np.broadcast_to(sb, dp.shape)[k]), "VA"),
                          S_a=(float(np.broadcast_to(sa, dp.shape)[k]), "VA"), S_r=(s_rated_va, "VA"))
        sheet.note(f"Transformer load-loss reduction summed over {dp.size} interval(s): {energy / 1000.0:.1f} kWh.")
    return LossReduction(float(peak), energy)


def capacitor_loss_wh(
    w_per_var: float, q_in_service_var: Any, interval_s: float, *, sheet: Sheet | None = None
) -> float:
    """Energy lost in the capacitor bank: ``W/var x var in service x hours`` (Wh).

    ``q_in_service_var`` is the bank var in service per interval (an automatic
    bank) or the installed var with ``interval_s`` the energised time (a
    fixed bank). Typical LV figures: 0.2 to 0.5 W/kvar for capacitors alone,
    several W/kvar for detuned steps with reactors (REFERENCES §8).
    """
    if w_per_var < 0:
        raise CalcError("the capacitor loss per var must not be negative")
    q = _arr(q_in_service_var)
    varh = float(q.sum() * interval_s / 3600.0)
    if sheet is not None:
        return float(sheet.calc("E_cap", "k_loss * E_Q_bank", "Wh", "Capacitor losses",
                                "var in service times hours, times the loss per var",
                                k_loss=(w_per_var, "W/var"), E_Q_bank=(varh, "varh")))
    return w_per_var * varh


def capacity_released_va(s_before_va: Any, s_after_va: Any, *, sheet: Sheet | None = None) -> float:
    """Transformer (or feeder) capacity released: ``max(S_before) - max(S_after)`` in VA."""
    sb, sa = float(_arr(s_before_va).max()), float(_arr(s_after_va).max())
    if sheet is not None:
        return float(sheet.calc("S_released", "S_b_pk - S_a_pk", "VA", "Capacity released at the peak",
                                S_b_pk=(sb, "VA"), S_a_pk=(sa, "VA")))
    return sb - sa


# --------------------------------------------------------------------------- money


def payback_years(investment: float, annual_saving: float, *, sheet: Sheet | None = None) -> float | None:
    """Simple payback ``investment / annual saving`` in years; None if the saving is not positive."""
    if annual_saving <= 0:
        if sheet is not None:
            sheet.note("No positive annual saving: the investment does not pay back.")
        return None
    if sheet is not None:
        return float(sheet.calc("T_pb", "C / S_yr", "", "Simple payback (years)",
                                C=investment, S_yr=annual_saving))
    return investment / annual_saving


def npv(rate: float, cash_flows: Sequence[float], *, sheet: Sheet | None = None) -> float:
    """Net present value of end-of-year cash flows; ``cash_flows[0]`` is at time 0.

    ``NPV = sum(c_t / (1 + rate)^t)``.
    """
    if rate <= -1.0:
        raise CalcError(f"the discount rate must be above -100 %, got {rate}")
    c = np.asarray(cash_flows, dtype=float)
    t = np.arange(c.size)
    value = float(np.sum(c / (1.0 + rate) ** t))
    if sheet is not None:
        sheet.note(f"NPV = sum of c_t / (1 + {rate:g})^t over t = 0..{c.size - 1}: {value:.2f}.",
                   title="Net present value")
    return value


def annuity_npv(
    investment: float, annual_saving: float, rate: float, years: int, *, sheet: Sheet | None = None
) -> float:
    """NPV of a level annual saving: ``-C + S (1 - (1 + r)^-N) / r`` (``-C + S N`` at r = 0)."""
    if rate <= -1.0:
        raise CalcError(f"the discount rate must be above -100 %, got {rate}")
    if sheet is not None:
        if rate == 0:
            return float(sheet.calc("NPV", "-C + S_yr * N", "", "Net present value", C=investment,
                                    S_yr=annual_saving, N=years))
        return float(sheet.calc("NPV", "-C + S_yr * (1 - (1 + r)**(-N)) / r", "", "Net present value",
                                "end-of-year savings, discounted", C=investment, S_yr=annual_saving,
                                r=rate, N=years))
    if rate == 0:
        return -investment + annual_saving * years
    return -investment + annual_saving * (1.0 - (1.0 + rate) ** (-years)) / rate


def irr(cash_flows: Sequence[float], *, sheet: Sheet | None = None) -> float | None:
    """Internal rate of return: the rate where the NPV is zero.

    Bisection on the NPV between grid points that bracket a sign change; the
    root nearest 0 is returned when there are several. None when the cash
    flows never change sign (no IRR exists) or no root lies in (-99 %, 10^4 %).
    """
    c = np.asarray(cash_flows, dtype=float)
    nz = c[c != 0.0]
    if nz.size < 2 or np.all(nz > 0) or np.all(nz < 0):
        if sheet is not None:
            sheet.note("The cash flows never change sign: no internal rate of return.")
        return None
    t = np.arange(c.size)

    def f(r: np.ndarray | float) -> np.ndarray:
        r = np.atleast_1d(np.asarray(r, dtype=float))
        return (c[None, :] / (1.0 + r[:, None]) ** t[None, :]).sum(axis=1)

    grid = np.unique(np.concatenate((np.linspace(-0.99, 1.0, 400), np.geomspace(1.0, 100.0, 200))))
    v = f(grid)
    roots: list[float] = [float(g) for g, x in zip(grid, v) if x == 0.0]
    s = np.sign(v)
    for i in np.flatnonzero(s[:-1] * s[1:] < 0):
        lo, hi = float(grid[i]), float(grid[i + 1])
        flo = float(v[i])
        for _ in range(200):
            mid = 0.5 * (lo + hi)
            fm = float(f(mid)[0])
            if fm == 0.0 or hi - lo < 1e-15:
                break
            if (fm > 0) == (flo > 0):
                lo, flo = mid, fm
            else:
                hi = mid
        roots.append(0.5 * (lo + hi))
    if not roots:
        if sheet is not None:
            sheet.note("No internal rate of return between -99 % and 10 000 %.")
        return None
    r = min(roots, key=abs)
    if sheet is not None:
        sheet.note(f"Internal rate of return (NPV = 0, by bisection): {r * 100:.2f} %.")
    return r


@dataclass(frozen=True)
class ProfileLosses:
    """Annualised loss figures from an interval simulation (Wh per year, VA)."""

    feeder: LossReduction | None
    transformer: LossReduction | None
    capacitor_loss_wh: float  # over the data
    annual_factor: float  # 8760 h / hours covered
    feeder_wh_per_year: float
    transformer_wh_per_year: float
    capacitor_loss_wh_per_year: float
    capacity_released_va: float

    def as_dict(self) -> dict[str, Any]:
        return {
            "feeder": self.feeder.as_dict() if self.feeder else None,
            "transformer": self.transformer.as_dict() if self.transformer else None,
            "capacitor_loss_wh": self.capacitor_loss_wh,
            "annual_factor": self.annual_factor,
            "feeder_wh_per_year": self.feeder_wh_per_year,
            "transformer_wh_per_year": self.transformer_wh_per_year,
            "capacitor_loss_wh_per_year": self.capacitor_loss_wh_per_year,
            "capacity_released_va": self.capacity_released_va,
        }


def profile_losses(
    sim: Any,
    *,
    feeder_r_ohm: float | None = None,
    v_v: float | None = None,
    phases: int = 3,
    transformer_load_loss_w: float | None = None,
    transformer_s_va: float | None = None,
    capacitor_w_per_var: float = 0.0,
    sheet: Sheet | None = None,
) -> ProfileLosses:
    """Loss reductions, capacitor losses and released capacity from a bank simulation.

    ``sim`` is a :class:`reportgen.calc.profile.BankSimulation` (its ``p_w``,
    ``q_var``, ``q_after_var``, ``q_bank_var``, ``interval_s``, ``hours``).
    Energies over the data are annualised with ``8760 / sim.hours``.
    """
    p, qb, qa = sim.p_w, sim.q_var, sim.q_after_var
    dt = sim.interval_s
    fac = HOURS_PER_YEAR / sim.hours
    feeder = None
    if feeder_r_ohm is not None:
        if v_v is None:
            raise CalcError("a feeder resistance was given without the voltage")
        feeder = feeder_loss_reduction(feeder_r_ohm, v_v, p, qb, qa, dt, phases=phases, sheet=sheet)
    tx = None
    sb, sa = np.sqrt(p * p + qb * qb), np.sqrt(p * p + qa * qa)
    if transformer_load_loss_w is not None:
        if transformer_s_va is None:
            raise CalcError("a transformer load loss was given without the transformer rating")
        tx = transformer_loss_reduction(transformer_load_loss_w, transformer_s_va, sb, sa, dt, sheet=sheet)
    cap = capacitor_loss_wh(capacitor_w_per_var, sim.q_bank_var, dt, sheet=sheet)
    rel = capacity_released_va(sb, sa, sheet=sheet)
    if sheet is not None:
        sheet.note(f"Energies over {sim.hours:.1f} h of data are scaled by 8760 h / {sim.hours:.1f} h = {fac:.4f} to a year.")
    return ProfileLosses(
        feeder=feeder,
        transformer=tx,
        capacitor_loss_wh=cap,
        annual_factor=fac,
        feeder_wh_per_year=(feeder.energy_wh * fac) if feeder else 0.0,
        transformer_wh_per_year=(tx.energy_wh * fac) if tx else 0.0,
        capacitor_loss_wh_per_year=cap * fac,
        capacity_released_va=rel,
    )


@dataclass(frozen=True)
class Economics:
    """Annual saving and investment figures.

    ``annual_saving = bill_saving + loss_saving - capacitor_loss_cost``;
    ``cash_flows = [-investment, annual_saving x years]`` (end of year).
    ``payback_years`` and ``irr`` are None when they do not exist.
    """

    investment: float
    bill_saving: float
    loss_saving: float
    capacitor_loss_cost: float
    annual_saving: float
    payback_years: float | None
    npv: float
    irr: float | None
    discount_rate: float
    years: int
    cash_flows: tuple[float, ...]

    def as_dict(self, detail: bool = False) -> dict[str, Any]:
        d: dict[str, Any] = {
            "annual_saving": self.annual_saving,
            "payback_years": self.payback_years,
            "npv": self.npv,
            "irr": self.irr,
        }
        if detail:
            d.update(
                {
                    "investment": self.investment,
                    "bill_saving": self.bill_saving,
                    "loss_saving": self.loss_saving,
                    "capacitor_loss_cost": self.capacitor_loss_cost,
                    "discount_rate": self.discount_rate,
                    "years": self.years,
                    "cash_flows": list(self.cash_flows),
                }
            )
        return d


def evaluate(
    investment: float,
    *,
    bill_saving: float,
    discount_rate: float,
    years: int,
    energy_charge_per_wh: float = 0.0,
    loss_reduction_wh_per_year: float = 0.0,
    capacitor_loss_wh_per_year: float = 0.0,
    sheet: Sheet | None = None,
) -> Economics:
    """Annual saving, simple payback, NPV and IRR of a correction.

    Parameters
    ----------
    investment : float
        Installed cost (money at time 0).
    bill_saving : float
        Annual bill saving from :func:`reportgen.calc.tariff.compare_bills`.
    discount_rate : float
        Per year (0.08 for 8 %).
    years : int
        Evaluation period; savings arrive at the end of each year.
    energy_charge_per_wh : float
        Price of the energy losses saved or caused.
    loss_reduction_wh_per_year, capacitor_loss_wh_per_year : float
        Feeder/transformer loss reduction and capacitor losses per year (Wh).
    sheet : Sheet, optional
        Records the saving, payback, NPV and IRR.

    Returns
    -------
    Economics
    """
    if investment < 0:
        raise CalcError("the investment must not be negative")
    years = int(years)
    if years < 1:
        raise CalcError(f"the evaluation period must be at least one year, got {years}")
    if sheet is not None:
        loss_saving = float(sheet.calc("S_loss", "E_loss * c_E", "", "Value of losses avoided per year",
                                       E_loss=(loss_reduction_wh_per_year, "Wh"), c_E=(energy_charge_per_wh, "1/Wh")))
        cap_cost = float(sheet.calc("C_cap_loss", "E_cap * c_E", "", "Cost of capacitor losses per year",
                                    E_cap=(capacitor_loss_wh_per_year, "Wh"), c_E=(energy_charge_per_wh, "1/Wh")))
        total = float(sheet.calc("S_yr", "S_bill + S_loss - C_cap_loss", "", "Annual saving",
                                 S_bill=bill_saving, S_loss=loss_saving, C_cap_loss=cap_cost))
    else:
        loss_saving = loss_reduction_wh_per_year * energy_charge_per_wh
        cap_cost = capacitor_loss_wh_per_year * energy_charge_per_wh
        total = bill_saving + loss_saving - cap_cost
    flows = (-float(investment),) + (float(total),) * years
    pb = payback_years(investment, total, sheet=sheet)
    value = annuity_npv(investment, total, discount_rate, years, sheet=sheet)
    rate = irr(flows, sheet=sheet)
    return Economics(
        investment=float(investment),
        bill_saving=float(bill_saving),
        loss_saving=float(loss_saving),
        capacitor_loss_cost=float(cap_cost),
        annual_saving=float(total),
        payback_years=pb,
        npv=float(value),
        irr=rate,
        discount_rate=float(discount_rate),
        years=years,
        cash_flows=flows,
    )
