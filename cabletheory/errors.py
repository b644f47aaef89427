"""The package's exception hierarchy.

One root class, :class:`CableTheoryError`; each subclass also inherits the builtin
exception a caller would expect, so ``except ValueError`` keeps working.
Messages name the field, the value and what was expected, on one line.
"""

from __future__ import annotations


class CableTheoryError(Exception):
    """Root of every error raised on purpose by cabletheory."""


class InputError(CableTheoryError, ValueError):
    """A user-supplied value is malformed, out of range or of the wrong kind."""


class UnitKindError(InputError):
    """A quantity carries a unit of the wrong physical kind (e.g. a capacitance for Rm)."""


class FileFormatError(InputError):
    """A data file (morphology, simulator output ...) cannot be read as documented."""


class MissingFileError(CableTheoryError, FileNotFoundError):
    """A file named by the user does not exist or is not readable."""


class ImplausibleValueWarning(UserWarning):
    """A value was read correctly but lies far outside what is met in neurons (a likely unit slip).

    Only a warning: the value is used as given. The command line prints it on one stderr line.
    """


class ConvergenceError(CableTheoryError, ArithmeticError):
    """A root or series did not meet its stated accuracy; the message says by how much."""


class DerivationError(CableTheoryError, ArithmeticError):
    """A symbolic derivation failed one of its own checks (a basis that does not solve its equation,
    a result of the wrong form); the message names the expression."""


class UsageError(CableTheoryError, RuntimeError):
    """The package was called out of order (for example, a journal written before it was opened):
    a mistake in the calling code, not in the user's input."""
