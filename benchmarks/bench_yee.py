"""Throughput of the 2D TE_z kernel with one Lorentz pole, against NumPy and memory bandwidth.

Prints, for 1024^2 and 4096^2 grids (CPML on every side, a Lorentz half-space
over 60 % of the domain, vacuum above):

* Mcell/s of the project's kernel with 1 and 2 threads;
* Mcell/s of a plain vectorized NumPy implementation of the same update
  (written here, with per-cell coefficient arrays and temporaries);
* their ratio;
* bytes per cell-update the kernel must move, the machine's bandwidth
  measured in the same run with an in-place ``a += s*b`` (24 B/element, no
  write-allocate), and the implied fraction of that bound;
* compile time cold (empty cache) and from the on-disk cache;
* peak memory of a 4096^2 run relative to the bytes of its field and
  polarization arrays.

Usage:  python benchmarks/bench_yee.py [--quick]
Shared machines drift by +-30 %: compare figures of one run only.
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time

import numba
import numpy as np
from numba import njit, prange

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.dirname(HERE))

import fdtd as f  # noqa: E402

LORENTZ = f.Material(2.0, (f.LorentzPole(3.0, 0.3, 0.01),), "bench-lorentz")


def build(n: int, threads: int, ledger: bool = False) -> f.Solver:
    g = f.Grid((n, n), (1.0, 1.0), "te")
    model = f.Model(g, [(f.HalfSpace("y", below=0.6 * n), LORENTZ)], edges=f.CPML(16))
    s = f.Solver(model, courant=0.95, threads=threads, ledger=ledger)
    s.temporal_levels = 1    # the single-pass kernel (benchmarks/bench_temporal.py times the blocked one)
    rng = np.random.default_rng(1)
    for c in s.fields:   # touch every page, non-trivial values
        s.fields[c][...] = 1e-3 * rng.standard_normal(s.fields[c].shape)
    return s


def pole_fraction(s: f.Solver) -> float:
    """Fraction of E nodes that carry a pole (the kernel touches P only there)."""
    t = s.tables["n_poles"]
    return float(np.mean([np.mean(t[s.model.mix_maps[c]] > 0) for c in ("Ex", "Ey")]))


def time_kernel(s: f.Solver, steps: int, repeats: int) -> float:
    s.step(2)
    best = np.inf
    for _ in range(repeats):
        t0 = time.perf_counter()
        s.step(steps)
        best = min(best, (time.perf_counter() - t0) / steps)
    return s.grid.n_cells / best / 1e6


# --------------------------------------------------------------- NumPy baseline
class NumpyTE:
    """Plain vectorized NumPy of the same TE_z + one Lorentz pole + CPML update."""

    def __init__(self, s: f.Solver):
        self.dt = s.dt
        n = s.grid.shape[0]
        self.n = n
        self.Ex, self.Ey, self.Hz = (s.fields[c].copy() for c in ("Ex", "Ey", "Hz"))
        self.Px = np.zeros((n, n))
        self.Pxo = np.zeros((n, n))
        self.Py = np.zeros((n, n))
        self.Pyo = np.zeros((n, n))
        t = s.tables
        mix = s.model.mix_maps["Ex"]
        self.c1, self.c2, self.c3 = (t[k][mix, 0] for k in ("c1", "c2", "c3"))
        self.inv_eps = t["inv_eps"][mix]
        px, py = s.profiles
        self.k = s.dt  # dx = dy = 1
        self.npml = 16
        self.bx, self.cx = px.b_half, s.dt * px.c_half
        self.be, self.ce = px.b_int, s.dt * px.c_int
        m = self.npml
        self.psi = {k: np.zeros((m, n)) for k in ("hzx_lo", "hzx_hi", "eyx_lo", "eyx_hi")}
        self.psi.update({k: np.zeros((n, m)) for k in ("hzy_lo", "hzy_hi", "exy_lo", "exy_hi")})

    def step(self):
        Ex, Ey, Hz, k, m, n = self.Ex, self.Ey, self.Hz, self.k, self.npml, self.n
        dEy = Ey[1:, :-1] - Ey[:-1, :-1]
        dEx = Ex[:-1, 1:] - Ex[:-1, :-1]
        Hz[:-1, :-1] -= k * dEy - k * dEx
        p = self.psi
        p["hzx_lo"] = self.bx[:m, None] * p["hzx_lo"] + self.cx[:m, None] * (Ey[1:m + 1] - Ey[:m])
        Hz[:m] -= p["hzx_lo"]
        p["hzx_hi"] = self.bx[n - m - 1:-1, None] * p["hzx_hi"] + self.cx[n - m - 1:-1, None] * (
            Ey[n - m:] - Ey[n - m - 1:-1])
        Hz[n - m - 1:-1] -= p["hzx_hi"]
        p["hzy_lo"] = self.bx[None, :m] * p["hzy_lo"] + self.cx[None, :m] * (Ex[:, 1:m + 1] - Ex[:, :m])
        Hz[:, :m] += p["hzy_lo"]
        p["hzy_hi"] = self.bx[None, n - m - 1:-1] * p["hzy_hi"] + self.cx[None, n - m - 1:-1] * (
            Ex[:, n - m:] - Ex[:, n - m - 1:-1])
        Hz[:, n - m - 1:-1] += p["hzy_hi"]
        curl_x = np.zeros_like(Ex)
        curl_x[:, 1:] = k * (Hz[:, 1:] - Hz[:, :-1])
        p["exy_lo"] = self.be[None, 1:m + 1] * p["exy_lo"] + self.ce[None, 1:m + 1] * (
            Hz[:, 1:m + 1] - Hz[:, :m])
        curl_x[:, 1:m + 1] += p["exy_lo"]
        p["exy_hi"] = self.be[None, n - m:] * p["exy_hi"] + self.ce[None, n - m:] * (
            Hz[:, n - m:] - Hz[:, n - m - 1:-1])
        curl_x[:, n - m:] += p["exy_hi"]
        curl_y = np.zeros_like(Ey)
        curl_y[1:] = -k * (Hz[1:] - Hz[:-1])
        p["eyx_lo"] = self.be[1:m + 1, None] * p["eyx_lo"] + self.ce[1:m + 1, None] * (Hz[1:m + 1] - Hz[:m])
        curl_y[1:m + 1] -= p["eyx_lo"]
        p["eyx_hi"] = self.be[n - m:, None] * p["eyx_hi"] + self.ce[n - m:, None] * (
            Hz[n - m:] - Hz[n - m - 1:-1])
        curl_y[n - m:] -= p["eyx_hi"]
        for E, P, Po, curl in ((Ex, self.Px, self.Pxo, curl_x), (Ey, self.Py, self.Pyo, curl_y)):
            Pn = self.c1 * P + self.c2 * Po + self.c3 * E
            dP = Pn - P
            Po[...] = P
            P[...] = Pn
            E += self.inv_eps * (curl - dP)


def time_numpy(s: f.Solver, steps: int) -> float:
    b = NumpyTE(s)
    b.step()
    t0 = time.perf_counter()
    for _ in range(steps):
        b.step()
    return s.grid.n_cells / ((time.perf_counter() - t0) / steps) / 1e6


# --------------------------------------------------------------- bandwidth
@njit(parallel=True, cache=True)
def _inplace_update(a, b, s, nchunks):
    n = a.size
    for c in prange(nchunks):
        i0 = c * n // nchunks
        i1 = (c + 1) * n // nchunks
        for i in range(i0, i1):
            a[i] += s * b[i]


def bandwidth(threads: int, n_elements: int = 64 * 1024 * 1024, repeats: int = 5) -> float:
    """Bytes/s of a += s*b (24 B per element) on arrays far larger than the caches."""
    a = np.ones(n_elements)
    b = np.ones(n_elements)
    numba.set_num_threads(threads)
    _inplace_update(a, b, 1e-9, threads)
    best = np.inf
    for _ in range(repeats):
        t0 = time.perf_counter()
        _inplace_update(a, b, 1e-9, threads)
        best = min(best, time.perf_counter() - t0)
    return 24.0 * n_elements / best


# --------------------------------------------------------------- compile time and memory
COMPILE_PROBE = r"""
import time, json
t0 = time.perf_counter()
import fdtd as f
t_import = time.perf_counter() - t0
g = f.Grid((64, 64), (1.0, 1.0), "te")
m = f.Model(g, [(f.HalfSpace("y", below=30.0), f.Material(2.0, (f.LorentzPole(3.0, 0.3, 0.01),)))],
            edges=f.CPML(8))
