"""One-line diagram of the bank and its protection, drawn from the design (SVG, matplotlib).

Drawn top to bottom: the supply (source and service transformer, with the
short-circuit power used for inrush), the main bus with the loads, the bank
feeder with its fuses, disconnect and conductors, the bank bus, and each step
with its fuses, contactor, detuning reactor, capacitors and discharge
resistors. Every rating shown is taken from the computed design
(``d.parts["protection"]``); nothing is typed in here.
"""

from __future__ import annotations

import math

from .figures import COLORS, _pyplot, to_svg
from .fmt import kvar, num, qty

INK = "#222222"
BANK = COLORS["bank"]
MUTED = "#555555"


def _p(s: str) -> str:
    return s.replace("\u2009", " ")


class _Pen:
    def __init__(self, ax):
        self.ax = ax

    def line(self, x1, y1, x2, y2, color=INK, lw=1.3):
        self.ax.plot([x1, x2], [y1, y2], color=color, lw=lw, solid_capstyle="round")

    def text(self, x, y, s, ha="left", va="center", size=7.5, color=INK, weight="normal"):
        self.ax.text(x, y, _p(s), ha=ha, va=va, fontsize=size, color=color, fontweight=weight)

    def fuse(self, x, y, h=0.32, color=INK):
        """Vertical fuse centred at (x, y): a rectangle with the conductor through it."""
        from matplotlib.patches import Rectangle

        w = 0.13
        self.ax.add_patch(Rectangle((x - w / 2, y - h / 2), w, h, fill=False, ec=color, lw=1.2))
        self.line(x, y - h / 2, x, y + h / 2, color=color, lw=0.9)

    def switch(self, x, y, h=0.36, color=INK, contactor=False):
        """Open switch between y + h/2 (top) and y - h/2 (bottom)."""
        top, bot = y + h / 2, y - h / 2
        self.line(x, top, x, top - 0.06, color)
        self.line(x, bot, x, bot + 0.08, color)
        self.line(x, bot + 0.08, x - 0.17, top - 0.03, color)  # the blade, open
        if contactor:
            from matplotlib.patches import Arc

            self.ax.add_patch(Arc((x, top - 0.06 - 0.04), 0.08, 0.08, theta1=0, theta2=180, color=color, lw=1.1))
        else:
            self.line(x - 0.05, top - 0.06, x + 0.05, top - 0.06, color)

    def coil(self, x, y, h=0.4, turns=4, color=INK):
        from matplotlib.patches import Arc

        r = h / turns / 2
        for k in range(turns):
            cy = y + h / 2 - r - 2 * r * k
            self.ax.add_patch(Arc((x, cy), 2 * r * 1.4, 2 * r, theta1=-90, theta2=90, color=color, lw=1.2))

    def capacitor(self, x, y, color=INK):
        w, g = 0.15, 0.035
        self.line(x - w, y + g, x + w, y + g, color, lw=2.0)
        self.line(x - w, y - g, x + w, y - g, color, lw=2.0)

    def resistor(self, x, y, h=0.3, color=INK):
        n = 6
        xs, ys = [x], [y + h / 2]
        for k in range(n):
            xs.append(x + (0.045 if k % 2 == 0 else -0.045))
            ys.append(y + h / 2 - (k + 0.5) * h / n)
        xs.append(x)
        ys.append(y - h / 2)
        self.ax.plot(xs, ys, color=color, lw=1.0)

    def ground(self, x, y, color=INK):
        for k, w in enumerate((0.1, 0.065, 0.03)):
            self.line(x - w, y - k * 0.035, x + w, y - k * 0.035, color, lw=1.0)

    def circle(self, x, y, r, color=INK):
        from matplotlib.patches import Circle

        self.ax.add_patch(Circle((x, y), r, fill=False, ec=color, lw=1.3))


