"""Exceptions that reach the user as one line.

Every problem with user input (configuration, data file, parameter out of range) raises
:class:`InputError` with a message that names the offending key and what is allowed. The
command-line front end turns it into ``bouncelike: error: <message>`` on standard error and exit
code 2, before anything has been written.
"""

from __future__ import annotations

EXIT_INPUT_ERROR = 2


class InputError(ValueError):
    """Bad user input. The message is one line naming the key and what is allowed."""

    def __init__(self, message: str):
        super().__init__(" ".join(str(message).split()))


class NumericalFailure(RuntimeError):
    """A forward-model evaluation that failed numerically (reported, never silently ignored)."""


class NotEvaluable(NumericalFailure):
    """A point the model or a likelihood term cannot score (reason in the message).

    Raised, for example, when a featured spectrum cannot be reduced to pivot numbers or when its
    spectra are not positive where the large-scale temperature projection needs them. Callers
    count such points as not evaluable; they are never a data bound.
    """
