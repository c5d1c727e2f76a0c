"""Error types shared by every layer.

The command line maps :class:`InputError` (and the physics/statistics errors raised
while validating a case) to exit code 2 with one line per problem, and any other
:class:`UqthermoError` to exit code 1. No layer lets a raw exception escape for bad
input.
"""

from __future__ import annotations

from dataclasses import dataclass


class UqthermoError(Exception):
    """Base class of every error the tool raises on purpose.

    Parameters
    ----------
    message : str
        One-line description of what is wrong (and, where possible, how to fix it).
    key : str, optional
        Key path or datum id the problem belongs to (e.g. ``"CH4.g.heat_capacity"``);
        the case layer prefixes it with the file name.
    """

    def __init__(self, message: str, key: str | None = None):
        super().__init__(message)
        self.message = message
        self.key = key


@dataclass(frozen=True)
class Problem:
    """One problem in one input file: ``file: key: message``."""

    file: str
    key: str
    message: str

    def __str__(self) -> str:
        where = f"{self.file}: " if self.file else ""
        key = f"{self.key}: " if self.key else ""
        return f"{where}{key}{self.message}"


class InputError(UqthermoError):
    """Bad input: the CLI exits with code 2 and prints each problem on its own line."""

    def __init__(self, problems: list[Problem] | Problem | str, key: str | None = None, file: str = ""):
        if isinstance(problems, str):
            problems = [Problem(file, key or "", problems)]
        elif isinstance(problems, Problem):
            problems = [problems]
        self.problems: list[Problem] = list(problems)
        super().__init__("; ".join(str(p) for p in self.problems), key=key)


class Interrupted(BaseException):
    """A signal (SIGINT, SIGTERM or SIGHUP) asked the tool to stop.

    Raised from the command line's signal handler so that clean-up code runs (like for
    Ctrl-C); the command exits with code 130. A ``BaseException`` so that no ``except
    Exception`` on the way swallows it.
    """

    def __init__(self, signum: int = 0):
        super().__init__(signum)
        self.signum = signum


class PhysicsError(UqthermoError):
    """A physically impossible or unsupported request in the thermo layer."""


class ValidityError(PhysicsError):
    """A temperature lies outside a correlation's validity range (and extrapolation is not allowed)."""


class BalanceError(PhysicsError):
    """A reaction equation does not balance its elements (or charge)."""


class PathError(PhysicsError):
    """No phase path exists (missing phase data, missing transition, inconsistent transitions)."""


class StatisticsError(UqthermoError):
    """A statistically invalid request in the uq layer."""


class CorrelationError(StatisticsError):
    """A correlation/covariance matrix is not valid (asymmetric, |r| > 1, not positive semidefinite)."""
