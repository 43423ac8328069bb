r"""The physical model: grid, materials on the grid, edges, stable time step.

A :class:`Model` owns everything that does not change during a run.  It turns
the user's geometry into, per electric-field component,

* a *mixture* index per node (int8/16/32 array of the grid shape): the
  (possibly part-filled) effective medium at that node, from
  :mod:`fdtd.space.geometry`; conducting-wall nodes get a special mixture whose
  inverse permittivity is zero, so the kernels need no boundary branches;
* *row segments*: the run-length encoding of that index along the last axis
  (``row_ptr``, ``seg_start``, ``seg_stop``, ``seg_mix``), which lets the
  kernels use scalar coefficients per segment instead of per-cell
  coefficient arrays (no coefficient traffic from memory);

and it derives the largest stable time step (:func:`fdtd.space.stability.max_stable_dt`).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from fdtd import _checks
from fdtd.space.edges import CPML, AxisProfile, Bloch, Boundary, Periodic, axis_profile, normalize_edges
from fdtd.errors import GeometryError, ParameterError, StabilityError
from fdtd.space.geometry import Placement, Region, cell_map_fractions, material_fractions
from fdtd.space.grid import Grid
from fdtd.media.materials import VACUUM, Material, Pole
from fdtd.space.stability import courant_number, max_stable_dt


@dataclass(frozen=True)
class PoleRef:
    """A pole of a mixture: the (scaled) pole and the id of the material pole it came from."""

    pole: Pole
    gid: int


@dataclass(frozen=True)
class Mixture:
    """Effective medium of one node: ``eps_inf`` and poles, or a conducting wall."""

    eps_inf: float
    poles: tuple[PoleRef, ...]
    fractions: tuple[float, ...]
    is_wall: bool = False

    def as_material(self) -> Material:
        return Material(self.eps_inf, tuple(p.pole for p in self.poles), "mixture")


@dataclass
class Segments:
    """Run-length encoding of a mixture map along the last axis.

    Row ``r`` (index along x in 2D; the single row in 1D) consists of
    segments ``row_ptr[r] .. row_ptr[r+1]-1``; segment ``k`` covers indices
    ``seg_start[k] <= j < seg_stop[k]`` with mixture ``seg_mix[k]``.
    """

    row_ptr: np.ndarray
    seg_start: np.ndarray
    seg_stop: np.ndarray
    seg_mix: np.ndarray

    @classmethod
    def from_map(cls, mix_map: np.ndarray) -> Segments:
        m2 = mix_map.reshape(1, -1) if mix_map.ndim == 1 else mix_map
        nrow, ncol = m2.shape
        change = np.empty(m2.shape, dtype=bool)
        change[:, 0] = True
        np.not_equal(m2[:, 1:], m2[:, :-1], out=change[:, 1:])
        rows, cols = np.nonzero(change)
        row_ptr = np.searchsorted(rows, np.arange(nrow + 1)).astype(np.int64)
        seg_start = cols.astype(np.int64)
        seg_stop = np.empty_like(seg_start)
        seg_stop[:-1] = seg_start[1:]
        last = row_ptr[1:] - 1
        seg_stop[last] = ncol
        seg_mix = m2[rows, cols].astype(np.int64)
        return cls(row_ptr, seg_start, seg_stop, seg_mix)

    @property
    def n_segments(self) -> int:
        return int(self.seg_start.size)


def _smallest_int_dtype(n: int):
    for dt in (np.int8, np.int16, np.int32):
        if n <= np.iinfo(dt).max:
            return dt
    return np.int64


class Model:
    """Grid + materials + edges.

    Parameters
    ----------
    grid : Grid
        The Yee grid.
    placements : sequence of (Region, Material) or Placement, optional
        Regions painted in order over the background.
    background : Material
        Medium outside all regions (default vacuum).
    edges : Boundary or per-axis spec
        ``CPML(...)``, ``PEC()``, ``Periodic()``, ``Bloch(theta)`` (x only), one per
        axis or ``(lo, hi)`` pairs; default CPML on every side.
    material_map : int array of the grid shape, optional
        Instead of regions: ``material_map[i, j]`` indexes ``materials`` and
        fills cell (i, j) (see :func:`fdtd.space.geometry.cell_map_fractions`).
    materials : sequence of Material
        Required with ``material_map``.
    subsamples : int
        Samples per axis in each dual cell when rasterising regions.
    """

    def __init__(self, grid: Grid, placements: Sequence = (), background: Material = VACUUM,
                 edges=None, material_map: np.ndarray | None = None,
                 materials: Sequence[Material] | None = None, subsamples: int = 4):
        if not isinstance(grid, Grid):
            raise ParameterError(f"grid = {grid!r}: expected an fdtd.Grid")
        self.grid = grid
        self.edges: tuple[tuple[Boundary, Boundary], ...] = normalize_edges(
            CPML() if edges is None else edges, grid.dims)
        self.periodic = tuple(isinstance(lo, Periodic) for lo, _hi in self.edges)
        pls = []
        for p in placements:
            if isinstance(p, Placement):
                pls.append(p)
            else:
                region, mat = p
                if not isinstance(region, Region):
                    raise ParameterError(f"placement region {region!r}: expected an fdtd Region")
                pls.append(Placement(region, mat))
        self.placements: tuple[Placement, ...] = tuple(pls)
        if not isinstance(background, Material):
            raise ParameterError(f"background = {background!r}: expected a Material")
        self.background = background

        # --- materials and fill fractions per E component ------------------
        if material_map is not None:
            if materials is None or not len(materials):
                raise ParameterError("material_map needs materials=[...] to index into")
            if self.placements:
                raise ParameterError("give either placements or material_map, not both")
            self.materials = list(materials)
            for m in self.materials:
                if not isinstance(m, Material):
                    raise ParameterError(f"materials entry {m!r}: expected a Material")
            counts_of = {c: cell_map_fractions(grid, c, material_map, len(self.materials), self.periodic)
                         for c in grid.e_components}
            n_samples = 2**grid.dims
        else:
            counts_of = {}
            self.materials = None
            for c in grid.e_components:
                mats, counts = material_fractions(grid, c, self.placements, background, subsamples)
                counts_of[c] = counts
                self.materials = mats
            n_samples = subsamples**grid.dims
        # global pole ids
        self.pole_labels: list[str] = []
        self._pole_gid: dict[tuple[int, int], int] = {}
        for mi, m in enumerate(self.materials):
            for pi, _p in enumerate(m.poles):
                self._pole_gid[(mi, pi)] = len(self.pole_labels)
                self.pole_labels.append(f"{m.name}[{pi}]")

        # mixtures: index 0 is the conducting wall
        self.mixtures: list[Mixture] = [Mixture(1.0, (), (), is_wall=True)]
        self._mixture_key: dict[tuple, int] = {}
        self.mix_maps: dict[str, np.ndarray] = {}
        raw_maps = {}
        for c in grid.e_components:
            raw_maps[c] = self._mixtures_from_counts(counts_of[c], n_samples)
        n_mix = len(self.mixtures)
        dtype = _smallest_int_dtype(n_mix)
        for c in grid.e_components:
            full = np.array(np.broadcast_to(raw_maps[c], grid.shape), dtype=dtype)
            # conducting walls: tangential E at index 0 of every closed axis
            offs = grid.offsets(c)
            for a in range(grid.dims):
                if not self.periodic[a] and offs[a] == 0.0:
                    sl = [slice(None)] * grid.dims
                    sl[a] = 0
                    full[tuple(sl)] = 0
            self.mix_maps[c] = full
        self.segments = {c: Segments.from_map(self.mix_maps[c]) for c in grid.e_components}
        self.max_poles = max((len(m.poles) for m in self.mixtures), default=0)
        self._used_mixtures = sorted(set().union(*(np.unique(self.mix_maps[c]).tolist()
                                                   for c in grid.e_components)))
        if self.bloch is not None and self.nonlocal_pole:
            raise ParameterError(
                f"edges for axis x = {self.edges[0]!r} with a spatially dispersive (nonlocal) "
                "pole on the grid is not allowed: the pole's Laplacian reads across the x wrap "
                "and would need the Bloch phase too, which it does not carry; expected "
                "Periodic() on x, or a material without a NonlocalLorentzPole")

    # ------------------------------------------------------------------
    def _mixtures_from_counts(self, counts: np.ndarray, n_samples: int) -> np.ndarray:
        n_mat = counts.shape[0]
        flat = counts.reshape(n_mat, -1)
        base = np.int64(n_samples + 1)
        codes = np.zeros(flat.shape[1], dtype=np.int64)
        for k in range(n_mat):
            codes = codes * base + flat[k].astype(np.int64)
        uniq, inverse = np.unique(codes, return_inverse=True)
        local_to_global = np.empty(uniq.size, dtype=np.int64)
        for u_index, code in enumerate(uniq):
            cnt = []
            c = int(code)
            for _k in range(n_mat):
                cnt.append(c % int(base))
                c //= int(base)
            cnt = cnt[::-1]
            key = tuple(cnt)
            if key not in self._mixture_key:
                self._mixture_key[key] = len(self.mixtures)
                self.mixtures.append(self._make_mixture(cnt, n_samples))
            local_to_global[u_index] = self._mixture_key[key]
        return local_to_global[inverse].reshape(counts.shape[1:])

    def _make_mixture(self, cnt: Sequence[int], n_samples: int) -> Mixture:
        eps_inf = 0.0
        poles = []
        fr = tuple(c / n_samples for c in cnt)
        for mi, f in enumerate(fr):
            if f == 0.0:
                continue
            m = self.materials[mi]
            eps_inf += f * m.eps_inf
            for pi, p in enumerate(m.poles):
                if p.is_nonlocal and f < 1.0:
                    # Pekar's condition: no polarization of a spatially dispersive pole
                    # on nodes cut by the surface (P = 0 there; kernels/nonlocal_pole.py)
                    continue
                poles.append(PoleRef(p if f == 1.0 else p.scaled(f), self._pole_gid[(mi, pi)]))
        return Mixture(eps_inf, tuple(poles), fr)

    def material_fraction_table(self) -> np.ndarray:
        """``F[m, k]``: fraction of material k in mixture m (walls: 0), (n_mix, n_materials)."""
        F = np.zeros((len(self.mixtures), len(self.materials)))
        for m, mix in enumerate(self.mixtures):
            if not mix.is_wall:
                F[m, :len(mix.fractions)] = mix.fractions
        return F

    def pole_material(self, gid: int) -> int:
        """Index (in ``materials``) of the material that global pole ``gid`` belongs to."""
        for (mi, _pi), g in self._pole_gid.items():
            if g == gid:
                return mi
        raise ParameterError(f"pole id {gid} is not on this model")

    # ------------------------------------------------------------------
    @property
    def bloch(self) -> Bloch | None:
        """The Bloch edge of the x axis, or None (docs/theory/bloch-cell.md)."""
        lo = self.edges[0][0]
        return lo if isinstance(lo, Bloch) else None

    @property
    def complex_fields(self) -> bool:
        """True when the solver must carry complex fields (a Bloch edge on x)."""
        return self.bloch is not None

    @property
    def wrap_factor(self) -> complex:
        """exp(i theta) of the Bloch edge on x (1 without one)."""
        b = self.bloch
        return b.wrap_factor if b is not None else 1.0 + 0.0j

    @property
    def dispersive(self) -> bool:
        return self.max_poles > 0

    def media_present(self) -> list[Material]:
        """Effective media actually present on the grid (conducting walls excluded)."""
        return [self.mixtures[k].as_material() for k in self._used_mixtures
                if not self.mixtures[k].is_wall]

    def max_stable_dt(self) -> float:
        """Largest stable time step (normalized), see :mod:`fdtd.space.stability`."""
        return max_stable_dt(self.grid.spacing, self.media_present())

    def resolve_dt(self, dt: float | None = None, courant: float | None = None,
                   allow_unstable: bool = False) -> float:
        """Check or choose the time step.

        Give ``dt`` (refused above the stability limit) or ``courant``, the
        fraction of the limit to use (0 < courant <= 1); default 0.95.
        ``allow_unstable=True`` accepts a ``dt`` above the limit with a
        warning (for studying the instability itself).
        """
        limit = self.max_stable_dt()
        if dt is not None and courant is not None:
            raise ParameterError("give dt or courant, not both")
        if dt is None:
            frac = 0.95 if courant is None else _checks.in_range(
                "courant (fraction of the stability limit)", courant, 0.0, 1.0, lo_open=True)
            return frac * limit
        dt = _checks.positive("dt", dt)
        if dt > limit and allow_unstable:
            import warnings

            warnings.warn(f"dt = {dt!r} is above the stability limit {limit!r}: expect growth",
                          stacklevel=3)
        elif dt > limit:
            nu = courant_number(dt, self.grid.spacing)
            nu_max = courant_number(limit, self.grid.spacing)
            raise StabilityError(
                f"time step dt = {dt!r} exceeds the stability limit dt_max = {limit!r} of the "
                f"Yee + ADE scheme for these cells and materials (Courant number {nu:.6g} > "
                f"{nu_max:.6g}); choose dt <= {limit!r}")
        return dt

    def profiles(self, dt: float) -> list[AxisProfile]:
        """CPML coefficient arrays, one per axis."""
        return [axis_profile(self.grid.shape[a], self.grid.spacing[a], dt, lo, hi)
                for a, (lo, hi) in enumerate(self.edges)]

    def pml_cells(self) -> list[tuple[int, int]]:
        return [((lo.cells if isinstance(lo, CPML) else 0), (hi.cells if isinstance(hi, CPML) else 0))
                for lo, hi in self.edges]

    def interior_box(self, margin: int = 1) -> list[tuple[int, int] | None]:
        """Index box of the region where the plain Yee update holds (for the ledger).

        Returns per axis ``(lo, hi)`` with cells ``lo <= i < hi``, or ``None``
        for a periodic axis (the whole ring).
        """
        out: list[tuple[int, int] | None] = []
        for a in range(self.grid.dims):
            if self.periodic[a]:
                out.append(None)
                continue
            nlo, nhi = self.pml_cells()[a]
            lo = max(nlo, 1) + margin
            hi = self.grid.shape[a] - max(nhi, 1) - margin
            if hi - lo < 2:
                raise GeometryError(f"axis {'xy'[a]} has no interior left between its absorbing layers")
            out.append((lo, hi))
        return out

    def kernel_tables(self, dt: float) -> dict[str, np.ndarray]:
        """Per-mixture coefficient tables for the kernels at time step ``dt``.

        ``inv_eps[m]`` (0 for walls), ``n_poles[m]``, ``c1, c2, c3[m, s]``
        (ADE coefficients of slot s), ``gid[m, s]`` (global pole id or -1),
        and for the ledger ``kin[m, s] = 1/(2b)``, ``pot[m, s] = a0/(2b)``,
        ``bath[m, s] = a1/b``, ``eps_inf[m]``; for spatially dispersive poles
        ``c4[m, s]`` (coefficient of the Laplacian in the update),
        ``kappa[m, s] = c_L/b`` (gradient energy) and ``nlg[m, s]`` (global
        pole id of a nonlocal pole, else -1).
        """
        nm = len(self.mixtures)
        ns = max(self.max_poles, 1)
        t = {
            "inv_eps": np.zeros(nm), "eps_inf": np.zeros(nm), "n_poles": np.zeros(nm, dtype=np.int64),
            "c1": np.zeros((nm, ns)), "c2": np.zeros((nm, ns)), "c3": np.zeros((nm, ns)),
            "gid": -np.ones((nm, ns), dtype=np.int64), "kin": np.zeros((nm, ns)),
            "pot": np.zeros((nm, ns)), "bath": np.zeros((nm, ns)),
            "c4": np.zeros((nm, ns)), "kappa": np.zeros((nm, ns)),
            "nlg": -np.ones((nm, ns), dtype=np.int64),
        }
        for k, mix in enumerate(self.mixtures):
            if mix.is_wall:
                continue
            t["inv_eps"][k] = 1.0 / mix.eps_inf
            t["eps_inf"][k] = mix.eps_inf
            t["n_poles"][k] = len(mix.poles)
            for s, pr in enumerate(mix.poles):
                c1, c2, c3 = pr.pole.ade_coefficients(dt)
                a0, a1, b = pr.pole.ade_parameters()
                t["c1"][k, s], t["c2"][k, s], t["c3"][k, s] = c1, c2, c3
                t["gid"][k, s] = pr.gid
                if b > 0:
                    t["kin"][k, s] = 1.0 / (2.0 * b)
                    t["pot"][k, s] = a0 / (2.0 * b)
                    t["bath"][k, s] = a1 / b
                cl = pr.pole.laplacian_coefficient()
                if cl:
                    # P^{n+1} gains c4 (L P^n); kappa = c_L / b (the pole sits only on
                    # wholly filled nodes, so it is one number per medium; kernels/nonlocal_pole.py)
                    t["c4"][k, s] = cl / (1.0 / dt**2 + a1 / (2.0 * dt))
                    t["kappa"][k, s] = cl / b if b > 0 else 0.0
                    t["nlg"][k, s] = pr.gid
        return t

    @property
    def nonlocal_pole(self) -> bool:
        """True if a spatially dispersive pole is on the grid."""
        return any(pr.pole.is_nonlocal for k in self._used_mixtures for pr in self.mixtures[k].poles)

    def describe(self) -> str:
        g = self.grid
        lines = [f"grid {g.polarization} shape={g.shape} spacing={g.spacing}",
                 f"edges {[(lo.kind, hi.kind) for lo, hi in self.edges]}",
                 f"materials {[m.name for m in self.materials]}, mixtures {len(self.mixtures) - 1}, "
                 f"pole slots {self.max_poles}"]
        return "\n".join(lines)
