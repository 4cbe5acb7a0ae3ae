"""The one exception tree of reportgen.

Every error a user can cause derives from :class:`ReportgenError`, carries its
exit code and knows how to show itself. Library code raises; only the CLI
catches and prints (so reportgen stays usable as a library).
"""

from __future__ import annotations

from dataclasses import dataclass


class ReportgenError(Exception):
    """Base of every error reportgen reports to a user."""

    exit_code = 1

    def show(self) -> str:
        return str(self)


@dataclass(frozen=True, order=True)
class Problem:
    """One problem in an input file, located at 1-based line and column."""

    file: str
    line: int
    col: int
    message: str

    def __str__(self) -> str:
        return f"{_one_line(self.file)}:{self.line}:{self.col}: {_one_line(self.message)}"


def _one_line(text: str) -> str:
    """Control characters from a hostile file shown escaped, so a problem stays one line."""
    if text.isprintable():
        return text
    return "".join(c if c.isprintable() else repr(c)[1:-1] for c in text)


class InputError(ReportgenError):
    """One or more problems in a project's input files (exit code 2)."""

    exit_code = 2

    def __init__(self, problems: list[Problem]):
        self.problems = sorted(set(problems))
        super().__init__("\n".join(str(p) for p in self.problems))

    def show(self) -> str:
        return "\n".join(str(p) for p in self.problems)


class BuildError(ReportgenError):
    """A build step failed for a reason other than bad input."""

    exit_code = 1
