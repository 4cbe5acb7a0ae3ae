"""Quantities with units, as written in project files, parsed to SI floats.

pint does the parsing and the dimensional analysis. Real, reactive and
apparent power share one dimension, so each power kind also checks the unit's
family: ``40 kvar`` is refused where real power is asked for.

Only the loader calls this module; the numeric core sees plain SI floats.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from functools import lru_cache

_DEFINITIONS = (
    "volt_ampere_reactive = volt * ampere = var",
    "var_hour = volt_ampere_reactive * hour = varh",
)


@lru_cache(maxsize=1)
def registry():
    import pint

    ureg = pint.UnitRegistry(cache_folder=":auto:", autoconvert_offset_to_baseunit=True)
    for line in _DEFINITIONS:
        # pint defines some of these in some versions; add ours where absent.
        name = line.split("=")[0].strip()
        if name not in ureg:
            ureg.define(line)
    # Spellings found on nameplates and in meter exports.
    for alias in ("VAR", "VAr", "Var"):
        if alias not in ureg:
            ureg.define(f"@alias var = {alias}")
    for alias in ("VARh", "VArh"):
        if alias not in ureg:
            ureg.define(f"@alias var_hour = {alias}")
    return ureg


@dataclass(frozen=True)
class Kind:
    """A kind of quantity a field takes: SI unit, an example, and its unit family."""

    name: str
    si_unit: str
    example: str
    family: tuple[str, ...] = ()  # pint unit-name fragments allowed (power kinds)
    exclude: tuple[str, ...] = ()


KINDS: dict[str, Kind] = {
    k.name: k
    for k in [
        Kind("voltage", "volt", "480 V"),
        Kind("current", "ampere", "1020 A"),
        Kind("frequency", "hertz", "60 Hz"),
        Kind("resistance", "ohm", "10 ohm"),
        Kind("inductance", "henry", "250 mH"),
        Kind("capacitance", "farad", "2 uF"),
        Kind("time", "second", "180 us"),
        Kind("length", "meter", "30 m"),
        Kind("angle", "radian", "32 deg"),
        Kind("real_power", "watt", "610 kW", family=("watt", "horsepower")),
        Kind("reactive_power", "var", "50 kvar", family=("volt_ampere_reactive",)),
        Kind("apparent_power", "volt_ampere", "1500 kVA", family=("volt_ampere",),
             exclude=("volt_ampere_reactive",)),
        Kind("energy", "watt_hour", "1200 kWh", family=("watt_hour", "joule")),
        Kind("reactive_energy", "var_hour", "800 kvarh", family=("var_hour",)),
        Kind("temperature", "degree_Celsius", "30 degC"),
    ]
}


class UnitProblem(ValueError):
    """A quantity string that cannot be read as the kind asked for."""


_NUMBER = re.compile(r"^\s*[-+]?(\d+(\.\d*)?|\.\d+)([eE][-+]?\d+)?\s*$")


def parse_quantity(raw: object, kind: str) -> float:
    """Parse ``raw`` (e.g. ``"480 V"``) as a quantity of ``kind``; return SI.

    Raises :class:`UnitProblem` with a message meant for the user.
    """
    k = KINDS[kind]
    if isinstance(raw, bool) or raw is None:
        raise UnitProblem(f"expected a {kind.replace('_', ' ')} with a unit, e.g. '{k.example}'")
    if isinstance(raw, (int, float)) or (isinstance(raw, str) and _NUMBER.match(raw)):
        raise UnitProblem(
            f"'{raw}' has no unit; write the {kind.replace('_', ' ')} with its unit, e.g. '{k.example}'"
        )
    if not isinstance(raw, str):
        raise UnitProblem(f"expected a {kind.replace('_', ' ')} such as '{k.example}'")
    import pint

    ureg = registry()
    text = raw.strip().replace("Ω", "ohm").replace("°C", "degC")
    try:
        q = ureg.Quantity(text)
    except (pint.errors.UndefinedUnitError, pint.errors.DefinitionSyntaxError) as exc:
        raise UnitProblem(f"'{raw}': unknown unit ({_short(exc)}); e.g. '{k.example}'") from None
    except Exception:  # pint raises several parser errors for garbage
        raise UnitProblem(f"'{raw}' is not a quantity such as '{k.example}'") from None
    target = ureg.Unit(k.si_unit)
    if not isinstance(q, ureg.Quantity) or q.dimensionality != target.dimensionality:
        got = "no unit" if q.dimensionless else f"'{q.units:~}'"
        raise UnitProblem(
            f"'{raw}' is not a {kind.replace('_', ' ')} ({got} does not convert to {target:~}); "
            f"e.g. '{k.example}'"
        )
    unit_name = str(q.units)
    if k.family and not any(f in unit_name for f in k.family):
        raise UnitProblem(_family_message(raw, kind, k))
    if any(f in unit_name for f in k.exclude):
        raise UnitProblem(_family_message(raw, kind, k))
    value = float(q.to(target).magnitude)
    if not math.isfinite(value):
        raise UnitProblem(f"'{raw}' is not a finite number")
    return value


def _family_message(raw: object, kind: str, k: Kind) -> str:
    hints = {
        "real_power": "real power is in W, kW or MW (or hp for motor output)",
        "reactive_power": "reactive power is in var, kvar or Mvar",
        "apparent_power": "apparent power is in VA, kVA or MVA",
        "energy": "energy is in Wh, kWh or MWh",
        "reactive_energy": "reactive energy is in varh, kvarh or Mvarh",
    }
    return f"'{raw}' is the wrong kind of power: {hints.get(kind, kind)}, e.g. '{k.example}'"


def _short(exc: Exception) -> str:
    text = str(exc).split("\n")[0]
    return text.replace(" is not defined in the unit registry", " is not a known unit")


def parse_fraction(raw: object, what: str = "value") -> float:
    """A ratio written as ``0.84`` or ``84 %``; returns 0.84."""
    if isinstance(raw, bool) or raw is None:
        raise UnitProblem(f"expected a {what} such as 0.84 or '84 %'")
    if isinstance(raw, (int, float)):
        v = float(raw)
    elif isinstance(raw, str):
        s = raw.strip()
        try:
            if s.endswith("%"):
                v = float(s[:-1].strip()) / 100.0
            else:
                v = float(s)
        except ValueError:
            raise UnitProblem(f"'{raw}' is not a {what} such as 0.84 or '84 %'") from None
    else:
        raise UnitProblem(f"expected a {what} such as 0.84 or '84 %'")
    if not math.isfinite(v):
        raise UnitProblem(f"'{raw}' is not a finite number")
    return v
