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
    """A point the likelihood cannot score: the model has no prediction there.

    Raised (with a physical reason, e.g. "inflation does not end before the e-fold cap") for a
    parameter point whose spectra cannot be computed or cannot be represented by what the
    likelihood scores -- e.g. a featured spectrum whose features reach a pivot's window, or
    spectra that are not positive where the large-scale temperature projection needs them.
    Such a point is reported as *not evaluable*, never as excluded by the data: a posterior run
    records it (parameters and reason) and gives it no posterior weight.
    """


class RunInterrupted(KeyboardInterrupt):
    """A long computation stopped on the user's request (Ctrl-C) after saving its progress.

    The message says where it stopped and how to continue; the command-line front end prints
    it as one line (exit code 130).
    """
