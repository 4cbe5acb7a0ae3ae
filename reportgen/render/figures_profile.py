"""Figures of the load-profile, bank and economics sections (SVG text, reproducible).

Each function takes the design and reads ``d.parts["profile"]``, ``d.parts["bank_plan"]`` and
``d.parts["economics"]`` (see reportgen/stages/profile.py). Axes carry the quantity and the
unit; values are scaled to kW / kvar here, for display only.
"""

from __future__ import annotations

import numpy as np

from . import figures
from .figures import COLORS, _pyplot, to_svg
from .fmt import num

LEAD = "#c0392b"
TARGET = "#2e7d32"


def _fig(h: float = 3.6):
    plt = _pyplot()
    return plt.subplots(figsize=(6.2, h))


def duration(d) -> str:
    """P and Q duration curves; Q before and after correction."""
    part = d.parts["profile"]
    sim = part.sim
    n = sim.intervals
    pct = (np.arange(n) + 0.5) / n * 100.0
    plt = _pyplot()
    fig, (a1, a2) = plt.subplots(2, 1, figsize=(6.2, 5.0), sharex=True)
    a1.plot(pct, np.sort(sim.p_w)[::-1] / 1e3, color=COLORS["before"], lw=1.6, label="real power P")
    a1.set_ylabel("P (kW)")
    a1.legend(loc="upper right", frameon=False)
    a2.plot(pct, np.sort(sim.q_var)[::-1] / 1e3, color=COLORS["before"], lw=1.6, label="Q before correction")
    a2.plot(pct, np.sort(sim.q_after_var)[::-1] / 1e3, color=COLORS["after"], lw=1.6, label="Q after correction")
    a2.axhline(0, color="#999", lw=0.8)
    a2.set_ylabel("Q (kvar, inductive +)")
    a2.set_xlabel("share of the intervals with this value or more (%)")
    a2.set_xlim(0, 100)
    a2.legend(loc="upper right", frameon=False)
    return to_svg(fig)


def pf_hist(d) -> str:
    """Hours at each PF, before and after; leading hours after in red."""
    part = d.parts["profile"]
    hb, ha = part.hist_before, part.hist_after
    e = hb.edges
    width = np.diff(e)
    x = e[:-1]
    fig, ax = _fig(3.6)
    # the first bin (0 to 0.5) is drawn as a narrow bar at 0.48 so the axis can start at 0.46
    xs = np.where(x == 0.0, 0.48, x)
    ws = np.where(x == 0.0, 0.02, width)
    before = hb.lagging_hours + hb.leading_hours
    ax.bar(xs, before, width=ws * 0.45, align="edge", color=COLORS["before"], label="before")
    ax.bar(xs + ws * 0.45, ha.lagging_hours, width=ws * 0.45, align="edge", color=COLORS["after"],
           label="after, lagging")
    if ha.leading_hours.sum() > 0:
        ax.bar(xs + ws * 0.45, ha.leading_hours, bottom=ha.lagging_hours, width=ws * 0.45, align="edge",
               color=LEAD, label="after, leading")
    ax.axvline(part.target_pf, color=TARGET, lw=1.2, ls="--", label=f"target {part.target_pf:.2f}")
    ax.set_xlim(0.46, 1.005)
    ax.set_xlabel("power factor (magnitude; first bar: below 0.50)")
    ax.set_ylabel("time (h)")
    ax.legend(loc="upper left", frameon=False)
    return to_svg(fig)


def week(d) -> str:
    """A typical week: P, Q before, the bank in service and Q after."""
    part = d.parts["profile"]
    sim, data = part.sim, part.data
    i0, i1 = part.week
    t = data.t[i0:i1]
    days = (t - t[0]).astype("timedelta64[s]").astype(float) / 86400.0
    plt = _pyplot()
    fig, (a1, a2) = plt.subplots(2, 1, figsize=(6.2, 5.0), sharex=True)
    a1.plot(days, sim.p_w[i0:i1] / 1e3, color=COLORS["before"], lw=1.0, label="P")
    a1.set_ylabel("P (kW)")
    a1.legend(loc="lower right", bbox_to_anchor=(1.0, 1.0), frameon=False, ncol=1)
    a2.plot(days, sim.q_var[i0:i1] / 1e3, color=COLORS["before"], lw=1.0, label="Q before")
    a2.step(days, sim.q_bank_var[i0:i1] / 1e3, where="post", color=COLORS["bank"], lw=1.0, label="bank in service")
    a2.plot(days, sim.q_after_var[i0:i1] / 1e3, color=COLORS["after"], lw=1.0, label="Q after")
    a2.axhline(0, color="#999", lw=0.8)
    a2.set_ylabel("kvar")
    a2.set_xlabel(f"days from {str(t[0])[:10]} 00:00 (interval start times as in the file)")
    a2.set_xlim(0, max(days[-1], 1.0))
    a2.set_xticks(np.arange(0, int(days[-1]) + 2))
    a2.legend(loc="lower center", bbox_to_anchor=(0.5, 1.0), frameon=False, ncol=3, fontsize=8)
    return to_svg(fig)


