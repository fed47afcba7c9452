"""Evaluations that did not give a log-likelihood: their kinds, reasons and the file of them.

Every evaluation of a posterior run that fails, is refused or is capped -- accepted proposal
or not -- is kept with its parameter values in ``failures.csv`` of the run folder, so a referee
sees where the model could not be evaluated. Kinds:

``not_evaluable``      the model has no prediction the likelihood can score there
                       (:class:`~bouncelike.errors.NotEvaluable`, a point outside the model's
                       domain, or featured spectra the pivot summary does not represent)
``numerical_failure``  the computation failed (:class:`~bouncelike.errors.NumericalFailure`,
                       a non-finite log-likelihood)
``model_error``        a defect of the model code caught at run time (division by zero,
                       overflow, invalid value raised from deep inside); the reason says what
                       was being computed and where
``capped``             the model capped a value (e.g. the e^600 transfer cap of the deformed
                       algebra): the spectra are a bound, so the log-likelihood is an upper
                       bound (column ``log_likelihood_bound``), never used as a value

All four give the point log-posterior -inf (no posterior weight). Points outside the prior's
support are not evaluations (the model is never called) and are not listed.

``failures.csv`` columns: ``stage`` (``prior_survey``: draws from the prior evaluated before
the run to measure the prior fraction each reason covers; ``placement``: placing the walkers;
``sampling``), ``step`` (the sampler step during which the proposal was evaluated, 0 before
the first), ``kind``, ``reason`` (numbers replaced by ``#`` so that one reason groups its
occurrences), the sampled parameters, ``log_likelihood_bound`` and ``message`` (the full text,
for diagnosis). :func:`load_failures` reads it; :func:`failure_summary` gives counts per reason
and the prior fraction each covers (binomial standard error sqrt(f (1 - f) / n)).
"""

from __future__ import annotations

import csv
import io
import math
import os
import re
import traceback
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import InputError, NotEvaluable, NumericalFailure

FAILURES = "failures.csv"
NOT_EVALUABLE = "not_evaluable"
NUMERICAL_FAILURE = "numerical_failure"
MODEL_ERROR = "model_error"
CAPPED = "capped"
KINDS = (NOT_EVALUABLE, NUMERICAL_FAILURE, MODEL_ERROR, CAPPED)
STAGES = ("prior_survey", "placement", "sampling")

#: Exceptions from inside a model that are caught as model errors (and counted), not raised.
MODEL_ERRORS = (ArithmeticError, ValueError)

NOT_REPRESENTED = ("spectrum not represented by the pivot summary (the cubic in ln k fitted "
                   "around a pivot misses ln P by more than the likelihood's tolerance): not "
                   "scored")

#: What each stage of an evaluation computes (for the reasons of model errors).
STAGE_TEXT = {
    "spectra": "the primordial spectra",
    "summary": "the pivot summary of the spectra",
    "likelihood": "the log-likelihood",
    "derived": "the derived parameters",
}
_ERROR_TEXT = (
    (ZeroDivisionError, "division by zero"),
    (OverflowError, "floating-point overflow"),
    (FloatingPointError, "floating-point error"),
    (ArithmeticError, "arithmetic error"),
    (ValueError, "invalid value"),
)
_PACKAGE = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
_MACHINERY = ("failures.py", "posterior.py")
_NUMBER = re.compile(r"(?<![\w.^])[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?(?![\w.])")


@dataclass(frozen=True)
class Failure:
    """One evaluation without a usable log-likelihood (see the module docstring)."""

    kind: str
    reason: str
    message: str
    bound: float = math.nan


def group_text(text: str) -> str:
    """A reason that groups failures of one kind: standalone numbers replaced by #."""
    return _NUMBER.sub("#", " ".join(str(text).split()))[:240]


