"""Lookup tables built once per salt system for use inside numba kernels.

The phase-state kernel knows a salt only through these tables (it calls no Pitzer function):

* the *inverse* of the water activity (molality of the brine whose a_w is given), tabulated on
  a regular grid of temperature and of s = sqrt(-ln a_w) (near-linear in sqrt(m) for dilute
  brines, so a uniform grid resolves both ends), read back by cubic (Catmull-Rom)
  interpolation along s and linear interpolation in T;
* the *forward* water activity ln a_w(m, T), on a regular grid of T and of u = sqrt(m) up to
  the end of the supersaturated branch ``m_ext``, read back the same way;
* per-temperature tables of each solid's ln K, saturation molality and deliquescence RH, the
  stable solid, the ice liquidus and the water activity of ice;
* the metastability and kinetics scalars of the system's data file.

Both water-activity tables include the crystal-free supersaturated branch
(:mod:`wetcycle.salts.metastable`).  Interpolation error is checked against the exact
functions in ``tests/test_salt_invariants.py``.  Outside the tabulated range (T outside the
system's validity, or a_w below a_w(m_ext, T), or m above m_ext) the lookups return NaN: the
documented flag.
"""

from __future__ import annotations

import math
from collections import namedtuple
from dataclasses import dataclass

import numpy as np
from numba import njit

from . import metastable as mt
from . import pitzer as pz

#: Seconds per day (for kinetics given in days in the data files).
DAY = 86400.0


@dataclass(frozen=True)
class InverseTable:
    """m(T, s) on a regular grid, s = sqrt(-ln a_w).  Pass ``.args`` to :func:`molality_from_table`."""

    T0: float
    dT: float
    s_max: float
    ds: float
    m: np.ndarray  # [nT, nS], NaN beyond a_w(m_ext, T)

    @property
    def args(self):
        return (self.T0, self.dT, self.ds, self.m)


@dataclass(frozen=True)
class ForwardTable:
    """ln a_w(T, u) on a regular grid, u = sqrt(m).  Pass ``.args`` to :func:`ln_aw_from_table`."""

    T0: float
    dT: float
    du: float
    lnaw: np.ndarray  # [nT, nU]

    @property
    def args(self):
        return (self.T0, self.dT, self.du, self.lnaw)


@njit(cache=True)
def _fill_inverse(T0, dT, nT, ds, nS, p, br, out):
    for i in range(nT):
        T = T0 + i * dT
        for j in range(nS):
            s = j * ds
            out[i, j] = mt.molality_at_ln_aw_full_kernel(-s * s, T, p, br) if j > 0 else 0.0
    return out


@njit(cache=True)
def _fill_forward(T0, dT, nT, du, nU, p, br, out):
    for i in range(nT):
        T = T0 + i * dT
        for j in range(nU):
            u = j * du
            out[i, j] = mt.ln_aw_full_kernel(min(u * u, br[mt.B_EXT]), T, p, br)
    return out


def _t_grid(system, dT):
    nT = int(math.ceil((system.T_max - system.T_min) / dT)) + 1
    Ts = system.T_min + dT * np.arange(nT)
    Ts[-1] = min(Ts[-1], pz.APHI_T_MAX)
    return nT, Ts


def build_inverse_table(system, dT=0.5, n_s=1024):
    """Tabulate m(T, a_w) for ``system`` over its validity range, supersaturated branch included.

    Parameters
    ----------
    system : SaltSystem
    dT : float [K]
        Temperature spacing.
    n_s : int
        Points along s = sqrt(-ln a_w) from 0 to sqrt(-ln a_w(m_ext)) at its most negative.
    """
    nT, Ts = _t_grid(system, dT)
    br = system.branch
    lnaw_min = min(mt.ln_aw_full_kernel(system.m_ext, float(T), system.packed, br) for T in Ts)
    s_max = math.sqrt(-lnaw_min) * 1.0000001
    ds = s_max / (n_s - 1)
    m = _fill_inverse(float(system.T_min), float(dT), nT, ds, n_s, system.packed, br, np.empty((nT, n_s)))
    return InverseTable(T0=float(system.T_min), dT=float(dT), s_max=s_max, ds=ds, m=m)