s = f.Solver(m, courant=0.95, ledger=False)
t1 = time.perf_counter(); s.step(); t_first = time.perf_counter() - t1
t2 = time.perf_counter(); s.step(); t_second = time.perf_counter() - t2
print(json.dumps({"import": t_import, "first_step": t_first - t_second}))
"""

MEMORY_PROBE = r"""
import json, sys
import numpy as np
import fdtd as f


def status(key):
    with open("/proc/self/status") as fh:
        for line in fh:
            if line.startswith(key + ":"):
                return int(line.split()[1]) * 1024
    return -1


n = int(sys.argv[1])
g0 = f.Grid((64, 64), (1.0, 1.0), "te")
s0 = f.Solver(f.Model(g0, [(f.HalfSpace("y", below=30.0), f.Material(2.0, (f.LorentzPole(3.0, 0.3, 0.01),)))],
              edges=f.CPML(8)), ledger=False)
s0.step(2)
base = status("VmRSS")
try:   # reset the high-water mark so that only this run counts (Linux >= 4.0)
    with open("/proc/self/clear_refs", "w") as fh:
        fh.write("5")
except OSError:
    pass
g = f.Grid((n, n), (1.0, 1.0), "te")
m = f.Model(g, [(f.HalfSpace("y", below=0.6 * n), f.Material(2.0, (f.LorentzPole(3.0, 0.3, 0.01),)))],
            edges=f.CPML(16))
