"""Perturbations through the bounce: modes, initial states, spectra, mapping, fast model.

Modules
-------
background     dense background tables (analytic providers, own integration, engine trajectories)
prescriptions  mode equations of the dressed-metric and deformed-algebra prescriptions as
               regular linear Hamiltonian systems (registry: PRESCRIPTIONS)
modes          symplectic numba integrator + WKB jumps across adiabatic eras (ModeSolver)
states         initial states by name (STATES) and Bogoliubov rotations
spectra        P_s(k), P_t(k) in bounce units (a_B = 1)
mapping        bounce units -> comoving Mpc^-1 via N_* (given or Liddle & Leach)
transfer       cached transfer T(k/k_LQC, D) (Bogoliubov decomposition after the bounce,
               D = k_LQC x conformal time to the end of inflation): the concept and its
               measured accuracy; re-exports transfer_decomposition (exact alpha, rho, theta),
               transfer_table (TransferTable, build/load, CERTIFIED_RANGES),
               transfer_certificate, transfer_model (BounceSpectraModel), transfer_dense
infrared       closed-form far-infrared tensor spectrum of a kinetic bounce, both prescriptions
"""
