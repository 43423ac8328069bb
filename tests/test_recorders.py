"""Recorders: line records, snapshots and running DFTs against the solver's own fields."""

import math
import shutil

import h5py
import numpy as np
import pytest

import fdtd as f
from fdtd.recording.dft import DFTRecorder
from fdtd.recording.line import FieldLineRecorder
from fdtd.recording.snapshots import SnapshotRecorder

NX, DX = 64, 0.1
N_PERIOD = 80          # steps per period of the standing wave below


def standing_wave_solver():
    """1D periodic vacuum cell holding an exact discrete standing wave.

    E_i^n = cos(k x_i) cos(w t_n), H_{i+1/2}^{n-1/2} = sin(k x_{i+1/2}) sin(w t_{n-1/2}),
    with dt chosen so that w dt = 2 pi / N_PERIOD satisfies the Yee dispersion
    relation sin(w dt/2)/dt = sin(k dx/2)/dx exactly (Courant number ~0.8).
    Returns (solver, k, w).
    """
    g = f.Grid((NX,), (DX,), "1d")
    k = 2 * np.pi / (NX * DX)
    theta = 2 * np.pi / N_PERIOD
    dt = DX * math.sin(theta / 2) / math.sin(k * DX / 2)
    s = f.Solver(f.Model(g, edges=f.Periodic()), dt=dt, ledger=False)
    w = theta / s.dt
    s.fields["Ey"][:] = np.cos(k * g.axis_coordinates("Ey", 0))
    s.fields["Hz"][:] = np.sin(k * g.axis_coordinates("Hz", 0)) * np.sin(-0.5 * w * s.dt)
    return s, k, w


def te_solver():
    """Small 2D TE grid with CPML edges and a Gaussian Hz pulse off centre."""
    g = f.Grid((40, 30), (0.1, 0.1), "te")
    s = f.Solver(f.Model(g, edges=f.CPML(6)), courant=0.8, ledger=False)
    x, y = g.coordinates("Hz")
    s.fields["Hz"][:] = np.exp(-((x - 1.7) ** 2 + (y - 1.4) ** 2) / 0.1)
    return s


def step_and_collect(s, steps, comps):
    """Advance one step at a time; return {component: [state after 0, 1, ..., steps steps]}."""
    out = {c: [s.fields[c].copy()] for c in comps}
    for _ in range(steps):
        s.step()
        for c in comps:
            out[c].append(s.fields[c].copy())
    return {c: np.array(v) for c, v in out.items()}


# ----------------------------------------------------------------------
def test_line_record_equals_solver_fields_and_time_levels():
    s, k, w = standing_wave_solver()
    rec = FieldLineRecorder(s, ("Ey", "Hz"), "x", None)
    ref = step_and_collect(s, 30, ("Ey", "Hz"))
    dt = s.dt
    # E: every state 0..30 at n dt; H^{-1/2} (t = -dt/2) is before start = 0 and left out
    np.testing.assert_array_equal(rec.times("Ey"), np.arange(31) * dt)
    np.testing.assert_array_equal(rec.times("Hz"), (np.arange(1, 31) - 0.5) * dt)
    # H stamps of a state are half a step earlier than the E stamps of the same state
    np.testing.assert_allclose(rec.times("Ey")[1:] - rec.times("Hz"), 0.5 * dt, rtol=0, atol=1e-15)
    np.testing.assert_array_equal(rec.data("Ey"), ref["Ey"])
    np.testing.assert_array_equal(rec.data("Hz"), ref["Hz"][1:])
    assert rec.data("Ey").shape == (31, NX)
    np.testing.assert_array_equal(rec.coordinates["Hz"], (np.arange(NX) + 0.5) * DX)
    # and the record is the exact standing wave at the stamped times
    xe, xh = rec.coordinates["Ey"], rec.coordinates["Hz"]
    te, th = rec.times("Ey"), rec.times("Hz")
    np.testing.assert_allclose(rec.data("Ey"), np.cos(w * te)[:, None] * np.cos(k * xe), atol=1e-12)
    np.testing.assert_allclose(rec.data("Hz"), np.sin(w * th)[:, None] * np.sin(k * xh), atol=1e-12)