def one_line(d) -> str:
    pp = d.parts["protection"]
    bp = pp["bank"]
    steps = pp["steps"]
    automatic = pp["automatic"]
    feeder = bp.feeder
    plt = _pyplot()
    n = len(steps)
    step_w = 0.78
    bank_x0 = 3.35
    width = max(bank_x0 + 0.45 + n * step_w + 0.4, 7.6)
    height = 7.4
    fig, ax = plt.subplots(figsize=(width * 0.84, height * 0.84))
    ax.set_xlim(0, width)
    ax.set_ylim(0, height)
    ax.set_aspect("equal")
    ax.axis("off")
    pen = _Pen(ax)
    ph = f"{d.phases}-phase" if d.phases == 3 else "single-phase"

    # ---- supply
    sx = 1.0
    pen.circle(sx, 7.05, 0.2)
    pen.text(sx, 7.05, "~", ha="center", size=11)
    pen.line(sx, 6.85, sx, 6.7)
    pen.circle(sx, 6.52, 0.18)
    pen.circle(sx, 6.27, 0.18)
    pen.text(sx + 0.32, 7.05, "supply", size=8, weight="bold")
    pen.text(sx + 0.32, 6.42, f"service transformer\nS_sc at the bus {qty(pp['s_sc_va'], 'VA')}"
             + (" (assumed)" if pp["s_sc_assumed"] else ""), size=7.5)
    pen.line(sx, 6.09, sx, 5.75)

    # ---- main bus and loads
    bus_y = 5.75
    bus_r = bank_x0 + 0.25
    pen.line(0.25, bus_y, bus_r, bus_y, lw=3.2)
    pen.text(0.25, bus_y + 0.17, f"main bus {qty(d.v_v, 'V')}, {ph}, {qty(d.f_hz, 'Hz')}", size=7.5,
             weight="bold")
    loads = d.loads[:4]
    more = len(d.loads) - len(loads)
    for k, lp in enumerate(loads):
        x = 0.45 + k * 0.62
        pen.line(x, bus_y, x, bus_y - 0.45)
        ax.annotate("", xy=(x, bus_y - 0.62), xytext=(x, bus_y - 0.4),
                    arrowprops=dict(arrowstyle="-|>", color=INK, lw=1.2, shrinkA=0, shrinkB=0))
        name = lp.name if len(lp.name) <= 14 else lp.name[:13] + "…"
        pen.text(x, bus_y - 0.72, f"{name}", ha="left", va="top", size=6.5, color=MUTED)
        ax.texts[-1].set_rotation(-60)
        ax.texts[-1].set_rotation_mode("anchor")
    if more > 0:
        pen.text(0.45 + len(loads) * 0.62 - 0.2, bus_y - 0.5, f"+{more} more", size=6.5, color=MUTED)
    pen.text(0.25, 3.25, "loads (P, PF in section 3)", size=6.5, color=MUTED)

    # ---- bank feeder
    fx = bank_x0
    y = bus_y
    pen.line(fx, y, fx, y - 0.2, BANK)
    pen.fuse(fx, y - 0.4, color=BANK)
    pen.text(fx + 0.2, y - 0.4, f"feeder fuses {num(feeder.fuse_a)} A"
             + (" (in the disconnect)" if pp["options"].fused_disconnect else ""), size=7.5)
    pen.line(fx, y - 0.56, fx, y - 0.68, BANK)
    pen.switch(fx, y - 0.86, color=BANK)
    pen.text(fx + 0.2, y - 0.86, f"disconnect {num(feeder.disconnect_a)} A", size=7.5)
    pen.line(fx, y - 1.04, fx, y - 1.6, BANK, lw=1.6)
    c = feeder.conductor
    sets = f"{c.sets} × " if c.sets > 1 else ""
    pen.text(fx + 0.2, y - 1.3, f"feeder {sets}{c.size} {c.material.upper()} {c.insulation_temp_c} °C per phase, "
             f"{qty(c.ampacity_a, 'A')} ≥ {qty(feeder.conductor_min_a, 'A')}", size=7.5)
    # ---- bank bus
    bb_y = y - 1.75
    x_first = bank_x0 + 0.45
    xs = [x_first + step_w * (k + 0.5) for k in range(n)]
    pen.line(fx, y - 1.6, fx, bb_y, BANK, lw=1.6)
    pen.line(fx, bb_y, xs[-1] + 0.1, bb_y, BANK, lw=2.4)
    pen.text(fx - 0.12, bb_y - 0.02, f"bank {kvar(sum(s.q_rated_var for s in steps))}", ha="right", size=7.5,
             weight="bold", color=BANK)
    pen.text(fx - 0.12, bb_y - 0.22, f"I_r {qty(feeder.rated_current_a, 'A')}", ha="right", size=7, color=MUTED)

    show_fuse = automatic or n > 1
    for k, (st, sp, x) in enumerate(zip(steps, bp.steps, xs)):
        yy = bb_y
        pen.line(x, yy, x, yy - 0.2)
        yy -= 0.2
        labels = []
        if show_fuse:
            pen.fuse(x, yy - 0.18)
            yy -= 0.36
            labels.append(f"F {num(sp.fuse_a)} A")
        pen.line(x, yy, x, yy - 0.08)
        yy -= 0.08
        if automatic:
            pen.switch(x, yy - 0.18, contactor=True)
            yy -= 0.36
            labels.append(f"K ≥ {num(sp.disconnect_min_a, 3)} A")
        if st.detuning_pct:
            pen.line(x, yy, x, yy - 0.06)
            pen.coil(x, yy - 0.26)
            yy -= 0.46
            labels.append(f"L {qty(st.reactor_l_h, 'H', 3)} ({num(st.detuning_pct, 3)} %)")
        pen.line(x, yy, x, yy - 0.25)
        yy -= 0.25
        cap_y = yy - 0.04
        pen.capacitor(x, cap_y)
        # discharge resistor in parallel
        rx = x + 0.24
        pen.line(x, cap_y + 0.2, rx, cap_y + 0.2, lw=0.9)
        pen.resistor(rx, cap_y, h=0.3)
        pen.line(rx, cap_y - 0.15, rx, cap_y - 0.2, lw=0.9)
        pen.line(x, cap_y + 0.2, x, cap_y + 0.035)
        pen.line(x, cap_y - 0.035, x, cap_y - 0.2)
        pen.line(x, cap_y - 0.2, rx, cap_y - 0.2, lw=0.9)
        pen.text(x, cap_y - 0.32, f"{st.name}", ha="center", va="top", size=7.5, weight="bold")
        pen.text(x, cap_y - 0.52, f"{st.count} × {kvar(st.unit.q_var)}", ha="center", va="top", size=7)
        for j, t in enumerate(labels):
            pen.text(x, cap_y - 0.72 - 0.19 * j, t, ha="center", va="top", size=6.5, color=MUTED)
        if k == 0:
            rlabel = "R built in" if pp["built_in"] else "R"
            low = cap_y - 0.72 - 0.19 * len(labels)
            pen.text(x - 0.25, low - 0.05, f"{rlabel} ≤ {qty(min(x.max_resistance_ohm for x in pp['discharge']), 'ohm', 3)} "
                     "per element", ha="left", va="top", size=6.5, color=MUTED)
    # legend of symbols
    lg_y = 0.55
    pen.text(0.25, lg_y + 0.35, "Symbols:", size=6.5, color=MUTED)
    pen.fuse(0.35, lg_y, h=0.22)
    pen.text(0.5, lg_y, "fuse", size=6.5, color=MUTED)
    pen.switch(1.2, lg_y, h=0.28)
    pen.text(1.32, lg_y, "disconnect", size=6.5, color=MUTED)
    pen.switch(2.25, lg_y, h=0.28, contactor=True)
    pen.text(2.37, lg_y, "contactor", size=6.5, color=MUTED)
    pen.capacitor(3.2, lg_y)
    pen.text(3.42, lg_y, "capacitor", size=6.5, color=MUTED)
    pen.resistor(4.15, lg_y, h=0.24)
    pen.text(4.27, lg_y, "discharge resistor", size=6.5, color=MUTED)
    if any(s.detuning_pct for s in steps):
        pen.coil(5.45, lg_y, h=0.26, turns=3)
        pen.text(5.57, lg_y, "reactor", size=6.5, color=MUTED)
    pen.text(width - 0.05, 0.12, f"{pp['rule_name']}; one line shown for {d.phases} phase"
             f"{'s' if d.phases == 3 else ''}", ha="right", size=6.5, color=MUTED)
    return to_svg(fig)
