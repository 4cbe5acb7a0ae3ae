"""Power-quality figures: impedance scan, harmonic spectrum, captured waveforms (SVG text).

Each function takes the design and reads what the power-quality stage left in
``d.parts["pq_view"]``; values are SI inside and scaled for display here only.
"""

from __future__ import annotations

import numpy as np

from .figures import COLORS, _pyplot, to_svg
from .fmt import num

DETUNED = "#3f7f3a"


def _orders_marked(view) -> list[int]:
    sig = list(view.get("significant_orders") or [])
    return sorted(set(sig))


def scan(d) -> str:
    """|Z| seen from the bus against harmonic order 1..50: source alone, with the bank, detuned."""
    view = d.parts["pq_view"]
    res = view["res"]
    sc = res.scan
    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(6.4, 3.8))
    h = sc.h
    ax.semilogy(h, sc.z_source_ohm * 1e3, color=COLORS["before"], lw=1.4, label="source alone (no bank)")
    if view["q_bank"] > 0:
        if view["p"]:
            ax.semilogy(h, sc.z_detuned_ohm * 1e3, color=DETUNED, lw=1.8,
                        label=f"with the bank, {num(view['p'] * 100, 3)} % reactor")
        else:
            ax.semilogy(h, sc.z_bank_ohm * 1e3, color=COLORS["bank"], lw=1.8, label="with the bank (no reactor)")
            prop = res.proposed
            if prop is not None and prop.scan is not None:
                ax.semilogy(prop.scan.h, prop.scan.z_bank_ohm * 1e3 if prop.scan.z_detuned_ohm is None else
                            prop.scan.z_detuned_ohm * 1e3, color=DETUNED, lw=1.4, ls="--",
                            label=f"proposed: {num(res.proposal.detuning_p * 100, 3)} % reactor")
    lo = float(np.min(sc.z_source_ohm)) * 1e3 / 30.0
    ax.set_ylim(bottom=lo)
    top = ax.get_ylim()[1]
    for n in _orders_marked(view):
        ax.axvline(n, color="#888", lw=0.7, ls=":", zorder=0)
        ax.text(n, top, str(n), ha="center", va="bottom", fontsize=7.5, color="#555")
    if res.resonance_order is not None and view["q_bank"] > 0:
        hr = res.resonance_order
        z_at = float(np.interp(hr, h, sc.z_detuned_ohm if view["p"] else sc.z_bank_ohm)) * 1e3
        ax.plot([hr], [z_at], marker="v", color="#222", ms=6, ls="none",
                label=f"parallel resonance h = {num(hr, 4)}")
    ax.set_xlim(1, 50)
    ax.set_xlabel("harmonic order h (f / f₁); dotted: orders the loads carry")
    ax.set_ylabel("|Z| at the bus per phase (mΩ)")
    ax.legend(loc="lower right", frameon=True, framealpha=0.9, fontsize=8)
    return to_svg(fig)


def spectrum(d) -> str:
    """Harmonic load current per order, and bus voltage per order before and after the bank."""
    view = d.parts["pq_view"]
    res = view["res"]
    hd = res.harmonics
    orders = hd.orders
    present = hd.i_h_a > 0
    if present.any():
        n_max = int(orders[present].max())
    else:
        n_max = 13
    n_max = max(13, min(50, n_max + 2))
    keep = orders <= n_max
    o = orders[keep]
    i1 = float(view["i_h"][1]) or 1.0
    plt = _pyplot()
    fig, (a1, a2) = plt.subplots(2, 1, figsize=(6.4, 5.0), sharex=True)
    a1.bar(o, hd.i_h_a[keep] / i1 * 100, width=0.6, color=COLORS["before"])
    a1.set_ylabel("load current\n(% of fundamental)")
    w = 0.38
    a2.bar(o - w / 2, hd.v_h_before_v[keep] / hd.v1_before_v * 100, width=w, color=COLORS["before"],
           label="bus voltage without the bank")
    lab = "with the bank" + (f" ({num(view['p'] * 100, 3)} % reactor)" if view["p"] else "")
    a2.bar(o + w / 2, hd.v_h_after_v[keep] / hd.v1_after_v * 100, width=w,
           color=DETUNED if view["p"] else COLORS["bank"], label=lab)
    lim = hd.limits.individual_pct
    a2.axhline(lim, color="#222", lw=0.9, ls="--", label=f"IEEE 519 individual limit {num(lim, 3)} %")
    a2.set_ylabel("bus voltage\n(% of fundamental)")
    a2.set_xlabel("harmonic order h")
    a2.set_xticks(o[(o % 2 == 1) | (o <= 3)] if n_max > 20 else o)
    a2.legend(loc="upper right", frameon=True, framealpha=0.9, fontsize=8)
    fig.tight_layout()
    return to_svg(fig)


def waveform_spectra(d) -> str:
    """Current spectrum of each captured waveform load, % of its fundamental."""
    loads = d.parts["pq_view"]["waveforms"]
    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(6.4, 3.0))
    w = 0.8 / max(1, len(loads))
    n_top = 13
    for k, lp in enumerate(loads):
        sp = lp.extras["spectrum"]
        o = np.asarray(sp["orders"][1:])
        pct = np.asarray(sp["i_h_a"][1:]) / sp["i_h_a"][0] * 100
        shown = pct >= 0.2
        if shown.any():
            n_top = max(n_top, int(o[shown].max()) + 2)
        ax.bar(o + (k - (len(loads) - 1) / 2) * w, pct, width=w, label=f"{lp.name}: current THD "
               f"{num(lp.extras['thd_i_pct'], 3)} %", color=[COLORS["after"], DETUNED, COLORS["bank"]][k % 3])
    n_top = min(50, n_top)
    ax.set_xlim(1.4, n_top + 0.6)
    ax.set_xticks(range(3, n_top + 1, 2 if n_top <= 25 else 4))
    ax.set_xlabel("harmonic order h")
    ax.set_ylabel("current (% of fundamental)")
    ax.legend(loc="upper right", frameon=False, fontsize=8)
    return to_svg(fig)
