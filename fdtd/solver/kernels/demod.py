"""Kernels of the Doppler demodulation (see fdtd/recording/doppler.py): plain arrays in, accumulators updated."""

from __future__ import annotations

import numpy as np
from numba import njit

from fdtd.solver.kernels.options import SERIAL, SERIAL_FAST


@njit(**SERIAL)
def sparse_dft(J, i_nodes, r_nodes, vals, k, x_of_i):
    """J[r, m] += sum_n vals[n] exp(-i k[m] x_of_i[i_nodes[n]]) for the nodes of one step.

    ``J`` complex (rows, n_m); ``i_nodes``, ``r_nodes`` int arrays (node column and row
    slot, r < 0 = not recorded); ``vals`` the node values (real or complex)."""
    for n in range(vals.shape[0]):
        r = r_nodes[n]
        if r < 0:
            continue
        v = vals[n]
        if v == 0:
            continue
        x = x_of_i[i_nodes[n]]
        for m in range(k.shape[0]):
            J[r, m] += v * np.exp(-1j * k[m] * x)


@njit(**SERIAL)
def sparse_dft_table(J, i_nodes, r_nodes, vals, table):
    """Like :func:`sparse_dft` with precomputed phases table[i, m] = exp(-i k_m x_i)."""
    for n in range(vals.shape[0]):
        r = r_nodes[n]
        v = vals[n]
        if r < 0 or v == 0:
            continue
        row = table[i_nodes[n]]
        for m in range(row.shape[0]):
            J[r, m] += v * row[m]


@njit(**SERIAL)
def accumulate(A, B, Jhat, Ehat, phase, weights):
    """A[w, a, c, r, m] += weights[w] phase[a, m] Jhat[c, r, m] (and B with Ehat), w with weight != 0.

    ``A``, ``B`` complex (n_w, n_lines, n_comp, n_rows, n_m); ``phase`` (n_lines, n_m)."""
    nw, nl, nc, nr, nm = A.shape
    for w in range(nw):
        ww = weights[w]
        if ww == 0.0:
            continue
        for a in range(nl):
            for c in range(nc):
                for r in range(nr):
                    for m in range(nm):
                        p = ww * phase[a, m]
                        A[w, a, c, r, m] += p * Jhat[c, r, m]
                        B[w, a, c, r, m] += p * Ehat[c, r, m]


def half_spectrum_to_full(F_pos, m_index, nx):
    """Complex x-transform at storage indices ``m_index`` from an rfft (last axis m >= 0)."""
    out = np.empty(F_pos.shape[:-1] + (m_index.size,), dtype=complex)
    pos = m_index <= nx // 2
    out[..., pos] = F_pos[..., m_index[pos]]
    neg = ~pos
    out[..., neg] = np.conj(F_pos[..., nx - m_index[neg]])
    return out


@njit(**SERIAL)
def accumulate_half(A, B, Jhat, Epos, src_index, conj_flag, phase, weights):
    """Like :func:`accumulate`, with E given as a real-input half spectrum.

    ``Epos`` complex (n_comp, n_rows, nx//2 + 1): rfft along x; harmonic slot m
    reads ``Epos[..., src_index[m]]``, conjugated where ``conj_flag[m]`` (the
    negative harmonics of a real field).  The slots must list the m >= 0
    harmonics first (numpy fft order), so the loop splits into two branch-free
    ranges."""
    nw, nl, nc, nr, nm = A.shape
    n_pos = 0
    while n_pos < nm and not conj_flag[n_pos]:
        n_pos += 1
    for w in range(nw):
        ww = weights[w]
        if ww == 0.0:
            continue
        for a in range(nl):
            ph = phase[a]
            for c in range(nc):
                for r in range(nr):
                    Ar = A[w, a, c, r]
                    Br = B[w, a, c, r]
                    Jr = Jhat[c, r]
                    Er = Epos[c, r]
                    for m in range(n_pos):
                        p = ww * ph[m]
                        Ar[m] += p * Jr[m]
                        Br[m] += p * Er[src_index[m]]
                    for m in range(n_pos, nm):
                        p = ww * ph[m]
                        Ar[m] += p * Jr[m]
                        Br[m] += p * np.conj(Er[src_index[m]])


@njit(**SERIAL_FAST)
def sparse_dft_block(Jhat, flat, J, table):
    """Jhat[s, m] = sum_k J[s, k] table[flat[s, k], m] (one recorded row, all sampled steps)."""
    ns, nm = Jhat.shape
    for s in range(ns):
        for m in range(nm):
            Jhat[s, m] = 0.0
        for k in range(flat.shape[1]):
            v = J[s, k]
            if v == 0.0:
                continue
            row = table[flat[s, k]]
            for m in range(nm):
                Jhat[s, m] += v * row[m]


@njit(**SERIAL_FAST)
def accumulate_half_block(A, B, Jhat, Epos, src_index, conj_flag, phase0, rot, gaps, weights):
    """:func:`accumulate_half` for the sampled steps of a block (one component, one row).

    ``Jhat`` (ns, n_m), ``Epos`` (ns, nx//2 + 1); ``phase0`` (n_lines, n_m) the phases at
    the first sampled step, ``rot`` (n_lines, n_m) their factor per step, ``gaps`` (ns,)
    steps from the previous sample (gaps[0] = 0); ``weights`` (ns, n_w).  The harmonic
    slots list m >= 0 first (numpy fft order), as in :func:`accumulate_half`."""
    nw, nl = A.shape[0], A.shape[1]
    nm = A.shape[4]
    ns = Jhat.shape[0]
    n_pos = 0
    while n_pos < nm and not conj_flag[n_pos]:
        n_pos += 1
    ph = phase0.copy()
    e = np.empty(nm, dtype=np.complex128)
    tj = np.empty(nm, dtype=np.complex128)
    te = np.empty(nm, dtype=np.complex128)
    for s in range(ns):
        for _g in range(gaps[s]):
            for a in range(nl):
                for m in range(nm):
                    ph[a, m] *= rot[a, m]
        Er = Epos[s]
        for m in range(n_pos):
            e[m] = Er[src_index[m]]
        for m in range(n_pos, nm):
            e[m] = np.conj(Er[src_index[m]])
        Jr = Jhat[s]
        for a in range(nl):
            pa = ph[a]
            for m in range(nm):
                tj[m] = pa[m] * Jr[m]
                te[m] = pa[m] * e[m]
            for w in range(nw):
                ww = weights[s, w]
                if ww == 0.0:
                    continue
                Ar = A[w, a, 0, 0]
                Br = B[w, a, 0, 0]
                for m in range(nm):
                    Ar[m] += ww * tj[m]
                    Br[m] += ww * te[m]


@njit(**SERIAL)
def rows_transposed(E, rows, out):
    """out[r, i] = E[i, rows[r]]: the recorded rows of a 2D field, contiguous along x."""
    for r in range(rows.shape[0]):
        j = rows[r]
        for i in range(E.shape[0]):
            out[r, i] = E[i, j]


@njit(**SERIAL)
def mean_rows_transposed(E, rows, e0, out):
    """out[r, i] = (e0[r, i] + E[i, rows[r]]) / 2: E-bar of a step on the recorded rows."""
    for r in range(rows.shape[0]):
        j = rows[r]
        for i in range(E.shape[0]):
            out[r, i] = 0.5 * (e0[r, i] + E[i, j])
