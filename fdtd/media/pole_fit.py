r"""Passive pole fits: Lorentz and Drude poles least-squares fitted to tabulated permittivity.

:func:`fit_poles` fits ``eps(omega)`` samples (normalized angular frequency,
complex permittivity in the ``exp(-i omega t)`` convention) with a chosen number
of Lorentz and Drude poles, every parameter bounded to a passive medium, and
returns a :class:`PoleFit` with the material and the quality of the fit;
:func:`material_from_table` reads a table (:mod:`fdtd.media.tables`) and fits
it.  A figure of data against fit is :func:`fdtd.viz.pole_fit.plot_pole_fit`.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from fdtd import _checks
from fdtd.errors import ParameterError
from fdtd.media.materials import DrudePole, LorentzPole, Material
from fdtd.media.tables import read_optical_table


@dataclass
class PoleFit:
    """Result of :func:`fit_poles`.

    Attributes
    ----------
    material : Material
        The fitted medium (passive by construction).
    eps_inf : float
        Fitted (or fixed) high-frequency permittivity.
    lorentz : tuple of (delta_eps, omega0, gamma)
        Lorentz poles, normalized frequencies, sorted by ``omega0``.
    drude : tuple of (omega_p, gamma)
        Drude poles, normalized frequencies, sorted by ``omega_p``.
    omega, eps_data : ndarray
        The data that were fitted.
    eps_fit : ndarray
        The fitted permittivity at ``omega``.
    point_errors : ndarray
        Per point ``|eps_fit - eps_data| / s``, with the scale
        ``s = sqrt(|eps_data|^2 + floor^2)`` (``floor = 1e-3 max|eps_data|``, so
        that a zero crossing of eps does not blow up the relative error).
    residual : float
        Root mean square of ``point_errors`` (unweighted).
    max_error : float
        Largest entry of ``point_errors``.
    active_bounds : tuple of str
        Parameters that ended on a passivity bound (e.g. ``"lorentz[1].gamma"``
        at 0, ``"eps_inf"`` at ``eps_inf_min``): the data asked for a value
        the passive model cannot take, or the pole is not needed.
    n_starts : int
        Number of starting points that were run.
    success : bool
        Whether the optimiser reported convergence for the best start.
    message : str
        Optimiser message for the best start.
    """

    material: Material
    eps_inf: float
    lorentz: tuple[tuple[float, float, float], ...]
    drude: tuple[tuple[float, float], ...]
    omega: np.ndarray
    eps_data: np.ndarray
    eps_fit: np.ndarray
    point_errors: np.ndarray
    residual: float
    max_error: float
    active_bounds: tuple[str, ...] = ()
    n_starts: int = 0
    success: bool = True
    message: str = ""
    eps_inf_fitted: bool = field(default=True, repr=False)

    @property
    def parameters(self) -> dict:
        """The fitted parameters as a plain dict (normalized frequencies)."""
        return {"eps_inf": self.eps_inf,
                "lorentz": [dict(delta_eps=d, omega0=w, gamma=g) for d, w, g in self.lorentz],
                "drude": [dict(omega_p=w, gamma=g) for w, g in self.drude]}

    def summary(self) -> str:
        """A few lines describing the fit (for logs and reports)."""
        out = [f"pole fit of {self.omega.size} points: rms relative error {self.residual:.3g}, "
               f"max {self.max_error:.3g}",
               f"  eps_inf = {self.eps_inf:.6g}" + ("" if self.eps_inf_fitted else " (fixed)")]
        out += [f"  Lorentz: delta_eps = {d:.6g}, omega0 = {w:.6g}, gamma = {g:.6g}"
                for d, w, g in self.lorentz]
        out += [f"  Drude: omega_p = {w:.6g}, gamma = {g:.6g}" for w, g in self.drude]
        if self.active_bounds:
            out.append(f"  on passivity bounds: {', '.join(self.active_bounds)}")
        return "\n".join(out)


class _Model:
    """Pole model on scaled frequencies ``x = omega / s`` (``s = max omega``).

    Why scaled: the optimiser then sees resonances and rates of order one
    whatever ``ell`` is, and the default tolerances mean the same thing for
    every table.  Parameter vector: ``[eps_inf?] + [d_j, u_j, g_j] * n_l +
    [p_k, h_k] * n_d`` with ``u = Omega/s``, ``g = gamma/s``, ``p = omega_p/s``,
    ``h = gamma_D/s``.  All entries are bounded below (passivity).
    """

    def __init__(self, x, n_l, n_d, fit_einf):
        self.x = x
        self.n_l, self.n_d, self.fit_einf = n_l, n_d, fit_einf
        self.off = 1 if fit_einf else 0
        self.n_par = self.off + 3 * n_l + 2 * n_d

    def eval(self, q, eps_fixed):
        x = self.x
        eps = np.full(x.shape, q[0] if self.fit_einf else eps_fixed, dtype=complex)
        J = np.zeros((x.size, self.n_par), dtype=complex)
        if self.fit_einf:
            J[:, 0] = 1.0
        o = self.off
        for j in range(self.n_l):
            d, u, g = q[o + 3 * j: o + 3 * j + 3]
            D = u * u - x * x - 1j * g * x
            eps += d * u * u / D
            J[:, o + 3 * j] = u * u / D
            J[:, o + 3 * j + 1] = 2.0 * d * u * (-x * x - 1j * g * x) / (D * D)
            J[:, o + 3 * j + 2] = 1j * d * u * u * x / (D * D)
        o += 3 * self.n_l
        for k in range(self.n_d):
            p, h = q[o + 2 * k: o + 2 * k + 2]
            D = x * x + 1j * h * x
            eps -= p * p / D
            J[:, o + 2 * k] = -2.0 * p / D
            J[:, o + 2 * k + 1] = 1j * p * p * x / (D * D)
        return eps, J


def _peak_guesses(x, im):
    """Positions and FWHM (scaled units) of peaks of Im eps, most prominent first."""
    from scipy.signal import find_peaks, peak_widths

    if x.size < 3 or not np.any(im > 0):
        return []
    idx, props = find_peaks(im, prominence=0.02 * float(np.max(im)))
    if idx.size == 0:
        return []
    order = np.argsort(props["prominences"])[::-1]
    idx = idx[order]
    widths, _, left, right = peak_widths(im, idx, rel_height=0.5)
    grid = np.arange(x.size)
    out = []
    for i, lo, hi in zip(idx, left, right, strict=True):
        fwhm = float(np.interp(hi, grid, x) - np.interp(lo, grid, x))
        out.append((float(x[i]), max(fwhm, 1e-3 * float(x[i]))))
    return out


def fit_poles(omega, eps_values, n_lorentz: int = 1, n_drude: int = 0,
              eps_inf: float | None = None, weights=None, *, eps_inf_min: float = 1.0,
              imag_weight: float = 1.0, n_starts: int = 8, seed: int = 0,
              name: str = "fitted") -> PoleFit:
    r"""Passive least-squares fit of tabulated permittivity by Lorentz and Drude poles.

    Minimises ``sum_k w_k^2 [ (Re Δ_k)^2 + imag_weight^2 (Im Δ_k)^2 ] / s_k^2``
    with ``Δ_k = eps_model(omega_k) - eps_k`` and the scale
    ``s_k = sqrt(|eps_k|^2 + floor^2)``, ``floor = 1e-3 max |eps|`` (a relative
    error that stays finite where eps crosses zero, e.g. at a polar crystal's
    LO frequency).  Passivity is enforced by bounds, not penalties:
    ``delta_eps >= 0``, ``Omega > 0``, ``gamma >= 0``, ``omega_p > 0``,
    ``eps_inf >= eps_inf_min`` -- so every returned parameter set gives
    ``Im eps >= 0`` for ``omega > 0`` and is accepted by
    :class:`~fdtd.media.materials.LorentzPole` / :class:`~fdtd.media.materials.DrudePole`.

    Method: bounded trust-region least squares (``scipy.optimize.least_squares``,
    ``method="trf"``, analytic Jacobian) on frequencies scaled by ``max omega``,
    from several starts.  In each start the resonances and rates are placed
    first -- at the most prominent peaks of ``Im eps`` (rate = peak FWHM),
    then spread over the band, then at seeded random positions -- and the
    parameters that enter linearly (``eps_inf``, ``delta_eps Omega^2``,
    ``omega_p^2``) are set by bounded linear least squares before the full
    nonlinear fit.  The best start wins.

    Parameters
    ----------
    omega : array
        Normalized angular frequencies, > 0 (a Drude pole is singular at 0).
    eps_values : array of complex
        Permittivity at ``omega`` (convention ``exp(-i omega t)``).
    n_lorentz, n_drude : int
        Numbers of poles (>= 0, at least one pole in total).
    eps_inf : float, optional
        Fix eps_inf (> 0) instead of fitting it.
    weights : array, optional
        Per-point weights (>= 0); default 1.
    eps_inf_min : float
        Lower bound of a fitted eps_inf (default 1: the vacuum value that a
        complete set of resonances tends to; lower it, > 0, for a table whose
        band is followed by resonances that the fit does not include).
    imag_weight : float
        Weight of the imaginary part relative to the real part (> 0).
    n_starts : int
        Maximum number of starting points (>= 1); stops early on an exact fit.
    seed : int
        Seed of the random starts (the fit is reproducible).
    name : str
        Name of the returned material.

    Returns
    -------
    PoleFit
    """
    from scipy.optimize import least_squares, lsq_linear

    w = np.atleast_1d(np.asarray(omega, dtype=float))
    e = np.atleast_1d(np.asarray(eps_values, dtype=complex))
    if w.ndim != 1 or e.shape != w.shape:
        raise ParameterError(f"omega has shape {w.shape} and eps_values {e.shape}: expected two "
                             "1D arrays of the same length")
    _checks.finite_array("omega", w)
    if not np.all(np.isfinite(e)):
        raise ParameterError("eps_values contains non-finite entries: expected finite numbers")
    if np.any(w <= 0):
        raise ParameterError(f"omega has {np.count_nonzero(w <= 0)} entries <= 0 (smallest "
                             f"{w.min()!r}): expected angular frequencies > 0")
    n_l = _checks.positive_int("n_lorentz", n_lorentz, minimum=0)
    n_d = _checks.positive_int("n_drude", n_drude, minimum=0)
    if n_l + n_d == 0:
        raise ParameterError("n_lorentz = 0 and n_drude = 0: expected at least one pole")
    n_starts = _checks.positive_int("n_starts", n_starts)
    imag_weight = _checks.positive("imag_weight", imag_weight)
    fit_einf = eps_inf is None
    if fit_einf:
        eps_inf_min = _checks.positive("eps_inf_min", eps_inf_min)
        eps_fixed = 0.0
    else:
        eps_fixed = _checks.positive("eps_inf", eps_inf)
    if weights is None:
        wt = np.ones_like(w)
    else:
        wt = np.atleast_1d(np.asarray(weights, dtype=float))
        if wt.shape != w.shape:
            raise ParameterError(f"weights has shape {wt.shape}: expected {w.shape} (one per point)")
        _checks.finite_array("weights", wt)
        if np.any(wt < 0) or not np.any(wt > 0):
            raise ParameterError("weights: expected numbers >= 0, at least one > 0")

    order = np.argsort(w, kind="stable")
    w, e, wt = w[order], e[order], wt[order]
    model = _Model(w / w.max(), n_l, n_d, fit_einf)
    n_par = model.n_par
    if 2 * np.count_nonzero(wt > 0) < n_par:
        raise ParameterError(f"{w.size} points (with weight > 0) give {2 * w.size} real data for "
                             f"{n_par} parameters: expected at least as many data as parameters")
    s = w.max()
    x = model.x
    floor = 1e-3 * float(np.max(np.abs(e)))
    scale = np.sqrt(np.abs(e) ** 2 + floor**2)
    rw = wt / scale                          # row weights of the real part
    iw = imag_weight * rw                    # ... and of the imaginary part

    def resid(q):
        m, _ = model.eval(q, eps_fixed)
        d = m - e
        return np.concatenate([rw * d.real, iw * d.imag])

    def jac(q):
        _, J = model.eval(q, eps_fixed)
        return np.vstack([rw[:, None] * J.real, iw[:, None] * J.imag])

    # Bounds.  Omega and omega_p must be strictly positive for the pole classes;
    # 1e-9 of the top frequency is "zero" for any practical purpose.  The upper
    # bound on Omega stops a pole from running to infinity when the data only
    # need a constant (it then behaves as eps_inf; see active_bounds).
    tiny = 1e-9
    lb, ub, names = [], [], []
    if fit_einf:
        lb.append(eps_inf_min)
        ub.append(np.inf)
        names.append("eps_inf")
    for j in range(n_l):
        lb += [0.0, tiny, 0.0]
        ub += [np.inf, 1e4, np.inf]
        names += [f"lorentz[{j}].delta_eps", f"lorentz[{j}].omega0", f"lorentz[{j}].gamma"]
    for k in range(n_d):
        lb += [tiny, 0.0]
        ub += [np.inf, np.inf]
        names += [f"drude[{k}].omega_p", f"drude[{k}].gamma"]
    lb, ub = np.array(lb), np.array(ub)

    # ---- starting points for the nonlinear parameters ------------------------
    rng = np.random.default_rng(seed)
    x_lo, x_hi = float(x[0]), float(x[-1])
    peaks = _peak_guesses(x, e.imag)
    # Drude rate from the lowest-frequency point: for a Drude-dominated
    # response Im eps / (eps_inf - Re eps) ~ gamma / omega.
    h0 = float(np.clip(x_lo * max(e.imag[0], 0.0) / max(1.0 - e.real[0], 1e-12), 1e-4, 10.0))

    def spread(n, lo, hi):
        if n == 0:
            return np.zeros(0)
        if hi <= lo * 1.0001:
            return np.full(n, lo)
        return np.geomspace(lo, hi, n + 2)[1:-1]

    starts = []
    for gfac in (1.0, 0.3, 3.0):
        us, gs = [], []
        for u, fwhm in peaks[:n_l]:
            us.append(u)
            gs.append(gfac * fwhm)
        rest = spread(n_l - len(us), x_lo, x_hi)
        us += list(rest)
        gs += list(gfac * 0.1 * rest)
        starts.append((np.array(us), np.array(gs), np.full(n_d, h0 * gfac)))
    starts.append((spread(n_l, x_lo, x_hi), 0.1 * spread(n_l, x_lo, x_hi),
                   np.full(n_d, 0.1 * x_lo)))
    starts.append((spread(n_l, x_lo / 2, min(2 * x_hi, 1e3)),
                   0.3 * spread(n_l, x_lo / 2, min(2 * x_hi, 1e3)), np.full(n_d, x_lo)))
    while len(starts) < n_starts:
        us = np.exp(rng.uniform(np.log(x_lo / 3), np.log(3 * x_hi), n_l))
        gs = us * np.exp(rng.uniform(np.log(0.01), np.log(1.0), n_l))
        hs = np.exp(rng.uniform(np.log(1e-3), np.log(1.0), n_d))
        starts.append((np.sort(us), gs, hs))
    starts = starts[:n_starts]

    def linear_start(us, gs, hs):
        """Best linear parameters (eps_inf, b_j = d_j u_j^2, p_k^2) for fixed u, g, h."""
        cols, lo = [], []
        if fit_einf:
            cols.append(np.ones_like(x, dtype=complex))
            lo.append(eps_inf_min)
        for u, g in zip(us, gs, strict=True):
            cols.append(1.0 / (u * u - x * x - 1j * g * x))
            lo.append(0.0)
        for h in hs:
            cols.append(-1.0 / (x * x + 1j * h * x))
            lo.append(tiny**2)
        A = np.array(cols).T
        rhs = e - (0.0 if fit_einf else eps_fixed)
        M = np.vstack([rw[:, None] * A.real, iw[:, None] * A.imag])
        r = np.concatenate([rw * rhs.real, iw * rhs.imag])
        sol = lsq_linear(M, r, bounds=(np.array(lo), np.full(len(lo), np.inf)), method="bvls")
        c = sol.x
        q = []
        i = 0
        if fit_einf:
            q.append(c[0])
            i = 1
        for u, g in zip(us, gs, strict=True):
            q += [c[i] / (u * u), u, g]
            i += 1
        for h in hs:
            q += [math.sqrt(max(c[i], tiny**2)), h]
            i += 1
        return np.clip(np.array(q, dtype=float), lb, ub)

    best = None
    n_run = 0
    for us, gs, hs in starts:
        n_run += 1
        q0 = linear_start(np.clip(us, tiny, 1e4), np.maximum(gs, 0.0), np.maximum(hs, 0.0))
        sol = least_squares(resid, q0, jac=jac, bounds=(lb, ub), method="trf", x_scale="jac",
                            xtol=1e-14, ftol=1e-14, gtol=1e-14, max_nfev=200 * (n_par + 1))
        if best is None or sol.cost < best.cost:
            best = sol
        # An exact fit cannot be improved; stop rather than spend the other starts.
        if math.sqrt(2.0 * best.cost / w.size) < 1e-11:
            break

    q = best.x
    eps_hat = q[0] if fit_einf else eps_fixed
    o = model.off
    lor = sorted(((float(q[o + 3 * j]), float(q[o + 3 * j + 1] * s), float(q[o + 3 * j + 2] * s))
                  for j in range(n_l)), key=lambda t: t[1])
    o += 3 * n_l
    dru = sorted(((float(q[o + 2 * k] * s), float(q[o + 2 * k + 1] * s)) for k in range(n_d)),
                 key=lambda t: t[0])
    poles = tuple([LorentzPole(d, w0, g) for d, w0, g in lor]
                  + [DrudePole(wp, g) for wp, g in dru])
    material = Material(float(eps_hat), poles, name)
    fit = np.asarray(material.permittivity(w), dtype=complex)
    errs = np.abs(fit - e) / scale
    at_bound = tuple(n for n, v, lo_, hi_ in zip(names, q, lb, ub, strict=True)
                     if v <= lo_ * (1 + 1e-9) + 1e-15 or v >= hi_ * (1 - 1e-9))
    return PoleFit(material=material, eps_inf=float(eps_hat), lorentz=tuple(lor),
                   drude=tuple(dru), omega=w, eps_data=e, eps_fit=fit, point_errors=errs,
                   residual=float(np.sqrt(np.mean(errs**2))), max_error=float(errs.max()),
                   active_bounds=at_bound, n_starts=n_run, success=bool(best.status > 0),
                   message=str(best.message), eps_inf_fitted=fit_einf)


def material_from_table(path, ell: float, n_lorentz: int = 1, n_drude: int = 0, *,
                        columns: Sequence[str] | None = None, name: str | None = None,
                        max_error: float | None = None, **fit_options) -> PoleFit:
    """Read a table (:func:`read_optical_table`) and fit poles to it (:func:`fit_poles`).

    Returns the :class:`PoleFit` (its ``.material`` is the medium) so that the
    quality of the fit is always at hand.

    Parameters
    ----------
    path, ell, columns :
        As for :func:`read_optical_table` (``ell`` in metres).
    n_lorentz, n_drude :
        Numbers of poles.
    name : str, optional
        Material name; default the file stem.
    max_error : float, optional
        Refuse (ParameterError) a fit whose largest relative error exceeds this.
    **fit_options :
        Passed to :func:`fit_poles` (``eps_inf``, ``weights``, ``eps_inf_min``, ...).
    """
    table = read_optical_table(path, ell, columns=columns)
    fit = fit_poles(table.omega, table.eps, n_lorentz, n_drude,
                    name=name or Path(path).stem, **fit_options)
    if max_error is not None:
        max_error = _checks.positive("max_error", max_error)
        if fit.max_error > max_error:
            raise ParameterError(
                f"pole fit of {str(path)!r} with {n_lorentz} Lorentz and {n_drude} Drude poles has "
                f"max relative error {fit.max_error:.3g}: expected <= max_error = {max_error!r} "
                "(try more poles, a narrower band, or eps_inf_min < 1)")
    return fit


__all__ = ["PoleFit", "fit_poles", "material_from_table"]