def build_forward_table(system, dT=0.5, n_u=1536):
    """Tabulate ln a_w(T, sqrt(m)) for ``system`` from m = 0 to ``m_ext``.

    Parameters
    ----------
    system : SaltSystem
    dT : float [K]
    n_u : int
        Points along u = sqrt(m) from 0 to sqrt(m_ext).
    """
    nT, _ = _t_grid(system, dT)
    du = math.sqrt(system.m_ext) / (n_u - 1)
    out = _fill_forward(float(system.T_min), float(dT), nT, du, n_u, system.packed, system.branch,
                        np.empty((nT, n_u)))
    return ForwardTable(T0=float(system.T_min), dT=float(dT), du=du, lnaw=out)


@njit(cache=True, inline="always")
def _row(m, i, j, fy, nS):
    """Catmull-Rom cubic along the second axis in row i between j and j+1 (linear at the ends or next to NaN)."""
    p1 = m[i, j]
    p2 = m[i, j + 1]
    if j >= 1 and j + 2 < nS:
        p0 = m[i, j - 1]
        p3 = m[i, j + 2]
        if p3 == p3 and p0 == p0:
            return p1 + 0.5 * fy * (p2 - p0 + fy * (2.0 * p0 - 5.0 * p1 + 4.0 * p2 - p3
                                                     + fy * (3.0 * (p1 - p2) + p3 - p0)))
    return p1 + fy * (p2 - p1)


@njit(cache=True, inline="always", error_model="numpy")
def molality_from_table(aw, T, T0, dT, ds, m):
    """Molality [mol/kg] of the brine with water activity ``aw`` at ``T`` [K], by table lookup.

    Cubic (Catmull-Rom) along s = sqrt(-ln a_w), linear in T.  NaN outside the
    table (the flag): T beyond the system's validity, aw <= 0, or aw below
    a_w(m_ext, T).
    """
    if not (aw > 0.0):
        return math.nan
    if aw >= 1.0:
        return 0.0
    x = (T - T0) / dT
    nT, nS = m.shape
    if not (x >= 0.0 and x <= nT - 1):
        return math.nan
    i = min(int(x), nT - 2)
    fx = x - i
    y = math.sqrt(-math.log(aw)) / ds
    if y > nS - 1:
        return math.nan
    j = min(int(y), nS - 2)
    fy = y - j
    a = _row(m, i, j, fy, nS)
    b = _row(m, i + 1, j, fy, nS)
    return a + fx * (b - a)


@njit(cache=True, inline="always", error_model="numpy")
def ln_aw_from_table(mol, T, T0, dT, du, lnaw):
    """ln a_w [-] of the brine of molality ``mol`` [mol/kg] at ``T`` [K], by table lookup.

    Cubic (Catmull-Rom) along u = sqrt(m), linear in T; T is clamped to the table (the
    kernel clamps and flags temperatures itself); NaN above m_ext.
    """
    nT, nU = lnaw.shape
    y = math.sqrt(max(mol, 0.0)) / du
    if not (y <= (nU - 1) * (1.0 + 1e-12)):
        return math.nan
    j = min(int(y), nU - 2)
    fy = y - j
    x = (T - T0) / dT
    if x <= 0.0:
        return _row(lnaw, 0, j, fy, nU)
    if x >= nT - 1:
        return _row(lnaw, nT - 1, j, fy, nU)
    i = int(x)
    fx = x - i
    a = _row(lnaw, i, j, fy, nU)
    b = _row(lnaw, i + 1, j, fy, nU)
    return a + fx * (b - a)


