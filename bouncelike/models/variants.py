"""The perturbation variants every bounce model family comes in, declared once.

A bounce family (the cached-transfer models of :mod:`.bounce_transfer`, the physical-parameter
models of :mod:`.bounce_physical` on the quadratic and on the Starobinsky potential) is one
class; the registry holds one subclass per prescription and quantum state of the modes, named
``<family>_<variant>`` and titled ``<family title>, <variant words>``. Which states a family's
transfer cache covers, and from which k/k_LQC it is certified, is said by the cache itself
(:mod:`bouncelike.perturbations.transfer_certificate`); an uncovered combination is refused
there with its reason.

The variant classes are made here, so pickling (the process pool of a posterior run) sends a
variant by its registry name and the worker builds a fresh instance: its caches (the transfer
table, the last evaluation) are rebuilt there, never shipped.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class PerturbationVariant:
    """Prescription across the bounce and quantum state of the modes, with their spellings."""

    suffix: str
    prescription: str
    state: str
    words: str


PERTURBATION_VARIANTS = (
    PerturbationVariant("dressed_metric", "dressed_metric", "remote_past",
                        "dressed metric, remote-past state"),
    PerturbationVariant("deformed_algebra", "deformed_algebra", "remote_past",
                        "deformed algebra"),
    PerturbationVariant("dressed_metric_non_oscillating", "dressed_metric", "non_oscillating",
                        "dressed metric, non-oscillating state"),
    PerturbationVariant("dressed_metric_low_energy", "dressed_metric", "low_energy",
                        "dressed metric, state of low energy"),
)


#: every variant class made here, by its registry name
_BY_NAME: dict[str, type] = {}


def rebuilt(name: str) -> object:
    """A fresh instance of the variant called ``name`` (what unpickling a variant does)."""
    return _BY_NAME[name]()


def _reduce(self: object) -> tuple:
    return rebuilt, (self.name,)  # type: ignore[attr-defined]


def family_variants(family: type, name: str, title: str) -> tuple[type, ...]:
    """One subclass of ``family`` per variant: ``name`` and ``title`` are format strings with
    one ``{}`` for the variant's suffix and words (e.g. ``"bounce_{}"``, ``"Bounce, {}"``)."""
    made = []
    for v in PERTURBATION_VARIANTS:
        cls = type(f"{family.__name__}_{v.suffix}", (family,), {
            "name": name.format(v.suffix), "title": title.format(v.words),
            "prescription": v.prescription, "state": v.state, "__reduce__": _reduce,
            "__module__": family.__module__,
            "__doc__": f"{(family.__doc__ or '').splitlines()[0]} ({v.words})"})
        _BY_NAME[cls.name] = cls
        made.append(cls)
    return tuple(made)