def test_decimation_and_window_with_run():
    s, _k, _w = standing_wave_solver()
    dt = s.dt
    start, stop = 4.375 * dt, 62.5 * dt          # between levels, so rounding is exercised
    rec = FieldLineRecorder(s, ["Ey", "Hz"], "x", None, start=start, stop=stop, every=3)
    ref = {"Ey": [s.fields["Ey"].copy()], "Hz": [s.fields["Hz"].copy()]}

    def grab(solver):
        for c in ref:
            ref[c].append(solver.fields[c].copy())

    s.advance(steps=100, callback=grab, callback_every=1)
    levels = np.arange(5, 63, 3)                 # first E level >= start is 5; 62 dt <= stop
    assert rec.n_samples("Ey") == levels.size == 20
    np.testing.assert_allclose(rec.times("Ey"), levels * dt, rtol=1e-15)
    # H at the same levels: (n - 1/2) dt lies in the window for n = 5..62 as well
    np.testing.assert_allclose(rec.times("Hz"), (levels - 0.5) * dt, rtol=1e-15)
    np.testing.assert_array_equal(rec.data("Ey"), np.array(ref["Ey"])[levels])
    np.testing.assert_array_equal(rec.data("Hz"), np.array(ref["Hz"])[levels])


def test_line_in_2d_picks_nearest_row_per_component():
    s = te_solver()
    g = s.model.grid
    rec = FieldLineRecorder(s, ("Ex", "Ey", "Hz"), "x", 1.52)
    ref = step_and_collect(s, 5, ("Ex", "Ey"))
    assert rec.line_index["Ex"] == 15 and rec.line_position["Ex"] == pytest.approx(1.5)
    assert rec.line_index["Ey"] == 15 and rec.line_position["Ey"] == pytest.approx(1.55)
    np.testing.assert_array_equal(rec.data("Ex"), ref["Ex"][:, :, 15])
    np.testing.assert_array_equal(rec.coordinates["Ex"], g.axis_coordinates("Ex", 0))
    col = FieldLineRecorder(s, "Ey", "y", 0.97)
    s.step()
    assert col.line_index["Ey"] == 10 and col.data("Ey").shape == (2, 30)
    np.testing.assert_array_equal(col.data("Ey")[-1], s.fields["Ey"][10, :])


def test_streaming_matches_memory_and_is_plain_hdf5(tmp_path):
    s = te_solver()
    path = tmp_path / "line.h5"
    mem = FieldLineRecorder(s, ("Ey", "Hz"), "x", 1.5, every=2)
    disk = FieldLineRecorder(s, ("Ey", "Hz"), "x", 1.5, every=2, path=path, chunk=7)
    s.advance(steps=40)                              # 21 E samples, 20 H samples
    # a crash now loses at most the unflushed chunk: a byte copy of the file is readable
    crash = tmp_path / "crash.h5"
    shutil.copyfile(path, crash)
    with h5py.File(crash, "r") as h:
        assert h["Ey"].shape[0] >= 14 and h["Hz"].shape[0] >= 14
        np.testing.assert_array_equal(h["Ey"][...], mem.data("Ey")[: h["Ey"].shape[0]])
    for c in ("Ey", "Hz"):
        np.testing.assert_array_equal(disk.data(c), mem.data(c))
        np.testing.assert_array_equal(disk.times(c), mem.times(c))
    s.advance(steps=10)
    disk.close()
    s.advance(steps=10)                              # closed: records nothing more, no error
    assert disk not in s.observers and mem.n_samples("Ey") == 31
    with h5py.File(path, "r") as h:
        assert {"Ey", "Hz", "time_E", "time_H", "coord_Ey", "coord_Hz"} <= set(h)
        assert h.attrs["units"] == "normalized" and h["Ey"].attrs["units"] == "normalized"
        assert h.attrs["description"]
        assert h["Ey"].attrs["time"] == "time_E"
        np.testing.assert_array_equal(h["Ey"][...], mem.data("Ey")[:26])
        np.testing.assert_array_equal(h["time_H"][...], mem.times("Hz")[:25])
        np.testing.assert_array_equal(h["coord_Hz"][...], mem.coordinates["Hz"])
        assert h["Hz"].chunks == (7, 40) and h["Hz"].maxshape == (None, 40)
    np.testing.assert_array_equal(disk.data("Hz"), mem.data("Hz")[:25])   # read back after close


