"""Calculation sheet: every formula shown in a report is the one evaluated here.

A :class:`Sheet` collects :class:`Step` records. Each step holds a formula as
a small arithmetic expression (a subset of Python syntax), the named values
substituted into it (in SI, with their unit), and the result obtained by
evaluating that very expression. Templates render the same expression text,
so the report cannot show a formula other than the one that produced the
number.

Allowed syntax: numbers, names, ``+ - * / **``, unary minus, parentheses,
and calls of the functions in :data:`FUNCTIONS`. ``pi`` and ``j`` (the
imaginary unit) are predefined names.

>>> s = Sheet()
>>> s.calc("S", "V * I", "VA", "Apparent power", V=(480.0, "V"), I=(10.0, "A"))
4800.0
>>> s.steps[0].expr
'V * I'
"""

from __future__ import annotations

import ast
import cmath
import math
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Any, Callable, Union

Number = Union[float, complex]


def _fn(real: Callable, cplx: Callable) -> Callable:
    def f(x):
        if isinstance(x, complex):
            return cplx(x)
        return real(x)

    return f


def _sqrt(x):
    if isinstance(x, complex) or x < 0:
        return cmath.sqrt(x)
    return math.sqrt(x)


FUNCTIONS: dict[str, Callable[..., Number]] = {
    "sqrt": _sqrt,
    "cos": _fn(math.cos, cmath.cos),
    "sin": _fn(math.sin, cmath.sin),
    "tan": _fn(math.tan, cmath.tan),
    "acos": math.acos,
    "asin": math.asin,
    "atan": math.atan,
    "atan2": math.atan2,
    "exp": _fn(math.exp, cmath.exp),
    "ln": _fn(math.log, cmath.log),
    "log10": math.log10,
    "abs": abs,
    "arg": lambda z: cmath.phase(complex(z)),
    "re": lambda z: complex(z).real,
    "im": lambda z: complex(z).imag,
    "conj": lambda z: complex(z).conjugate(),
    "deg": math.degrees,
    "rad": math.radians,
    "min": min,
    "max": max,
    "polar": lambda mag, ang: cmath.rect(mag, ang),
}

CONSTANTS: dict[str, Number] = {"pi": math.pi, "j": 1j}

_BINOPS = {
    ast.Add: lambda a, b: a + b,
    ast.Sub: lambda a, b: a - b,
    ast.Mult: lambda a, b: a * b,
    ast.Div: lambda a, b: a / b,
    ast.Pow: lambda a, b: a**b,
}


class FormulaError(ValueError):
    """A formula uses syntax or names outside the allowed subset."""


@lru_cache(maxsize=1024)
def parse(expr: str) -> ast.Expression:
    """Parse and vet a formula; cached, since formulas are code constants."""
    try:
        tree = ast.parse(expr, mode="eval")
    except SyntaxError as exc:  # pragma: no cover - programming error
        raise FormulaError(f"bad formula {expr!r}: {exc.msg}") from None
    for node in ast.walk(tree):
        if isinstance(node, (ast.Expression, ast.Load, ast.operator, ast.unaryop)):
            continue
        if isinstance(node, ast.BinOp) and type(node.op) in _BINOPS:
            continue
        if isinstance(node, ast.UnaryOp) and isinstance(node.op, (ast.USub, ast.UAdd)):
            continue
        if isinstance(node, ast.Constant) and isinstance(node.value, (int, float, complex)):
            continue
        if isinstance(node, ast.Name):
            continue
        if (
            isinstance(node, ast.Call)
            and isinstance(node.func, ast.Name)
            and node.func.id in FUNCTIONS
            and not node.keywords
        ):
            continue
        raise FormulaError(f"formula {expr!r} uses unsupported syntax {type(node).__name__}")
    return tree


