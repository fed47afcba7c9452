"""Inflaton potentials: a registry of small immutable objects.

Every potential gives ``V(phi)``, ``dV(phi)`` (= V') and ``d2V(phi)`` (= V'') on arrays, in Planck
units (G = c = hbar = 1, non-reduced Planck mass m_Pl = 1; the reduced Planck mass is
M_Pl = 1/sqrt(8 pi), :data:`bouncelike.units.REDUCED_PLANCK_MASS`), a ``name`` and a
``parameters`` dict. Built-in potentials also carry a ``kernel`` code and a parameter vector
read by the compiled engine (:mod:`bouncelike.background.potential_kernels`); a user potential
(:func:`register_potential`) has neither and runs through the same engine uncompiled.

Registry (``[potential] name = ...``):

``quadratic``   V = m^2 phi^2 / 2; key ``mass`` (m, units of m_Pl; 0 is a free massless field).
``starobinsky`` V = (3/4) M^2 M_Pl^2 (1 - exp(-sqrt(2/3) phi / M_Pl))^2, reduced M_Pl; key
                ``mass`` (M, units of m_Pl). Expanding about phi = 0,
                1 - exp(-u) = u - u^2/2 + ... with u = sqrt(2/3) phi / M_Pl gives
                V = (3/4) M^2 M_Pl^2 (2/3) phi^2 / M_Pl^2 + O(phi^3) = M^2 phi^2 / 2, so M is the
                mass at the minimum (re-derived here); the plateau height is
                V_inf = (3/4) M^2 M_Pl^2.
``monomial``    V = lambda |phi|^p (the "flattened" family p = 2/3, 1, 4/3, and any p > 0); keys
                ``amplitude`` (lambda, Planck units), ``power`` (p), ``smoothing``.
``linear``      V = lambda |phi| (the p = 1 member, by its slope); keys ``slope``, ``smoothing``.

User potentials. A configuration file is data: it can never name code to import or run. A user
potential is registered from Python, by code the user chose to run, with
:func:`register_potential` (directly in a script, or in a plugin file given on the command
line with ``--plugin FILE.py``, see :mod:`bouncelike.plugins`); a configuration then selects it
by its registered name and gives its numeric parameters. Registered potentials have no
compiled kernel and run through the same engine uncompiled (about a hundred times slower).

Smoothing at phi = 0. For p < 2, |phi|^p has a divergent V'' (and for p < 1 a divergent V') at
phi = 0, and in the contracting branch the field oscillates through 0 many times. The monomial
and linear potentials are therefore smoothed as
V = lambda [(phi^2 + s^2)^(p/2) - s^p] with s = ``smoothing`` (default 1e-10 m_Pl), whose
relative deviation from lambda |phi|^p is below (s/|phi|)^p + (p/2)(s/phi)^2 and which keeps
V(0) = 0. Choose s well below
the field amplitude at the starting density of the contracting branch,
(rho_0 / lambda)^(1/p); :func:`check_smoothing` tells.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any, ClassVar

import numpy as np

from ..config import Parameter, Table, check_parameters, names_of, read_parameters
from ..errors import InputError
from ..quantities import QUADRATIC_MASS, STAROBINSKY_MASS
from ..units import REDUCED_PLANCK_MASS
from .limits import check_mass

#: parameters of the monomial and linear potentials (declared once; module docstring)
AMPLITUDE = Parameter("amplitude", "lambda of V = lambda |phi|^p", "Planck units", 0.0, None,
                      lower_open=True, why="a potential that rises away from phi = 0")
POWER = Parameter("power", "power p of V = lambda |phi|^p", "", 0.0, 10.0, lower_open=True,
                  why="the flattened family p = 2/3, 1, 4/3 up to steep monomials; p > 10 has "
                  "no slow roll to speak of")
SLOPE = Parameter("slope", "lambda of V = lambda |phi|", "Planck units", 0.0, None,
                  lower_open=True, why="a potential that rises away from phi = 0")
SMOOTHING = Parameter("smoothing", "smoothing scale s at phi = 0 (module docstring)", "m_Pl",
                      0.0, 1e-2, lower_open=True, upper_open=True,
                      why="far below the field amplitudes of the contracting branch",
                      default=1e-10)

#: kernel codes understood by the compiled integrator
KERNEL_QUADRATIC, KERNEL_STAROBINSKY, KERNEL_MONOMIAL, KERNEL_PYTHON = 0, 1, 2, 3

#: sqrt(2/3) / M_Pl with reduced M_Pl = 1/sqrt(8 pi): sqrt(16 pi / 3) in Planck units
STAROBINSKY_SLOPE = math.sqrt(2.0 / 3.0) / REDUCED_PLANCK_MASS


def _arr(phi: Any) -> np.ndarray:
    return np.asarray(phi, dtype=float)


class DeclaredPotential:
    """A shipped potential: its parameters are the attributes its declarations name."""

    PARAMETERS: ClassVar[tuple[Parameter, ...]] = ()

    @property
    def parameters(self) -> dict[str, float]:
        return {p.name: getattr(self, p.name) for p in self.PARAMETERS}


@dataclass(frozen=True)
class Quadratic(DeclaredPotential):
    """V = m^2 phi^2 / 2 with mass m in units of m_Pl (m >= 0; m = 0 is a free field)."""

    mass: float
    name: ClassVar[str] = "quadratic"
    PARAMETERS: ClassVar[tuple[Parameter, ...]] = (QUADRATIC_MASS,)

    def __post_init__(self) -> None:
        check_mass(self.mass)

    @property
    def kernel(self) -> tuple[int, np.ndarray]:
        return KERNEL_QUADRATIC, np.array([self.mass**2, 0.0, 0.0, 0.0])

    def V(self, phi: Any) -> np.ndarray:
        return 0.5 * self.mass**2 * _arr(phi) ** 2

    def dV(self, phi: Any) -> np.ndarray:
        return self.mass**2 * _arr(phi)

    def d2V(self, phi: Any) -> np.ndarray:
        return np.full_like(_arr(phi), self.mass**2)

    def field_at(self, value: float, sign: float) -> float:
        """The field on the side ``sign`` where V = ``value``."""
        if self.mass == 0:
            return 0.0
        return math.copysign(math.sqrt(2.0 * max(value, 0.0)) / self.mass, sign)


@dataclass(frozen=True)
class Starobinsky(DeclaredPotential):
    """V = (3/4) M^2 M_Pl^2 (1 - exp(-sqrt(2/3) phi/M_Pl))^2, M in units of m_Pl, reduced M_Pl."""

    mass: float
    name: ClassVar[str] = "starobinsky"
    PARAMETERS: ClassVar[tuple[Parameter, ...]] = (STAROBINSKY_MASS,)

    def __post_init__(self) -> None:
        check_mass(self.mass, zero=False)

    @property
    def plateau(self) -> float:
        """Plateau height V_inf = (3/4) M^2 M_Pl^2 (Planck units)."""
        return 0.75 * self.mass**2 * REDUCED_PLANCK_MASS**2

    @property
    def kernel(self) -> tuple[int, np.ndarray]:
        return KERNEL_STAROBINSKY, np.array([self.plateau, STAROBINSKY_SLOPE, 0.0, 0.0])

    def V(self, phi: Any) -> np.ndarray:
        u = -np.expm1(-STAROBINSKY_SLOPE * _arr(phi))
        return self.plateau * u * u

    def dV(self, phi: Any) -> np.ndarray:
        e = np.exp(-STAROBINSKY_SLOPE * _arr(phi))
        return 2.0 * self.plateau * STAROBINSKY_SLOPE * e * (1.0 - e)

    def d2V(self, phi: Any) -> np.ndarray:
        e = np.exp(-STAROBINSKY_SLOPE * _arr(phi))
        return 2.0 * self.plateau * STAROBINSKY_SLOPE**2 * e * (2.0 * e - 1.0)

    def field_at(self, value: float, sign: float) -> float:
        r = math.sqrt(max(value, 0.0) / self.plateau)
        if sign >= 0:
            if r >= 1.0:
                raise InputError(
                    f"the Starobinsky plateau V_inf = {self.plateau:.4g} is below the requested "
                    f"potential energy {value:.4g} on the plateau side (phi > 0); allowed: "
                    "V < V_inf there (lower the density or bounce potential fraction, or raise "
                    "'potential.mass')"
                )
            return -math.log1p(-r) / STAROBINSKY_SLOPE
        return -math.log1p(r) / STAROBINSKY_SLOPE


@dataclass(frozen=True)
class Monomial(DeclaredPotential):
    """V = lambda [(phi^2 + s^2)^(p/2) - s^p] ~ lambda |phi|^p (see module notes on smoothing)."""

    amplitude: float
    power: float
    smoothing: float = 1e-10
    name: ClassVar[str] = "monomial"
    PARAMETERS: ClassVar[tuple[Parameter, ...]] = (AMPLITUDE, POWER, SMOOTHING)

    def __post_init__(self) -> None:
        check_parameters(self.parameters, self.PARAMETERS, "potential")

    @property
    def kernel(self) -> tuple[int, np.ndarray]:
        s = self.smoothing
        return KERNEL_MONOMIAL, np.array([self.amplitude, self.power, s, s**self.power])

    def V(self, phi: Any) -> np.ndarray:
        u = _arr(phi) ** 2 + self.smoothing**2
        return self.amplitude * (u ** (0.5 * self.power) - self.smoothing**self.power)

    def dV(self, phi: Any) -> np.ndarray:
        phi = _arr(phi)
        u = phi**2 + self.smoothing**2
        return self.amplitude * self.power * phi * u ** (0.5 * self.power - 1.0)

    def d2V(self, phi: Any) -> np.ndarray:
        phi = _arr(phi)
        s2 = self.smoothing**2
        u = phi**2 + s2
        p = self.power
        return self.amplitude * p * u ** (0.5 * p - 2.0) * ((p - 1.0) * phi**2 + s2)

    def field_at(self, value: float, sign: float) -> float:
        s, p = self.smoothing, self.power
        u = (max(value, 0.0) / self.amplitude + s**p) ** (2.0 / p)
        return math.copysign(math.sqrt(max(u - s * s, 0.0)), sign)


@dataclass(frozen=True)
class Linear(Monomial):
    """V = lambda |phi| (smoothed at 0 like the monomials), by its slope lambda."""

    amplitude: float = field(init=False, repr=False)
    power: float = field(init=False, repr=False)
    slope: float = 1e-12
    smoothing: float = 1e-10
    name: ClassVar[str] = "linear"
    PARAMETERS: ClassVar[tuple[Parameter, ...]] = (SLOPE, SMOOTHING)

    def __post_init__(self) -> None:
        SLOPE.check(self.slope, "potential.slope")
        object.__setattr__(self, "amplitude", self.slope)
        object.__setattr__(self, "power", 1.0)
        super().__post_init__()



@dataclass(frozen=True)
class CustomPotential:
    """A user object with V, dV, d2V, registered under ``name`` by :func:`register_potential`.

    The contracting-branch start assumes the minimum V = 0 sits at phi = 0 and that V grows
    monotonically on each side (the field value for a given V is found by bisection).
    ``origin`` says where the code came from (a plugin file and its SHA-256, or the Python
    object that registered it); it is part of :attr:`parameters` and so of every output's
    provenance.
    """

    target: Any
    name: str = "custom"
    values: tuple[tuple[str, float], ...] = ()
    origin: str = ""

    def __post_init__(self) -> None:
        for method in ("V", "dV", "d2V"):
            if not callable(getattr(self.target, method, None)):
                raise InputError(
                    f"registered potential '{self.name}' has no callable '{method}'; "
                    "allowed: an object with methods V, dV, d2V"
                )

    @property
    def parameters(self) -> dict[str, Any]:
        return {**dict(self.values), "registered_by": self.origin}

    @property
    def kernel(self) -> tuple[int, np.ndarray]:
        return KERNEL_PYTHON, np.zeros(4)

    def V(self, phi: Any) -> np.ndarray:
        return np.asarray(self.target.V(_arr(phi)), dtype=float)

    def dV(self, phi: Any) -> np.ndarray:
        return np.asarray(self.target.dV(_arr(phi)), dtype=float)

    def d2V(self, phi: Any) -> np.ndarray:
        return np.asarray(self.target.d2V(_arr(phi)), dtype=float)

    def field_at(self, value: float, sign: float) -> float:
        return invert_potential(self, value, sign)


@dataclass(frozen=True)
class RegisteredPotential:
    """A user potential registered from Python: ``factory(**parameters)`` -> object with V,
    dV, d2V on arrays (Planck units). ``parameters`` maps each numeric parameter name to its
    allowed range (lower, upper), either end None for unbounded; ``origin`` names the code."""

    name: str
    factory: Callable[..., Any]
    parameters: tuple[tuple[str, tuple[float | None, float | None]], ...]
    origin: str

    def build(self, table: Table) -> CustomPotential:
        values = []
        for key, (lo, hi) in self.parameters:
            declared = Parameter(key, f"parameter of the registered potential '{self.name}'",
                                 lower=lo, upper=hi, why=f"declared by {self.origin}")
            values.append((key, declared.read(table)))
        try:
            target = self.factory(**dict(values))
        except (TypeError, ValueError, ArithmeticError) as exc:
            raise InputError(f"potential '{self.name}' ({self.origin}) rejected its "
                             f"parameters: {exc}") from None
        return CustomPotential(target, self.name, tuple(values), self.origin)


#: user potentials registered from Python (never from a configuration)
REGISTERED: dict[str, RegisteredPotential] = {}
#: set by :func:`bouncelike.plugins.load_plugin` while a plugin file runs (its path and hash)
REGISTRATION_ORIGIN: str | None = None


def register_potential(name: str, factory: Callable[..., Any],
                       parameters: dict[str, tuple[float | None, float | None]] | None = None,
                       origin: str | None = None) -> None:
    """Make a user potential selectable by ``[potential] name = "<name>"``.

    ``factory(**values)`` must return an object with methods ``V``, ``dV``, ``d2V`` on arrays
    (Planck units, m_Pl = 1); ``parameters`` declares its numeric parameters and their allowed
    ranges, ``{"scale": (0.0, None)}``: a configuration gives exactly these keys, as numbers.
    Call it from your own script, or from a plugin file passed with ``--plugin FILE.py``.
    """
    if not isinstance(name, str) or not name.isidentifier():
        raise ValueError(f"potential name {name!r} must be an identifier")
    if name in POTENTIALS:
        raise ValueError(f"potential name '{name}' is built in; choose another name")
    if not callable(factory):
        raise ValueError("factory must be callable: factory(**parameters) -> object with V, "
                         "dV, d2V")
    declared = tuple((str(k), (None if lo is None else float(lo), None if hi is None else
                               float(hi))) for k, (lo, hi) in (parameters or {}).items())
    if "name" in dict(declared):
        raise ValueError("'name' cannot be a parameter of a potential")
    if origin is None:
        origin = REGISTRATION_ORIGIN
    if origin is None:
        origin = f"{getattr(factory, '__module__', '?')}.{getattr(factory, '__qualname__', '?')}"
    REGISTERED[name] = RegisteredPotential(name, factory, declared, origin)


def invert_potential(potential: Any, value: float, sign: float) -> float:
    """Field phi with sign ``sign`` where V(phi) = ``value``, by bracketing and bisection.

    Assumes V(0) = 0 and V growing monotonically away from 0 on that side.
    """
    if value <= 0:
        return 0.0
    direction = 1.0 if sign >= 0 else -1.0
    lo, hi = 0.0, 1e-12
    while float(potential.V(direction * hi)) < value:
        lo, hi = hi, hi * 2.0
        if hi > 1e6:
            raise InputError(
                f"potential '{potential.name}' never reaches V = {value:.4g} on the "
                f"{'positive' if direction > 0 else 'negative'} side of phi = 0"
            )
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if float(potential.V(direction * mid)) < value:
            lo = mid
        else:
            hi = mid
        if hi - lo <= 1e-15 * hi:
            break
    return direction * 0.5 * (lo + hi)


POTENTIALS: dict[str, type] = {
    "quadratic": Quadratic,
    "starobinsky": Starobinsky,
    "monomial": Monomial,
    "linear": Linear,
}


def check_smoothing(potential: Any, density: float) -> float:
    """Ratio of the smoothing scale to the field amplitude at ``density`` (monomials; else 0)."""
    if not isinstance(potential, Monomial):
        return 0.0
    amplitude = (density / potential.amplitude) ** (1.0 / potential.power)
    return potential.smoothing / amplitude


def potential_from_config(config: Table) -> Any:
    """Build the potential of ``[potential]`` from a run configuration (top-level Table).

    A :class:`Table` located at ``potential`` itself is accepted too.
    """
    if config.where == "potential":
        raw = config.data
    else:
        if "potential" not in config.data:
            raise InputError("missing table '[potential]' (keys: name and its parameters)")
        raw = config.data["potential"]
    head = Table(raw, "potential", tuple(raw) if isinstance(raw, dict) else ())
    known = {**{k: None for k in POTENTIALS}, **REGISTERED}
    name = head.string("name") if "name" in head.allowed else None
    if name is None:
        given = ", ".join(f"'potential.{k}'" for k in head.data)  # e.g. a misspelt 'name'
        raise InputError("missing key 'potential.name'" + (f" (given: {given})" if given else "")
                         + "; allowed: " + ", ".join(sorted(known)))
    if name not in known:
        hint = ""
        if name == "custom" or "object" in head.data:
            hint = ("; a configuration cannot name code to run: register a user potential "
                    "from Python with bouncelike.background.potentials.register_potential, "
                    "or in a plugin file given on the command line with --plugin FILE.py")
        raise InputError(f"'potential.name' = '{name}' is not known; allowed: "
                         + ", ".join(sorted(known)) + hint)
    if name in REGISTERED:
        reg = REGISTERED[name]
        table = Table(raw, "potential", ("name",) + tuple(k for k, _ in reg.parameters))
        return reg.build(table)
    cls = POTENTIALS[name]
    table = Table(raw, "potential", ("name",) + names_of(cls.PARAMETERS))
    return cls(**read_parameters(table, cls.PARAMETERS))