def test_memory_guard_refuses_planned_record():
    s, _k, _w = standing_wave_solver()
    with pytest.raises(f.ParameterError, match=r"max_memory.*path=.*every="):
        FieldLineRecorder(s, ("Ey", "Hz"), "x", None, stop=1000.0, max_memory=1e5)
    assert not s.observers
    # the same window fits with decimation
    FieldLineRecorder(s, ("Ey", "Hz"), "x", None, stop=1000.0, every=200, max_memory=1e5)


def test_memory_guard_warns_and_stops_open_record():
    s, _k, _w = standing_wave_solver()
    row = 8 * NX + 8                             # one Ey row plus its time stamp
    rec = FieldLineRecorder(s, "Ey", "x", None, max_memory=10.5 * row)
    with pytest.warns(RuntimeWarning, match=r"max_memory.*path="):
        s.advance(steps=30)
    assert rec.truncated and rec.n_samples("Ey") == 10
    np.testing.assert_array_equal(rec.times("Ey"), np.arange(10) * s.dt)


def test_bad_positions_and_parameters_are_refused():
    s = te_solver()
    with pytest.raises(f.GeometryError, match=r"position = 3\.5 .*\[0, 3\]"):
        FieldLineRecorder(s, "Ey", "x", 3.5)
    with pytest.raises(f.GeometryError, match=r"position = -0\.2 .*\[0, 4\]"):
        FieldLineRecorder(s, "Ey", "y", -0.2)
    with pytest.raises(f.ParameterError, match="position = None"):
        FieldLineRecorder(s, "Ey", "x")
    with pytest.raises(f.ParameterError, match="axis = 'z'"):
        FieldLineRecorder(s, "Ey", "z", 1.0)
    with pytest.raises(f.ParameterError, match="'Ez' is not a field"):
        FieldLineRecorder(s, ("Ey", "Ez"), "x", 1.0)
    with pytest.raises(f.ParameterError, match="every = 0"):
        FieldLineRecorder(s, "Ey", "x", 1.0, every=0)
    with pytest.raises(f.ParameterError, match="stop = 1.0 .* start = 2.0"):
        FieldLineRecorder(s, "Ey", "x", 1.0, start=2.0, stop=1.0)
    with pytest.raises(f.GeometryError, match=r"region .* shape \(40, 30\)"):
        DFTRecorder(s, "Ey", [1.0], region=(slice(None), np.array([5, 30])))
    with pytest.raises(f.ParameterError, match="pi/dt"):
        DFTRecorder(s, "Ey", [1.0, 2 * np.pi / s.dt])
    with pytest.raises(f.ParameterError, match=r"times\[2\] = 0.5"):
        SnapshotRecorder(s, "Hz", [0.1, 0.9, 0.5])
    s1, _k, _w = standing_wave_solver()
    with pytest.raises(f.ParameterError, match="axis = 'y'"):
        FieldLineRecorder(s1, "Ey", "y", 1.0)
    assert not s.observers and not s1.observers


def test_dft_of_standing_wave_recovers_complex_amplitudes():
    s, k, w = standing_wave_solver()
    dt = s.dt
    T = N_PERIOD * dt
    # window of exactly one period for both kinds: E at 0..79 dt, H at 0.5..79.5 dt
    rec = DFTRecorder(s, ("Ey", "Hz"), [w, 2 * w, 0.0], start=0.0, stop=(N_PERIOD - 0.5) * dt)
    s.advance(steps=N_PERIOD + 20)
    win = rec.window
    assert win["Ey"].samples == win["Hz"].samples == N_PERIOD
    assert win["Ey"].start == 0.0 and win["Ey"].stop == pytest.approx((N_PERIOD - 1) * dt)
    assert win["Hz"].start == pytest.approx(0.5 * dt)
    assert win["Hz"].stop == pytest.approx((N_PERIOD - 0.5) * dt)
    xe = s.model.grid.axis_coordinates("Ey", 0)
    xh = s.model.grid.axis_coordinates("Hz", 0)
    E, H = rec.spectrum("Ey"), rec.spectrum("Hz")
    assert E.shape == H.shape == (3, NX) and E.dtype == np.complex128
    # cos(w t) = Re(1 e^{-i w t}) -> amplitude 1; sin(w t) = Re(i e^{-i w t}) -> amplitude i
    np.testing.assert_allclose(2 * E[0] / T, np.cos(k * xe), atol=1e-10)
    np.testing.assert_allclose(2 * H[0] / T, 1j * np.sin(k * xh), atol=1e-10)
    # a whole period holds nothing at 2w and no mean
    np.testing.assert_allclose(E[1:], 0, atol=1e-10)
    np.testing.assert_allclose(H[1:], 0, atol=1e-10)


