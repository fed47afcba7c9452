"""Inflaton potentials: a registry of small immutable objects.

Every potential gives ``V(phi)``, ``dV(phi)`` (= V') and ``d2V(phi)`` (= V'') on arrays, in Planck
units (G = c = hbar = 1, non-reduced Planck mass m_Pl = 1; the reduced Planck mass is
M_Pl = 1/sqrt(8 pi), :data:`bouncelike.units.REDUCED_PLANCK_MASS`), a ``name`` and a
``parameters`` dict. Built-in potentials also carry a ``kernel`` code and a parameter vector
read by the compiled integrator (:mod:`bouncelike.background.kernels`); a user potential
(``custom``) has neither and is integrated by the slower pure-Python path.

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
``custom``      a user object: key ``object`` = "package.module:attribute" naming an object with
                methods V, dV, d2V on arrays (imported, never evaluated from a string); if the
                attribute is a factory without V, the optional sub-table ``[potential.arguments]``
                is passed to it as keyword arguments.

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

import importlib
import math
from dataclasses import dataclass, field
from typing import Any, ClassVar

import numpy as np

from ..config import Table
from ..errors import InputError
from ..units import REDUCED_PLANCK_MASS

#: kernel codes understood by the compiled integrator
KERNEL_QUADRATIC, KERNEL_STAROBINSKY, KERNEL_MONOMIAL, KERNEL_PYTHON = 0, 1, 2, 3

#: sqrt(2/3) / M_Pl with reduced M_Pl = 1/sqrt(8 pi): sqrt(16 pi / 3) in Planck units
STAROBINSKY_SLOPE = math.sqrt(2.0 / 3.0) / REDUCED_PLANCK_MASS


def _arr(phi: Any) -> np.ndarray:
    return np.asarray(phi, dtype=float)


@dataclass(frozen=True)
class Quadratic:
    """V = m^2 phi^2 / 2 with mass m in units of m_Pl (m >= 0; m = 0 is a free field)."""

    mass: float
    name: ClassVar[str] = "quadratic"
    PARAMETERS: ClassVar[tuple[str, ...]] = ("mass",)

    def __post_init__(self) -> None:
        if not (math.isfinite(self.mass) and self.mass >= 0):
            raise InputError(f"'potential.mass' = {self.mass!r} is out of range; allowed: >= 0")

    @property
    def parameters(self) -> dict[str, float]:
        return {"mass": self.mass}

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
class Starobinsky:
    """V = (3/4) M^2 M_Pl^2 (1 - exp(-sqrt(2/3) phi/M_Pl))^2, M in units of m_Pl, reduced M_Pl."""

    mass: float
    name: ClassVar[str] = "starobinsky"
    PARAMETERS: ClassVar[tuple[str, ...]] = ("mass",)

    def __post_init__(self) -> None:
        if not (math.isfinite(self.mass) and self.mass > 0):
            raise InputError(f"'potential.mass' = {self.mass!r} is out of range; allowed: > 0")

    @property
    def plateau(self) -> float:
        """Plateau height V_inf = (3/4) M^2 M_Pl^2 (Planck units)."""
        return 0.75 * self.mass**2 * REDUCED_PLANCK_MASS**2

    @property
    def parameters(self) -> dict[str, float]:
        return {"mass": self.mass}

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
class Monomial:
    """V = lambda [(phi^2 + s^2)^(p/2) - s^p] ~ lambda |phi|^p (see module notes on smoothing)."""

    amplitude: float
    power: float
    smoothing: float = 1e-10
    name: ClassVar[str] = "monomial"
    PARAMETERS: ClassVar[tuple[str, ...]] = ("amplitude", "power", "smoothing")

    def __post_init__(self) -> None:
        checks = (
            ("amplitude", self.amplitude, self.amplitude > 0, "> 0"),
            ("power", self.power, 0 < self.power <= 10, "> 0 and <= 10"),
            ("smoothing", self.smoothing, 0 < self.smoothing < 1e-2, "> 0 and < 0.01"),
        )
        for key, value, ok, allowed in checks:
            if not (math.isfinite(value) and ok):
                raise InputError(
                    f"'potential.{key}' = {value!r} is out of range; allowed: {allowed}"
                )

    @property
    def parameters(self) -> dict[str, float]:
        return {"amplitude": self.amplitude, "power": self.power, "smoothing": self.smoothing}

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
    PARAMETERS: ClassVar[tuple[str, ...]] = ("slope", "smoothing")

    def __post_init__(self) -> None:
        if not (math.isfinite(self.slope) and self.slope > 0):
            raise InputError(f"'potential.slope' = {self.slope!r} is out of range; allowed: > 0")
        object.__setattr__(self, "amplitude", self.slope)
        object.__setattr__(self, "power", 1.0)
        super().__post_init__()

    @property
    def parameters(self) -> dict[str, float]:
        return {"slope": self.slope, "smoothing": self.smoothing}


@dataclass(frozen=True)
class CustomPotential:
    """A user object with V, dV, d2V, imported from ``object`` = "package.module:attribute".

    The contracting-branch start assumes the minimum V = 0 sits at phi = 0 and that V grows
    monotonically on each side (the field value for a given V is found by bisection).
    """

    target: Any
    path: str = ""
    name: ClassVar[str] = "custom"
    PARAMETERS: ClassVar[tuple[str, ...]] = ("object", "arguments")

    def __post_init__(self) -> None:
        for method in ("V", "dV", "d2V"):
            if not callable(getattr(self.target, method, None)):
                raise InputError(
                    f"'potential.object' = '{self.path}' has no callable '{method}'; "
                    "allowed: an object with methods V, dV, d2V"
                )

    @property
    def parameters(self) -> dict[str, Any]:
        extra = getattr(self.target, "parameters", {})
        return {"object": self.path, **(dict(extra) if isinstance(extra, dict) else {})}

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


def import_object(path: str, key: str = "potential.object") -> Any:
    """Import ``"package.module:attribute"`` (dotted attribute allowed); never evaluates code."""
    if not isinstance(path, str) or path.count(":") != 1:
        raise InputError(f"'{key}' = {path!r} must look like 'package.module:attribute'")
    module_name, attr = path.split(":")
    if not module_name or not attr:
        raise InputError(f"'{key}' = {path!r} must look like 'package.module:attribute'")
    try:
        obj: Any = importlib.import_module(module_name)
    except ImportError as exc:
        raise InputError(f"'{key}': cannot import module '{module_name}' ({exc})") from None
    for part in attr.split("."):
        if not part.isidentifier() or not hasattr(obj, part):
            raise InputError(f"'{key}': module '{module_name}' has no attribute '{attr}'")
        obj = getattr(obj, part)
    return obj


POTENTIALS: dict[str, type] = {
    "quadratic": Quadratic,
    "starobinsky": Starobinsky,
    "monomial": Monomial,
    "linear": Linear,
    "custom": CustomPotential,
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
    name = head.string("name", choices=POTENTIALS) if "name" in head.allowed else None
    if name is None:
        raise InputError(
            "missing key 'potential.name'; allowed: " + ", ".join(sorted(POTENTIALS))
        )
    cls = POTENTIALS[name]
    table = Table(raw, "potential", ("name",) + cls.PARAMETERS)
    if name == "quadratic":
        return Quadratic(table.number("mass", minimum=0.0))
    if name == "starobinsky":
        return Starobinsky(table.positive("mass"))
    if name == "monomial":
        return Monomial(
            table.positive("amplitude"),
            table.number("power", minimum=0.0, maximum=10.0, exclusive_minimum=True),
            table.number("smoothing", 1e-10, minimum=0.0, maximum=1e-2,
                         exclusive_minimum=True, exclusive_maximum=True),
        )
    if name == "linear":
        return Linear(
            slope=table.positive("slope"),
            smoothing=table.number("smoothing", 1e-10, minimum=0.0, maximum=1e-2,
                                   exclusive_minimum=True, exclusive_maximum=True),
        )
    path = table.string("object")
    target = import_object(path)
    if isinstance(target, type) or (callable(target) and not callable(getattr(target, "V", None))):
        arguments = table.raw("arguments", {})
        if not isinstance(arguments, dict):
            raise InputError("'potential.arguments' must be a table of keyword arguments")
        try:
            target = target(**arguments)
        except TypeError as exc:
            raise InputError(f"'potential.arguments' rejected by '{path}': {exc}") from None
    elif "arguments" in table:
        raise InputError(
            f"'potential.arguments' given but '{path}' is not a factory (it already has V)"
        )
    return CustomPotential(target, path)
