"""Heat conduction in a layered regolith column (one column per cell).

Method
------
One-dimensional heat equation ``C dT/dt = d/dz (k dT/dz)`` discretised by
finite volumes on a vertex grid: node 0 is the surface, node j sits at depth
``z_j``, element e joins nodes e and e+1.  Each element has a conductance
``G_e = k_e / dz_e`` [W m-2 K-1] (series conductance where the element
straddles the boundary to a second layer) and each node the areal heat
capacity of half of each neighbouring element, ``H_j`` [J m-2 K-1].  Time
stepping is the theta method (``theta = 0.5`` Crank-Nicolson, ``theta = 1``
backward Euler; e.g. Press, W. H. et al. (2007), Numerical Recipes, 3rd ed.,
section 20.2).  The tridiagonal system is solved by the Thomas algorithm run
from the bottom up, so that the top unknown appears last and the non-linear
surface condition reduces to one scalar equation per cell
(``T_1 = e_1 + f_1 T_0``).  Since the coefficients depend only on the
properties and on the time step, the elimination factors are
computed once (:func:`factorize`) and each step costs one upward and one
downward sweep.  Exactly conservative: the heat gained by the column equals
the theta-weighted flux through its top and bottom.

Grid: depths are geometric, ``dz_k = f delta_d r**k`` with ``delta_d`` the
diurnal skin depth of the top material, first-layer fraction ``f``
(default 0.1), stretch ``r`` (default 1.2), and enough layers that the bottom
lies below ``n_a`` annual skin depths (default 3; amplitude there is
``exp(-3) = 5 %`` of the surface annual wave) of the most conductive material
in the column.  Skin depth ``delta = sqrt(kappa P / pi)``,
``kappa = k / (rho c) = I**2 / (rho c)**2``, ``I = sqrt(k rho c)``
(Carslaw, H. S. and Jaeger, J. C. (1959), Conduction of Heat in Solids,
2nd ed., Oxford, section 2.6).

Bottom boundary: a prescribed upward (geothermal) flux, zero by default.

Every column has the same number of nodes (set by the options, so a cell's
grid never depends on the other cells of its chunk); depths are in units of
each cell's own diurnal skin depth.

Layout: public arrays are ``[node, cell]`` float64, C-contiguous.  The kernels
work on a blocked copy ``[block, node, CELL_BLOCK]`` (:func:`to_blocks`): one
block's columns stay in cache over all the steps of a call and every inner
loop is a contiguous SIMD loop over cells.  The energy-balance kernel inlines
:func:`sweep_up` / :func:`sweep_down`; numba's on-disk cache does not notice
edits to an inlined function in another file, so after editing them delete
``wetcycle/forcing/__pycache__/energy.*.nb*``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numba import njit

from ..errors import ConfigError, ValidityError

#: Allowed thermal inertia [J m-2 K-1 s-1/2] (loose dust ~20 to ice / rock ~3000).
THERMAL_INERTIA_RANGE = (5.0, 5000.0)
#: Allowed bulk density [kg m-3].
DENSITY_RANGE = (100.0, 5000.0)
#: Allowed specific heat capacity [J kg-1 K-1].
HEAT_CAPACITY_RANGE = (100.0, 5000.0)


def _check(name, value, lo, hi):
    v = np.asarray(value, dtype=float)
    ok = np.isfinite(v) & (v >= lo) & (v <= hi)
    if not np.all(ok):
        raise ValidityError(f"{name}: received {v[~ok].ravel()[0]}; allowed range is {lo} to {hi}")


def skin_depth(thermal_inertia, density, heat_capacity, period_s):
    """Thermal skin depth of a periodic surface wave.

    Parameters
    ----------
    thermal_inertia : array_like [J m-2 K-1 s-1/2]
        ``I = sqrt(k rho c)``, 5-5000.
    density : array_like [kg m-3]
    heat_capacity : array_like [J kg-1 K-1]
    period_s : float [s]
        Period of the wave (a sol, a year).

    Returns
    -------
    ndarray [m]
        ``delta = sqrt(kappa P / pi)`` with ``kappa = I**2 / (rho c)**2``
        (Carslaw & Jaeger 1959, section 2.6): the depth where the amplitude
        falls by ``1/e`` and the phase lags by one radian.

    Examples
    --------
    >>> round(float(skin_depth(250.0, 1500.0, 800.0, 88775.0)), 4)
    0.0347
    """
    _check("thermal_inertia", thermal_inertia, *THERMAL_INERTIA_RANGE)
    _check("density", density, *DENSITY_RANGE)
    _check("heat_capacity", heat_capacity, *HEAT_CAPACITY_RANGE)
    rc = np.asarray(density, dtype=float) * np.asarray(heat_capacity, dtype=float)
    kappa = np.asarray(thermal_inertia, dtype=float) ** 2 / rc**2
    return np.sqrt(kappa * period_s / np.pi)


@dataclass(frozen=True)
class Columns:
    """Discretised regolith columns for a chunk of cells.

    Attributes
    ----------
    depth : ndarray [node, cell] [m]
        Node depths, ``depth[0] = 0`` (surface).
    node_capacity : ndarray [node, cell] [J m-2 K-1]
        Areal heat capacity ``H_j`` of each node's control volume.
    conductance : ndarray [node, cell] [W m-2 K-1]
        ``G_j`` of the element below node j; last row is zero.
    """

    depth: np.ndarray
    node_capacity: np.ndarray
    conductance: np.ndarray

    @property
    def n_nodes(self):
        return self.depth.shape[0]

    @property
    def n_cells(self):
        return self.depth.shape[1]


def _zeta_bottom(f, r, m):
    """Depth of the bottom of ``m`` geometric elements, first ``f``, ratio ``r`` [skin depths]."""
    r = np.asarray(r, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(r == 1.0, f * m, f * (r**m - 1.0) / np.where(r == 1.0, 2.0, r - 1.0))


def build_columns(thermal_inertia, density, heat_capacity, sol_s, year_s, *,
                  first_layer_fraction=0.1, stretch=1.2, annual_depths=3.0, n_layers=None,
                  layer2_depth=None, layer2_inertia=None, layer2_density=None,
                  layer2_heat_capacity=None):
    """Build geometric grids and layer properties for each cell.

    Parameters
    ----------
    thermal_inertia, density, heat_capacity : array_like [cell]
        Top material: [J m-2 K-1 s-1/2], [kg m-3], [J kg-1 K-1].
    sol_s, year_s : float [s]
        Length of the solar day and of the year (skin depths).
    first_layer_fraction : float [-]
        First element thickness as a fraction of the diurnal skin depth, 0.01-0.5.
    stretch : float [-]
        Ratio of successive element thicknesses, 1-1.5.  A cell whose second
        layer needs a deeper reach gets the (larger, <= 1.5) ratio that reaches it.
    annual_depths : float [-]
        Minimum reach of the grid in annual skin depths of the most conductive
        material, >= 1 (default 3).
    n_layers : int, optional
        Number of elements; default: the fewest that reach ``annual_depths``
        in a homogeneous column.  Depends only on these options, never on the
        other cells, so results do not depend on how cells are chunked.
    layer2_depth : array_like [cell] [m], optional
        Depth of the top of a second material (e.g. ice-cemented soil);
        ``inf`` or NaN for cells without one.  Requires the three
        ``layer2_*`` properties (same units as the top material).

    Returns
    -------
    Columns
    """
    ti = np.atleast_1d(np.asarray(thermal_inertia, dtype=float))
    n = ti.size
    rho = np.broadcast_to(np.asarray(density, dtype=float), (n,)).copy()
    cp = np.broadcast_to(np.asarray(heat_capacity, dtype=float), (n,)).copy()
    if not 0.01 <= first_layer_fraction <= 0.5:
        raise ConfigError(f"first_layer_fraction: received {first_layer_fraction}; allowed 0.01 to 0.5")
    if not 1.0 <= stretch <= 1.5:
        raise ConfigError(f"stretch: received {stretch}; allowed 1.0 to 1.5")
    if not annual_depths >= 1.0:
        raise ConfigError(f"annual_depths: received {annual_depths}; allowed >= 1")
    d_day = skin_depth(ti, rho, cp, sol_s)
    rc1 = rho * cp
    k1 = ti**2 / rc1
    reach = annual_depths * skin_depth(ti, rho, cp, year_s)
    if layer2_depth is not None:
        z2 = np.broadcast_to(np.asarray(layer2_depth, dtype=float), (n,)).copy()
        z2 = np.where(np.isnan(z2), np.inf, z2)
        if np.any(z2 <= 0.0):
            raise ValidityError(f"layer2_depth: received {z2[z2 <= 0][0]}; allowed > 0 m (inf for none)")
        if layer2_inertia is None or layer2_density is None or layer2_heat_capacity is None:
            raise ConfigError("layer2_depth: given without layer2_inertia, layer2_density and "
                              "layer2_heat_capacity; give all four or none")
        ti2 = np.broadcast_to(np.asarray(layer2_inertia, dtype=float), (n,)).copy()
        rc2 = (np.broadcast_to(np.asarray(layer2_density, dtype=float), (n,))
               * np.broadcast_to(np.asarray(layer2_heat_capacity, dtype=float), (n,)))
        has2 = np.isfinite(z2)
        d2_year = skin_depth(ti2, np.broadcast_to(np.asarray(layer2_density, float), (n,)),
                             np.broadcast_to(np.asarray(layer2_heat_capacity, float), (n,)), year_s)
        reach = np.where(has2, np.maximum(reach, np.minimum(z2, reach) + annual_depths * d2_year), reach)
        k2 = ti2**2 / rc2
    else:
        z2 = np.full(n, np.inf)
        k2 = k1
        rc2 = rc1
    # Dimensionless geometric grid in units of each cell's diurnal skin depth.  The
    # number of elements depends on the options only (what a homogeneous column needs),
    # so a cell's grid never depends on the other cells of its chunk; a cell that must
    # reach deeper (a conductive second layer) gets a larger stretch of its own.
    f = first_layer_fraction
    need0 = annual_depths * np.sqrt(year_s / sol_s)
    m_min = 1
    while _zeta_bottom(f, stretch, m_min) < need0:
        m_min += 1
    if n_layers is None:
        n_layers = m_min
    elif n_layers < m_min:
        raise ConfigError(f"n_layers: received {n_layers}; at least {m_min} needed to reach "
                          f"{annual_depths} annual skin depths (or raise stretch)")
    need = reach / d_day
    r = np.full(n, float(stretch))
    short = _zeta_bottom(f, r, n_layers) < need
    if np.any(short):                       # bisection for the stretch that just reaches
        lo, hi = np.full(n, float(stretch)), np.full(n, 1.5)
        if np.any(_zeta_bottom(f, hi, n_layers) < need):
            i = int(np.flatnonzero(_zeta_bottom(f, hi, n_layers) < need)[0])
            raise ConfigError(f"n_layers: {n_layers} elements cannot reach {need[i] * d_day[i]:.3g} m "
                              f"(cell {i}) with a stretch <= 1.5; give more n_layers")
        for _ in range(60):
            mid = 0.5 * (lo + hi)
            ok = _zeta_bottom(f, mid, n_layers) >= need
            hi = np.where(ok, mid, hi)
            lo = np.where(ok, lo, mid)
        r = np.where(short, hi, r)
    powers = r[None, :] ** np.arange(n_layers)[:, None]
    zeta = np.concatenate([np.zeros((1, n)), np.cumsum(f * powers, axis=0)])
    depth = np.ascontiguousarray(zeta * d_day[None, :])
    dz = np.diff(depth, axis=0)
    ztop = depth[:-1]
    # split each element at the layer boundary: thickness in material 1 and 2
    d1 = np.clip(z2[None, :] - ztop, 0.0, dz)
    d2 = dz - d1
    g_el = 1.0 / (d1 / k1[None, :] + d2 / k2[None, :])
    c_el = d1 * rc1[None, :] + d2 * rc2[None, :]
    node_cap = np.zeros_like(depth)
    node_cap[:-1] += 0.5 * c_el
    node_cap[1:] += 0.5 * c_el
    cond = np.zeros_like(depth)
    cond[:-1] = g_el
    return Columns(depth=depth, node_capacity=np.ascontiguousarray(node_cap),
                   conductance=np.ascontiguousarray(cond))


@dataclass(frozen=True)
class Factors:
    """Precomputed bottom-up Thomas elimination for a time step and theta.

    Row j >= 1 after elimination reads ``T'_j = e_j + f_j T'_{j-1}`` with
    ``e_j = a_j T_j + r f_j T_{j-1} + d_j (r T_{j+1} + e_{j+1}) + g_j``, old
    temperatures ``T``, new ``T'``, ``r = (1 - theta) / theta``.  Arrays are
    ``[node, cell]``; row 0 holds the surface-row constants ``a[0] = H_0/dt``,
    ``d[0] = G_0``, ``f[0] = H_0/dt + theta G_0 (1 - f_1)``.
    """

    a: np.ndarray
    d: np.ndarray
    f: np.ndarray
    g: np.ndarray
    dt: float
    theta: float

    @property
    def ratio(self):
        return (1.0 - self.theta) / self.theta


def factorize(columns, dt, theta=0.5, geothermal_flux=0.0):
    """Compute the time-step-dependent elimination coefficients once.

    Parameters
    ----------
    columns : Columns
    dt : float [s]
        Time step, > 0.
    theta : float [-]
        Implicitness, 0.5 (Crank-Nicolson) to 1 (backward Euler).
    geothermal_flux : array_like [cell] [W m-2]
        Upward heat flux into the bottom node, >= 0 (0: insulated bottom).

    Returns
    -------
    Factors
    """
    if not (np.isfinite(dt) and dt > 0.0):
        raise ConfigError(f"dt: received {dt}; allowed > 0 s")
    if not 0.5 <= theta <= 1.0:
        raise ConfigError(f"theta: received {theta}; allowed 0.5 to 1")
    h = columns.node_capacity / dt
    g = columns.conductance
    nn, nc = h.shape
    gm = np.zeros_like(g)
    gm[1:] = g[:-1]                      # conductance of the element above
    lower = theta * gm
    upper = theta * g
    diag = h + theta * (gm + g)
    w = np.zeros_like(h)
    f = np.zeros_like(h)
    f_below = np.zeros(nc)
    for j in range(nn - 1, 0, -1):       # loop over layers only
        w[j] = 1.0 / (diag[j] - upper[j] * f_below)
        f[j] = lower[j] * w[j]
        f_below = f[j]
    om = 1.0 - theta
    a = (h - om * (gm + g)) * w
    d = upper * w
    gz = np.zeros_like(h)
    gz[-1] = np.broadcast_to(np.asarray(geothermal_flux, dtype=float), (nc,)) * w[-1]
    a[0] = h[0]
    d[0] = g[0]
    f[0] = h[0] + theta * g[0] * (1.0 - f[1])
    arrs = [np.ascontiguousarray(x) for x in (a, d, f, gz)]
    return Factors(*arrs, dt=float(dt), theta=float(theta))


def probe_weights(columns, depth_m):
    """Node index and linear weight to read the temperature at a depth.

    Parameters
    ----------
    columns : Columns
    depth_m : array_like [cell] [m]
        Depth below the surface, 0 (surface crust) to the grid bottom.

    Returns
    -------
    index : ndarray of int64 [cell]
    weight : ndarray [cell]
        ``T(z) = (1 - weight) T[index] + weight T[index + 1]``.
    """
    z = np.broadcast_to(np.asarray(depth_m, dtype=float), (columns.n_cells,))
    zmax = columns.depth[-1]
    bad = ~(np.isfinite(z) & (z >= 0.0) & (z <= zmax))
    if np.any(bad):
        raise ValidityError(f"salt_depth: received {z[bad][0]} m; allowed 0 to "
                            f"{float(zmax[bad][0]):.3g} m (bottom of the grid)")
    nn = columns.n_nodes
    idx = np.clip(np.sum(columns.depth <= z[None, :], axis=0) - 1, 0, nn - 2).astype(np.int64)
    z0 = np.take_along_axis(columns.depth, idx[None, :], 0)[0]
    z1 = np.take_along_axis(columns.depth, idx[None, :] + 1, 0)[0]
    return idx, np.clip((z - z0) / (z1 - z0), 0.0, 1.0)


# --------------------------------------------------------------------------------------
# Blocked layout and kernels
# --------------------------------------------------------------------------------------
#: Cells per block in the kernels' blocked layout ``[block, node, CELL_BLOCK]``: a block's
#: columns and factors (~6 arrays x 31 nodes x 32 x 8 bytes = 48 kB) stay in the core's
#: L1/L2 cache over all steps of a call, and every inner loop runs over a contiguous
#: row of 32 cells (measured best of 16-64 on the development machine).
CELL_BLOCK = 32


def to_blocks(x, cb=CELL_BLOCK):
    """``[..., cell]`` -> ``[block, ..., cb]``, a new C-contiguous array (never a view
    of ``x``); the last block is padded with copies of the last cell."""
    x = np.asarray(x, dtype=float)
    nc = x.shape[-1]
    nb = -(-nc // cb)
    pad = nb * cb - nc
    if pad:
        x = np.concatenate([x, np.repeat(x[..., -1:], pad, axis=-1)], axis=-1)
    x = x.reshape(x.shape[:-1] + (nb, cb))
    return np.moveaxis(x, -2, 0).copy(order="C")      # always a copy: kernels write to it


def from_blocks(xb, n_cells):
    """Inverse of :func:`to_blocks`: ``[block, ..., cb]`` -> ``[..., cell]``."""
    x = np.moveaxis(xb, 0, -2)
    return np.ascontiguousarray(x.reshape(x.shape[:-2] + (-1,))[..., :n_cells])


@njit(cache=True, fastmath=True, boundscheck=False, error_model="numpy", inline="always")
def sweep_up(temp, e, fa, fd, ff, fg, r, b):
    """Upward elimination for block ``b`` of ``[block, node, cb]`` arrays: fill
    ``e[1:]`` (``[node, cb]``) from the old ``temp``.  Direct indexing (no row
    views) keeps the inner loop a plain SIMD loop over cells."""
    nn, cb = e.shape
    j = nn - 1
    for c in range(cb):
        e[j, c] = fa[b, j, c] * temp[b, j, c] + r * ff[b, j, c] * temp[b, j - 1, c] + fg[b, j, c]
    for j in range(nn - 2, 0, -1):
        for c in range(cb):
            e[j, c] = (fa[b, j, c] * temp[b, j, c] + r * ff[b, j, c] * temp[b, j - 1, c]
                       + fd[b, j, c] * (r * temp[b, j + 1, c] + e[j + 1, c]))


@njit(cache=True, fastmath=True, boundscheck=False, error_model="numpy", inline="always")
def sweep_down(temp, e, ff, b):
    """Back substitution for block ``b`` once ``temp[b, 0]`` holds the new surface value."""
    nn, cb = e.shape
    for j in range(1, nn):
        for c in range(cb):
            temp[b, j, c] = e[j, c] + ff[b, j, c] * temp[b, j - 1, c]


@njit(cache=True, fastmath=True, boundscheck=False, error_model="numpy")
def conduct_prescribed_kernel(temp, surface_new, fa, fd, ff, fg, r, probe_idx, probe_w,
                              probe_out):
    """Step blocked columns with a prescribed surface temperature (Dirichlet).

    Parameters (blocked layout, see :func:`to_blocks`)
    ----------
    temp : [block, node, cb] [K]          profile, updated in place
    surface_new : [block, step, cb] [K]   surface value at the end of each step
    fa, fd, ff, fg : [block, node, cb]    :class:`Factors` arrays
    r : float                             ``(1 - theta) / theta``
    probe_idx, probe_w : [block, cb]      from :func:`probe_weights`
    probe_out : [block, step, cb] [K]     temperature at the probe depth
    """
    nb, nn, cb = temp.shape
    e = np.zeros((nn, cb))
    for b in range(nb):
        for s in range(surface_new.shape[1]):
            sweep_up(temp, e, fa, fd, ff, fg, r, b)
            for c in range(cb):
                temp[b, 0, c] = surface_new[b, s, c]
            sweep_down(temp, e, ff, b)
            for c in range(cb):
                i = probe_idx[b, c]
                w = probe_w[b, c]
                probe_out[b, s, c] = (1.0 - w) * temp[b, i, c] + w * temp[b, i + 1, c]


def conduct_prescribed(temperature, surface_temperature, factors, probe_index=None,
                       probe_weight=None):
    """Run the conduction scheme under a prescribed surface temperature series.

    Parameters
    ----------
    temperature : ndarray [node, cell] [K]
        Initial profile (not modified).
    surface_temperature : ndarray [step, cell] [K]
        Surface value at the end of each step.
    factors : Factors
    probe_index, probe_weight : ndarray [cell], optional
        Depth at which to record the temperature (default: the first node below the surface).

    Returns
    -------
    final : ndarray [node, cell] [K]
    probe : ndarray [step, cell] [K]
    """
    temp = np.asarray(temperature, dtype=float)
    nc = temp.shape[1]
    if probe_index is None:
        probe_index = np.ones(nc, dtype=np.int64)
        probe_weight = np.zeros(nc)
    tb = to_blocks(temp)
    out = np.empty((tb.shape[0], np.shape(surface_temperature)[0], CELL_BLOCK))
    fb = [to_blocks(x) for x in (factors.a, factors.d, factors.f, factors.g)]
    conduct_prescribed_kernel(tb, to_blocks(surface_temperature), *fb, factors.ratio,
                              to_blocks(probe_index).astype(np.int64), to_blocks(probe_weight), out)
    return from_blocks(tb, nc), from_blocks(out, nc)


def diffusivity(thermal_inertia, density, heat_capacity):
    """Thermal diffusivity ``kappa = I**2 / (rho c)**2`` [m2 s-1]."""
    rc = np.asarray(density, dtype=float) * np.asarray(heat_capacity, dtype=float)
    return np.asarray(thermal_inertia, dtype=float) ** 2 / rc**2

