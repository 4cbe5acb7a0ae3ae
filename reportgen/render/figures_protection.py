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
    steps = list(zip(pp["steps"], bp.steps))
    automatic = pp["automatic"]
    feeder = bp.feeder
    plt = _pyplot()
    n = len(steps)
    # at most four step columns: with more, the first three, an ellipsis and the last
    shown = steps if n <= 4 else steps[:3] + [None] + steps[-1:]
    step_w = 1.05
    bank_x0 = 3.3
    width = max(bank_x0 + 0.5 + len(shown) * step_w + 0.2, 8.0)
    top = 7.4
    fig = plt.figure(figsize=(width * 0.8, top * 0.8))
    ax = fig.add_axes([0, 0, 1, 1])
    ax.set_xlim(0, width)
    ax.set_aspect("equal")
    ax.axis("off")
    pen = _Pen(ax)
    ph = "3-phase" if d.phases == 3 else "single-phase"

    # ---- supply
    sx = 0.9
    pen.circle(sx, 7.1, 0.2)
    pen.text(sx, 7.1, "~", ha="center", size=11)
    pen.line(sx, 6.9, sx, 6.78)
    pen.circle(sx, 6.6, 0.18)
    pen.circle(sx, 6.35, 0.18)
    pen.text(sx + 0.32, 7.1, "supply", size=8.5, weight="bold")
    pen.text(sx + 0.32, 6.47, f"service transformer\nS_sc at the bus {qty(pp['s_sc_va'], 'VA')}"
             + (" (assumed)" if pp["s_sc_assumed"] else ""), size=8)
    pen.line(sx, 6.17, sx, 5.8)

    # ---- main bus and loads
    bus_y = 5.8
    pen.line(0.25, bus_y, bank_x0 + 0.25, bus_y, lw=3.2)
    pen.text(sx + 0.15, bus_y + 0.17, f"main bus {qty(d.v_v, 'V')}, {ph}, {qty(d.f_hz, 'Hz')}", size=8,
             weight="bold")
    loads = d.loads[:4]
    for k, lp in enumerate(loads):
        x = 0.5 + k * 0.65
        pen.line(x, bus_y, x, bus_y - 0.4)
        ax.annotate("", xy=(x, bus_y - 0.6), xytext=(x, bus_y - 0.38),
                    arrowprops=dict(arrowstyle="-|>", color=INK, lw=1.2, shrinkA=0, shrinkB=0))
        pen.text(x, bus_y - 0.72, f"L{k + 1}", ha="center", va="top", size=7.5)
    y_list = bus_y - 2.5
    for k, lp in enumerate(loads):
        name = lp.name if len(lp.name) <= 26 else lp.name[:25] + "…"
        pen.text(0.25, y_list - 0.22 * k, f"L{k + 1} {name}{' × ' + str(lp.count) if lp.count > 1 else ''}",
                 size=7, color=MUTED)
    if len(d.loads) > 4:
        pen.text(0.25, y_list - 0.22 * 4, f"and {len(d.loads) - 4} more loads", size=7, color=MUTED)
    low = y_list - 0.22 * min(len(d.loads), 5)

    # ---- bank feeder
    fx = bank_x0
    y = bus_y
    fused = pp["options"].fused_disconnect
    pen.line(fx, y, fx, y - 0.2, BANK)
    pen.fuse(fx, y - 0.4, color=BANK)
    pen.text(fx + 0.2, y - 0.4, f"fuses {num(feeder.fuse_a)} A" + (" (in the disconnect)" if fused else ""), size=8)
    pen.line(fx, y - 0.56, fx, y - 0.68, BANK)
    pen.switch(fx, y - 0.86, color=BANK)
    pen.text(fx + 0.2, y - 0.86, f"disconnect {num(feeder.disconnect_a)} A", size=8)
    pen.line(fx, y - 1.04, fx, y - 1.6, BANK, lw=1.6)
    c = feeder.conductor
    sets = f"{c.sets} × " if c.sets > 1 else ""
    pen.text(fx + 0.2, y - 1.25, f"feeder {sets}{c.size} {c.material.capitalize()} {c.insulation_temp_c} °C per phase",
             size=8)
    pen.text(fx + 0.2, y - 1.45, f"ampacity {qty(c.ampacity_a, 'A')} ≥ {qty(feeder.conductor_min_a, 'A')}",
             size=7.5, color=MUTED)
    # ---- bank bus
    bb_y = y - 1.8
    xs = [bank_x0 + 0.5 + step_w * (k + 0.5) for k in range(len(shown))]
    pen.line(fx, y - 1.6, fx, bb_y, BANK, lw=1.6)
    pen.line(fx, bb_y, xs[-1] + 0.15, bb_y, BANK, lw=2.4)
    pen.text(fx - 0.12, bb_y + 0.02, f"bank {kvar(sum(st.q_rated_var for st, _ in steps))}", ha="right",
             size=8, weight="bold", color=BANK)
    pen.text(fx - 0.12, bb_y - 0.2, f"rated {qty(feeder.rated_current_a, 'A')}", ha="right", size=7.5, color=MUTED)

    show_fuse = automatic or n > 1
    kind = "step" if automatic else "group"
    for k, (item, x) in enumerate(zip(shown, xs)):
        if item is None:
            pen.text(x, bb_y - 1.2, "…", ha="center", size=14)
            pen.text(x, bb_y - 1.55, f"{n - 4} more", ha="center", size=7, color=MUTED)
            continue
        st, sp = item
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
            labels.append(f"L {qty(st.reactor_l_h, 'H', 3)}")
        pen.line(x, yy, x, yy - 0.25)
        yy -= 0.25
        cap_y = yy - 0.2
        pen.capacitor(x, cap_y)
        rx = x + 0.26
        pen.line(x, cap_y + 0.2, rx, cap_y + 0.2, lw=0.9)
        pen.resistor(rx, cap_y, h=0.3)
        pen.line(rx, cap_y - 0.15, rx, cap_y - 0.2, lw=0.9)
        pen.line(x, cap_y + 0.2, x, cap_y + 0.035)
        pen.line(x, cap_y - 0.035, x, cap_y - 0.2)
        pen.line(x, cap_y - 0.2, rx, cap_y - 0.2, lw=0.9)
        name = st.name if automatic or n > 1 else "fixed bank"
        pen.text(x, cap_y - 0.3, name, ha="center", va="top", size=8, weight="bold")
        pen.text(x, cap_y - 0.52, f"{st.count} × {kvar(st.unit.q_var)}", ha="center", va="top", size=7.5)
        for j, t in enumerate(labels):
            pen.text(x, cap_y - 0.74 - 0.2 * j, t, ha="center", va="top", size=7, color=MUTED)
        low = min(low, cap_y - 0.74 - 0.2 * len(labels))
    r_max = min(x.max_resistance_ohm for x in pp["discharge"])
    pen.text(bank_x0 + 0.5, low - 0.12, f"discharge: R ≤ {qty(r_max, 'ohm', 3)} per element"
             + (" (built into the units)" if pp["built_in"] else "") + (f"; {kind}s: " + ", ".join(
                 t for t, on in (("F fuse", show_fuse), ("K contactor (≥ rated)", automatic),
                                 ("L reactor", any(st.detuning_pct for st, _ in steps))) if on)
                 if (show_fuse or automatic or any(st.detuning_pct for st, _ in steps)) else ""),
             size=7, color=MUTED)
    low -= 0.45
    # legend of symbols
    lg_y = low - 0.25
    pen.fuse(0.35, lg_y, h=0.22)
    pen.text(0.5, lg_y, "fuse", size=7, color=MUTED)
    pen.switch(1.25, lg_y, h=0.28)
    pen.text(1.37, lg_y, "disconnect", size=7, color=MUTED)
    if automatic:
        pen.switch(2.45, lg_y, h=0.28, contactor=True)
        pen.text(2.57, lg_y, "contactor", size=7, color=MUTED)
    pen.capacitor(3.55, lg_y)
    pen.text(3.77, lg_y, "capacitor", size=7, color=MUTED)
    pen.resistor(4.75, lg_y, h=0.24)
    pen.text(4.87, lg_y, "discharge resistor", size=7, color=MUTED)
    if any(st.detuning_pct for st, _ in steps):
        pen.coil(6.4, lg_y, h=0.26, turns=3)
        pen.text(6.55, lg_y, "reactor", size=7, color=MUTED)
    pen.text(width - 0.05, lg_y - 0.38, f"{pp['rule_name']}; one line drawn for {d.phases} phase"
             f"{'s' if d.phases == 3 else ''}", ha="right", size=7, color=MUTED)
    bottom = lg_y - 0.55
    ax.set_ylim(bottom, top)
    fig.set_size_inches(width * 0.8, (top - bottom) * 0.8)
    return to_svg(fig)
