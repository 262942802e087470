"""A binary salt-water system and the phase boundaries derived from it.

Nothing here is typed in: the stable solid, saturation molalities,
deliquescence humidity, ice liquidus, eutectic, peritectics and solid-state
hydration humidities all follow from two ingredients of the system's data file:

* the Pitzer parameters (brine water activity and mean activity coefficient,
  :mod:`wetcycle.salts.pitzer`), and
* ln K(T) of each solid MX.nH2O(s) = nu_M M + nu_X X + n H2O(l), on the molality
  scale; ice has ln K = ln a_w,ice(T) (Murphy & Koop 2005).

Equilibrium of a solid with the solution means
ln K = ln(nu_M^nu_M nu_X^nu_X) + nu ln(m gamma±) + n ln a_w (Pitzer 1991, ch. 3).

Between two hydrates with n_low < n_high waters, solid-state hydration
MX.n_low(s) + (n_high - n_low) H2O = MX.n_high(s) happens at
a_w = (K_high / K_low)^(1 / (n_high - n_low)), with K the *dissolution*
constants above (the two dissolution reactions subtracted; with formation
constants the ratio inverts).  At a peritectic this equals the a_w of the
brine saturated with both solids.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np
from numba import njit
from scipy.optimize import brentq, minimize_scalar

from ..errors import ValidityError, shown
from ..water import ice_activity_kernel
from . import metastable as mt
from . import pitzer as pz

ICE = "ice"
#: Melting point of ice at 0.1 MPa [K]; no ice liquidus above it.
T_MELT = 273.15


@dataclass(frozen=True)
class Solid:
    """A salt solid MX.nH2O with its dissolution constant ln K(T) (same T form as Pitzer)."""

    name: str
    mineral: str
    hydration: float
    lnk_coef: tuple
    source: str
    flag: str

    def ln_k(self, T):
        c0, c1, c2, c3 = self.lnk_coef
        T = np.asarray(T, dtype=float)
        return c0 + c1 * (1.0 / T - 1.0 / pz.T_REF) + c2 * np.log(T / pz.T_REF) + c3 * (T - pz.T_REF)


@njit(cache=True)
def _saturation_curve(T, lnk, p, n_hydrate, m_hi, out, which=0):
    for i in range(T.shape[0]):
        t = T[i]
        lk = lnk[0] + lnk[1] * (1.0 / t - 1.0 / pz.T_REF) + lnk[2] * math.log(t / pz.T_REF) + lnk[3] * (t - pz.T_REF)
        out[i] = pz.saturation_molality_branch_kernel(lk, t, p, n_hydrate, m_hi, which)
    return out


@njit(cache=True)
def _liquidus_curve(T, p, m_hi, out):
    for i in range(T.shape[0]):
        a = ice_activity_kernel(T[i])
        out[i] = pz.molality_at_ln_aw_kernel(math.log(a), T[i], p, m_hi) if a == a and T[i] <= T_MELT else math.nan
    return out


@njit(cache=True)
def _lnaw_array(m, T, p, out):
    for i in range(m.shape[0]):
        out[i] = pz.ln_aw_kernel(m[i], T[i], p)
    return out


@njit(cache=True)
def _lnaw_full_array(m, T, p, br, out):
    for i in range(m.shape[0]):
        out[i] = mt.ln_aw_full_kernel(m[i], T[i], p, br)
    return out


@njit(cache=True)
def _inverse_full_curve(ln_aw, T, p, br, out):
    for i in range(T.shape[0]):
        out[i] = mt.molality_at_ln_aw_full_kernel(ln_aw[i], T[i], p, br)
    return out


@njit(cache=True)
def _osm_array(m, T, p, out):
    for i in range(m.shape[0]):
        out[i] = pz.osmotic_kernel(m[i], T[i], p)
    return out


@njit(cache=True)
def _lngamma_array(m, T, p, out):
    for i in range(m.shape[0]):
        out[i] = pz.ln_gamma_kernel(m[i], T[i], p)
    return out


def _bcast(*arrays):
    b = np.broadcast_arrays(*[np.asarray(a, dtype=float) for a in arrays])
    shape = b[0].shape
    return shape, [np.ascontiguousarray(x).ravel() for x in b]


def _out(values, shape):
    return float(values[0]) if shape == () else values.reshape(shape)


@dataclass(frozen=True)
class SaltSystem:
    """A binary salt-water system: Pitzer model + solids + metastability data.

    Build with :func:`wetcycle.salts.load`.  Every method is array-friendly
    (numpy broadcasting) and works in SI units: temperature [K], molality
    [mol kg-1], water activity and relative humidity as fractions.  Methods
    raise :class:`~wetcycle.errors.ValidityError` for temperatures outside
    ``T_min``-``T_max`` or molalities above ``m_max``.
    """

    name: str
    cation: str
    anion: str
    nu_cation: int
    nu_anion: int
    z_cation: int
    z_anion: int
    molar_mass: float
    T_min: float
    T_max: float
    m_max: float
    alpha1: float
    alpha2: float
    coef: np.ndarray = field(repr=False, compare=False)
    solids: tuple = field(repr=False)
    metastability: dict = field(repr=False, compare=False, default_factory=dict)
    notes: str = ""
    sources: dict = field(repr=False, compare=False, default_factory=dict)
    tables: tuple = field(repr=False, compare=False, default=())
    fitted: dict | None = field(repr=False, compare=False, default=None)
    supersaturated: dict | None = field(repr=False, compare=False, default=None)
    kinetics: dict = field(repr=False, compare=False, default_factory=dict)

    # ---- basic quantities -------------------------------------------------
    @cached_property
    def packed(self):
        """Parameter vector for the numba kernels of :mod:`wetcycle.salts.pitzer`."""
        return pz.pack(self.nu_cation, self.nu_anion, self.z_cation, self.z_anion,
                       self.alpha1, self.alpha2, self.coef)

    @property
    def nu(self):
        return self.nu_cation + self.nu_anion

    @property
    def m_ext(self):
        """Highest molality [mol kg-1] of a crystal-free (supersaturated) brine the model follows.

        The end of the supersaturated branch (:mod:`wetcycle.salts.metastable`); ``m_max``
        where the data file has no ``[supersaturated]`` section.
        """
        return self.supersaturated["m_ext"] if self.supersaturated else self.m_max

    @property
    def m_valid(self):
        """Highest molality [mol kg-1] backed by published data (beyond it: extrapolation)."""
        return self.supersaturated["m_valid"] if self.supersaturated else self.m_max

    @cached_property
    def branch(self):
        """Packed supersaturated-branch vector for the kernels (:func:`metastable.pack_branch`)."""
        sup = self.supersaturated
        if sup is None:
            return mt.pack_branch(self.packed, self.m_max, self.m_max)
        c2, c3 = (float(x) for x in sup["c"])
        return mt.pack_branch(self.packed, self.m_max, sup["m_ext"], c2, c3, sup["T_ref"])

    def solid(self, name):
        """The :class:`Solid` named ``name`` (formula, e.g. ``"NaCl·2H2O"``)."""
        for s in self.solids:
            if s.name == name:
                return s
        raise ValidityError(f"solid: {name!r} is not a solid of {self.name} "
                            f"(solids: {', '.join(s.name for s in self.solids)})")

    @property
    def solid_names(self):
        return tuple(s.name for s in self.solids)

    def _check_T(self, T):
        arr = np.asarray(T, dtype=float)
        bad = ~((arr >= self.T_min) & (arr <= self.T_max))
        if np.any(bad):
            v = arr[bad].flat[0] if arr.ndim else float(arr)
            raise ValidityError(f"temperature: {v:g} K is outside the validity of {self.name} "
                                f"({self.T_min:g}-{self.T_max:g} K)")

    def _check_m(self, m, limit=None, what=""):
        limit = self.m_max if limit is None else limit
        arr = np.asarray(m, dtype=float)
        bad = ~((arr >= 0) & (arr <= limit))
        if np.any(bad):
            v = arr[bad].flat[0] if arr.ndim else float(arr)
            raise ValidityError(f"molality: {v:g} mol/kg is outside the validity of {self.name}{what} "
                                f"(0-{limit:g} mol/kg)")

    def _eval(self, kernel, m, T):
        self._check_T(T)
        self._check_m(m)
        shape, (mm, tt) = _bcast(m, T)
        return _out(kernel(mm, tt, self.packed, np.empty_like(mm)), shape)

    def water_activity(self, m, T):
        """Water activity a_w [-] of the brine, crystal-free supersaturated brine included.

        Pitzer (1991), ln a_w = -phi nu m M_w, up to ``m_max``; beyond it, up to ``m_ext``, the
        supersaturated branch of :mod:`wetcycle.salts.metastable` (fitted to published
        single-particle water activities where the data file has them, else the straight
        continuation of ln a_w; see the data file's ``[supersaturated]`` uncertainty).

        Parameters
        ----------
        m : array [mol kg-1], 0 <= m <= m_ext
        T : array [K], T_min <= T <= T_max
        """
        self._check_T(T)
        self._check_m(m, self.m_ext, " (supersaturated branch included)" if self.m_ext > self.m_max else "")
        shape, (mm, tt) = _bcast(m, T)
        return np.exp(_out(_lnaw_full_array(mm, tt, self.packed, self.branch, np.empty_like(mm)), shape))

    def osmotic_coefficient(self, m, T):
        """Osmotic coefficient phi [-] (Pitzer 1991, eq. 3.59 form for one salt), m <= m_max."""
        return self._eval(_osm_array, m, T)

    def activity_coefficient(self, m, T):
        """Mean molal activity coefficient gamma± [-] (Pitzer 1991)."""
        return np.exp(self._eval(_lngamma_array, m, T))

    def ln_k(self, solid, T):
        """ln K(T) of a solid's dissolution (molality scale); ice: ln a_w,ice(T)."""
        self._check_T(T)
        if solid == ICE:
            T = np.asarray(T, dtype=float)
            return np.log(np.vectorize(ice_activity_kernel, otypes=[float])(T))
        return self.solid(solid).ln_k(T)

    # ---- derived phase boundaries ---------------------------------------------
    def _sat(self, s, tt, which=0):
        return _saturation_curve(tt, np.array(s.lnk_coef, dtype=float), self.packed,
                                 float(s.hydration), self.m_max, np.empty_like(tt), which)

    def _sat1(self, s, t, which=0):
        return float(self._sat(s, np.array([float(t)]), which)[0])

    def _excess(self, s, m, t):
        return pz.ln_iap_kernel(m, t, self.packed, float(s.hydration)) - float(s.ln_k(t))

    def _iap_peak(self, s, t):
        """(max over m of ln IAP - ln K, molality of the maximum) for solid s at t (robust, scipy)."""
        r = minimize_scalar(lambda lm: -self._excess(s, math.exp(lm), t),
                            bounds=(math.log(1e-3), math.log(self.m_max)), method="bounded",
                            options={"xatol": 1e-10})
        return -r.fun, math.exp(r.x)

    def _branch_robust(self, s, t, which):
        """Saturation molality on the dilute (0) or concentrated (1) branch, by bracketing the peak."""
        peak, m_pk = self._iap_peak(s, t)
        if peak < 0:
            return math.nan
        if which == 0:
            return brentq(lambda m: self._excess(s, m, t), 1e-6, m_pk, xtol=1e-12)
        if self._excess(s, self.m_max, t) > 0:
            return math.nan
        return brentq(lambda m: self._excess(s, m, t), m_pk, self.m_max, xtol=1e-12)

    def saturation_molality(self, T, solid=None):
        """Molality [mol kg-1] of the brine saturated with ``solid`` (default: the stable solid).

        Root of ln IAP(m, T) = ln K(T) on the dilute-side branch.  NaN where the
        solid's saturation lies above ``m_max`` (outside the model).  With
        ``solid="ice"`` this is the ice liquidus.
        """
        self._check_T(T)
        shape, (tt,) = _bcast(T)
        if solid == ICE:
            return self.ice_liquidus_molality(T)
        if solid is None:
            return _out(self._stable(tt)[1], shape)
        return _out(self._sat(self.solid(solid), tt), shape)

    def _all_sat(self, tt):
        return np.array([self._sat(s, tt) for s in self.solids])

    def _stable(self, tt):
        sat = self._all_sat(tt)
        filled = np.where(np.isnan(sat), np.inf, sat)
        idx = np.argmin(filled, axis=0)
        msat = filled[idx, np.arange(tt.size)]
        idx = np.where(np.isinf(msat), -1, idx)
        return idx, np.where(np.isinf(msat), np.nan, msat)

    def stable_solid(self, T):
        """Name of the salt solid stable in contact with its saturated brine at T.

        The stable solid is the least soluble one (the brine saturated with it is
        undersaturated with respect to every other).  Returns a str for scalar
        T, else an array of str; ``""`` where no solid saturates below ``m_max``.
        """
        self._check_T(T)
        shape, (tt,) = _bcast(T)
        idx, _ = self._stable(tt)
        names = np.array(list(self.solid_names) + [""], dtype=object)[idx]
        return str(names[0]) if shape == () else names.reshape(shape)

    def deliquescence_rh(self, T, solid=None):
        """Deliquescence relative humidity (liquid reference) [-]: a_w of the saturated brine.

        Default: of the stable solid.  Below the eutectic this is the humidity
        of *metastable* deliquescence (the brine would be supercooled with
        respect to ice).
        """
        m = np.asarray(self.saturation_molality(T, solid), dtype=float)
        shape, (mm, tt) = _bcast(m, T)
        out = np.full_like(mm, np.nan)
        ok = ~np.isnan(mm)
        out[ok] = np.exp(_lnaw_array(mm[ok], tt[ok], self.packed, np.empty(ok.sum())))
        return _out(out, shape)

    def ice_liquidus_molality(self, T):
        """Molality [mol kg-1] of the brine in equilibrium with ice: a_w(m, T) = a_w,ice(T).

        NaN above 273.15 K (no ice) or where the liquidus lies above ``m_max``.
        Below the eutectic the value describes a metastable (supercooled) brine.
        """
        self._check_T(T)
        shape, (tt,) = _bcast(T)
        return _out(_liquidus_curve(tt, self.packed, self.m_max, np.empty_like(tt)), shape)

    def ice_liquidus_temperature(self, m):
        """Freezing temperature [K] of a brine of molality ``m`` [mol kg-1]: a_w(m, T) = a_w,ice(T).

        Solved by bracketed root finding between ``T_min`` and 273.15 K; NaN where the
        brine does not freeze within that range.
        """
        self._check_m(m)
        shape, (mm,) = _bcast(m)
        out = np.full(mm.shape, np.nan)
        lo = max(self.T_min, 150.0)
        for k, mk in enumerate(mm):
            if mk == 0.0:
                out[k] = T_MELT
                continue
            f = lambda t: pz.ln_aw_kernel(mk, t, self.packed) - math.log(ice_activity_kernel(t))
            if f(lo) < 0 < f(T_MELT) or f(lo) > 0 > f(T_MELT):
                out[k] = brentq(f, lo, T_MELT, xtol=1e-9)
        return _out(out, shape)

    def molality_at_water_activity(self, aw, T):
        """Molality [mol kg-1] of the brine whose water activity is ``aw`` at T.

        The inverse of :meth:`water_activity`, for undersaturated and
        supersaturated brines up to ``m_ext``; NaN where ``aw`` is below
        a_w(m_ext, T).  aw must lie in (0, 1].
        """
        self._check_T(T)
        a = np.asarray(aw, dtype=float)
        if np.any(~((a > 0) & (a <= 1))):
            raise ValidityError(f"water activity: values must lie in (0, 1], got {shown(a[~((a > 0) & (a <= 1))].flat[0])}")
        shape, (aa, tt) = _bcast(a, T)
        return _out(_inverse_full_curve(np.log(aa), tt, self.packed, self.branch, np.empty_like(aa)), shape)

    def hydration_transitions(self, T):
        """Relative humidities of solid-state hydration between successive hydrates at T.

        For hydrates with n_low < n_high waters (adjacent in water count),
        a_w = exp((ln K_high - ln K_low) / (n_high - n_low)), K = dissolution constants.
        Above the deliquescence RH of the lower hydrate the transition goes through
        the solution instead.

        Returns
        -------
        list of dict {lower, higher, rh}; ``rh`` is an array for array T.
        """
        self._check_T(T)
        out = []
        ordered = sorted(self.solids, key=lambda s: s.hydration)
        for lo, hi in zip(ordered[:-1], ordered[1:]):
            dn = hi.hydration - lo.hydration
            if dn <= 0:
                continue
            rh = np.exp((hi.ln_k(T) - lo.ln_k(T)) / dn)
            out.append(dict(lower=lo.name, higher=hi.name, rh=float(rh) if np.ndim(rh) == 0 else rh))
        return out

    # ---- invariant points ----------------------------------------------------
    def _grid(self, lo=None, hi=None, step=0.25):
        lo = self.T_min if lo is None else lo
        hi = self.T_max if hi is None else hi
        return np.linspace(lo, hi, max(int(round((hi - lo) / step)) + 1, 2))

    @cached_property
    def _invariants(self):
        # Eutectics: where the ice liquidus meets each solid's saturation curve.
        hi = min(T_MELT - 1e-6, self.T_max)
        tt = self._grid(self.T_min, hi)
        mice = _liquidus_curve(tt, self.packed, self.m_max, np.empty_like(tt))
        stable_idx, _ = self._stable(tt)
        eutectics = []
        for k, s in enumerate(self.solids):
            msat = self._sat(s, tt)
            d = mice - msat  # < 0 above the eutectic (liquidus below saturation)
            for i in range(tt.size - 1, 0, -1):
                if np.isfinite(d[i]) and np.isfinite(d[i - 1]) and (d[i] < 0) != (d[i - 1] < 0):
                    f = lambda t: (_liquidus_curve(np.array([t]), self.packed, self.m_max, np.empty(1))[0]
                                   - self._sat(s, np.array([t]))[0])
                    te = brentq(f, tt[i - 1], tt[i], xtol=1e-6)
                    me = float(self._sat(s, np.array([te]))[0])
                    st_idx, _ = self._stable(np.array([te]))
                    eutectics.append(dict(temperature_K=te, molality=me, solids=[ICE, s.name],
                                          stable=bool(st_idx[0] == k)))
                    break
        eutectics.sort(key=lambda e: (not e["stable"], -e["temperature_K"]))
        # Where the stable solid (in contact with saturated brine) changes:
        #  * peritectic: two solids' saturation curves cross;
        #  * congruent melting: one solid's curve ends (its ln IAP maximum falls below ln K);
        #    then its concentrated-side branch meets the other solid at a hydrate-hydrate eutectic.
        tt = self._grid()
        idx, _ = self._stable(tt)
        peritectics, congruent = [], []
        for i in range(tt.size - 1):
            a, b = idx[i], idx[i + 1]
            if a == b or a < 0 or b < 0:
                continue
            sa, sb = self.solids[a], self.solids[b]
            t0, t1 = tt[i], tt[i + 1]
            ends = [s for s, t in ((sa, t1), (sb, t0)) if not np.isfinite(self._sat1(s, t))]
            if not ends:
                tp = brentq(lambda t: self._sat1(sa, t) - self._sat1(sb, t), t0, t1, xtol=1e-7)
                lower, upper = sorted((sa, sb), key=lambda s: -s.hydration)
                peritectics.append(dict(temperature_K=tp, molality=self._sat1(sa, tp),
                                        solids=[lower.name, upper.name], kind="peritectic"))
                continue
            c = ends[0]
            other = sb if c is sa else sa
            out = 1.0 if c is sa else -1.0  # direction in T in which c's saturation ends
            t_in = t0 if c is sa else t1
            t_out = t_in + out * 0.02
            while self._iap_peak(c, t_out)[0] > 0 and self.T_min <= t_out + out * 0.02 <= self.T_max:
                t_out += out * 0.02
            t_cm = brentq(lambda t: self._iap_peak(c, t)[0], min(t_in, t_out), max(t_in, t_out), xtol=1e-9)
            congruent.append(dict(temperature_K=float(t_cm), molality=self._iap_peak(c, t_cm)[1], solid=c.name))
            # hydrate-hydrate eutectic: c's concentrated branch meets the other solid's curve
            f = lambda t: self._branch_robust(c, t, 1) - self._sat1(other, t)
            t_prev, f_prev = None, math.nan
            for d in np.geomspace(1e-6, 30.0, 200):
                t_cur = t_cm - out * d
                if not (self.T_min <= t_cur <= self.T_max):
                    break
                f_cur = f(t_cur)
                if np.isfinite(f_prev) and np.isfinite(f_cur) and (f_prev > 0) != (f_cur > 0):
                    te = brentq(f, min(t_prev, t_cur), max(t_prev, t_cur), xtol=1e-9)
                    hyd = sorted((c, other), key=lambda s: -s.hydration)
                    peritectics.append(dict(temperature_K=te, molality=self._sat1(other, te),
                                            solids=[hyd[0].name, hyd[1].name], kind="hydrate eutectic"))
                    break
                t_prev, f_prev = t_cur, f_cur
        peritectics.sort(key=lambda p: p["temperature_K"])
        return eutectics, peritectics, congruent

    def eutectics(self):
        """Every ice-salt eutectic, stable first, then metastable ones.

        Returns list of dict {temperature_K, molality, solids [ice, salt solid], stable}.
        """
        return [dict(e) for e in self._invariants[0]]

    def eutectic(self):
        """The stable eutectic: dict {temperature_K, molality, solids}; None if not found in range."""
        for e in self._invariants[0]:
            if e["stable"]:
                return {k: e[k] for k in ("temperature_K", "molality", "solids")}
        return None

    def peritectics(self):
        """Invariant points with two salt solids and brine, ordered by temperature.

        Returns list of dict {temperature_K, molality, solids [higher hydrate, lower hydrate],
        kind}; kind is "peritectic" (two saturation curves cross, the stable solid changes)
        or "hydrate eutectic" (the concentrated branch of a congruently melting hydrate
        meets the next solid).
        """
        return [dict(p) for p in self._invariants[1]]

    def congruent_melting_points(self):
        """Congruent melting points of hydrates: dict {temperature_K, molality, solid}.

        Above this temperature the hydrate has no saturated solution; the deliquescence
        RH of the stable solid jumps there (a real discontinuity, not a numerical one).
        """
        return [dict(c) for c in self._invariants[2]]

    # ---- metastability -------------------------------------------------------
    @property
    def efflorescence_rh(self):
        """RH [-] below which a supersaturated brine crystallises (from published lab work)."""
        return self.metastability.get("efflorescence_rh")

    @property
    def supercooling_limit(self):
        """Lowest temperature [K] a brine stays liquid before freezing or vitrifying."""
        return self.metastability.get("supercooling_limit")

    def describe(self, temperatures=()):
        """Everything derived, as a JSON-ready dict (used by ``wetcycle salt``)."""
        eut = self.eutectic()
        out = dict(
            system=self.name,
            solids=[ICE] + list(self.solid_names),
            valid_temperature_K=[self.T_min, self.T_max],
            valid_molality_max=self.m_max,
            eutectic=None if eut is None else dict(eut),
            metastable_eutectics=[{k: e[k] for k in ("temperature_K", "molality", "solids")}
                                  for e in self.eutectics() if not e["stable"]],
            peritectics=[{k: p[k] for k in ("temperature_K", "molality", "solids", "kind")} for p in self.peritectics()],
            congruent_melting=self.congruent_melting_points(),
            efflorescence_rh=self.efflorescence_rh,
            supersaturated_molality_max=self.m_ext,
            supersaturated_molality_validated=self.m_valid,
            ice_nucleation_rh_ice=self.metastability.get("ice_nucleation_rh_ice"),
            metastable_deliquescence_depth_K=self.metastability.get("metastable_deliquescence_depth", 0.0),
            hydrate_time_constant_days=(self.kinetics or {}).get("hydrate_time_constant_days"),
            hydrate_reference_temperature_K=(self.kinetics or {}).get("hydrate_reference_temperature"),
            supercooling_limit_K=self.supercooling_limit,
            # the time-stepping model follows a supercooled brine down to the warmer of the two
            model_supercooling_floor_K=(None if self.supercooling_limit is None
                                        else max(float(self.supercooling_limit), self.T_min)),
            at=[],
        )
        for T in temperatures:
            T = float(T)
            self._check_T(T)
            stable = self.stable_solid(T)
            msat = self.saturation_molality(T)
            drh = self.deliquescence_rh(T)
            aw_ice = ice_activity_kernel(T) if T <= 273.16 else None
            mice = self.ice_liquidus_molality(T) if T <= T_MELT else None
            out["at"].append(dict(
                temperature_K=T,
                stable_solid=stable or None,
                saturation_molality=_num(msat),
                deliquescence_rh=_num(drh),
                ice_water_activity=_num(aw_ice),
                ice_liquidus_molality=_num(mice),
                below_eutectic=bool(eut is not None and T < eut["temperature_K"]),
                hydrate_transitions=[dict(lower=h["lower"], higher=h["higher"], rh=_num(h["rh"]),
                                          solid_state=_solid_state(h["rh"], self.deliquescence_rh(T, h["lower"])))
                                     for h in self.hydration_transitions(T)],
            ))
        return out


def _solid_state(rh, drh_lower):
    """True if a hydration RH lies below the lower solid's DRH (a solid-state change); False if that
    solid deliquesces first (the change then goes through the brine); None if either is undefined."""
    rh, d = _num(rh), _num(drh_lower)
    return None if rh is None or d is None else bool(rh < d)


def _num(x):
    if x is None:
        return None
    x = float(x)
    return None if math.isnan(x) else x
