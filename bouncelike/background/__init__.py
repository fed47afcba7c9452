"""Background layer: effective bounce dynamics, events, e-folds and the duration of inflation.

Modules
-------
potentials   registry of inflaton potentials (quadratic, starobinsky, monomial, linear, custom)
kernels      compiled core (numba): right-hand side, Friedmann constraint, DOP853 integrator
             with dense output and events; pure-Python copy for user potentials
isotropic    IsotropicDynamics: the effective isotropic bounce (modified Friedmann equation)
setup        background_from_config: [background] + [potential] -> BackgroundSetup
efolds       efolds_distribution over a flat phase prior or a bounce-fraction prior
initial, result, dynamics
             shared initial data, result object and dynamics registry
"""
