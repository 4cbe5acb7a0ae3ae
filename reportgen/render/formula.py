"""Typeset a calculation-sheet formula, and the same formula with its values.

Both come from the expression string that :mod:`reportgen.calc.sheet`
evaluated, so the report shows exactly what ran.
"""

from __future__ import annotations

import ast
from html import escape

from markupsafe import Markup

from ..calc.sheet import Note, Step, parse
from .fmt import qty

GREEK = {"phi": "φ", "omega": "ω", "eta": "η", "pi": "π", "theta": "θ", "delta": "δ", "tau": "τ",
         "dt": "Δt", "dP": "ΔP", "dV": "ΔV", "mu": "µ"}
FUNC = {"acos": "cos⁻¹", "asin": "sin⁻¹", "atan": "tan⁻¹", "ln": "ln", "log10": "log₁₀", "exp": "exp",
        "cos": "cos", "sin": "sin", "tan": "tan", "deg": "deg", "rad": "rad", "min": "min", "max": "max",
        "re": "Re", "im": "Im", "arg": "arg", "atan2": "atan2"}
PREC = {ast.Add: 1, ast.Sub: 1, ast.Mult: 2, ast.Div: 2, ast.Pow: 4}
SUPERSCRIPT = {"2": "²", "3": "³"}


def symbol(name: str) -> str:
    """``PF_t`` → ``PF<sub>t</sub>``; ``phi`` → ``φ``; ``dP_loss`` → ``ΔP<sub>loss</sub>``."""
    base, _, sub = name.partition("_")
    base = GREEK.get(base, base)
    if sub:
        sub = "".join(GREEK.get(p, p) for p in sub.split("_"))
        return f"<i>{escape(base)}</i><sub>{escape(sub)}</sub>"
    return f"<i>{escape(base)}</i>" if len(base) <= 2 or base in GREEK.values() else escape(base)


def _render(node: ast.AST, leaf, parent_prec: int = 0) -> str:
    if isinstance(node, ast.Expression):
        return _render(node.body, leaf, parent_prec)
    if isinstance(node, ast.Constant):
        v = node.value
        return escape(f"{v:g}" if isinstance(v, float) else str(v))
    if isinstance(node, ast.Name):
        if node.id == "pi":
            return "π"
        if node.id == "j":
            return "j"
        return leaf(node.id)
    if isinstance(node, ast.UnaryOp):
        return "−" + _render(node.operand, leaf, 3)
    if isinstance(node, ast.BinOp):
        prec = PREC[type(node.op)]
        if isinstance(node.op, ast.Pow):
            left = _render(node.left, leaf, 5)
            if isinstance(node.right, ast.Constant) and str(node.right.value) in SUPERSCRIPT:
                s = left + SUPERSCRIPT[str(node.right.value)]
            else:
                s = f"{left}<sup>{_render(node.right, leaf, 0)}</sup>"
        else:
            op = {ast.Add: " + ", ast.Sub: " − ", ast.Mult: "\u2009·\u2009", ast.Div: "\u2009/\u2009"}[type(node.op)]
            right_prec = prec + 1 if isinstance(node.op, (ast.Sub, ast.Div)) else prec
            s = _render(node.left, leaf, prec) + op + _render(node.right, leaf, right_prec)
        return f"({s})" if prec < parent_prec else s
    if isinstance(node, ast.Call):
        f = node.func.id
        args = node.args
        if f == "sqrt":
            inner = args[0]
            body = _render(inner, leaf, 0)
            simple = isinstance(inner, (ast.Constant, ast.Name))
            return f"√{body}" if simple else f"√({body})"
        if f == "abs":
            return f"|{_render(args[0], leaf, 0)}|"
        if f == "conj":
            return f"{_render(args[0], leaf, 5)}*"
        if f == "polar":
            return f"{_render(args[0], leaf, 3)}\u2009∠\u2009{_render(args[1], leaf, 3)}"
        inner = ", ".join(_render(a, leaf, 0) for a in args)
        return f"{FUNC.get(f, f)}({inner})"
    raise TypeError(type(node).__name__)  # pragma: no cover


def formula_html(step: Step) -> Markup:
    """``S = √3 · V · I``."""
    body = _render(parse(step.expr), symbol)
    return Markup(f"{symbol(step.symbol)} = {body}")


def substituted_html(step: Step) -> Markup:
    """``= √3 · 480 V · 1 020 A``: the same formula with the values it used."""

    def leaf(name: str) -> str:
        v = step.values[name]
        return f'<span class="val">{escape(qty(v.value, v.unit))}</span>'

    return Markup(_render(parse(step.expr), leaf))


def result_html(step: Step) -> Markup:
    return Markup(escape(qty(step.result, step.unit)))


def is_note(item) -> bool:
    return isinstance(item, Note)