def test_dft_equals_fft_of_line_record_in_2d():
    s = te_solver()
    dt = s.dt
    n = 64
    line = FieldLineRecorder(s, ("Ey", "Hz"), "x", 1.5, stop=(n - 0.5) * dt)
    j = line.line_index["Ey"]
    m = np.arange(4)
    om = 2 * np.pi * m / (n * dt)
    rec = DFTRecorder(s, ("Ey", "Hz"), om, stop=(n - 0.5) * dt, region=(slice(None), j))
    pts = (np.array([3, 20, 33]), np.array([j, 2, j]))
    few = DFTRecorder(s, "Hz", om, stop=(n - 0.5) * dt, region=pts)
    s.advance(steps=n + 5)
    for c in ("Ey", "Hz"):
        x, t = line.data(c), line.times(c)
        assert x.shape == (n, 40)
        # sum_n x_n e^{i om_m (t_0 + n dt)} dt = dt e^{i om_m t_0} n ifft(x)[m]
        ref = dt * np.exp(1j * om * t[0])[:, None] * n * np.fft.ifft(x, axis=0)[m]
        np.testing.assert_allclose(rec.spectrum(c), ref, rtol=1e-12, atol=1e-12 * np.abs(ref).max())
    full_hz_row = rec.spectrum("Hz")
    np.testing.assert_allclose(few.spectrum("Hz")[:, [0, 2]], full_hz_row[:, [3, 33]], rtol=1e-13)
    xs, ys = few.region_coordinates("Hz")
    np.testing.assert_allclose(xs, [0.35, 2.05, 3.35])
    np.testing.assert_allclose(ys, [0.1 * j + 0.05, 0.25, 0.1 * j + 0.05])


@pytest.mark.parametrize("stream", [False, True])
def test_snapshots_at_first_level_reaching_each_time(tmp_path, stream):
    s, _k, _w = standing_wave_solver()
    dt = s.dt
    req = [0.0, 3.0 * dt, 7.2 * dt, 7.4 * dt, 12.5 * dt]
    path = tmp_path / "snap.h5" if stream else None
    rec = SnapshotRecorder(s, ("Ey", "Hz"), req, path=path)
    ref = step_and_collect(s, 20, ("Ey", "Hz"))
    e_levels = [0, 3, 8, 8, 13]                  # first n with n dt >= t
    h_levels = [1, 4, 8, 8, 13]                  # first n with (n - 1/2) dt >= t
    np.testing.assert_allclose(rec.times_taken["Ey"], np.array(e_levels) * dt, rtol=1e-15)
    np.testing.assert_allclose(rec.times_taken["Hz"], (np.array(h_levels) - 0.5) * dt, rtol=1e-15)
    np.testing.assert_array_equal(rec.snapshots("Ey"), ref["Ey"][e_levels])
    np.testing.assert_array_equal(rec.snapshots("Hz"), ref["Hz"][h_levels])
    assert rec.snapshots("Ey").shape == (5, NX)
    rec.close()
    if stream:
        with h5py.File(path, "r") as h:
            assert h.attrs["units"] == "normalized"
            np.testing.assert_array_equal(h["Hz"][...], ref["Hz"][h_levels])
            np.testing.assert_allclose(h["time_E"][...], np.array(e_levels) * dt, rtol=1e-15)


def test_snapshot_memory_guard_and_past_times():
    s = te_solver()
    with pytest.raises(f.ParameterError, match=r"max_memory.*path="):
        SnapshotRecorder(s, ("Ex", "Ey", "Hz"), np.linspace(0, 1, 50), max_memory=1e6)
    s.advance(steps=10)
    with pytest.raises(f.ParameterError, match=r"times\[0\] = 0.1 is earlier"):
        SnapshotRecorder(s, "Hz", [0.1, 1.0])
