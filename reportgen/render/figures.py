"""Figures as SVG text, drawn with matplotlib, byte-for-byte reproducible.

matplotlib is imported on first use only. SVG output uses a fixed hash salt
and no date metadata, and text is kept as text, so the same inputs give the
same bytes on any machine.
"""

from __future__ import annotations

import io
import math

from .fmt import num, qty

COLORS = {"before": "#5a5a5a", "after": "#1d5c96", "bank": "#b5472b", "voltage": "#2b2b2b", "grid": "#d9d9d9"}
_plt = None


def _pyplot():
    global _plt
    if _plt is None:
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt

        matplotlib.rcParams.update({
            "svg.hashsalt": "reportgen",
            "svg.fonttype": "none",
            "font.family": "DejaVu Sans",
            "font.size": 9,
            "axes.spines.top": False,
            "axes.spines.right": False,
            "axes.grid": True,
            "grid.color": COLORS["grid"],
            "grid.linewidth": 0.6,
            "axes.axisbelow": True,
        })
        _plt = plt
    return _plt


def to_svg(fig) -> str:
    buf = io.StringIO()
    fig.savefig(buf, format="svg", metadata={"Date": None, "Creator": "reportgen"}, bbox_inches="tight")
    _pyplot().close(fig)
    text = buf.getvalue()
    # drop the XML prolog and DOCTYPE so the SVG can be inlined or served alike
    start = text.find("<svg")
    return text[start:] if start > 0 else text


def power_triangle(p_w: float, q1_var: float, q2_var: float, q_bank_var: float, title: str = "") -> str:
    """Before and after on one set of axes (kW, kvar), the bank's kvar marked."""
    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(6.2, 3.9))
    P, Q1, Q2 = p_w / 1e3, q1_var / 1e3, q2_var / 1e3
    s1, s2 = math.hypot(P, Q1), math.hypot(P, Q2)
    ax.plot([0, P, P, 0], [0, 0, Q1, 0], color=COLORS["before"], lw=1.8, label=f"before: S₁ = {num(s1)} kVA")
    ax.plot([0, P], [0, Q2], color=COLORS["after"], lw=2.2, label=f"after: S₂ = {num(s2)} kVA")
    if q_bank_var > 0:
        ax.annotate("", xy=(P, Q2), xytext=(P, Q1),
                    arrowprops=dict(arrowstyle="-|>", color=COLORS["bank"], lw=2.0, shrinkA=0, shrinkB=0))
        ax.text(P * 1.02, (Q1 + Q2) / 2, f"bank\n−{num(q_bank_var / 1e3)} kvar", color=COLORS["bank"],
                va="center", ha="left")
    ax.text(P / 2, -0.04 * max(abs(Q1), P * 0.3), f"P = {num(P)} kW", ha="center", va="top")
    ax.text(P * 0.98, Q1, f"Q₁ = {num(Q1)} kvar", ha="right", va="bottom", color=COLORS["before"])
    a1 = math.degrees(math.atan2(Q1, P))
    a2 = math.degrees(math.atan2(Q2, P))
    ax.text(P * 0.42, Q1 * 0.42, f"φ₁ = {num(a1, 3)}°  ", color=COLORS["before"], va="bottom", ha="right")
    ax.text(P * 0.62, Q2 * 0.62, f"  φ₂ = {num(a2, 3)}°", color=COLORS["after"], ha="left",
            va="top" if Q2 >= 0 else "bottom")
    ymin = min(0, Q2, Q1) - 0.12 * max(abs(Q1), P * 0.3)
    ymax = max(Q1, Q2, 0) * 1.18 + 1e-9
    ax.set_ylim(ymin, ymax)
    ax.set_xlim(-0.03 * P, P * 1.35)
    ax.set_xlabel("real power P (kW)")
    ax.set_ylabel("reactive power Q (kvar, inductive +)")
    ax.axhline(0, color="#999", lw=0.8)
    ax.legend(loc="upper left", frameon=False)
    if title:
        ax.set_title(title, loc="left", fontsize=10)
    return to_svg(fig)


def phasor_diagram(ph: dict, phases: int) -> str:
    """Per-phase voltage (reference) and the load, capacitor and source currents.

    The currents share one scale; the capacitor current is drawn from the tip
    of the load current, so the source current closes the triangle.
    """
    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(6.4, 3.4))
    v = ph["v_v"]
    i_load, i_cap, i_src = ph["i_load_a"], ph["i_cap_a"], ph["i_source_a"]
    imax = max(abs(i_load), abs(i_src), abs(i_cap)) or 1.0
    scale = 1.0 / imax

    def arrow(start, vec, color, lw=1.8):
        end = (start[0] + vec.real * scale, start[1] + vec.imag * scale)
        ax.annotate("", xy=end, xytext=start,
                    arrowprops=dict(arrowstyle="-|>", color=color, lw=lw, shrinkA=0, shrinkB=0))
        return end

    ax.annotate("", xy=(1.15, 0), xytext=(0, 0),
                arrowprops=dict(arrowstyle="-|>", color=COLORS["voltage"], lw=2.2, shrinkA=0, shrinkB=0))
    ax.text(1.15, 0.04, f"V = {qty(abs(v), 'V')}" + (" (phase)" if phases == 3 else ""), ha="right", va="bottom")
    tip = arrow((0, 0), i_load, COLORS["before"])
    if abs(i_cap) > 0:
        arrow(tip, i_cap, COLORS["bank"])
    arrow((0, 0), i_src, COLORS["after"], lw=2.2)
    for vec, color, label in ((i_load, COLORS["before"], "load current"), (i_cap, COLORS["bank"], "capacitor current"),
                              (i_src, COLORS["after"], "source current")):
        ang = math.degrees(math.atan2(vec.imag, vec.real))
        ax.plot([], [], color=color, lw=2, label=f"{label}\n{qty(abs(vec), 'A')} ∠ {num(ang, 3)}°")
    ys = [0.0, i_load.imag * scale, i_src.imag * scale, (i_load + i_cap).imag * scale]
    ax.set_xlim(-0.08, 1.2)
    ax.set_ylim(min(ys) - 0.12, max(max(ys), 0) + 0.2)
    ax.set_aspect("equal")
    ax.set_xticks([])
    ax.set_yticks([])
    ax.grid(False)
    for sp in ax.spines.values():
        sp.set_visible(False)
    ax.axhline(0, color="#bbb", lw=0.6, zorder=0)
    ax.axvline(0, color="#bbb", lw=0.6, zorder=0)
    ax.legend(loc="upper left", bbox_to_anchor=(1.02, 1.0), frameon=False, fontsize=8.5, handlelength=1.6,
              labelspacing=1.0)
    ax.set_title("currents to one scale; voltage as the reference direction", fontsize=8, color="#666",
                 loc="left")
    return to_svg(fig)
