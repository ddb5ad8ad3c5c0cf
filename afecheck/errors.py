"""The typed errors afecheck raises: bad input (every problem with its place) and failed analysis."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Problem:
    """One thing wrong with an input file: where it is, what is wrong, what was expected."""

    file: str
    line: int | None
    column: int | None
    path: str
    message: str

    def __str__(self) -> str:
        where = self.file
        if self.line is not None:
            where += f":{self.line}"
            if self.column is not None:
                where += f":{self.column}"
        return f"{where}: {self.path}: {self.message}" if self.path else f"{where}: {self.message}"


class InputError(Exception):
    """Bad input: carries every problem found, so the user fixes them all in one round."""

    def __init__(self, problems: list[Problem] | tuple[Problem, ...]):
        self.problems = tuple(problems)
        super().__init__("\n".join(str(p) for p in self.problems))


class ConfigError(InputError):
    """Bad project configuration, waiver or baseline file."""


class AnalysisError(Exception):
    """An analysis that cannot be done (singular circuit, missing data); rules turn it into 'not evaluated'."""


class SingularCircuitError(AnalysisError):
    """The nodal matrix is singular: a floating subnetwork or a loop of ideal sources."""