s = f.Solver(m, courant=0.95, ledger=False, threads=2)
for c in s.fields:
    s.fields[c][...] = 1e-3
s.step(5)
peak = status("VmHWM")
arrays = sum(a.nbytes for a in s.fields.values()) + sum(p.nbytes + q.nbytes for p, q in s.polarization.values())
print(json.dumps({"baseline": base, "peak": peak, "arrays": arrays}))
"""


def compile_times() -> dict:
    env = dict(os.environ)
    with tempfile.TemporaryDirectory() as cache:
        env["NUMBA_CACHE_DIR"] = cache
        env["PYTHONPATH"] = os.path.dirname(HERE) + os.pathsep + env.get("PYTHONPATH", "")
        out = {}
        for label in ("cold", "cached"):
            r = subprocess.run([sys.executable, "-c", COMPILE_PROBE], env=env, capture_output=True,
                               text=True, check=True)
            out[label] = json.loads(r.stdout.strip().splitlines()[-1])
    return out


def memory(n: int) -> dict:
    env = dict(os.environ)
    env["PYTHONPATH"] = os.path.dirname(HERE) + os.pathsep + env.get("PYTHONPATH", "")
    r = subprocess.run([sys.executable, "-c", MEMORY_PROBE, str(n)], env=env, capture_output=True,
                       text=True, check=True)
    return json.loads(r.stdout.strip().splitlines()[-1])


def source_cost(n: int = 2048, steps: int = 20, repeats: int = 5) -> dict:
    """Fraction of a step spent on a moving dipole (deposit, injection, bookkeeping).

    One solver, the source switched on and off between interleaved timings, so
    that memory placement and machine load are the same for both.
    """
    from fdtd.sources.moving import MovingDipole
    from fdtd.sources.worldlines import UniformMotion

    threads = min(2, numba.config.NUMBA_NUM_THREADS)
    s = build(n, threads, ledger=False)
    src = MovingDipole(1.0, 0.3, UniformMotion((0.3 * n, 0.7 * n), (0.5, 0.0)), axis="y", ramp=5.0)
    s.attach(src)
    s.step(3)
    best = {False: np.inf, True: np.inf}
    for _ in range(repeats):
        for with_source in (False, True):
            s.sources = [src] if with_source else []
            t0 = time.perf_counter()
            s.step(steps)
            best[with_source] = min(best[with_source], (time.perf_counter() - t0) / steps)
    s.sources = [src]
    return {"step_without": best[False], "step_with": best[True],
            "fraction": (best[True] - best[False]) / best[True]}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="1024^2 only, fewer repeats")
    args = ap.parse_args()
    sizes = [1024] if args.quick else [1024, 4096]
    max_threads = numba.config.NUMBA_NUM_THREADS
    print(f"machine: {os.cpu_count()} CPUs, numba {numba.__version__}, "
          f"threading layer threads = {max_threads}")
    bw = {t: bandwidth(t) for t in sorted({1, min(2, max_threads)})}
    bw_best = max(bw.values())
    print("in-place a += s*b bandwidth: " + ", ".join(f"{t} thread(s) {v / 1e9:.1f} GB/s"
                                                      for t, v in bw.items()))
    rows = []
    for n in sizes:
        steps = 20 if n <= 1024 else 6
        res = {}
        for t in sorted({1, min(2, max_threads)}):
            s = build(n, t)
            res[t] = time_kernel(s, steps, 3 if not args.quick else 2)
            frac = pole_fraction(s)
            del s
        s = build(n, 1)
        np_rate = time_numpy(s, 2 if n > 1024 else 5)
        del s
        bytes_per_cell = 48.0 + 64.0 * frac   # fields r+w always; P, P_old r+w on pole nodes
        best_t = max(res, key=res.get)
        rate = res[best_t]
        implied = rate * 1e6 * bytes_per_cell
        rows.append((n, res, np_rate, bytes_per_cell, implied / bw_best))
        print(f"\n{n}^2 TE_z, one Lorentz pole on {frac:.0%} of the nodes, CPML 16 cells:")
        for t, v in res.items():
            print(f"  kernel, {t} thread(s): {v:8.1f} Mcell/s")
        print(f"  NumPy baseline       : {np_rate:8.1f} Mcell/s")
        print(f"  ratio kernel/NumPy   : {rate / np_rate:8.1f}x   (goal >= 10x)")
        print(f"  bytes per cell-update: {bytes_per_cell:8.1f} B")
        print(f"  fraction of bandwidth: {implied / bw_best:8.0%}   (goal >= 60% at 4096^2)")
    sc = source_cost()
    print(f"\nmoving dipole in a 2048^2 TE_z grid: step {sc['step_without'] * 1e3:.1f} ms without, "
          f"{sc['step_with'] * 1e3:.1f} ms with the source: source share {sc['fraction']:.1%} "
          "(goal < 5%)")
    ct = compile_times()
    print(f"\ncompile + first call of the TE kernel: cold {ct['cold']['first_step']:.2f} s "
          f"(goal < 10 s), from cache {ct['cached']['first_step']:.2f} s (goal < 1 s); "
          f"import fdtd {ct['cached']['import']:.2f} s")
    if not args.quick:
        mem = memory(4096)
        ratio = (mem["peak"] - mem["baseline"]) / mem["arrays"]
        print(f"peak memory, 4096^2: {(mem['peak'] - mem['baseline']) / 2**20:.0f} MiB above the "
              f"interpreter's {mem['baseline'] / 2**20:.0f} MiB, field+polarization arrays "
              f"{mem['arrays'] / 2**20:.0f} MiB: ratio {ratio:.3f} (goal <= 1.3); "
              f"whole process {mem['peak'] / mem['arrays']:.3f}")


if __name__ == "__main__":
    main()
