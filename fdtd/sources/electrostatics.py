r"""Electrostatic start for line charges (TE_z): the field that satisfies Gauss's law.

A run with moving charges must begin with ``div D = rho`` on the grid, or the
missing static field appears as a spurious charge that never goes away.  We
solve the discrete Poisson problem on the integer nodes (where rho lives)

.. math::  \sum_{\pm} \big[\varepsilon_x (\phi_{i+1,j}-\phi_{i,j})
           - \varepsilon_x (\phi_{i,j}-\phi_{i-1,j})\big]/\Delta x^2 + (\text{same in } y)
           = -\rho_{i,j},

with the static permittivity of each E node (``eps_inf + sum b/a0``),
periodic wrap on periodic axes and ``phi = 0`` on conducting walls, by a
sparse direct solve; then ``E = -grad phi`` at the E nodes and every pole
starts in its static state ``P = P_old = chi_s E``.  The discrete divergence of
``D`` then equals ``rho`` to the solver's round-off, and the charge-conserving
deposition keeps it so.

In a Bloch cell (docs/theory/bloch-cell.md) phi, E, P and rho are complex and
the x link between node nx-1 and node 0 carries the wrap factor
``f = exp(i theta)`` (``phi_{nx} = f phi_0``, ``phi_{-1} = conj(f) phi_{nx-1}``):
the discrete Poisson operator stays Hermitian, and the divergence of
:func:`gauss_residual` uses the same factor.

Media with a Drude pole have no static permittivity (a conductor); the start
is refused there.  Inside CPML layers the static field is not exactly the
layer's own static solution; the small adjustment travels out as a wave and
does not touch Gauss's law in the interior.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sps
import scipy.sparse.linalg as spla

from fdtd.errors import ParameterError


def _static_tables(solver):
    model = solver.model
    eps_s = np.zeros(len(model.mixtures))
    chi = np.zeros((len(model.mixtures), max(model.max_poles, 1)))
    for k, mix in enumerate(model.mixtures):
        if mix.is_wall:
            continue
        e = mix.eps_inf
        for s, pr in enumerate(mix.poles):
            a0, _a1, b = pr.pole.ade_parameters()
            if a0 == 0.0:
                raise ParameterError(
                    "electrostatic start is not available with Drude (free-carrier) media on the "
                    "grid: they have no static permittivity; start the charges without it "
                    "(electrostatic=False) or use Lorentz poles")
            chi[k, s] = b / a0
            e += b / a0
        eps_s[k] = e
    return eps_s, chi


def node_charge_density(solver, charges, t: float = 0.0) -> np.ndarray:
    """Charge density of ``charges`` on the integer nodes at time t, shape of the grid
    (complex in a Bloch cell, where the charges hand phased densities)."""
    rho = np.zeros(solver.model.grid.n_cells, dtype=solver.fields["Ex"].dtype)
    for q in charges:
        flat, dens = q.charge_density(t)
        np.add.at(rho, flat, dens)
    return rho.reshape(solver.model.grid.shape)


def gauss_residual(solver, charges, interior_only: bool = True) -> np.ndarray:
    """div D - rho on the integer nodes (TE_z), shape of the grid.

    ``D = eps_inf E + sum_s P_s`` per E node.  With ``interior_only`` the
    nodes within one cell of an absorbing layer or wall are set to zero
    (there the CPML changes the discrete divergence).  In a Bloch cell the
    x difference at node 0 reads ``conj(exp(i theta)) Dx[nx-1]`` (complex result).
    """
    g = solver.model.grid
    if g.polarization != "te":
        raise ParameterError("gauss_residual: only the TE_z grid carries charges")
    t = solver.tables
    D = {}
    for c in ("Ex", "Ey"):
        mix = solver.model.mix_maps[c]
        d = t["eps_inf"][mix] * solver.fields[c]
        P, _ = solver.polarization[c]
        if solver.model.max_poles:
            d = d + P.sum(axis=0)
        D[c] = d
    dx, dy = g.spacing
    prev = np.roll(D["Ex"], 1, axis=0)
    if solver.complex_fields:
        prev[0] *= np.conj(solver.wrap_phase)
    div = (D["Ex"] - prev) / dx + (D["Ey"] - np.roll(D["Ey"], 1, axis=1)) / dy
    res = div - node_charge_density(solver, charges, solver.time)
    if interior_only:
        mask = np.zeros(g.shape, dtype=bool)
        box = solver.model.interior_box(1)
        sl = []
        for a in range(2):
            sl.append(slice(None) if box[a] is None else slice(box[a][0], box[a][1] + 1))
        mask[tuple(sl)] = True
        res = np.where(mask, res, 0.0)
    return res


def electrostatic_start(solver, charges) -> None:
    """Set E, P, P_old of ``solver`` to the static field of ``charges`` at t = 0 (H = 0)."""
    g = solver.model.grid
    if g.polarization != "te":
        raise ParameterError("electrostatic start: charges need the TE_z grid")
    nx, ny = g.shape
    dx, dy = g.spacing
    eps_s, chi = _static_tables(solver)
    ex = eps_s[solver.model.mix_maps["Ex"]]     # between nodes (i, j) and (i+1, j)
    ey = eps_s[solver.model.mix_maps["Ey"]]     # between nodes (i, j) and (i, j+1)
    rho = node_charge_density(solver, charges, 0.0)
    per = solver.model.periodic
    idx = np.arange(nx * ny).reshape(nx, ny)
    fixed = np.zeros((nx, ny), dtype=bool)
    if not per[0]:
        fixed[0, :] = True
    if not per[1]:
        fixed[:, 0] = True
    rows, cols, vals = [], [], []

    def couple(a_idx, b_idx, w, fac=None):
        # link a -> b with phi_b seen from a as fac * phi_b (fac = 1 except across a Bloch wrap):
        # row a gains w (fac phi_b - phi_a), row b gains w (conj(fac) phi_a - phi_b)
        rows.extend([a_idx.ravel(), a_idx.ravel(), b_idx.ravel(), b_idx.ravel()])
        cols.extend([a_idx.ravel(), b_idx.ravel(), b_idx.ravel(), a_idx.ravel()])
        w = w.ravel()
        if fac is None:
            vals.extend([-w, w, -w, w])
        else:
            fac = fac.ravel()
            vals.extend([-w + 0j, w * fac, -w + 0j, w * np.conj(fac)])

    ip = np.roll(idx, -1, axis=0)   # node i+1 (wraps to 0, the wall on a closed axis)
    jp = np.roll(idx, -1, axis=1)
    bloch = solver.complex_fields
    wrap = None
    if bloch:
        wrap = np.ones((nx, ny), dtype=complex)
        wrap[-1, :] = solver.wrap_phase       # the link from row nx-1 to the next cell's row 0
    couple(idx, ip, ex / dx**2, wrap)
    couple(idx, jp, ey / dy**2, np.ones((nx, ny), dtype=complex) if bloch else None)
    A = sps.csr_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                       shape=(nx * ny, nx * ny))
    free = ~fixed.ravel()
    if not (per[0] is False or per[1] is False):
        raise ParameterError("electrostatic start needs at least one closed (walled) axis: a fully "
                             "periodic cell cannot hold a net charge")
    Af = A[free][:, free].tocsc()
    phi = np.zeros(nx * ny, dtype=rho.dtype)
    phi[free] = spla.spsolve(Af, -rho.ravel()[free])
    phi = phi.reshape(nx, ny)
    nxt = np.roll(phi, -1, axis=0)
    if bloch:
        nxt[-1] *= solver.wrap_phase
    Ex = -(nxt - phi) / dx
    Ey = -(np.roll(phi, -1, axis=1) - phi) / dy
    for c, E in (("Ex", Ex), ("Ey", Ey)):
        mix = solver.model.mix_maps[c]
        E = np.where(mix == 0, 0.0, E)
        solver.fields[c][...] = E
        if solver.model.max_poles:
            P, Po = solver.polarization[c]
            for s in range(P.shape[0]):
                P[s] = chi[mix, s] * E
                Po[s] = P[s]
    solver.fields["Hz"][...] = 0.0
