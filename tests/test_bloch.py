"""The Bloch-periodic x edge: u(x + L) = exp(i theta) u(x) with complex fields.

Checks against outside sources:

* discrete dispersion: in vacuum the Yee scheme's free modes obey
  sin^2(w dt/2)/(c dt)^2 = sum_i sin^2(k_i d_i/2)/d_i^2 (A. Taflove and
  S. C. Hagness, Computational Electrodynamics, 3rd ed. (2005), ch. 4, eq. 4.12
  for 2D; from memory), here with k_x = (theta + 2 pi m)/L, the wavenumbers a
  Bloch cell samples (F. Bloch's theorem; the array-scanning use of such cells is
  B. A. Munk and G. A. Burrell, IEEE Trans. Antennas Propag. 27, 331 (1979));
* the stability limit of docs/theory/stability.md holds unchanged;
* theta = 0 reproduces the real periodic run bit for bit;
* linearity: a Bloch run at theta = 2 pi / N on a cell of length L equals the
  combination of two real periodic runs on the cell N L (which holds those k
  exactly), N = 2 and 3; our derivation, docs/theory/bloch-cell.md;
* energy ledger (Hermitian form) and Gauss's law close to round-off.
"""

import warnings

import numpy as np
import pytest
from helpers import frequencies_from_roots, prony_roots

import fdtd as f
from fdtd.sources.electrostatics import electrostatic_start, gauss_residual, node_charge_density
from fdtd.sources.moving import MovingCharge, MovingDipole
from fdtd.sources.worldlines import UniformMotion
from fdtd.space.stability import max_stable_dt


def _yee_omega(k, spacing, dt):
    s = sum(np.sin(ki * d / 2) ** 2 / d**2 for ki, d in zip(k, spacing, strict=True))
    return 2.0 / dt * np.arcsin(dt * np.sqrt(s))


def _record(solver, comp, index, steps):
    """Complex time series of one node, sampled before each step."""
    out = np.empty(steps, dtype=complex)
    a = solver.fields[comp]
    for n in range(steps):
        out[n] = a[index]
        solver.step()
    return out


# --------------------------------------------------------------------- refusals
def test_bloch_refused_on_y():
    g = f.Grid((16, 16), (0.1, 0.1), "te")
    with pytest.raises(f.ParameterError, match=r"Bloch.*not allowed on y.*x axis only"):
        f.Model(g, edges=[f.Periodic(), f.Bloch(0.3)])
    with pytest.raises(f.ParameterError, match="not allowed on y"):
        f.Model(g, edges=f.Bloch(0.3))       # one edge for every axis puts it on y too


def test_bloch_needs_both_ends_with_one_phase():
    g = f.Grid((16,), (0.1,), "1d")
    with pytest.raises(f.ParameterError, match="both ends of x with the same phase"):
        f.Model(g, edges=[(f.Bloch(0.3), f.Bloch(0.4))])
    with pytest.raises(f.ParameterError, match="both ends of x"):
        f.Model(g, edges=[(f.Bloch(0.3), f.Periodic())])
    with pytest.raises(f.ParameterError, match="periodic must be set on both sides"):
        f.Model(g, edges=[(f.Bloch(0.3), f.PEC())])
    with pytest.raises(f.ParameterError, match=r"Bloch phase = nan"):
        f.Bloch(float("nan"))


def test_bloch_refused_with_nonlocal_pole():
    mat = f.Material(1.0, (f.NonlocalLorentzPole(2.0, 3.0, 0.1, 0.05),), "exciton")
    g = f.Grid((32,), (0.1,), "1d")
    with pytest.raises(f.ParameterError, match=r"Bloch\(phase=0\.5\).*nonlocal.*Laplacian.*phase"):
        f.Model(g, background=mat, edges=f.Bloch(0.5))
    f.Model(g, background=mat, edges=f.Periodic())      # the same medium is fine periodic


def test_complex_state_only_with_bloch():
    g = f.Grid((16, 12), (0.1, 0.1), "tm")
    real = f.Solver(f.Model(g, edges=[f.Periodic(), f.CPML(3)]), ledger=False)
    bloch = f.Solver(f.Model(g, edges=[f.Bloch(1.0), f.CPML(3)]), ledger=False)
    assert real.fields["Ez"].dtype == np.float64 and real.wrap_phase == 1.0
    assert all(a.dtype == np.complex128 for a in bloch.fields.values())
    assert all(a.dtype == np.complex128 for a in bloch.psi.values())
    assert bloch.wrap_phase == pytest.approx(np.exp(1j), abs=1e-16)
    assert all(a.ctypes.data % 64 == 0 for a in bloch.fields.values())


