"""Background layer: effective bounce dynamics, events, e-folds and the duration of inflation.

Modules
-------
engine       the one background engine at the Python boundary: runs, budgets, typed results,
             dense output (every command and the perturbations go through it)
solver       the compiled DOP853 integrator (stages, error norm, step control, dense output,
             events), knowing no physics (coefficients: scipy's DOP853 table)
problem      the cosmological events (bounce, super-inflation, inflation start and end: the one
             definition of the end of inflation) watching a system
systems      dispatch to the compiled systems: isotropic_system, bianchi_system,
             asymmetric_system, loop_system; potential_kernels the compiled potentials
jit          numba decorators, the uncompiled copy for Python potentials, stale caches
potentials   registry of inflaton potentials (quadratic, starobinsky, monomial, linear, user)
isotropic, bianchi, asymmetric, condensate
             the dynamics: parameters, initial data, results (canonical: what the canonical
             ones share)
table        BackgroundTable, the read-only view the perturbations read (with the past by
             time reversal)
setup        background_from_config: [background] + [potential] -> BackgroundSetup
efolds       efolds_distribution over a flat phase prior or a bounce-fraction prior
initial, result, dynamics, limits
             initial data and settings, result objects, dynamics registry, physical ranges
"""