def failure_of(exc: BaseException) -> Failure:
    """The record of an exception raised while evaluating a point."""
    text = " ".join(str(exc).split())
    if isinstance(exc, ModelError):
        return exc.failure
    if isinstance(exc, NotEvaluable | InputError):
        return Failure(NOT_EVALUABLE, group_text(text), text)
    if isinstance(exc, NumericalFailure):
        return Failure(NUMERICAL_FAILURE, group_text(text), text)
    raise TypeError(f"not a failure of an evaluation: {type(exc).__name__}")


def nonfinite_failure(log_likelihood: float) -> Failure:
    text = ("the log-likelihood is not a number (NaN)" if math.isnan(log_likelihood) else
            f"the log-likelihood is {log_likelihood} (infinite chi-square or prediction)")
    return Failure(NUMERICAL_FAILURE, group_text(text), text)


def capped_failure(cap: str, log_likelihood: float) -> Failure:
    text = (f"capped spectra: {cap}; the log-likelihood {log_likelihood:.4g} is only an upper "
            "bound")
    return Failure(CAPPED, group_text(f"capped spectra: {cap}"), text, float(log_likelihood))


class ModelError(Exception):
    """A Python error raised from inside the model, with what was being computed."""

    def __init__(self, stage: str, exc: BaseException):
        what = next((t for cls, t in _ERROR_TEXT if isinstance(exc, cls)), "error")
        # the innermost frame inside the package, outside the evaluation machinery: where
        # the model went wrong
        frames = [f for f in traceback.extract_tb(exc.__traceback__)
                  if os.path.abspath(f.filename).startswith(_PACKAGE + os.sep)
                  and os.path.basename(f.filename) not in _MACHINERY]
        where = ""
        if frames:
            f = frames[-1]
            rel = os.path.relpath(os.path.abspath(f.filename), os.path.dirname(_PACKAGE))
            where = f" in {rel.replace(os.sep, '/')}:{f.name}"
        reason = f"model error while computing {STAGE_TEXT.get(stage, stage)}: {what}{where}"
        message = f"{reason} ({type(exc).__name__}: {' '.join(str(exc).split())})"
        super().__init__(message)
        self.failure = Failure(MODEL_ERROR, group_text(reason), message)


def computing(stage: str, fn: Callable[..., Any], *args: Any) -> Any:
    """Call ``fn(*args)``; a Python error from inside it becomes a :class:`ModelError`."""
    try:
        return fn(*args)
    except (NumericalFailure, InputError):
        raise
    except MODEL_ERRORS as exc:
        raise ModelError(stage, exc) from exc


# -- recording ------------------------------------------------------------------------------

@dataclass(frozen=True)
class FailureRow:
    stage: str
    step: int
    theta: tuple[float, ...]
    failure: Failure


class RecordingPool:
    """Wraps a pool's ``map`` for emcee: each task returns ``(*values, failure)``; the failure
    record (None for a good evaluation) is kept with its point, emcee gets ``values``.

    ``stage`` and ``step`` are set by the sampling loop; ``take()`` hands over the rows kept
    since the last call (the loop writes them at each checkpoint)."""

    def __init__(self, pool: Any = None, evaluations: int = 0):
        self.pool = pool
        self.stage = "sampling"
        self.step = 0
        self.evaluations = int(evaluations)
        self._rows: list[FailureRow] = []

    def map(self, func: Callable, tasks: Iterable[Any]) -> list[tuple]:
        tasks = list(tasks)
        results = (list(self.pool.map(func, tasks)) if self.pool is not None
                   else [func(t) for t in tasks])
        self.evaluations += len(tasks)
        out = []
        for theta, res in zip(tasks, results, strict=True):
            failure = res[-1]
            if failure is not None:
                self._rows.append(FailureRow(self.stage, self.step,
                                             tuple(float(x) for x in np.asarray(theta)), failure))
            out.append(tuple(res[:-1]))
        return out

    def pending(self) -> list[FailureRow]:
        return list(self._rows)

    def take(self) -> list[FailureRow]:
        rows, self._rows = self._rows, []
        return rows


# -- the file -------------------------------------------------------------------------------

