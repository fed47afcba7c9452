"""Published constraint sets (cited TOML data files) and the Gaussian likelihood."""

from .gaussian import GaussianLikelihood, likelihood_from_config
from .score import Score, Term
from .sets import ConstraintSet, available_sets, load_constraint_set

__all__ = [
    "ConstraintSet",
    "GaussianLikelihood",
    "Score",
    "Term",
    "available_sets",
    "likelihood_from_config",
    "load_constraint_set",
]
