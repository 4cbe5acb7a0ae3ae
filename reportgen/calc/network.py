"""Impedance trees: series and parallel combinations of R, L and C.

A tree is built from :class:`R`, :class:`L`, :class:`C`, :class:`Series` and
:class:`Parallel`; :func:`impedance` evaluates it at an angular frequency,
vectorised over an array of frequencies when one is given.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Union

import numpy as np

from .errors import CalcError


@dataclass(frozen=True)
class R:
    r_ohm: float


@dataclass(frozen=True)
class L:
    l_h: float


@dataclass(frozen=True)
class C:
    c_f: float


@dataclass(frozen=True)
class Series:
    parts: tuple["Node", ...]


@dataclass(frozen=True)
class Parallel:
    parts: tuple["Node", ...]


Node = Union[R, L, C, Series, Parallel]


def impedance(node: Node, omega):
    """Complex impedance of ``node`` at angular frequency ``omega`` (rad/s).

    ``omega`` may be a float or a NumPy array; the result has its shape.
    Raises CalcError for a short circuit in parallel (a branch of zero
    impedance makes the parallel group zero) only when the whole network
    reduces to zero, since a load of zero impedance draws infinite current.
    """
    z = _z(node, np.asarray(omega, dtype=float))
    return z if np.ndim(z) else complex(z)


def _z(node: Node, w: np.ndarray):
    if isinstance(node, R):
        return np.full_like(w, node.r_ohm, dtype=complex)
    if isinstance(node, L):
        return 1j * w * node.l_h
    if isinstance(node, C):
        with np.errstate(divide="ignore"):
            return -1j / (w * node.c_f)
    if isinstance(node, Series):
        total = np.zeros_like(w, dtype=complex)
        for p in node.parts:
            total = total + _z(p, w)
        return total
    if isinstance(node, Parallel):
        y = np.zeros_like(w, dtype=complex)
        for p in node.parts:
            zp = _z(p, w)
            with np.errstate(divide="ignore", invalid="ignore"):
                y = y + np.where(zp == 0, np.inf, 1.0 / np.where(zp == 0, 1.0, zp))
        with np.errstate(divide="ignore"):
            return np.where(np.isinf(y), 0.0, 1.0 / np.where(y == 0, np.inf, y))
    raise TypeError(f"not a network node: {node!r}")  # pragma: no cover


def describe(node: Node) -> str:
    """A one-line text form, e.g. ``47 Ω + (180 Ω + 250 mH) ∥ 2 µF`` in SI."""
    if isinstance(node, R):
        return f"R={node.r_ohm:g} ohm"
    if isinstance(node, L):
        return f"L={node.l_h:g} H"
    if isinstance(node, C):
        return f"C={node.c_f:g} F"
    sep = " + " if isinstance(node, Series) else " || "
    return "(" + sep.join(describe(p) for p in node.parts) + ")"


def check_load_impedance(z: complex) -> None:
    if not np.isfinite(z.real) or not np.isfinite(z.imag):
        raise CalcError("the network is an open circuit at the system frequency (infinite impedance)")
    if abs(z) == 0:
        raise CalcError("the network is a short circuit at the system frequency (zero impedance)")
