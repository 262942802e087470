"""Lookup tables built once per salt system for use inside numba kernels.

The inverse of the water activity (molality of the brine whose a_w is given)
needs a root solve per call; inside the time-stepping kernel that is too slow,
so it is tabulated once per system on a regular grid of temperature and of
s = sqrt(-ln a_w) (near-linear in sqrt(m) for dilute brines, so a uniform grid
resolves both ends) and read back by cubic (Catmull-Rom) interpolation along s and linear
interpolation in T.  Interpolation
error is checked against the exact root in ``tests/test_salt_tables.py``.

Outside the tabulated range (T outside the system's validity, or a_w below
a_w(m_max, T)) the lookup returns NaN: the documented flag.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numba import njit

from . import pitzer as pz


@dataclass(frozen=True)
class InverseTable:
    """m(T, s) on a regular grid, s = sqrt(-ln a_w).  Pass ``.args`` to :func:`molality_from_table`."""

    T0: float
    dT: float
    s_max: float
    ds: float
    m: np.ndarray  # [nT, nS], NaN beyond a_w(m_max, T)

    @property
    def args(self):
        return (self.T0, self.dT, self.ds, self.m)


@njit(cache=True)
def _fill(T0, dT, nT, ds, nS, p, m_hi, out):
    for i in range(nT):
        T = T0 + i * dT
        for j in range(nS):
            s = j * ds
            out[i, j] = pz.molality_at_ln_aw_kernel(-s * s, T, p, m_hi) if j > 0 else 0.0
    return out


def build_inverse_table(system, dT=0.5, n_s=1024):
    """Tabulate m(T, a_w) for ``system`` over its validity range.

    Parameters
    ----------
    system : SaltSystem
    dT : float [K]
        Temperature spacing.
    n_s : int
        Points along s = sqrt(-ln a_w) from 0 to sqrt(-ln a_w(m_max)) at its most negative.
    """
    nT = int(math.ceil((system.T_max - system.T_min) / dT)) + 1
    Ts = system.T_min + dT * np.arange(nT)
    Ts[-1] = min(Ts[-1], pz.APHI_T_MAX)
    lnaw_min = min(pz.ln_aw_kernel(system.m_max, float(T), system.packed) for T in Ts)
    s_max = math.sqrt(-lnaw_min) * 1.0000001
    ds = s_max / (n_s - 1)
    m = _fill(float(system.T_min), float(dT), nT, ds, n_s, system.packed, system.m_max, np.empty((nT, n_s)))
    return InverseTable(T0=float(system.T_min), dT=float(dT), s_max=s_max, ds=ds, m=m)


@njit(cache=True, inline="always")
def _row(m, i, j, fy, nS):
    """Catmull-Rom cubic along s in row i between j and j+1 (linear at the ends or next to NaN)."""
    p1 = m[i, j]
    p2 = m[i, j + 1]
    if j >= 1 and j + 2 < nS:
        p0 = m[i, j - 1]
        p3 = m[i, j + 2]
        if p3 == p3:
            return p1 + 0.5 * fy * (p2 - p0 + fy * (2.0 * p0 - 5.0 * p1 + 4.0 * p2 - p3
                                                     + fy * (3.0 * (p1 - p2) + p3 - p0)))
    return p1 + fy * (p2 - p1)


@njit(cache=True, inline="always", error_model="numpy")
def molality_from_table(aw, T, T0, dT, ds, m):
    """Molality [mol/kg] of the brine with water activity ``aw`` at ``T`` [K], by table lookup.

    Cubic (Catmull-Rom) along s = sqrt(-ln a_w), linear in T.  NaN outside the
    table (the flag): T beyond the system's validity, aw <= 0, or aw below
    a_w(m_max, T).
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


@njit(cache=True, fastmath=True)
def molality_from_table_array(aw, T, T0, dT, ds, m, out):
    """Vector form of :func:`molality_from_table` over 1-D arrays."""
    for k in range(aw.shape[0]):
        out[k] = molality_from_table(aw[k], T[k], T0, dT, ds, m)
    return out


@dataclass(frozen=True)
class PhaseTables:
    """Everything the phase-state kernel needs about one salt system, as plain arrays.

    Temperature tables run on a regular grid ``T0 + i*dT`` over the system's
    validity range.  Per solid s (index order of ``system.solids``):
    ``lnk[s, i]`` (ln K), ``msat[s, i]`` (dilute-branch saturation molality,
    NaN where none below m_max) and ``drh[s, i]`` (its deliquescence RH).
    ``stable[i]`` is the index of the stable solid (least soluble), ``mice[i]``
    the ice-liquidus molality (NaN above 273.15 K or beyond m_max; continued
    metastably below the eutectic), ``awice[i]`` the water activity of ice
    (Murphy & Koop 2005; 2.0 above 273.15 K, where ice cannot exist).  ``hydration[s]`` holds the waters of
    hydration.  Scalars: eutectic temperature ``T_eut`` and its solid index,
    the supercooling limit ``T_super`` (as published; the kernel freezes at
    max(T_super, T_min) and flags a freeze at T_min) and the efflorescence RH ``erh`` (NaN:
    none published, crystallise at the DRH).  ``inverse`` is the
    :class:`InverseTable`.
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
    hydration: np.ndarray
    T_eut: float
    eut_solid: int
    T_super: float
    erh: float
    molar_mass: float
    T_min: float
    T_max: float
    m_max: float
    packed: np.ndarray
    inverse: InverseTable

    @property
    def scalars(self):
        """(T_eut, eut_solid, T_super, erh, T_min, T_max, m_max) for the kernel."""
        return np.array([self.T_eut, self.eut_solid, self.T_super, self.erh, self.T_min, self.T_max, self.m_max])


def build_phase_tables(system, dT=0.25):
    """Build :class:`PhaseTables` for ``system`` (a :class:`~wetcycle.salts.SaltSystem`).

    Parameters
    ----------
    system : SaltSystem
    dT : float [K]
        Spacing of the temperature tables.
    """
    from ..water import ice_activity_kernel  # noqa: F401  (kernel used inside system methods)

    T = np.arange(system.T_min, system.T_max + 1e-9, dT)
    T[-1] = min(T[-1], system.T_max)
    ns = len(system.solids)
    lnk = np.array([s.ln_k(T) for s in system.solids])
    msat = np.array([system._sat(s, T) for s in system.solids])
    drh = np.full_like(msat, np.nan)
    for k in range(ns):
        ok = np.isfinite(msat[k])
        if ok.any():
            drh[k, ok] = system.water_activity(msat[k, ok], T[ok])
    stable, _ = system._stable(T)
    mice = np.asarray(system.ice_liquidus_molality(T), dtype=float)
    from ..water import ice_water_activity
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
    return PhaseTables(
        name=system.name, T0=float(T[0]), dT=float(dT), lnk=lnk, msat=msat, drh=drh,
        stable=stable.astype(np.int64), mice=mice, awice=awice,
        hydration=np.array([s.hydration for s in system.solids], dtype=float),
        T_eut=T_eut, eut_solid=eut_solid, T_super=T_super, erh=erh,
        molar_mass=system.molar_mass, T_min=system.T_min, T_max=system.T_max, m_max=system.m_max,
        packed=system.packed, inverse=build_inverse_table(system),
    )