def test_staggered_allocation_works_for_complex():
    """Large complex arrays start on a cache line, at different offsets within a page."""
    from fdtd.solver.stepper import staggered_zeros

    arrs = [staggered_zeros((600, 600), k, np.complex128) for k in range(4)]
    assert all(a.dtype == np.complex128 and a.shape == (600, 600) and not a.any() for a in arrs)
    starts = [a.ctypes.data % 4096 for a in arrs]
    assert all(s % 64 == 0 for s in starts) and len(set(starts)) == 4
    arrs[1][...] = 1 + 2j       # views do not overlap
    assert not arrs[0].any() and not arrs[2].any()


# ------------------------------------------------------------ (a) dispersion
@pytest.mark.parametrize("theta", [0.4, 1.9, -2.8])
@pytest.mark.parametrize("m", [0, 3, -7])
def test_vacuum_1d_bloch_modes_follow_yee_relation(theta, m):
    n, dx = 64, 0.1
    L = n * dx
    g = f.Grid((n,), (dx,), "1d")
    s = f.Solver(f.Model(g, edges=f.Bloch(theta)), courant=0.8, ledger=False)
    k = (theta + 2 * np.pi * m) / L
    s.fields["Ey"][:] = np.exp(1j * k * g.axis_coordinates("Ey", 0))
    x = _record(s, "Ey", 3, 400)
    w = frequencies_from_roots(prony_roots(x, 2), s.dt)
    w_yee = _yee_omega((k,), (dx,), s.dt)
    assert w.size == 1
    assert abs(w[0] - w_yee) / w_yee < 1e-6      # measured <= 3.5e-11 (Prony fit)
    # the Bloch phase is what sets k: the nearest periodic-cell wavenumber is clearly off
    w_per = _yee_omega((2 * np.pi * m / L,), (dx,), s.dt)
    assert abs(w[0].real - w_per) / w_yee > 1e-3      # measured >= 9e-3


@pytest.mark.parametrize("pol,comp", [("tm", "Ez"), ("te", "Hz")])
@pytest.mark.parametrize("theta,mx,my", [(0.9, 2, 0), (-1.6, -4, 3), (2.7, 6, -2)])
def test_vacuum_2d_bloch_modes_follow_yee_relation(pol, comp, theta, mx, my):
    nx, ny = 32, 24
    dx, dy = 0.1, 0.13
    g = f.Grid((nx, ny), (dx, dy), pol)
    s = f.Solver(f.Model(g, edges=[f.Bloch(theta), f.Periodic()]), courant=0.7, ledger=False)
    kx, ky = (theta + 2 * np.pi * mx) / (nx * dx), 2 * np.pi * my / (ny * dy)
    X, Y = g.coordinates(comp)
    s.fields[comp][...] = np.exp(1j * (kx * X + ky * Y))
    x = _record(s, comp, (5, 7), 300)
    w = frequencies_from_roots(prony_roots(x, 2), s.dt)
    w_yee = _yee_omega((kx, ky), (dx, dy), s.dt)
    assert w.size == 1
    assert abs(w[0] - w_yee) / w_yee < 1e-6      # measured <= 6.4e-15
    w_per = _yee_omega((2 * np.pi * mx / (nx * dx), ky), (dx, dy), s.dt)
    assert abs(w[0].real - w_per) / w_yee > 1e-2      # measured >= 3.8e-2


# ----------------------------------------------------------- (e) stability
STRONG = f.lorentz_material(1.0, 4.0, 3.0, 0.0, "strong")
GRIDS = {"1d": ((64,), (0.1,)), "te": ((32, 32), (0.1, 0.1)), "tm": ((32, 32), (0.1, 0.1))}