@njit(cache=True, fastmath=True)
def molality_from_table_array(aw, T, T0, dT, ds, m, out):
    """Vector form of :func:`molality_from_table` over 1-D arrays."""
    for k in range(aw.shape[0]):
        out[k] = molality_from_table(aw[k], T[k], T0, dT, ds, m)
    return out


@njit(cache=True, fastmath=True)
def ln_aw_from_table_array(mol, T, T0, dT, du, lnaw, out):
    """Vector form of :func:`ln_aw_from_table` over 1-D arrays."""
    for k in range(mol.shape[0]):
        out[k] = ln_aw_from_table(mol[k], T[k], T0, dT, du, lnaw)
    return out


#: Indices into :attr:`PhaseTables.scalars` (the kernel reads them by these names).
SCALAR_NAMES = ("T_eut", "eut_solid", "T_super", "erh", "T_min", "T_max", "m_max", "m_ext", "m_valid",
                "ice_nucleation_rh_ice", "md_depth", "tau_hydrate", "ea_hydrate", "T_ref_hydrate")
S = namedtuple("S", SCALAR_NAMES)(*range(len(SCALAR_NAMES)))

#: The arrays the kernel reads, as one named tuple (numba passes it as a single argument).
KernelTables = namedtuple("KernelTables", (
    "T0", "dT", "lnk", "msat", "drh", "stable", "mice", "awice", "khyd", "hydration", "scal",
    "inv_T0", "inv_dT", "inv_ds", "inv_m", "fw_T0", "fw_dT", "fw_du", "fw_lnaw"))


@dataclass(frozen=True)
class PhaseTables:
    """Everything the phase-state kernel needs about one salt system, as plain arrays.

    Temperature tables run on a regular grid ``T0 + i*dT`` over the system's
    validity range.  Per solid s (index order of ``system.solids``):
    ``lnk[s, i]`` (ln K), ``msat[s, i]`` (dilute-branch saturation molality,
    NaN where none below m_max) and ``drh[s, i]`` (its deliquescence RH).
    ``khyd[i]`` the rate [s-1] of solid-hydrate changes, 1/tau(T) (0: instant, or no published rate).
    ``stable[i]`` is the index of the stable solid (least soluble), ``mice[i]``
    the ice-liquidus molality (NaN above 273.15 K or beyond m_max; continued
    metastably below the eutectic), ``awice[i]`` the water activity of ice
    (Murphy & Koop 2005; 2.0 above 273.15 K, where ice cannot exist).  ``hydration[s]`` holds
    the waters of hydration.  ``inverse`` and ``forward`` are the water-activity tables
    (supersaturated branch included).  Scalars (:data:`SCALAR_NAMES`): eutectic temperature and
    its solid index; the supercooling floor ``T_super`` (as published; the kernel freezes at
    max(T_super, T_min) and flags a freeze at T_min); the efflorescence RH ``erh`` (NaN: none
    published, crystallise at the DRH; 0: no efflorescence observed, the brine persists to the
    end of the branch); T_min, T_max; m_max (Pitzer), m_ext (end of the supersaturated branch),
    m_valid (highest molality backed by published data); the ice-nucleation limit as a
    relative humidity over ice of the brine, a_w / a_w,ice (inf: none); the depth [K] below the
    eutectic down to which vapour deliquescence has been observed (0: none); solid-hydrate
    kinetics: time constant at T_ref_hydrate [s] (0: instant), activation temperature E_a/R [K].
    """

    name: str
    T0: float
    dT: float
    lnk: np.ndarray
    msat: np.ndarray
    drh: np.ndarray
    stable: np.ndarray
    mice: np.ndarray
    awice: np.ndarray
    khyd: np.ndarray
    hydration: np.ndarray
    T_eut: float
    eut_solid: int
    T_super: float
    erh: float
    molar_mass: float
    T_min: float
    T_max: float
    m_max: float
    m_ext: float
    m_valid: float
    ice_nucleation_rh_ice: float
    md_depth: float
    tau_hydrate: float
    ea_hydrate: float
    T_ref_hydrate: float
    packed: np.ndarray
    inverse: InverseTable
    forward: ForwardTable

    @property
    def scalars(self):
        """The scalar vector of the kernel, in the order of :data:`SCALAR_NAMES`."""
        return np.array([float(getattr(self, k)) for k in SCALAR_NAMES])

    def kernel_tables(self):
        """The arrays the kernel reads, as a :data:`KernelTables` named tuple."""
        inv, fw = self.inverse, self.forward
        return KernelTables(float(self.T0), float(self.dT), self.lnk, self.msat, self.drh, self.stable, self.mice,
                            self.awice, self.khyd, self.hydration, self.scalars, inv.T0, inv.dT, inv.ds, inv.m,
                            fw.T0, fw.dT, fw.du, fw.lnaw)


