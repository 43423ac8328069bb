"""Several 1D steps in one compiled call: Yee + ADE update, source injection, its work,
the ledger's face flux, and the mean field E-bar of the steps an observer samples.

A 1D step is about a microsecond of arithmetic for a few hundred cells; called once per
step from Python it costs several times that in call overhead alone, and the source,
ledger and recorder work around it much more.  This loop keeps all of it compiled.
Plain arrays in, accumulators out; real fields only.
"""

from __future__ import annotations

import numpy as np
from numba import njit

from fdtd.solver.kernels.energy import e_terms_segments, h_terms_1d
from fdtd.solver.kernels.options import SERIAL
from fdtd.solver.kernels.nonlocal_pole import postpass, prepass_serial
from fdtd.solver.kernels.yee1d import step_1d


@njit(**SERIAL)
def advance_1d(m, Ey, Hz, Py, Pyo, seg, coef, prof_x, psi_hz_x, psi_ey_x, tally, bath_row, gid, bathc,
               box, curl, dsum, flat, J, dt, inv_eps, mix_flat, dV, face_e, face_h, face_w, sample,
               ebar, keep, kept_e, kept_h, work, flux, nonlocal_flow, nonlocal_pole, ledger_at, ledger_args,
               ledger_e, ledger_wp, ledger_bath):
    """Advance ``m`` steps.

    ``flat``, ``J`` (m, w): source nodes and current of each step; ``face_e``, ``face_h``,
    ``face_w`` (q,): E and H nodes and weights of the ledger's faces (q = 0: no ledger);
    ``sample`` (m,) bool: steps whose E-bar = (E^n + E^{n+1})/2 goes into the next row of
    ``ebar`` (n_sampled, n); ``keep`` (m,) bool: steps after which Ey and Hz go into the
    next rows of ``kept_e``, ``kept_h`` (n_kept, n) (field-line and snapshot records).
    Writes ``work`` (m,) (the sources' work of each step), ``flux`` (m,) (dt times the
    outward flux of each step) and ``nonlocal_flow`` (m,) (the energy that leaves the ledger
    box through a nonlocal pole's polarization gradient).

    ``ledger_at`` (m,) bool: steps after which the ledger's stored energy is taken (state
    at the next level; :meth:`fdtd.solver.ledger.EnergyLedger.stored_energy` in compiled
    form, no nonlocal pole): per unit dV, (E part, cross term, H part) into the next row of
    ``ledger_e`` (n_led, 3), the poles' energies into ``ledger_wp`` (n_led, n_gid) and the
    bath tally row into ``ledger_bath`` (n_led, n_bath).  ``ledger_args`` = (eps_inf,
    n_poles, kin, pot, gid, e_q0, e_q1, h_q0, h_q1, kx).

    ``nonlocal_pole``: (on, slot, mix2, nlg, c4, diag, inv_h2, periodic, rows, Q, Pold,
    bathc_all, bath_rows2, kappa) of at most one nonlocal pole slot
    (fdtd/solver/kernels/nonlocal_pole.py; ``on`` False: none)."""
    (nl_on, nl_s, nl_mix, nl_g, nl_c4, nl_diag, nl_h2, nl_per, nl_rows, nl_Q, nl_Pold, nl_bathc,
     nl_bath, nl_kappa) = nonlocal_pole
    E2 = Ey.reshape((1, Ey.shape[0]))
    w = flat.shape[1]
    q = face_e.shape[0]
    e0 = np.empty(w)
    f0 = np.empty(q)
    row = 0
    kept = 0
    led = 0
    l_eps, l_np, l_kin, l_pot, l_gid, eq0, eq1, hq0, hq1, l_kx = ledger_args
    for s in range(m):
        for k in range(w):
            e0[k] = Ey[flat[s, k]]
        for k in range(q):
            f0[k] = Ey[face_e[k]]
        if sample[s]:
            ebar[row, :] = Ey
        if nl_on:
            prepass_serial(Py, Pyo, nl_s, nl_mix, nl_g, nl_c4, nl_diag, nl_h2, nl_per, nl_rows, nl_Q, nl_Pold)
        step_1d(Ey, Hz, Py, Pyo, seg, coef, prof_x, psi_hz_x, psi_ey_x, tally, bath_row, gid, bathc,
                box, 1.0, curl, dsum)
        nl_out = 0.0
        if nl_on:
            nl_out = postpass(Py, Pyo, E2, nl_s, nl_mix, nl_g, inv_eps, nl_Q, nl_Pold, nl_rows, tally, box,
                              nl_bathc, gid, nl_bath, nl_kappa, nl_h2, nl_per)
        for k in range(w):
            i = flat[s, k]
            Ey[i] -= dt * J[s, k] * inv_eps[mix_flat[i]]
        acc = 0.0
        for k in range(w):
            acc += J[s, k] * (0.5 * (e0[k] + Ey[flat[s, k]]))
        work[s] = -dt * acc * dV
        acc = 0.0
        for k in range(q):
            acc += face_w[k] * (0.5 * (f0[k] + Ey[face_e[k]])) * Hz[face_h[k]]
        flux[s] = dt * acc
        nonlocal_flow[s] = nl_out * dV
        if sample[s]:
            for i in range(Ey.shape[0]):
                ebar[row, i] = 0.5 * (ebar[row, i] + Ey[i])
            row += 1
        if ledger_at[s]:
            wp = ledger_wp[led]
            we, wx = e_terms_segments(E2, seg, Py, Pyo, l_eps, l_np, l_kin, l_pot, l_gid, dt, 0, 1, eq0, eq1, wp)
            ledger_e[led, 0] = we
            ledger_e[led, 1] = wx
            ledger_e[led, 2] = h_terms_1d(Hz, Ey, l_kx, hq0, hq1, 1.0)
            ledger_bath[led, :] = bath_row
            led += 1
        if keep[s]:
            kept_e[kept, :] = Ey
            kept_h[kept, :] = Hz
            kept += 1
