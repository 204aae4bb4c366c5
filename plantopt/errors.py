"""Every error class of plantopt, in one place.

Errors carry their fields and build their message in ``__str__`` so that the
message format is fixed in one spot and tests can compare exact messages.
The command line maps :class:`InputError` (and :class:`InputErrors`) to exit
code 2 and prints ``str(err)`` without a traceback.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Sequence


class PlantoptError(Exception):
    """Base class of every error raised on purpose by plantopt."""


@dataclass
class InputError(PlantoptError):
    """One problem in an input file or on the command line.

    Parameters
    ----------
    file : str
        File name (or ``"<command line>"``) the problem is in.
    path : str
        Dotted address of the field, e.g. ``units.R1.volume``.
    problem : str
        What is wrong and what was expected, e.g.
        ``expected a volume, got '5 kg' (mass)``.
    """

    file: str
    path: str
    problem: str

    def __post_init__(self) -> None:
        super().__init__(str(self))

    def __str__(self) -> str:
        where = f"{self.file}: " if self.file else ""
        at = f"{self.path}: " if self.path else ""
        return f"{where}{at}{self.problem}"


@dataclass
class DimensionError(InputError):
    """A quantity of the wrong dimension (or a bare number where one is needed).

    The message reads ``FILE: PATH: expected <what>, got '<given>' (<dim>)``.
    """

    expected: str = ""
    given: str = ""
    given_dimension: str = ""

    def __init__(self, file: str, path: str, expected: str, given: str, given_dimension: str):
        self.expected = expected
        self.given = given
        self.given_dimension = given_dimension
        if given_dimension:
            problem = f"expected {expected}, got '{given}' ({given_dimension})"
        else:
            problem = f"expected {expected}, got '{given}'"
        super().__init__(file, path, problem)

    def __str__(self) -> str:  # dataclass would otherwise regenerate it
        return InputError.__str__(self)


class InputErrors(PlantoptError):
    """All the problems found in one input, reported together.

    Parameters
    ----------
    errors : sequence of InputError
        The individual problems, in file order.
    """

    def __init__(self, errors: Sequence[InputError]):
        self.errors = list(errors)
        super().__init__(str(self))

    def __str__(self) -> str:
        n = len(self.errors)
        head = f"{n} problem{'s' if n != 1 else ''} found:"
        return "\n".join([head] + [f"  - {e}" for e in self.errors])


class StructureError(PlantoptError):
    """The equation system is not square or is structurally singular.

    Parameters
    ----------
    summary : str
        One line saying what is wrong (e.g. degrees of freedom).
    details : sequence of str
        Named equations and variables involved.
    """

    def __init__(self, summary: str, details: Sequence[str] = ()):
        self.summary = summary
        self.details = list(details)
        super().__init__(str(self))

    def __str__(self) -> str:
        return "\n".join([self.summary] + [f"  - {d}" for d in self.details])


class SolverError(PlantoptError):
    """The numerical solver could not be run (not: did not converge).

    Non-convergence is reported through a result status, never an exception.
    """