def _meta(system, key, default):
    v = system.metastability.get(key)
    return float(v) if v is not None else default


def build_phase_tables(system, dT=0.25):
    """Build :class:`PhaseTables` for ``system`` (a :class:`~wetcycle.salts.SaltSystem`).

    Parameters
    ----------
    system : SaltSystem
    dT : float [K]
        Spacing of the temperature tables.
    """
    from ..water import ice_water_activity

    T = np.arange(system.T_min, system.T_max + 1e-9, dT)
    T[-1] = min(T[-1], system.T_max)
    ns = len(system.solids)
    lnk = np.array([s.ln_k(T) for s in system.solids])
    msat = np.array([system.saturation_molality(T, s.name) for s in system.solids])
    drh = np.full_like(msat, np.nan)
    for k in range(ns):
        ok = np.isfinite(msat[k])
        if ok.any():
            drh[k, ok] = system.water_activity(msat[k, ok], T[ok])
    names = system.stable_solid(T)
    stable = np.array([system.solid_names.index(n) if n else -1 for n in names], dtype=np.int64)
    mice = np.asarray(system.ice_liquidus_molality(T), dtype=float)
    awice = np.where(T <= 273.15, ice_water_activity(np.clip(T, 123.0, 273.15)), 2.0)
    eut = system.eutectic()
    if eut is None:
        T_eut, eut_solid = system.T_min, int(stable[0])
    else:
        T_eut = float(eut["temperature_K"])
        eut_solid = system.solid_names.index(eut["solids"][1])
    T_super = system.supercooling_limit
    T_super = float(T_super) if T_super is not None else T_eut
    erh = system.efflorescence_rh
    erh = float(erh) if erh is not None else np.nan
    kin = system.kinetics or {}
    tau = float(kin.get("hydrate_time_constant_days", 0.0)) * DAY
    ea = float(kin.get("hydrate_activation_temperature", 0.0))
    T_refh = float(kin.get("hydrate_reference_temperature", 298.15))
    khyd = np.exp(-ea * (1.0 / T - 1.0 / T_refh)) / tau if tau > 0 else np.zeros_like(T)
    return PhaseTables(
        name=system.name, T0=float(T[0]), dT=float(dT), lnk=lnk, msat=msat, drh=drh,
        stable=stable, mice=mice, awice=awice, khyd=khyd,
        hydration=np.array([s.hydration for s in system.solids], dtype=float),
        T_eut=T_eut, eut_solid=eut_solid, T_super=T_super, erh=erh,
        molar_mass=system.molar_mass, T_min=system.T_min, T_max=system.T_max, m_max=system.m_max,
        m_ext=system.m_ext, m_valid=system.m_valid,
        ice_nucleation_rh_ice=_meta(system, "ice_nucleation_rh_ice", math.inf),
        md_depth=_meta(system, "metastable_deliquescence_depth", 0.0),
        tau_hydrate=tau, ea_hydrate=ea, T_ref_hydrate=T_refh,
        packed=system.packed, inverse=build_inverse_table(system), forward=build_forward_table(system),
    )
