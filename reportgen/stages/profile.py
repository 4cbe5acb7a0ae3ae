"""Feature stage: profile (see reportgen/stages/__init__.py for the contract)."""

from __future__ import annotations


def run(d) -> None:
    return None
