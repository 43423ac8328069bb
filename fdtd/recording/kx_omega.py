"""Array-level analysis of recorded data (no solver objects): (k_x, omega) maps and overlays.

* :func:`kx_omega_map` -- intensity of a field recorded on a line over time,
  resolved in (k_x, omega), with a Hann taper in time (and in x unless the line
  is periodic);
* :func:`doppler_lines` -- omega = k_x v + s Omega for overlays;
* :func:`bulk_dispersion` -- omega(k) of a medium's bulk polaritons (k^2 = omega^2 eps),
  and :func:`surface_polariton` for a planar interface with vacuum, for overlays.

Conventions: a field ~ exp(i (k_x x - omega t)); omega > 0 is kept.
"""

from __future__ import annotations

import numpy as np

from fdtd.errors import ParameterError


def kx_omega_map(data: np.ndarray, dx: float, dt: float, periodic: bool = True):
    """(k_x, omega, intensity) of a line record.

    Parameters
    ----------
    data : float array (n_t, n_x)
        Field samples at times t_n = n dt (rows) and points x_i = i dx (columns).
    dx, dt : float
        Spacings (normalized length and time).
    periodic : bool
        True for a line across a periodic cell (no taper in x).

    Returns
    -------
    kx : (n_x,) ascending, omega : (n_t // 2,) ascending positive,
    intensity : (n_omega, n_x) |FT|^2 (arbitrary units, per bin).
    """
    data = np.asarray(data, dtype=float)
    if data.ndim != 2 or min(data.shape) < 4:
        raise ParameterError(f"line record of shape {data.shape}: expected (n_t >= 4, n_x >= 4)")
    nt, nx = data.shape
    wt = np.hanning(nt)[:, None]
    wx = np.ones(nx) if periodic else np.hanning(nx)
    # exp(i(kx - wt)): spatial transform with exp(-ikx) (numpy fft), temporal with exp(+iwt)
    F = np.fft.fft(np.fft.ifft(data * wt * wx[None, :], axis=0) * nt, axis=1)
    kx = 2 * np.pi * np.fft.fftfreq(nx, dx)
    om = 2 * np.pi * np.fft.fftfreq(nt, dt)
    keep = om > 0
    ok = np.argsort(kx)
    I = np.abs(F[keep][:, ok]) ** 2
    oo = np.argsort(om[keep])
    return kx[ok], om[keep][oo], I[oo]


def doppler_lines(kx, speed: float, internal_frequency: float):
    """{"normal": omega = k v + Omega, "anomalous": omega = k v - Omega}, NaN where omega <= 0."""
    kx = np.asarray(kx, dtype=float)
    out = {}
    for name, s in (("normal", 1), ("anomalous", -1)):
        w = kx * speed + s * internal_frequency
        out[name] = np.where(w > 0, w, np.nan)
    return out


def bulk_dispersion(material, omega):
    """Real k(omega) = Re(omega sqrt(eps(omega))) of the bulk polariton branches."""
    w = np.asarray(omega, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        n = np.sqrt(np.asarray(material.permittivity(w), dtype=complex))
    n = np.where(n.imag < 0, -n, n)
    k = w * n.real
    return np.where(np.abs(n.imag) < 0.1 * np.abs(n.real) + 1e-12, k, np.nan)


def surface_polariton(material, omega, outside_eps: float = 1.0):
    """k(omega) = omega sqrt(eps eps_out/(eps + eps_out)) of the interface mode where it is bound."""
    w = np.asarray(omega, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        e = np.real(np.asarray(material.permittivity(w), dtype=complex))
        arg = e * outside_eps / (e + outside_eps)
        k = w * np.sqrt(np.where(arg > 0, arg, np.nan))
    bound = e < -outside_eps
    return np.where(bound, k, np.nan)
