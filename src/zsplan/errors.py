"""Errors raised for unusable input.

Every user mistake ends in a :class:`PlanError` carrying one or more
:class:`Problem` records.  Each problem names the file, the place (a key path
such as ``circuits[2].cable.cpc`` and/or a line number) and what was expected,
so the command line can print a clean message and exit with code 2 instead of
a traceback.
"""
from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Problem:
    """One thing wrong with an input file."""

    file: str
    message: str
    path: str = ""          # key path, e.g. "circuits[2].cable.cpc"
    line: int | None = None  # 1-based line number, when known

    def __str__(self) -> str:
        where = self.file or "<input>"
        if self.line is not None:
            where += f":{self.line}"
        if self.path:
            where += f": {self.path}"
        return f"{where}: {self.message}"


class ZsplanError(Exception):
    """Base class of every error zsplan raises on purpose."""


class PlanError(ZsplanError):
    """Unusable input: one or more problems, each with file and place."""

    def __init__(self, problems: list[Problem] | Problem | str):
        if isinstance(problems, str):
            problems = [Problem(file="", message=problems)]
        elif isinstance(problems, Problem):
            problems = [problems]
        self.problems: list[Problem] = list(problems)
        super().__init__(self.__str__())

    def __str__(self) -> str:
        if len(self.problems) == 1:
            return str(self.problems[0])
        lines = [f"{len(self.problems)} problems found:"]
        lines += [f"  - {p}" for p in self.problems]
        return "\n".join(lines)


class Collector:
    """Gathers problems so that a loader reports all of them at once."""

    def __init__(self, file: str):
        self.file = file
        self.problems: list[Problem] = []

    def add(self, message: str, path: str = "", line: int | None = None) -> None:
        self.problems.append(Problem(self.file, message, path, line))

    def raise_if_any(self) -> None:
        if self.problems:
            raise PlanError(self.problems)

    def __bool__(self) -> bool:  # pragma: no cover - trivial
        return bool(self.problems)