def failures_header(names: Sequence[str]) -> str:
    return ",".join(("stage", "step", "kind", "reason", *names, "log_likelihood_bound",
                     "message")) + "\n"


def failures_text(rows: Sequence[FailureRow]) -> str:
    """CSV rows (floats as shortest round-trip repr, texts quoted where needed)."""
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    for r in rows:
        f = r.failure
        writer.writerow([r.stage, r.step, f.kind, f.reason, *map(repr, r.theta),
                         "" if math.isnan(f.bound) else repr(float(f.bound)), f.message])
    return buf.getvalue()


def load_failures(folder: str | Path) -> Any:
    """The failures of a run as a pandas DataFrame (columns as in the module docstring); an
    empty frame when the run recorded none. For the report's figures of where a model could
    not be evaluated."""
    import pandas as pd

    path = Path(folder) / FAILURES
    if not path.is_file():
        return pd.DataFrame(columns=["stage", "step", "kind", "reason",
                                     "log_likelihood_bound", "message"])
    from .chains import read_csv_exact

    try:
        return read_csv_exact(path, keep_default_na=False,
                              na_values={"log_likelihood_bound": [""]})
    except (UnicodeDecodeError, pd.errors.ParserError, ValueError) as exc:
        raise InputError(f"'{path}' is damaged ({type(exc).__name__}); it lists the failed "
                         "evaluations only and can be deleted") from None


class FailureTally:
    """Counts per (kind, reason) and stage, kept up to date as rows are written."""

    def __init__(self) -> None:
        self.counts: dict[tuple[str, str, str], int] = {}

    def add(self, rows: Iterable[FailureRow]) -> None:
        for r in rows:
            key = (r.stage, r.failure.kind, r.failure.reason)
            self.counts[key] = self.counts.get(key, 0) + 1

    def add_frame(self, frame: Any) -> None:
        for (stage, kind, reason), n in frame.groupby(["stage", "kind", "reason"]).size().items():
            key = (str(stage), str(kind), str(reason))
            self.counts[key] = self.counts.get(key, 0) + int(n)

    def by_reason(self) -> dict[str, int]:
        """Failures of the run itself (placement and sampling) per reason."""
        out: dict[str, int] = {}
        for (stage, _, reason), n in self.counts.items():
            if stage != "prior_survey":
                out[reason] = out.get(reason, 0) + n
        return out

    def summary(self, survey_draws: int) -> dict[str, Any]:
        return failure_summary(self.counts, survey_draws)


def failure_summary(counts: dict[tuple[str, str, str], int], survey_draws: int
                    ) -> dict[str, Any]:
    """Counts per reason in the run and the prior fraction each reason covers (from the prior
    survey of ``survey_draws`` draws), per kind too."""
    reasons: dict[tuple[str, str], dict[str, Any]] = {}
    for (stage, kind, reason), n in counts.items():
        e = reasons.setdefault((kind, reason), {"reason": reason, "kind": kind, "count": 0,
                                                "survey_count": 0})
        e["survey_count" if stage == "prior_survey" else "count"] += n
    rows = []
    for e in reasons.values():
        rows.append({**e, **_fraction(e["survey_count"], survey_draws)})
    rows.sort(key=lambda e: (-e["count"], -e["survey_count"], e["reason"]))
    kinds = {k: {"count": sum(e["count"] for e in rows if e["kind"] == k),
                 **_fraction(sum(e["survey_count"] for e in rows if e["kind"] == k),
                             survey_draws)} for k in KINDS}
    total = sum(e["survey_count"] for e in rows)
    return {"by_reason": rows, "by_kind": kinds,
            "prior_survey": {"draws": survey_draws, **_fraction(total, survey_draws)}}


def _fraction(k: int, n: int) -> dict[str, float]:
    if n <= 0:
        return {"prior_fraction": math.nan, "prior_fraction_error": math.nan}
    f = k / n
    return {"prior_fraction": f, "prior_fraction_error": math.sqrt(f * (1 - f) / n)}
