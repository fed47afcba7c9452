"""What every dynamics does with the one engine: a run, its summary, many summaries at once.

A dynamics (:mod:`.isotropic`, and through :mod:`.canonical` the Bianchi I, asymmetric and
condensate ones) provides ``start(potential, initial, settings)`` returning (system, y0, mode,
absolute tolerances or None for ``settings.atol``, started at/after the bounce, started at it)
and ``CLASSICAL_NOTE``, the sentence that heads the message of a classical (general-relativity)
start, which has no bounce by construction and is reported with status ``no_bounce``.
"""

from __future__ import annotations

from dataclasses import replace
from typing import Any

import numpy as np

from . import engine
from .initial import ClassicalStart, IntegrationSettings
from .result import RunSummary


class EngineDynamics:
    """Engine runs and summaries of a dynamics (module docstring)."""

    CLASSICAL_NOTE = "classical start: no bounce by construction"

    def start(self, potential: Any, initial: Any,
              settings: IntegrationSettings) -> tuple[engine.System, np.ndarray, int, Any,
                                                      bool, bool]:
        raise NotImplementedError

    def run(self, potential: Any, initial: Any, settings: IntegrationSettings | None = None,
            store: bool = False) -> engine.EngineRun:
        """One engine run of ``initial`` (summary, and the dense solution with ``store``)."""
        settings = settings or IntegrationSettings()
        system, y0, mode, atol, bounced, has_bounce = self.start(potential, initial, settings)
        result = engine.run(system, potential, y0, mode, settings, bounced=bounced,
                            has_bounce=has_bounce, atol=atol, store=store)
        if isinstance(initial, ClassicalStart):
            s = result.summary
            result = engine.EngineRun(
                replace(s, status="no_bounce", message=f"{self.CLASSICAL_NOTE}; {s.message}"),
                result.dense)
        return result

    def evolve_summary(self, potential: Any, initial: Any,
                       settings: IntegrationSettings | None = None) -> RunSummary:
        """The run's :class:`~bouncelike.background.result.RunSummary` (no trajectory): what
        e-fold distributions need."""
        return self.run(potential, initial, settings).summary

    def evolve_summaries(self, potential: Any, initials: list,
                         settings: IntegrationSettings | None = None) -> list[RunSummary]:
        """Summaries of many initial data in one compiled loop (e-fold distributions)."""
        settings = settings or IntegrationSettings()
        if any(isinstance(ini, ClassicalStart) for ini in initials):
            return [self.evolve_summary(potential, ini, settings) for ini in initials]
        starts, system = [], None
        for ini in initials:
            system, y0, mode, atol, bounced, has_bounce = self.start(potential, ini, settings)
            starts.append(engine.Start(y0, mode, bounced, has_bounce, atol))
        return engine.run_many(system, potential, starts, settings) if starts else []
