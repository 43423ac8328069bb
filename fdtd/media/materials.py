r"""Material models: constant permittivity, Lorentz and Drude poles.

Conventions (normalized units, see :mod:`fdtd.units`): time dependence
``exp(-i omega t)``, so a passive medium has ``Im eps(omega) >= 0`` for
``omega > 0``.  The displacement is

.. math::  D = \varepsilon_\infty E + \sum_p P_p ,

and every pole obeys one auxiliary differential equation (ADE) of the form

.. math::  \ddot P + a_1 \dot P + a_0 P = b\, E ,

* Lorentz pole (oscillator strength :math:`\Delta\varepsilon`, resonance
  :math:`\Omega`, damping :math:`\gamma`): ``a0 = Omega^2, a1 = gamma,
  b = delta_eps Omega^2``;
* Drude pole (plasma frequency :math:`\omega_p`, collision rate
  :math:`\gamma`): ``a0 = 0, a1 = gamma, b = omega_p^2``.

The continuum susceptibility of a pole is ``b / (a0 - omega^2 - i a1 omega)``.

Time discretisation (the standard second-order central-difference ADE, e.g.
Taflove & Hagness, *Computational Electrodynamics*, 3rd ed. (2005), sec. 9.4,
from memory), centred on the integer time level n where E lives:

.. math::
   \frac{P^{n+1}-2P^n+P^{n-1}}{\Delta t^2} + a_1\frac{P^{n+1}-P^{n-1}}{2\Delta t}
   + a_0 P^n = b\,E^n ,

so ``P^{n+1} = c1 P^n + c2 P^{n-1} + c3 E^n`` (see :meth:`Pole.ade_coefficients`).
Substituting ``exp(-i omega n dt)`` gives the *discrete* susceptibility the
scheme realises,

.. math::
   \chi_d(\omega) = \frac{b}{a_0 - \tilde\omega^2 - i a_1 \hat\omega},\qquad
   \tilde\omega = \frac{2}{\Delta t}\sin\frac{\omega\Delta t}{2},\quad
   \hat\omega = \frac{\sin\omega\Delta t}{\Delta t},

which tends to the continuum one as ``(omega dt)^2 -> 0``.  The derivation is
written out in docs/theory/yee-and-ade.md, "ADE and the discrete permittivity".

The energy of a pole (used by the ledger) is
``W = (Pdot^2 + a0 P^2) / (2 b)`` and the power it hands to its heat bath is
``a1 Pdot^2 / b`` (multiply the ADE by ``Pdot / b``).
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from fdtd import _checks
from fdtd.errors import ParameterError


class Pole:
    """Base class: one term of the susceptibility with a second-order ADE.

    Subclasses implement :meth:`ade_parameters` returning ``(a0, a1, b)`` and
    :meth:`scaled` (the same pole with its strength multiplied by ``f``, used
    for cells that are part filled).
    """

    kind = "pole"

    def ade_parameters(self) -> tuple[float, float, float]:  # pragma: no cover - abstract
        raise NotImplementedError

    def scaled(self, f: float) -> Pole:  # pragma: no cover - abstract
        raise NotImplementedError

    # -- continuum and discrete response --------------------------------
    def susceptibility(self, omega, k=None):
        """Continuum susceptibility chi(omega, k) (complex, broadcasts over omega and k).

        ``k`` (wavenumber, normalized) matters only for a spatially dispersive
        pole; without it such a pole gives its long-wavelength (k = 0) response."""
        a0, a1, b = self.ade_parameters()
        w = np.asarray(omega, dtype=complex)
        cl = self.laplacian_coefficient()
        if cl and k is not None:
            a0 = a0 + cl * np.asarray(k) ** 2   # complex k: damped or evanescent waves
        return b / (a0 - w * w - 1j * a1 * w)

    def discrete_susceptibility(self, omega, dt: float, K2=None):
        """Susceptibility realised by the central-difference ADE at time step dt.

        ``K2`` is the eigenvalue of minus the discrete Laplacian,
        ``sum_i (2/Delta_i)^2 sin^2(k_i Delta_i / 2)``, for a spatially
        dispersive pole (ignored by local poles; default 0)."""
        a0, a1, b = self.ade_parameters()
        cl = self.laplacian_coefficient()
        if cl and K2 is not None:
            a0 = a0 + cl * np.asarray(K2, dtype=float)
        w = np.asarray(omega, dtype=complex)
        w_tilde_sq = (2.0 / dt * np.sin(w * dt / 2.0)) ** 2
        w_hat = np.sin(w * dt) / dt
        return b / (a0 - w_tilde_sq - 1j * a1 * w_hat)

    def laplacian_coefficient(self) -> float:
        """Coefficient ``c_L`` of ``-c_L lap P`` in the ADE (0: a local pole).

        A spatially dispersive pole obeys ``P'' + a1 P' + a0 P - c_L lap P = b E``;
        see :class:`NonlocalLorentzPole`."""
        return 0.0

    @property
    def is_nonlocal(self) -> bool:
        return self.laplacian_coefficient() != 0.0

    def ade_coefficients(self, dt: float) -> tuple[float, float, float]:
        """``(c1, c2, c3)`` of ``P^{n+1} = c1 P^n + c2 P^{n-1} + c3 E^n``."""
        a0, a1, b = self.ade_parameters()
        denom = 1.0 / dt**2 + a1 / (2.0 * dt)
        c1 = (2.0 / dt**2 - a0) / denom
        c2 = -(1.0 / dt**2 - a1 / (2.0 * dt)) / denom
        c3 = b / denom
        return c1, c2, c3

    def nyquist_susceptibility(self, dt: float, K2: float = 0.0) -> float:
        """chi_d at omega dt = pi (z = -1); the loss term vanishes there."""
        a0, _a1, b = self.ade_parameters()
        a0 = a0 + self.laplacian_coefficient() * K2
        return b / (a0 - 4.0 / dt**2)


@dataclass(frozen=True)
class LorentzPole(Pole):
    """Lorentz oscillator ``P'' + gamma P' + Omega^2 P = delta_eps Omega^2 E``.

    Parameters
    ----------
    delta_eps : float
        Oscillator strength (static minus high-frequency permittivity), >= 0.
    omega0 : float
        Resonance angular frequency Omega (normalized, c/ell), > 0.
        Alternatively give ``omega0_sq`` (Omega^2, > 0).
    gamma : float
        Damping rate (normalized), >= 0: the loss of the oscillators into a
        heat bath.
    """

    delta_eps: float
    omega0: float | None = None
    gamma: float = 0.0
    omega0_sq: float | None = field(default=None, repr=False)

    kind = "lorentz"

    def __post_init__(self) -> None:
        de = _checks.non_negative("Lorentz pole delta_eps", self.delta_eps)
        if self.omega0 is None and self.omega0_sq is None:
            raise ParameterError("Lorentz pole needs omega0 (resonance frequency, > 0) or omega0_sq")
        if self.omega0_sq is not None:
            w2 = _checks.finite_number("Lorentz pole omega0_sq (Omega^2)", self.omega0_sq)
            if w2 <= 0.0:
                raise ParameterError(
                    f"Lorentz pole omega0_sq (Omega^2) = {w2!r} is not allowed: expected a "
                    "finite number > 0 (a pole with Omega^2 <= 0 is not a bound oscillator; "
                    "use DrudePole for free carriers)")
            w0 = float(np.sqrt(w2))
            if self.omega0 is not None and not np.isclose(self.omega0, w0, rtol=1e-12):
                raise ParameterError(
                    f"Lorentz pole omega0 = {self.omega0!r} and omega0_sq = {w2!r} disagree")
        else:
            w0 = _checks.positive("Lorentz pole omega0 (resonance Omega)", self.omega0)
        g = _checks.non_negative("Lorentz pole gamma (damping rate)", self.gamma)
        object.__setattr__(self, "delta_eps", de)
        object.__setattr__(self, "omega0", w0)
        object.__setattr__(self, "omega0_sq", w0 * w0)
        object.__setattr__(self, "gamma", g)

    def ade_parameters(self) -> tuple[float, float, float]:
        w2 = self.omega0 * self.omega0
        return w2, self.gamma, self.delta_eps * w2

    def scaled(self, f: float) -> LorentzPole:
        return replace(self, delta_eps=self.delta_eps * f, omega0_sq=None)


@dataclass(frozen=True)
class DrudePole(Pole):
    """Free-carrier (Drude) pole ``P'' + gamma P' = omega_p^2 E``.

    Parameters
    ----------
    omega_p : float
        Plasma angular frequency (normalized), > 0.
    gamma : float
        Collision rate (normalized), >= 0.
    """

    omega_p: float
    gamma: float = 0.0

    kind = "drude"

    def __post_init__(self) -> None:
        object.__setattr__(self, "omega_p", _checks.positive("Drude pole omega_p", self.omega_p))
        object.__setattr__(self, "gamma", _checks.non_negative("Drude pole gamma", self.gamma))

    def ade_parameters(self) -> tuple[float, float, float]:
        return 0.0, self.gamma, self.omega_p**2

    def scaled(self, f: float) -> DrudePole:
        return replace(self, omega_p=self.omega_p * float(np.sqrt(f)))


@dataclass(frozen=True)
class NonlocalLorentzPole(Pole):
    r"""Spatially dispersive Lorentz oscillator (a physical wavenumber cutoff).

    .. math::  \ddot P + \gamma \dot P + \Omega^2 P - \beta_{nl}^2 \nabla^2 P
               = \Delta\varepsilon\,\Omega^2 E ,

    so that ``chi(omega, k) = delta_eps Omega^2 / (Omega^2 + beta_nl^2 k^2 -
    omega^2 - i gamma omega)``: the resonance of the oscillators rises with the
    wavenumber, which bends the lower polariton branch so that its phase
    velocity tends to ``beta_nl`` instead of zero at large k.  This is the
    exciton-polariton model with spatial dispersion of J. J. Hopfield and
    D. G. Thomas, Phys. Rev. 132, 563 (1963) (there ``D k^2`` with
    ``D = beta_nl^2``), with Pekar's additional boundary condition ``P = 0`` at
    the surface of the medium (S. I. Pekar, Sov. Phys. JETP 6, 785 (1958)).
    On the grid ``nabla^2`` is the standard second-difference Laplacian on
    each polarization component's own lattice, over the nodes wholly inside the
    medium, with ``P = 0`` on its surface imposed through a ghost value (see
    docs/theory/nonlocal-pole.md).

    Parameters
    ----------
    delta_eps : float
        Oscillator strength, >= 0.
    omega0 : float
        Resonance Omega at k = 0 (normalized, c/ell), > 0.
    gamma : float
        Damping rate (normalized), >= 0.
    beta_nl : float
        Nonlocal speed (fraction of c), 0 <= beta_nl < 1; 0 is the local pole.
    fill : float
        Fraction of a part-filled cell (set by :meth:`scaled`; 1 in the bulk).
    """

    delta_eps: float
    omega0: float
    gamma: float = 0.0
    beta_nl: float = 0.0
    fill: float = 1.0

    kind = "nonlocal_lorentz"

    def __post_init__(self) -> None:
        object.__setattr__(self, "delta_eps", _checks.non_negative("nonlocal pole delta_eps", self.delta_eps))
        object.__setattr__(self, "omega0", _checks.positive("nonlocal pole omega0 (resonance Omega)",
                                                            self.omega0))
        object.__setattr__(self, "gamma", _checks.non_negative("nonlocal pole gamma (damping rate)",
                                                               self.gamma))
        object.__setattr__(self, "beta_nl", _checks.in_range(
            "nonlocal pole beta_nl (fraction of c)", self.beta_nl, 0.0, 1.0, hi_open=True))
        object.__setattr__(self, "fill", _checks.in_range("nonlocal pole fill fraction", self.fill,
                                                          0.0, 1.0, lo_open=True))

    def ade_parameters(self) -> tuple[float, float, float]:
        w2 = self.omega0 * self.omega0
        return w2, self.gamma, self.delta_eps * w2

    def laplacian_coefficient(self) -> float:
        # scaled with b by the fill fraction, so that the ADE divided by b has the same
        # -(beta^2/b_bulk) lap P everywhere; the model places the pole only on wholly
        # filled nodes (fill = 1), the scaling keeps scaled() consistent for other uses
        return self.beta_nl**2 * self.fill

    def scaled(self, f: float) -> NonlocalLorentzPole:
        return replace(self, delta_eps=self.delta_eps * f, fill=self.fill * f)

    def local(self) -> LorentzPole:
        """The same oscillator without spatial dispersion."""
        return LorentzPole(self.delta_eps, self.omega0, self.gamma)


#: Registry of pole kinds (used by scenario files and parametrised tests).
POLE_KINDS: dict[str, type[Pole]] = {"lorentz": LorentzPole, "drude": DrudePole,
                                     "nonlocal_lorentz": NonlocalLorentzPole}


def register_pole_kind(name: str, cls: type[Pole]) -> None:
    """Make a new pole model known to scenario files and the test-suite."""
    POLE_KINDS[name] = cls


@dataclass(frozen=True)
class Material:
    """A linear, isotropic, non-magnetic medium ``eps(omega) = eps_inf + sum chi_p``.

    Parameters
    ----------
    eps_inf : float
        High-frequency relative permittivity, > 0.
    poles : sequence of Pole
        Any number of Lorentz/Drude poles.
    name : str
        Label used in reports and the energy ledger.
    """

    eps_inf: float = 1.0
    poles: tuple[Pole, ...] = ()
    name: str = "material"

    def __post_init__(self) -> None:
        object.__setattr__(self, "eps_inf",
                           _checks.positive(f"material {self.name!r} eps_inf", self.eps_inf))
        poles = tuple(self.poles)
        for k, p in enumerate(poles):
            if not isinstance(p, Pole):
                raise ParameterError(
                    f"material {self.name!r} pole {k} = {p!r}: expected a LorentzPole or DrudePole")
        object.__setattr__(self, "poles", poles)

    @property
    def is_dispersive(self) -> bool:
        return bool(self.poles)

    @property
    def is_nonlocal(self) -> bool:
        """True if a pole is spatially dispersive (eps depends on k)."""
        return any(p.is_nonlocal for p in self.poles)

    def permittivity(self, omega, k=None):
        """Continuum relative permittivity eps(omega, k) (complex; broadcasts).

        ``k`` (normalized wavenumber) matters only for spatially dispersive
        poles; without it they give their long-wavelength (k = 0) response."""
        w = np.asarray(omega, dtype=complex)
        eps = np.full(np.broadcast(w, np.asarray(0.0 if k is None else k)).shape, self.eps_inf,
                      dtype=complex)
        for p in self.poles:
            eps = eps + p.susceptibility(w, k)
        return eps if eps.ndim else complex(eps)

    def discrete_permittivity(self, omega, dt: float, k=None, spacing: float | None = None):
        """Permittivity eps_d(omega) realised by the time-stepping scheme at ``dt``.

        The spatial Yee dispersion then reads
        ``(2/dt)^2 sin^2(omega dt / 2) eps_d(omega) = K^2`` with
        ``K^2 = sum_i (2/d_i)^2 sin^2(k_i d_i / 2)``.  For a spatially dispersive
        pole give the wavenumber ``k`` along one axis of cell size ``spacing``
        (K^2 as above; without ``spacing`` K^2 = k^2).
        """
        dt = _checks.positive("dt", dt)
        w = np.asarray(omega, dtype=complex)
        K2 = None
        if k is not None:
            kk = np.asarray(k, dtype=float)
            K2 = kk**2 if spacing is None else (2.0 / spacing * np.sin(kk * spacing / 2.0)) ** 2
        eps = np.full(np.broadcast(w, np.asarray(0.0 if K2 is None else K2)).shape, self.eps_inf,
                      dtype=complex)
        for p in self.poles:
            eps = eps + p.discrete_susceptibility(w, dt, K2)
        return eps if eps.ndim else complex(eps)

    def nyquist_permittivity(self, dt: float, K2: float = 0.0) -> float:
        """eps_d at omega dt = pi, which fixes the stability limit (see stability.py)."""
        return self.eps_inf + sum(p.nyquist_susceptibility(dt, K2) for p in self.poles)

    def refractive_index(self, omega):
        """Complex index sqrt(eps) on the branch with Im n >= 0."""
        n = np.sqrt(np.asarray(self.permittivity(omega), dtype=complex))
        n = np.where(n.imag < 0, -n, n)
        return n if n.ndim else complex(n)

    def scaled(self, f: float) -> Material:
        """The material with eps_inf and every pole strength multiplied by ``f``."""
        return Material(self.eps_inf * f, tuple(p.scaled(f) for p in self.poles), self.name)


VACUUM = Material(1.0, (), "vacuum")


def lorentz_material(eps_inf: float, delta_eps: float, omega0: float, gamma: float = 0.0,
                     name: str = "lorentz") -> Material:
    """Shortcut: a one-pole Lorentz medium."""
    return Material(eps_inf, (LorentzPole(delta_eps, omega0, gamma),), name)
