"""Exception hierarchy.

Every error a user can cause derives from :class:`SampledError` and from the builtin that fits,
so library callers may catch either. The command line turns any ``SampledError`` into one line
on stderr and exit status 2.
"""

from __future__ import annotations


class SampledError(Exception):
    """Root of every error raised on purpose by this package."""


class InputError(SampledError, ValueError):
    """A value given by the user is malformed, out of range or inconsistent.

    Parameters
    ----------
    message : str
        What was received and what is allowed.
    where : str, optional
        The place the value came from: an option (``--period``), a key (``timing.period``) or a
        file and key (``cases/kiln.toml: timing.period``). Prefixed to the message.
    """

    def __init__(self, message: str, where: str | None = None) -> None:
        self.where = where
        self.detail = message
        super().__init__(f"{where}: {message}" if where else message)

    def located(self, where: str) -> "InputError":
        """Return a copy of this error with ``where`` prefixed to the location."""
        inner = f"{where}: {self.where}" if self.where else where
        return type(self)(self.detail, inner)


class ExpressionError(InputError):
    """A rational expression or polynomial text cannot be read."""


class UnitError(InputError):
    """A quantity with a unit cannot be read or has the wrong kind of unit."""


class ImproperError(InputError):
    """A transfer function has more zeros than poles (not realisable)."""


class CaseFileError(InputError):
    """A case file is malformed, has a missing or unknown key, or an invalid value."""


class NumericalError(SampledError, ArithmeticError):
    """A computation could not reach the accuracy it promises."""
