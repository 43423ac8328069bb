"""Unit conversions against scipy.constants, and the command line."""

import subprocess
import sys

import scipy.constants as sc

import fdtd as f


def test_unit_system_against_codata():
    u = f.UnitSystem(length=1e-7, dims=2)
    assert u.time == 1e-7 / sc.c
    # vacuum impedance eta0 = mu0 c (CODATA via scipy.constants)
    assert abs(f.units.ETA0 - sc.mu_0 * sc.c) / f.units.ETA0 < 1e-12
    assert abs(u.magnetic_field * f.units.ETA0 - 1.0) < 1e-15
    # 1 eV photon: omega = e / hbar
    w = u.angular_frequency_from_ev(1.0)
    assert abs(w * u.angular_frequency - sc.e / sc.hbar) / (sc.e / sc.hbar) < 1e-14
    assert abs(u.angular_frequency_to_ev(w) - 1.0) < 1e-14
    # energies in 2D are per unit length: eps0 E0^2 ell^2
    assert abs(u.energy - sc.epsilon_0 * 1e-14) / u.energy < 1e-14


def test_version_command():
    out = subprocess.run([sys.executable, "-m", "fdtd.cli", "--version"], capture_output=True,
                         text=True, check=True)
    assert out.stdout.strip() == f"gapwake {f.__version__}"