def steps(d) -> str:
    """Duration curve of the kvar needed to reach the target, against the levels the bank offers."""
    part = d.parts["profile"]
    sim = part.sim
    kt = np.tan(np.arccos(part.target_pf))
    need = np.maximum(sim.q_var - np.abs(sim.p_w) * kt, 0.0)
    n = sim.intervals
    pct = (np.arange(n) + 0.5) / n * 100.0
    fig, ax = _fig(3.8)
    ax.plot(pct, np.sort(need)[::-1] / 1e3, color=COLORS["before"], lw=1.6, label=f"kvar needed for PF {part.target_pf:.2f}")
    ax.plot(pct, np.sort(sim.q_var)[::-1] / 1e3, color=COLORS["before"], lw=1.0, ls=":",
            label="Q of the load (more would lead)")
    plan = d.parts.get("bank_plan")
    if plan is not None:
        levels = plan.delivered.levels()[0]
        for k, lv in enumerate(levels[1:]):
            ax.axhline(lv / 1e3, color=COLORS["bank"], lw=0.7, alpha=0.8,
                       label="bank levels" if k == 0 else None)
    else:
        ax.axhline(sim.q_fixed_var / 1e3, color=COLORS["bank"], lw=1.4, label="fixed bank")
        ax.axhline(part.fixed.bank_var / 1e3, color=TARGET, lw=1.0, ls="--",
                   label="largest fixed bank that never leads")
    ax.set_xlim(0, 100)
    ax.set_ylim(bottom=0)
    ax.set_xlabel("share of the intervals needing this kvar or more (%)")
    ax.set_ylabel("reactive power (kvar)")
    ax.legend(loc="upper right", frameon=False, fontsize=8)
    return to_svg(fig)


def design(d) -> str:
    """The candidates of the design search: cost against the share of intervals at the target."""
    plan = d.parts["bank_plan"]
    ds = plan.search
    c = ds.candidates
    met = np.array([x.met_fraction for x in c]) * 100
    cost = np.array([x.cost for x in c])
    feas = np.array([x.feasible for x in c])
    binary = np.array([x.kind == "binary" for x in c])
    fig, ax = _fig(3.8)
    for mask, marker, label in ((~binary, "o", "equal steps"), (binary, "s", "binary-weighted")):
        ax.scatter(met[mask & ~feas], cost[mask & ~feas], s=10, marker=marker, facecolors="none",
                   edgecolors="#aaaaaa", linewidths=0.6, label=f"{label}, not meeting the rule")
        ax.scatter(met[mask & feas], cost[mask & feas], s=12, marker=marker, color=COLORS["after"],
                   label=f"{label}, meeting the rule")
    b = ds.best
    if b is not None:
        ax.scatter([b.met_fraction * 100], [b.cost], s=80, marker="*", color=COLORS["bank"], zorder=5,
                   label=f"chosen: {b.step_count} x {num(plan.bank.step_var / 1e3)} kvar ({b.kind})")
    ax.axvline(ds.share * 100, color=TARGET, lw=1.0, ls="--", label=f"required share {ds.share * 100:g} %")
    ax.set_xlabel(f"intervals at PF {ds.target_pf:.2f} or better (%)")
    cur = d.model.tariff.currency if d.model.tariff is not None else ""
    ax.set_ylabel(f"cost ({cur}, {'placeholder model' if plan.search_source == 'placeholder' else 'cost model'}, log scale)")
    ax.set_xlim(max(0.0, float(met.min()) - 2), 100.5)
    ax.set_yscale("log")
    from matplotlib.ticker import FuncFormatter

    ax.yaxis.set_major_formatter(FuncFormatter(lambda v, _: num(v, 3)))
    ax.yaxis.set_minor_formatter(FuncFormatter(lambda v, _: ""))
    ax.legend(loc="upper left", frameon=False, fontsize=7)
    return to_svg(fig)


def cash(d) -> str:
    """Cumulative cash flow, plain and discounted, over the evaluation period."""
    econ = d.parts["economics"].econ
    cur = d.parts["economics"].currency
    flows = np.array(econ.cash_flows)
    years = np.arange(flows.size)
    disc = flows / (1.0 + econ.discount_rate) ** years
    fig, ax = _fig(3.4)
    ax.plot(years, np.cumsum(flows) / 1e3, color=COLORS["before"], lw=1.6, marker="o", ms=3, label="cumulative cash flow")
    ax.plot(years, np.cumsum(disc) / 1e3, color=COLORS["after"], lw=1.6, marker="o", ms=3,
            label=f"discounted at {econ.discount_rate * 100:g} % (NPV at the end)")
    ax.axhline(0, color="#999", lw=0.8)
    ax.set_xlabel("year")
    ax.set_ylabel(f"thousand {cur}")
    ax.set_xlim(0, years[-1])
    ax.legend(loc="upper left", frameon=False)
    return to_svg(fig)


def triangle(d) -> str:
    """The core power triangle, with the arrow of the steps in service at the design point."""
    plan = d.parts["bank_plan"]
    return figures.power_triangle(d.total_s_va.real, d.total_s_va.imag, d.after.q_after_var, plan.q_on_var,
                                  title=f"{plan.steps_on} of {plan.bank.step_count} steps in service at the design point")
