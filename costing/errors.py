"""One exception hierarchy for everything the tool refuses to do.

Every error carries what is wrong and what to do about it, as ``Problem`` records
(``severity, sheet, cell, message, fix``) that the command line prints as
``Sheet!Cell: message (fix)`` and the spreadsheet add-on shows in its dialog. Catch
``CostingError`` to catch them all; catch a subclass to handle one stage.

============================  =====================================================
class                          raised when
============================  =====================================================
``InputError``                 the input workbook cannot be read at all
``ScenarioError``              a scenario asks for a change that cannot be made
``OutputLimitError``           the output would pass a spreadsheet limit
``CompareError``               two costed workbooks cannot be compared
``UsageError``                 the command was called wrongly (exit code 2)
============================  =====================================================

Nothing here does I/O; the module depends only on ``costing.model``.
"""

from __future__ import annotations

from costing.model import ERROR, Problem


class CostingError(Exception):
    """Base of every error the tool raises on purpose.

    Parameters
    ----------
    problems : list of Problem, optional
        What is wrong, each with its sheet, cell and fix.
    message, fix : str, optional
        A single problem given as text; used when ``problems`` is not given.

    Attributes
    ----------
    problems : list of Problem
        Never empty.
    message, fix : str
        The first problem's message and fix.
    """

    def __init__(self, problems: list[Problem] | None = None, *, message: str = "", fix: str = ""):
        if not problems:
            problems = [Problem(ERROR, "", "", message, fix)]
        super().__init__("; ".join(str(p) for p in problems))
        self.problems = list(problems)

    @property
    def message(self) -> str:
        """The first problem's message."""
        return self.problems[0].message

    @property
    def fix(self) -> str:
        """The first problem's fix."""
        return self.problems[0].fix


class InputError(CostingError):
    """The workbook cannot be read at all (not a workbook, damaged, encrypted, hostile)."""


class ScenarioError(CostingError):
    """``apply_scenario`` met a change it cannot make."""


class OutputLimitError(CostingError):
    """The output would pass a spreadsheet limit (rows, cell text).

    Parameters
    ----------
    message : str
        What would not fit.
    fix : str
        What to do instead.
    """

    def __init__(self, message: str, fix: str):
        super().__init__(message=message, fix=fix)

    def __str__(self) -> str:
        return f"{self.message} ({self.fix})"


class CompareError(CostingError):
    """A workbook cannot be compared, or two runs cannot be compared with each other.

    Parameters
    ----------
    message : str
        What is wrong, naming the file (and the cell where there is one).
    fix : str
        What to do about it.
    path : str or None
        The workbook concerned, or None when the problem lies between the two runs
        (e.g. different currencies).
    """

    def __init__(self, message: str, fix: str, path: str | None = None):
        super().__init__(message=message, fix=fix)
        self.path = path

    def __str__(self) -> str:
        return f"{self.message} ({self.fix})"


class UsageError(CostingError):
    """The command was called wrongly; the command line exits with code 2."""

    def __init__(self, message: str, fix: str = ""):
        super().__init__(message=message, fix=fix)

    def __str__(self) -> str:
        return self.message
