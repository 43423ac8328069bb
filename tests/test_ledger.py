"""The energy ledger closes: stored energy change = source work - bath heat - outflow.

The identity is exact for the discrete scheme (derivation in docs/theory/energy-ledger.md),
so the residual is at round-off (measured <= 1.9e-15 of the source work; held
to 1e-13).  The issue asked for 1e-3, which the round-off bound implies.
"""

import numpy as np
import pytest

import fdtd as f

LOSSY = f.Material(1.4, (f.LorentzPole(2.0, 3.0, 0.4),), "lossy-lorentz")


@pytest.mark.parametrize("pol,comp", [("1d", "Ey"), ("te", "Ey"), ("te", "Ex"), ("tm", "Ez")])
def test_pulse_through_lossy_slab_into_absorbers(pol, comp):
    if pol == "1d":
        g = f.Grid((300,), (0.05,), "1d")
        regions = [(f.Slab("x", 8.0, 10.0), LOSSY)]
        pos = (4.0,)
        steps = 1500
    else:
        g = f.Grid((90, 80), (0.1, 0.1), pol)
        regions = [(f.HalfSpace("y", below=3.0), LOSSY)]
        pos = (4.5, 5.0)
        steps = 900
    model = f.Model(g, regions, edges=f.CPML(10))
    s = f.Solver(model, courant=0.9)
    s.attach(f.line_current(s, comp, pos, 1.0, f.GaussianPulse(1.5, 0.25, derivative=True)))
    s.advance(steps=steps, ledger_every=100)
    led = s.ledger.summary()
    assert abs(led["relative_residual"]) < 1e-13         # exact identity; measured <= 1.3e-15
    # every channel is really exercised
    assert led["bath_heat"] > 0.05 * led["source_work"]
    assert led["outflow"] > 0.05 * led["source_work"]
    assert led["stored_end"] < 1e-3 * led["source_work"]
    # and the ledger holds at every intermediate sample, not only at the ends
    a = s.ledger.samples[0]
    for b in s.ledger.samples[1:]:
        bal = (b.stored - a.stored) - (b.source_work - a.source_work) + (b.bath.sum() - a.bath.sum()) \
            + (b.outflow - a.outflow)
        assert abs(bal) < 1e-13 * led["source_work"]    # measured <= 1.9e-15


def test_drude_and_lorentz_together_per_pole_bath():
    metal = f.Material(1.0, (f.DrudePole(4.0, 0.8),), "metal")
    g = f.Grid((80, 70), (0.1, 0.1), "te")
    model = f.Model(g, [(f.HalfSpace("y", below=2.5), LOSSY), (f.Rectangle(2.0, 4.0, 4.0, 5.0), metal)],
                    edges=f.CPML(10))
    s = f.Solver(model, courant=0.9)
    s.attach(f.line_current(s, "Ex", (5.0, 3.5), 1.0, f.GaussianPulse(1.5, 0.25, derivative=True)))
    s.advance(steps=700, ledger_every=100)
    bath = s.ledger.samples[-1].bath
    assert model.pole_labels == ["lossy-lorentz[0]", "metal[0]"]
    assert np.all(bath > 0)
    assert abs(s.ledger.residual()) < 1e-13 * s.ledger.summary()["source_work"]  # measured 1.8e-15


def test_lossless_closed_cavity_box_energy_plus_face_flux_is_constant(rng):
    """Lossless poles behind conducting walls: the ledger box stops one cell short of the
    walls, so the energy inside it changes (measured by up to 1.3 %) by exactly what
    crosses its faces, and no heat is booked."""
    lossless = f.Material(1.2, (f.LorentzPole(1.5, 2.5, 0.0), f.DrudePole(1.0, 0.0)), "lossless")
    g = f.Grid((40, 36), (0.1, 0.1), "tm")
    model = f.Model(g, [(f.Rectangle(1.0, 3.0, 1.0, 2.5), lossless)], edges=f.PEC())
    s = f.Solver(model, courant=0.95, ledger_margin=0)
    s.fields["Ez"][5:-5, 5:-5] = rng.standard_normal((30, 26))
    s.fields["Hx"][...] = rng.standard_normal(g.shape)
    s.advance(steps=3000, ledger_every=500)
    stored = np.array([x.stored for x in s.ledger.samples])
    flux = np.array([x.outflow for x in s.ledger.samples])
    np.testing.assert_allclose(stored + flux, stored[0], rtol=1e-12)
    # the face flux really enters the sum (measured up to 1.3 % of the stored energy)
    assert np.max(np.abs(flux)) > 1e-3 * stored[0]
    assert all(np.all(x.bath == 0.0) for x in s.ledger.samples)


@pytest.mark.parametrize("pol", ["te", "tm"])
def test_segment_energy_sums_equal_the_per_cell_sums(pol):
    """The ledger's stored-energy pass walks row segments (one mixture each); it must give
    the per-cell sums of the plain form to round-off, part-filled cells and two poles included."""
    from fdtd.solver.kernels import energy as ek

    mat = f.Material(2.0, (f.LorentzPole(3.0, 0.3, 0.01), f.LorentzPole(1.0, 0.3, 0.02)), "two-pole")
    g = f.Grid((30, 27), (1.0, 1.0), pol)
    m = f.Model(g, [(f.HalfSpace("y", below=12.3), mat)], edges=f.CPML(5))
    s = f.Solver(m, courant=0.9, ledger=True)
    rng = np.random.default_rng(3)
    for c in g.e_components:
        s.fields[c][...] = rng.standard_normal(g.shape)
        for a in s.polarization[c]:
            a[...] = rng.standard_normal(a.shape)
    t = s.tables
    for c in g.e_components:
        E, (P, Po) = s.fields[c], s.polarization[c]
        r = s.ledger.ranges[c][0] + s.ledger.ranges[c][1]
        wa, wb = np.zeros(4), np.zeros(4)
        a = ek.e_terms(E, m.mix_maps[c], P, Po, t["eps_inf"], t["n_poles"], t["kin"], t["pot"], t["gid"],
                       s.dt, *r, wa)
        b = ek.e_terms_segments(E, s._segs[c], P, Po, t["eps_inf"], t["n_poles"], t["kin"], t["pot"],
                                t["gid"], s.dt, *r, wb)
        np.testing.assert_allclose(b, a, rtol=1e-12)
        np.testing.assert_allclose(wb, wa, rtol=1e-12, atol=1e-12 * np.abs(wa).max())
        assert np.count_nonzero(wa) == 2
