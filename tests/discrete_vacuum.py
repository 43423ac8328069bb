r"""The exact time-harmonic response of the 2D TM_z Yee lattice in vacuum to a moving z-dipole.

A test reference, not part of the package: it evaluates the simulator's own deposit kernel
(what the source puts on the grid) and the lattice Green's function of the Yee scheme
(K. S. Yee, IEEE Trans. Antennas Propag. 14, 302 (1966); discrete plane waves as in
Taflove & Hagness, Computational Electrodynamics, ch. 4, from memory), so that the power
of every Doppler point is known to round-off for the discrete scheme itself -- what the
simulation must reproduce up to its window, settling and absorbing layers.

Derivation.  With E^n = E e^{-i w n dt}, J^{n+1/2} = J e^{-i w (n+1/2) dt} and
e^{i k x} along x, the TM_z updates give, eliminating H,

    (D_y^2 + q^2) E_j = -i s_t J_j,   q^2 = s_t^2 - s_x^2,
    s_t = (2/dt) sin(w dt/2),  s_x = (2/dx) sin(k dx/2),

with D_y^2 the three-point second difference.  On the infinite lattice the outgoing (or
decaying) solution for a unit source at row 0 is g_j = dy^2 e^{i theta |j|} / (2 i sin theta),
cos theta = 1 - q^2 dy^2 / 2, Im theta >= 0, and theta > 0 for a propagating wave of w > 0.
The work per step uses Ebar = (E^n + E^{n+1})/2, whose phasor is E cos(w dt/2), so a real
current Re(2 a e^{i(k x - w t)}) on the rows does the time-averaged work, per unit length
along z over a cell of length L,

    P = -2 L dy cos(w dt/2) sum_j Re(conj(a_j) e_j),   e = g * (-i s_t a).

The line amplitudes a_j of harmonic k are the uniform average over the sub-cell offset of
the deposit (Fourier transformed along x, demodulated at w): the deposit depends on time
only through the position within a cell and the oscillation phase, so that average is the
p = 0 (non-aliased) line exactly.
"""

from __future__ import annotations

import numpy as np

from fdtd.solver.kernels.deposit import dipole_tm


def _line_amplitude(k, omega, Omega, v, dx, dy, dt, Y, order, scale, moment, n_sub):
    """Rows j0.. and complex amplitudes A(j) of the deposit of the complex moment
    (moment/2) e^{-i Omega t} at harmonic k and lab frequency omega = k v + Omega, divided
    by the cell's node count later (here: the sum over the whole infinite row)."""
    acc, j0_ref = None, None
    for u in (np.arange(n_sub) + 0.5) / n_sub:
        t0 = u * dx / v
        ts = np.array([t0, t0 + dt])
        Xs = np.array([u, u + v * dt / dx])
        Ys = np.array([Y, Y])
        m = 0.5 * moment * np.exp(-1j * Omega * ts)
        i0, j0, jr = dipole_tm(Xs, Ys, m.real.copy(), order, scale, dx, dy, dt)
        _, _, ji = dipole_tm(Xs, Ys, m.imag.copy(), order, scale, dx, dy, dt)
        patch = jr + 1j * ji                               # (ni, nj)
        phase_x = np.exp(-1j * k * (i0 + np.arange(patch.shape[0])) * dx)
        row = (phase_x[:, None] * patch).sum(axis=0) * np.exp(1j * omega * (t0 + 0.5 * dt))
        if acc is None:
            acc, j0_ref = np.zeros(row.size + 4, dtype=complex), j0 - 2
        off = j0 - j0_ref
        acc[off:off + row.size] += row
    return j0_ref, acc / n_sub


def _green(q2, omega, dy):
    """Lattice Green's function factor C and e^{i theta} (outgoing / decaying)."""
    c = 1.0 - 0.5 * q2 * dy * dy
    theta = np.arccos(complex(c))
    if theta.imag < 0:
        theta = -theta
    if abs(theta.imag) < 1e-14 and omega < 0:          # propagating: outgoing for this omega
        theta = -theta
    if theta.imag < -1e-14:
        theta = np.conj(theta)
    return dy * dy / (2j * np.sin(theta)), np.exp(1j * theta)


def point_power(k, branch, v, Omega, L, nx, dx, dy, dt, Y, order, scale, moment=1.0, n_sub=64):
    """Exact discrete power of the Doppler point (k, branch) with omega = k v + branch Omega > 0."""
    omega = k * v + branch * Omega
    if omega <= 0:
        return 0.0
    if branch == 1:
        j0, A = _line_amplitude(k, omega, Omega, v, dx, dy, dt, Y, order, scale, moment, n_sub)
        a = A / nx
    else:       # the anomalous point is the conjugate of the e^{-i Omega t} line at -k
        j0, A = _line_amplitude(-k, -omega, Omega, v, dx, dy, dt, Y, order, scale, moment, n_sub)
        a = np.conj(A) / nx
    s_t = 2.0 / dt * np.sin(omega * dt / 2)
    s_x = 2.0 / dx * np.sin(k * dx / 2)
    C, z = _green(s_t**2 - s_x**2, omega, dy)
    n = a.size
    jj = np.arange(n)
    G = C * z ** np.abs(jj[:, None] - jj[None, :])
    e = G @ (-1j * s_t * a)
    return float(-2.0 * L * dy * np.cos(omega * dt / 2) * np.sum(np.real(np.conj(a) * e)))
