"""Errors a user can act on, and the exit codes the command line maps them to.

Every problem with a cost file is a :class:`CostFileError` carrying the file, the
field (a dotted path such as ``domain.x.box``) and a sentence saying what is wrong
and, where we can, what to do next.  The command line prints it on one line and
exits with :data:`EXIT_BAD_INPUT`; no traceback reaches the user.
"""

from __future__ import annotations

EXIT_OK = 0
EXIT_EXPECTATION_FAILED = 1
EXIT_BAD_INPUT = 2
#: a bug in costcheck (an exception nobody expected): never 1, which a CI job reads as "an
#: expectation in a cost file was not met", nor 2, which blames the input
EXIT_INTERNAL_ERROR = 3


class CostcheckError(Exception):
    """Base class for errors costcheck reports to a user without a traceback."""


class CostFileError(CostcheckError):
    """A cost file (or an in-memory cost description) that cannot be accepted."""

    def __init__(self, message: str, *, file: str | None = None, field: str | None = None):
        super().__init__(message)
        self.message = message
        self.file = file
        self.field = field

    def located(self, *, file: str | None = None, field_prefix: str | None = None) -> "CostFileError":
        """Return a copy that also names the file and/or sits under a parent field."""
        field = self.field
        if field_prefix:
            field = field_prefix if not field else f"{field_prefix}.{field}"
        return type(self)(self.message, file=file or self.file, field=field)

    def __str__(self) -> str:
        where = []
        if self.file:
            where.append(self.file)
        if self.field:
            where.append(f"field '{self.field}'")
        prefix = ": ".join(where)
        return f"{prefix}: {self.message}" if prefix else self.message


class ExpressionError(CostFileError):
    """An expression string that the safe expression language does not accept."""


class UsageError(CostcheckError):
    """A command-line or API call that cannot be carried out as asked."""