def evaluate(expr: str, values: dict[str, Number]) -> Number:
    """Evaluate ``expr`` with ``values`` bound to its names."""
    tree = parse(expr)

    def ev(node: ast.AST) -> Number:
        if isinstance(node, ast.Expression):
            return ev(node.body)
        if isinstance(node, ast.Constant):
            return node.value
        if isinstance(node, ast.Name):
            if node.id in values:
                return values[node.id]
            if node.id in CONSTANTS:
                return CONSTANTS[node.id]
            raise FormulaError(f"formula {expr!r}: no value for {node.id!r}")
        if isinstance(node, ast.BinOp):
            return _BINOPS[type(node.op)](ev(node.left), ev(node.right))
        if isinstance(node, ast.UnaryOp):
            v = ev(node.operand)
            return -v if isinstance(node.op, ast.USub) else v
        if isinstance(node, ast.Call):
            return FUNCTIONS[node.func.id](*[ev(a) for a in node.args])
        raise FormulaError(f"unsupported node {type(node).__name__}")  # pragma: no cover

    result = ev(tree)
    if isinstance(result, complex) and result.imag == 0.0:
        return result
    return result


def names(expr: str) -> list[str]:
    """The value names a formula uses, in order of first appearance."""
    seen: list[str] = []
    for node in ast.walk(parse(expr)):
        if isinstance(node, ast.Name) and node.id not in FUNCTIONS and node.id not in CONSTANTS:
            if node.id not in seen:
                seen.append(node.id)
    return seen


def _range_error(what: str, exc: Exception | None):
    from .errors import CalcError

    detail = "a division by zero" if isinstance(exc, ZeroDivisionError) else "a result out of range"
    return CalcError(f"{what[0].lower() + what[1:]}: the inputs lead to {detail}; check the values for "
                     "implausible magnitudes")


@dataclass(frozen=True)
class Value:
    """A value substituted into a formula: SI magnitude and its unit symbol."""

    value: Number
    unit: str = ""


@dataclass(frozen=True)
class Step:
    """One line of a calculation sheet."""

    symbol: str
    expr: str
    values: dict[str, Value]
    result: Number
    unit: str
    title: str = ""
    note: str = ""

    def as_dict(self) -> dict[str, Any]:
        def enc(x: Number):
            if isinstance(x, complex):
                return {"re": x.real, "im": x.imag}
            return x

        return {
            "symbol": self.symbol,
            "expr": self.expr,
            "values": {k: {"value": enc(v.value), "unit": v.unit} for k, v in self.values.items()},
            "result": enc(self.result),
            "unit": self.unit,
            "title": self.title,
            "note": self.note,
        }


@dataclass
class Note:
    """A line of text on the sheet (a decision, a rule applied, a table look-up)."""

    text: str
    title: str = ""


@dataclass
class Sheet:
    """An ordered list of calculation steps and notes for one report section."""

    title: str = ""
    steps: list[Step | Note] = field(default_factory=list)

    def calc(
        self,
        symbol: str,
        expr: str,
        unit: str,
        title: str = "",
        note: str = "",
        **values: Number | tuple[Number, str] | Value,
    ) -> Number:
        """Evaluate ``expr`` with ``values``, record the step, return the result.

        Each value is a number, a ``(number, unit)`` pair or a :class:`Value`.
        """
        bound: dict[str, Value] = {}
        for k, v in values.items():
            if isinstance(v, Value):
                bound[k] = v
            elif isinstance(v, tuple):
                bound[k] = Value(v[0], v[1])
            else:
                bound[k] = Value(v, "")
        missing = [n for n in names(expr) if n not in bound]
        if missing:
            raise FormulaError(f"formula {expr!r}: no value for {', '.join(missing)}")
        try:
            result = evaluate(expr, {k: b.value for k, b in bound.items()})
        except (OverflowError, ZeroDivisionError, ValueError) as exc:
            raise _range_error(title or symbol, exc) from None
        if isinstance(result, complex):
            finite = math.isfinite(result.real) and math.isfinite(result.imag)
        else:
            finite = math.isfinite(result)
        if not finite:
            raise _range_error(title or symbol, None)
        self.steps.append(Step(symbol, expr, bound, result, unit, title, note))
        return result

    def note(self, text: str, title: str = "") -> None:
        self.steps.append(Note(text, title))

    def extend(self, other: "Sheet") -> None:
        self.steps.extend(other.steps)