def _random_bloch_run(pol, dt, steps, rng, theta=1.3):
    shape, sp = GRIDS[pol]
    edges = f.Bloch(theta) if pol == "1d" else [f.Bloch(theta), f.Periodic()]
    model = f.Model(f.Grid(shape, sp, pol), background=STRONG, edges=edges)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        s = f.Solver(model, dt=dt, allow_unstable_dt=True)
    for c in s.fields:
        s.fields[c][...] = rng.standard_normal(shape) + 1j * rng.standard_normal(shape)
    s.advance(steps=steps, ledger_every=steps // 4)
    return s


@pytest.mark.parametrize("pol", list(GRIDS))
def test_bloch_stability_limit_unchanged(pol, rng):
    """Just below the limit of docs/theory/stability.md: stable, Hermitian energy constant;
    just above: grows (the Bloch cell still holds modes near the checkerboard)."""
    shape, sp = GRIDS[pol]
    limit = max_stable_dt(sp, [STRONG])
    assert f.Model(f.Grid(shape, sp, pol), background=STRONG,
                   edges=f.Bloch(1.3) if pol == "1d" else [f.Bloch(1.3), f.Periodic()]
                   ).max_stable_dt() == limit
    s = _random_bloch_run(pol, 0.99 * limit, 4000, rng)
    stored = np.array([x.stored for x in s.ledger.samples])
    assert np.all(np.abs(stored / stored[0] - 1) < 1e-12)
    with pytest.raises(f.InstabilityError, match="unstable"):
        _random_bloch_run(pol, 1.01 * limit, 4000, rng)


# ------------------------------------------------- sources, ledger, Gauss's law
LOSSY = f.Material(1.4, (f.LorentzPole(2.0, 3.0, 0.4),), "lossy-lorentz")


def _bloch_source_solver(pol, theta, edges_y=None, ledger=True):
    """A lossy half-space (slab in 1D) under a Bloch x edge, CPML on y."""
    if pol == "1d":
        g = f.Grid((120,), (0.05,), "1d")
        model = f.Model(g, [(f.Slab("x", 3.0, 4.5), LOSSY)], edges=f.Bloch(theta))
    else:
        g = f.Grid((60, 70), (0.1, 0.1), pol, origin=(0.0, -3.5))
        model = f.Model(g, [(f.HalfSpace("y", below=-0.8), LOSSY)],
                        edges=[f.Bloch(theta), edges_y or f.CPML(10)])
    return f.Solver(model, courant=0.9, ledger=ledger)


def _dipole(pol, x0=4.5, v=0.35, moment=1.0, phase=0.0):
    axis = {"1d": "y", "te": "x", "tm": "z"}[pol]
    wl = UniformMotion((x0,), (v,), ramp=1.0) if pol == "1d" else \
        UniformMotion((x0, 0.0), (v, 0.0), ramp=1.0)
    return MovingDipole(moment, 6.0, wl, axis=axis, phase=phase, ramp=2.0)


@pytest.mark.parametrize("pol", ["1d", "te", "tm"])
def test_ledger_closes_in_bloch_cell_with_moving_dipole(pol):
    """Hermitian ledger: d(stored) = work - bath - outflow at round-off while the dipole
    crosses the phased wrap (its currents are complex)."""
    s = _bloch_source_solver(pol, 1.1)
    dip = _dipole(pol)
    s.attach(dip)
    flat_j = dip.currents(0.5 * s.dt + 3.0)
    assert all(np.iscomplexobj(J) for _c, _flat, J in flat_j)
    steps = 1200 if pol == "1d" else 700
    s.advance(steps=steps, ledger_every=100)
    assert dip.worldline.position(s.time)[0] > s.grid.shape[0] * s.grid.spacing[0] + 0.5  # crossed
    led = s.ledger.summary()
    assert abs(led["relative_residual"]) < 1e-13     # measured <= 2.2e-15
    assert led["bath_heat"] > 0.05 * abs(led["source_work"])
    if pol != "1d":
        assert led["outflow"] > 0.05 * abs(led["source_work"])
    a = s.ledger.samples[0]
    for b in s.ledger.samples[1:]:
        bal = (b.stored - a.stored) - (b.source_work - a.source_work) \
            + (b.bath.sum() - a.bath.sum()) + (b.outflow - a.outflow)
        assert abs(bal) < 1e-13 * abs(led["source_work"])   # measured <= 2.5e-15
    # the Hermitian work is not the real-part work: the imaginary parts carry a share
    # of the energy (here the phased wrap mixes them)
    E = s.fields[s.grid.e_components[-1]]
    assert np.abs(E.imag).max() > 0.1 * np.abs(E.real).max()


def test_ledger_closes_with_prescribed_current_in_bloch_cell():
    s = _bloch_source_solver("tm", -2.3)
    s.attach(f.line_current(s, "Ez", (2.0, 0.5), 1.0, f.GaussianPulse(1.5, 0.25, derivative=True)))
    s.advance(steps=900, ledger_every=100)
    led = s.ledger.summary()
    assert abs(led["relative_residual"]) < 1e-13     # measured 1.3e-15
    assert led["outflow"] > 0.05 * led["source_work"]
    assert led["bath_heat"] > 0.05 * led["source_work"]


def _bloch_gauss_run(theta, worldline, steps, rng=None):
    g = f.Grid((160, 80), (0.05, 0.05), "te", origin=(0.0, -2.0))
    LZ = f.lorentz_material(1.5, 1.2, 4.0, 0.3, "lz")
    model = f.Model(g, [(f.HalfSpace("y", below=-0.6), LZ)], edges=[f.Bloch(theta), f.CPML(10)])
    s = f.Solver(model, courant=0.9, ledger=False)
    q = MovingCharge(1.0, worldline)
    s.attach(q)
    electrostatic_start(s, [q])
    scale = 1.0 / g.cell_volume          # q / dV
    r0 = np.abs(gauss_residual(s, [q])).max() / scale
    s.advance(steps=steps)
    return s, q, r0, np.abs(gauss_residual(s, [q])).max() / scale


@pytest.mark.parametrize("theta", [0.0, 1.2, np.pi])
def test_gauss_law_at_round_off_in_bloch_cell(theta):
    """Esirkepov deposit + phased-row factors on current and charge: div D - rho stays at
    round-off while the charge crosses the phased wrap about 12 times."""
    s, q, r0, r1 = _bloch_gauss_run(theta, UniformMotion((1.0, 0.0), (0.8, 0.004), ramp=1.0), 3000)
    assert r0 < 1e-13 and r1 < 1e-12, (r0, r1)      # measured r0 <= 1.5e-15, r1 <= 5.2e-14
    assert q.worldline.position(s.time)[0] > 9 * 8.0      # cell length 8: 9 crossings
    if theta != 0.0:
        # the charge density really needs the factors: with the plain periodic mapping
        # (weights without phase) the residual is O(q/dV)
        flat, dens = q.charge_density(s.time)
        assert np.abs(dens - np.abs(dens)).max() > 0.1 * np.abs(dens).max()   # factors != 1
        rho_plain = np.zeros(s.grid.n_cells, complex)
        np.add.at(rho_plain, flat, np.abs(dens))         # the shape weights are >= 0
        div_d = gauss_residual(s, [q], interior_only=False) + node_charge_density(s, [q], s.time)
        assert np.abs(div_d.reshape(-1) - rho_plain).max() * s.grid.cell_volume > 0.1


# ------------------------------------------------------ (b) theta = 0 is the real run
def _sources_for(pol, solver):
    out = [_dipole(pol, x0=3.1, v=0.4)]
    if pol == "te":
        out.append(MovingCharge(0.7, UniformMotion((1.0, 0.3), (0.6, 0.0), ramp=1.0)))
    if pol != "1d":
        comp = solver.grid.e_components[-1]
        pulse = f.GaussianPulse(1.5, 0.25, derivative=True)
        out.append(f.line_current(solver, comp, (2.0, 0.5), 1.0, pulse))
    return out


@pytest.mark.parametrize("pol", ["1d", "te", "tm"])
def test_phase_zero_reproduces_real_periodic_run_bit_for_bit(pol):
    runs, start = [], {}
    for edge in (f.Periodic(), f.Bloch(0.0)):
        if pol == "1d":
            g = f.Grid((120,), (0.05,), "1d")
            model = f.Model(g, [(f.Slab("x", 3.0, 4.5), LOSSY)], edges=edge)
        else:
            g = f.Grid((60, 70), (0.1, 0.1), pol, origin=(0.0, -3.5))
            model = f.Model(g, [(f.HalfSpace("y", below=-0.8), LOSSY)], edges=[edge, f.CPML(10)])
        s = f.Solver(model, courant=0.9)
        srcs = _sources_for(pol, s)
        for src in srcs:
            s.attach(src)
        charges = [q for q in srcs if isinstance(q, MovingCharge)]
        if charges and not runs:
            electrostatic_start(s, charges)
            start = {"fields": {c: a.copy() for c, a in s.fields.items()},
                     "P": {c: [a.copy() for a in pp] for c, pp in s.polarization.items()}}
        elif charges:   # the same start (the complex sparse solve rounds differently)
            for c in s.fields:
                s.fields[c][...] = start["fields"][c]
            for c in s.polarization:
                for a, b in zip(s.polarization[c], start["P"][c], strict=True):
                    a[...] = b
        s.advance(steps=500, ledger_every=100)
        runs.append((s, charges))
    (real, _), (cplx, _) = runs
    assert not real.complex_fields and cplx.complex_fields
    for c in real.fields:
        assert np.array_equal(cplx.fields[c].real, real.fields[c]), c
        assert np.all(cplx.fields[c].imag == 0.0), c
    for c in real.polarization:
        assert np.array_equal(cplx.polarization[c][0].real, real.polarization[c][0])
    assert np.array_equal(cplx.bath_rows, real.bath_rows)
    assert np.abs(real.fields[real.grid.e_components[-1]]).max() > 1e-3     # not a trivial run
    lr, lc = real.ledger.summary(), cplx.ledger.summary()
    for key in ("stored_end", "source_work", "bath_heat", "outflow"):
        assert lc[key] == pytest.approx(lr[key], rel=1e-13, abs=0), key


def test_electrostatic_start_in_bloch_cell_matches_periodic_at_phase_zero():
    g = f.Grid((80, 40), (0.1, 0.1), "te", origin=(0.0, -2.0))
    q = MovingCharge(1.0, UniformMotion((3.0, 0.2), (0.5, 0.0)))
    out = []
    for edge in (f.Periodic(), f.Bloch(0.0)):
        s = f.Solver(f.Model(g, [(f.HalfSpace("y", below=-0.6), LOSSY)], edges=[edge, f.CPML(8)]),
                     courant=0.9, ledger=False)
        s.attach(q)
        electrostatic_start(s, [q])
        out.append(s.fields["Ey"].copy())
    assert np.abs(out[1] - out[0]).max() < 1e-12 * np.abs(out[0]).max()
    assert np.abs(out[1].imag).max() < 1e-14 * np.abs(out[0]).max()


# ------------------------------------------ (c) Bloch cell = N real periodic cells
@pytest.mark.parametrize("n_cells", [2, 3])
def test_bloch_run_equals_two_real_runs_on_the_multiplied_cell(n_cells, rng):
    """theta = 2 pi / N: the Bloch cell of length L holds exactly what the periodic cell of
    length N L holds when data and sources are repeated with factors exp(i theta m).  By
    linearity that complex run is two real runs (real and imaginary parts)."""
    theta = 2 * np.pi / n_cells
    nx, ny, d = 40, 30, 0.1
    L = nx * d
    mat = f.Material(1.3, (f.LorentzPole(1.5, 4.0, 0.3),), "lz")

    def solver(n, edge):
        g = f.Grid((n, ny), (d, d), "tm", origin=(0.0, -1.5))
        return f.Solver(f.Model(g, [(f.HalfSpace("y", below=-0.4), mat)], edges=[edge, f.CPML(8)]),
                        dt=0.6 * d, ledger=True)

    bloch = solver(nx, f.Bloch(theta))
    parts = [solver(n_cells * nx, f.Periodic()) for _ in range(2)]
    for c in bloch.fields:
        u = np.zeros((nx, ny), complex)
        u[:, 10:20] = rng.standard_normal((nx, 10)) + 1j * rng.standard_normal((nx, 10))
        bloch.fields[c][...] = u
        big = np.concatenate([np.exp(1j * theta * m) * u for m in range(n_cells)])
        parts[0].fields[c][...] = big.real
        parts[1].fields[c][...] = big.imag
    bloch.attach(MovingDipole(1.0, 5.0, UniformMotion((1.0, 0.0), (0.3, 0.0)), axis="z"))
    for m in range(n_cells):
        c = np.exp(1j * theta * m)
        for part, amp in ((parts[0], c.real), (parts[1], c.imag)):
            wl = UniformMotion((1.0 + m * L, 0.0), (0.3, 0.0))
            part.attach(MovingDipole(amp, 5.0, wl, axis="z"))
    steps = 600                       # the dipole crosses the wrap (x = 1 -> 11.8)
    for s in [bloch] + parts:
        s.advance(steps=steps, ledger_every=steps)
    for c in bloch.fields:
        big = parts[0].fields[c] + 1j * parts[1].fields[c]
        scale = np.abs(big).max()
        for m in range(n_cells):
            cell = big[m * nx:(m + 1) * nx]
            err = np.abs(cell - np.exp(1j * theta * m) * bloch.fields[c]).max() / scale
            assert err < 1e-12, (c, m, err)       # measured <= 1.0e-14
    # Hermitian energy and work of the cell are 1/N of the two runs' sums
    sb = bloch.ledger.summary()
    sp = [p.ledger.summary() for p in parts]
    for key in ("stored_end", "source_work", "bath_heat", "outflow"):
        # measured <= 9.4e-16
        assert sb[key] == pytest.approx((sp[0][key] + sp[1][key]) / n_cells, rel=1e-13, abs=0), key
    # both real runs matter: each holds a good share of the start energy (and for N = 3,
    # where cos and sin of 2 pi m / 3 are both large, of the source work)
    assert min(sp[0]["stored_start"], sp[1]["stored_start"]) > 0.2 * n_cells * sb["stored_start"]
    if n_cells == 3:
        shares = [abs(p["source_work"]) / abs(sb["source_work"]) for p in sp]
        assert min(shares) > 0.05
