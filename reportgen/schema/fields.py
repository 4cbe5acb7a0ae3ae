"""Field types shared by every part of the project-file schema.

``Q(kind, description, gt=..)`` is a quantity written with its unit and stored
as an SI float; ``F(what, description)`` a ratio written as 0.84 or 84 %.
Validation messages are written for the person editing project.yaml.
"""

from __future__ import annotations

from functools import partial
from typing import Annotated, Any

from pydantic import BaseModel, BeforeValidator, ConfigDict, WithJsonSchema
from pydantic_core import PydanticCustomError

from .. import units

#: every load kind key (meter, motor, ...); feature modules append theirs
LOAD_KINDS: list[str] = []




def _quantity(kind: str, lo: float | None, lo_open: bool, hi: float | None, raw: Any) -> float:
    try:
        v = units.parse_quantity(raw, kind)
    except units.UnitProblem as exc:
        raise PydanticCustomError("quantity", str(exc)) from None
    _range(v, raw, lo, lo_open, hi)
    return v


def _fraction(what: str, lo: float | None, lo_open: bool, hi: float | None, raw: Any) -> float:
    try:
        v = units.parse_fraction(raw, what)
    except units.UnitProblem as exc:
        raise PydanticCustomError("fraction", str(exc)) from None
    _range(v, raw, lo, lo_open, hi, percent=True)
    return v


def _range(v, raw, lo, lo_open, hi, percent=False):
    def show(x):
        return f"{x:g} ({x * 100:g} %)" if percent else f"{x:g}"

    if lo is not None and (v <= lo if lo_open else v < lo):
        rel = "greater than" if lo_open else "at least"
        raise PydanticCustomError("range", f"'{raw}' is out of range: must be {rel} {show(lo)}")
    if hi is not None and v > hi:
        raise PydanticCustomError("range", f"'{raw}' is out of range: must be at most {show(hi)}")
    # absurd magnitudes (a 10^30 V supply) are refused whatever the field
    if abs(v) > 1e15:
        raise PydanticCustomError("range", f"'{raw}' is an implausible magnitude")


def Q(kind: str, description: str, *, gt: float | None = None, ge: float | None = None,
      le: float | None = None):
    """A quantity field: a string with a unit, stored as an SI float."""
    lo, lo_open = (gt, True) if gt is not None else (ge, False)
    example = units.KINDS[kind].example
    return Annotated[
        float,
        BeforeValidator(partial(_quantity, kind, lo, lo_open, le)),
        WithJsonSchema({"type": "string", "description": description, "examples": [example],
                        "x-kind": kind}),
    ]


def F(what: str, description: str, *, gt: float | None = 0.0, le: float | None = 1.0):
    """A ratio field: 0.84 or '84 %', stored as a fraction."""
    return Annotated[
        float,
        BeforeValidator(partial(_fraction, what, gt, True, le)),
        WithJsonSchema({"anyOf": [{"type": "number"}, {"type": "string", "pattern": r"^\s*[0-9.]+\s*%\s*$"}],
                        "description": description}),
    ]


def _text(raw: Any) -> Any:
    if isinstance(raw, (int, float)) and not isinstance(raw, bool):
        return str(raw)
    return raw


Text = Annotated[str, BeforeValidator(_text)]


class Model(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)


def _exactly_one(obj: Any, keys: tuple[str, ...], where: str) -> None:
    given = [k for k in keys if getattr(obj, k) is not None]
    if len(given) != 1:
        if given:
            raise PydanticCustomError(
                "exactly_one", f"{where}: give exactly one of {', '.join(keys)} (got {', '.join(given)})"
            )
        raise PydanticCustomError("exactly_one", f"{where}: give one of {', '.join(keys)}")


