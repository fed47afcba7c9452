"""Forward models: parameters -> primordial spectra, one registry for configurations and
posterior runs.

Modules
-------
base             what a forward model is (declared parameters, spectra, derived numbers)
registry         MODELS: every model by name; ``spectra_from_config`` for ``[model] spectra``
powerlaw         power-law spectra
slowroll         slow roll of the quadratic and Starobinsky potentials (Encyclopaedia
                 Inflationaris formulas; mass from A_s)
bounce_transfer  power law times the cached transfer of the bounce (fast evaluator and the
                 phenomenological bounce models)

Use :func:`bouncelike.models.registry.spectra_from_config` for a configuration and
:func:`bouncelike.models.registry.forward_model` for a model by name.
"""
