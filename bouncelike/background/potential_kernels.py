"""Compiled inflaton potentials: V, V', V'' by kernel code, for every compiled system.

``kind`` is the kernel code of :mod:`bouncelike.background.potentials` (``KERNEL_*``) and
``p`` its 4-tuple of parameters (the potential's ``kernel`` property): quadratic
(m^2, -, -, -), Starobinsky (V_inf, sqrt(2/3)/M_Pl, -, -), smoothed monomial
(lambda, p, s, s^p). A user potential has no kernel; the engine then runs uncompiled with this
function replaced by the potential's own methods (:func:`bouncelike.background.jit.python_copy`).
"""

from __future__ import annotations

import math

from .jit import inline


@inline
def potential_terms(kind, p, phi):
    """(V, V', V'') at ``phi`` of the built-in potential with kernel code ``kind``."""
    if kind == 0:
        return 0.5 * p[0] * phi * phi, p[0] * phi, p[0]
    if kind == 1:
        e = math.exp(-p[1] * phi)
        u = 1.0 - e
        d2 = 2.0 * p[0] * p[1] * p[1] * e * (2.0 * e - 1.0)
        return p[0] * u * u, 2.0 * p[0] * p[1] * e * u, d2
    u = phi * phi + p[2] * p[2]
    up = u ** (0.5 * p[1])
    return (
        p[0] * (up - p[3]),
        p[0] * p[1] * phi * up / u,
        p[0] * p[1] * up / (u * u) * ((p[1] - 1.0) * phi * phi + p[2] * p[2]),
    )
