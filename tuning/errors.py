"""The project's exceptions: one base, user errors (exit 2) and build failures (exit 1)."""

from __future__ import annotations

from dataclasses import dataclass


class CarbfleetError(Exception):
    """Base of every error carbfleet raises on purpose."""

    exit_code = 1


class UserError(CarbfleetError):
    """Bad input from the user: a file, a value or a name. One line, exit code 2."""

    exit_code = 2


@dataclass(frozen=True)
class Problem:
    """One problem found in an input file.

    ``field`` is the dotted path of the field (``bikes[3].model``); ``line`` is 1-based, or
    ``None`` where no line applies (a missing file).
    """

    file: str
    line: int | None
    field: str
    message: str

    def __str__(self) -> str:
        where = self.file if self.line is None else f"{self.file}:{self.line}"
        return f"{where}: {self.field}: {self.message}" if self.field else f"{where}: {self.message}"


class ConfigError(UserError):
    """Every problem found in one or more input files, reported together."""

    def __init__(self, problems: list[Problem]):
        self.problems = list(problems)
        super().__init__("\n".join(str(p) for p in self.problems))


class BuildError(CarbfleetError):
    """A build step failed (exit 1); the message names the bike or step."""

    exit_code = 1


class WrongFileError(UserError):
    """A file of the other kind where one kind was expected (the fleet and event files swapped).

    Not a :class:`ConfigError`: once a file is the wrong kind, nothing else about the files is
    worth saying, so ``carbfleet check`` stops at this one line instead of also reading the
    other file in the wrong role.
    """

    def __init__(self, problem: Problem):
        self.problem = problem
        super().__init__(str(problem))
