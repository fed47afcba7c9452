"""Forward models: parameters -> primordial spectra, one registry for configurations and
posterior runs.

Modules
-------
base               what a forward model is (declared parameters, spectra, derived numbers)
registry           MODELS: every model by name; ``spectra_from_config`` for ``[model] spectra``
powerlaw           power-law spectra
slowroll           slow roll of the quadratic and Starobinsky potentials (Encyclopaedia
                   Inflationaris formulas; mass from A_s)
reheating          N_* given or from the reheating history (one schema for configurations and
                   prior files)
bounce             the full bounce model: background -> modes -> spectra in Mpc^-1
bounce_plateau     inflation outlasting the background's cap: the slow-roll attractor's window
bounce_ultraviolet deformed algebra above the e^600 cap and the tensor bound
bounce_transfer    power law times the cached transfer of the bounce (phenomenological models)
bounce_physical    background -> e-folds -> N_* -> N_B* -> k_LQC -> pivot spectrum -> transfer
pivot              standard spectra at the pivot's exit (Stewart-Lyth)
inflation_search   the bounce potential fraction behind a given duration of inflation
"""

from .registry import MODELS, forward_model, samplable_models, spectra_from_config

__all__ = ["MODELS", "forward_model", "samplable_models", "spectra_from_config"]
