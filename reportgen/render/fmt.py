"""Display formatting of SI values: engineering prefixes, significant figures."""

from __future__ import annotations

import math

PREFIXES = [(1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "µ"), (1e-9, "n"), (1e-12, "p")]
#: units that take prefixes, and the smallest/largest prefix used for each (trade usage)
PREFIXED = {
    "W": ("", "M"), "var": ("", "M"), "VA": ("", "M"), "V": ("m", "k"), "A": ("m", ""),
    "ohm": ("m", "M"), "H": ("µ", ""), "F": ("p", "µ"), "s": ("µ", ""), "Hz": ("", "k"),
    "Wh": ("k", "M"), "varh": ("k", "M"), "rad/s": ("", "k"),
}
SYMBOL = {"ohm": "Ω", "var": "var", "pu": "pu", "rad/s": "rad/s"}
DISPLAY_UNIT = {("k", "var"): "kvar", ("M", "var"): "Mvar"}


def num(x: float, sig: int = 4) -> str:
    """A number with ``sig`` significant figures, no exponent for ordinary sizes."""
    if x is None:
        return "—"
    if isinstance(x, complex):
        return cplx(x, "", sig)
    if x == 0 or not math.isfinite(x):
        return "0" if x == 0 else str(x)
    mag = math.floor(math.log10(abs(x)))
    if mag >= 9 or mag < -6:
        return f"{x:.{sig - 1}e}"
    decimals = max(sig - 1 - mag, 0)
    s = f"{x:,.{decimals}f}"
    if "." in s:
        s = s.rstrip("0").rstrip(".")
    return s.replace(",", "\u2009")  # thin space as thousands separator


def _prefix(x: float, unit: str) -> tuple[float, str]:
    lo, hi = PREFIXED[unit]
    names = [p for _, p in PREFIXES]
    allowed = PREFIXES[names.index(hi): names.index(lo) + 1]
    a = abs(x)
    for f, p in allowed:
        if a >= f * 0.9995:
            return f, p
    return allowed[-1]


def qty(x, unit: str, sig: int = 4) -> str:
    """``610000, "W"`` → ``610 kW``; ``2.2e-6, "F"`` → ``2.2 µF``."""
    if x is None:
        return "—"
    if isinstance(x, complex):
        return cplx(x, unit, sig)
    if unit == "":
        return num(x, sig)
    if unit == "rad":
        return f"{num(math.degrees(x), sig)}°"
    if unit == "%":
        return f"{num(x, sig)} %"
    if unit in PREFIXED and x != 0:
        f, p = _prefix(x, unit)
        shown = DISPLAY_UNIT.get((p, unit), p + SYMBOL.get(unit, unit))
        return f"{num(x / f, sig)}\u00a0{shown}"
    return f"{num(x, sig)}\u00a0{SYMBOL.get(unit, unit)}"


def cplx(z: complex, unit: str, sig: int = 4) -> str:
    """Rectangular and polar form, e.g. ``48.1 − j12.6 Ω (49.7 Ω ∠ −14.7°)``."""
    mag = abs(z)
    if unit in PREFIXED and mag != 0:
        f, p = _prefix(mag, unit)
        u = DISPLAY_UNIT.get((p, unit), p + SYMBOL.get(unit, unit))
    else:
        f, u = 1.0, SYMBOL.get(unit, unit)
    re, im = z.real / f, z.imag / f
    sign = "+" if im >= 0 else "−"
    ang = math.degrees(math.atan2(z.imag, z.real))
    us = f"\u00a0{u}" if u else ""
    return f"({num(re, sig)} {sign} j{num(abs(im), sig)}){us} = {num(mag / f, sig)}{us}\u2009∠\u2009{num(ang, sig)}°"


def kvar(q_var: float, sig: int = 4) -> str:
    """Reactive power in the trade's unit: kvar, or var / Mvar where those read better."""
    return qty(q_var, "var", sig)


def pf(x: float, leading: bool | None = None) -> str:
    s = f"{x:.3f}"
    if leading is True:
        return s + " leading"
    if leading is False and x < 0.99995:
        return s + " lagging"
    return s
