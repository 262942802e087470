"""Salt mixtures for the time stepper: a composition, and its equilibrium tables built once.

A mixture is a fixed composition of anhydrous salts (mass fractions of binary salt systems,
e.g. ``{"Mg(ClO4)2": 0.6, "NaCl": 0.3, "CaSO4": 0.1}``) spread at a loading [kg m-2].  Its
parcel holds W kg of water per m2, u = W / loading kg of water per kg of salt.  At each
temperature the stable assemblage of the closed parcel (salt + water) is a function of u
alone, from the Gibbs-energy minimisation of :func:`wetcycle.brines.equilibrium.equilibrate`
(Pitzer model for mixtures, Harvie, Moller & Weare 1984 form).  :func:`build_tables` tabulates
it once per mixture:

* ``u_dry(T)`` [kg kg-1]: the most water the salts hold with neither brine nor ice (their
  hydrates; 0 for salts without hydrates), located by bisection on u to 1e-4 relative.  Above it
  the first brine is the mixture's eutonic brine (all its solids present): its water activity
  is the mutual deliquescence RH (Tang & Munkelwitz 1993, Atmos. Environ. 27A, 467, for the
  concept), or ice forms first (below the mixture's eutectic, or where the eutonic brine is
  more dilute than the ice liquidus).
* on a grid of v = u - u_dry(T) (log-spaced, 1e-4 to 100 kg kg-1), the equilibrium water
  activity a_w (of the brine; a_w,ice where ice is present; non-decreasing in v), the brine
  water and the ice per kg of salt, the dissolved fraction (charge equivalents in the brine /
  all equivalents: the binary kernel's n_diss / n), the brine's ion molalities and a flag.

Validity: the binaries the mixture uses (every cation-anion pair of its ions) each have a
temperature range.  By default the tables span only the range common to all of them;
``extrapolate_binaries=True`` extends them down to the lowest T_min among the pairs, with
every row below a pair's T_min flagged (bit 8 of the kernel's validity flag: the brine's
water activity is extrapolated), as the path functions do (design decision 9).
The tables are equilibrium states: no supersaturated brine, supercooling or ice-nucleation
barrier (the binary kernel's metastability) -- a stated limitation of mixtures.
"""

from __future__ import annotations

import hashlib
import json
import math
from dataclasses import dataclass, field

import numpy as np

from ..errors import ConfigError, ValidityError, shown
from ..salts.pitzer import MW
from ..water import ice_activity_kernel
from . import chemistry as ch
from .equilibrium import considered_solids, equilibrate

#: v grid (water beyond u_dry, kg per kg of salt): first point, last point, points per decade.
V_FIRST, V_LAST, V_PER_DECADE = 1e-4, 100.0, 8
#: Points of the all-solid part of the tables (u from 0 to u_dry, evenly spaced).
N_SOLID = 17
#: Table flag bit: a binary pair extrapolated below its range, or a pair more concentrated than
#: its binary's data (the kernel's FLAG_EXTRAPOLATED).
FLAG_EXTRAPOLATED = 8
#: Mass fractions must add up to 1 within this.
SUM_TOL = 1e-3


def _salt_systems():
    """{lower-case name: (canonical name, cation, nu_c, anion, nu_a, molar mass kg/mol)}."""
    out = {}
    for (ci, ai), s in ch.binary_pairs().items():
        mm = s.nu_cation * ch.IONS[ci][1] + s.nu_anion * ch.IONS[ai][1]
        out[s.name.lower()] = (s.name, ci, float(s.nu_cation), ai, float(s.nu_anion), mm)
    return out


#: Largest charge imbalance of a mixture given as ions: |sum z n| / (half the sum of |z| n), the rule of
#: the brine functions (:data:`wetcycle.brines.paths.MAX_IMBALANCE`).
MAX_IMBALANCE = 0.01


def parse_ions(ions, field_name="ions"):
    """Validate a mixture given as its ions; return ({"ions": {ion: mole fraction}}, {ion: mol per kg salt}).

    ``ions``: ``{ion: amount}``, ion names of :data:`wetcycle.brines.chemistry.IONS` without charge
    (Na, K, Mg, Ca, Cl, SO4, ClO4), amounts in moles in any one unit (only their ratios matter: mmol
    per kg of soil from a leachate, mol per m2...); the mixture's loading is the mass of the
    anhydrous salts these ions make, sum n_i M_i.  A charge imbalance above 1 % is refused in one
    line (as :func:`wetcycle.brines.freeze` refuses it); a smaller one is removed by scaling the
    cations and the anions to their mean charge.  The returned mole fractions (of that neutral
    set, rounded to 12 digits) are the mixture's stored composition.
    """
    if not isinstance(ions, dict) or not ions:
        raise ConfigError(f"{field_name}: expected a table of ion = moles, got {shown(ions)}")
    vals = {}
    for k, v in ions.items():
        if k not in ch.IONS:
            raise ConfigError(f"{field_name}: ion {k!r} is not known; allowed: {', '.join(ch.IONS)} (names without "
                              "charge)")
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) or v < 0:
            raise ConfigError(f"{field_name}.{k}: {shown(v)} is not allowed; allowed: an amount >= 0 [mol, any unit]")
        if v > 0:
            vals[k] = float(v)
    qp = sum(n * ch.IONS[i][0] for i, n in vals.items() if ch.IONS[i][0] > 0)
    qn = sum(-n * ch.IONS[i][0] for i, n in vals.items() if ch.IONS[i][0] < 0)
    if not (qp > 0 and qn > 0):
        raise ConfigError(f"{field_name}: needs at least one cation and one anion with an amount > 0, got "
                          f"{sorted(vals)}")
    imbalance = (qp - qn) / (0.5 * (qp + qn))
    if abs(imbalance) > MAX_IMBALANCE:
        raise ConfigError(f"{field_name}: charge imbalance {100 * imbalance:+.2f} % (cations {qp:.6g}, anions "
                          f"{qn:.6g} equivalents) exceeds 1 %; allowed: a charge-balanced composition")
    q = 0.5 * (qp + qn)
    vals = {i: n * (q / qp if ch.IONS[i][0] > 0 else q / qn) for i, n in vals.items()}
    total = sum(vals.values())
    frac = {i: round(n / total, 12) for i, n in sorted(vals.items())}
    mass = sum(x * ch.IONS[i][1] for i, x in frac.items())  # kg of anhydrous salt per mol of ions
    return {"ions": frac}, {i: x / mass for i, x in frac.items()}


def parse_mixture(mixture, field_name="mixture"):
    """Validate ``{salt system: mass fraction}``; return ({canonical name: fraction}, {ion: mol per kg salt}).

    One-line :class:`~wetcycle.errors.ConfigError` for an unknown salt, a fraction outside (0, 1],
    or fractions not adding up to 1 (within 0.001).  A mixture given as its ions, ``{"ions": {ion:
    moles}}``, goes to :func:`parse_ions` (with ``ions`` in the field name).
    """
    if isinstance(mixture, dict) and list(mixture) == ["ions"]:
        return parse_ions(mixture["ions"], field_name if field_name.endswith("ions") else f"{field_name}.ions")
    systems = _salt_systems()
    if not isinstance(mixture, dict) or not mixture:
        raise ConfigError(f"{field_name}: expected a table of salt = mass fraction, got {shown(mixture)}")
    comp, ions = {}, {}
    for name, w in mixture.items():
        s = systems.get(str(name).lower())
        if s is None:
            raise ConfigError(f"{field_name}: {name!r} is not a salt system; allowed: "
                              f"{', '.join(sorted(v[0] for v in systems.values()))}")
        if isinstance(w, bool) or not isinstance(w, (int, float)) or not (math.isfinite(w) and 0 < w <= 1):
            raise ConfigError(f"{field_name}.{name}: {shown(w)} is not allowed; allowed: a mass fraction in (0, 1]")
        if s[0] in comp:
            raise ConfigError(f"{field_name}: {s[0]!r} is listed twice")
        comp[s[0]] = float(w)
        n = w / s[5]
        ions[s[1]] = ions.get(s[1], 0.0) + s[2] * n
        ions[s[3]] = ions.get(s[3], 0.0) + s[4] * n
    total = sum(comp.values())
    if abs(total - 1.0) > SUM_TOL:
        raise ConfigError(f"{field_name}: mass fractions add up to {total:.6g}; allowed: fractions adding up to 1")
    return comp, ions


@dataclass(frozen=True)
class MixtureTables:
    """Equilibrium tables of one mixture (see module docstring).  Arrays [T] or [T, v] (or [T, v, ion])."""

    name: str
    composition_json: str         # {salt: mass fraction}
    ions: tuple
    ion_mol_per_kg: np.ndarray    # [ion] mol per kg of salt mixture
    extrapolate_binaries: bool
    T0: float
    dT: float
    T_min: float                  # table range [K]
    T_max: float
    T_valid_min: float            # lowest T where every binary of the mixture is inside its range
    v0: float                     # first v [kg kg-1]
    dlv: float                    # ln spacing of v
    u_dry: np.ndarray             # [T] kg water per kg salt held with neither brine nor ice
    aw_solid: np.ndarray          # [T, s] a_w of the all-solid parcel at u = s u_dry, s evenly spaced on [0, 1]
    awice: np.ndarray             # [T] a_w of ice (2 above 273.15 K: no ice)
    aw: np.ndarray                # [T, v] equilibrium water activity
    lw: np.ndarray                # [T, v] brine water [kg per kg salt]
    iw: np.ndarray                # [T, v] ice [kg per kg salt]
    diss: np.ndarray              # [T, v] dissolved fraction of the salt (charge equivalents)
    mol: np.ndarray               # [T, v, ion] brine molalities [mol kg-1] (0 without brine)
    flag: np.ndarray              # [T, v] bits (FLAG_EXTRAPOLATED)
    failed: int = 0               # equilibrium states that did not converge (filled from a neighbour)
    notes: str = field(default="")

    @property
    def composition(self):
        return json.loads(self.composition_json)

    @property
    def mdrh(self):
        """[T] water activity of the first brine (or ice) above u_dry: the mutual deliquescence RH."""
        return self.aw[:, 0]

    @property
    def temperatures(self):
        return self.T0 + self.dT * np.arange(self.u_dry.size)

    @property
    def eutectic_K(self):
        """Lowest table temperature with brine (NaN if none), to the table's spacing."""
        has = np.any(self.lw > 0, axis=1)
        return float(self.temperatures[np.argmax(has)]) if has.any() else math.nan

    def kernel_tables(self):
        from ..phase.mixture_kernel import MixTables
        return MixTables(self.T0, self.dT, self.v0, self.dlv, self.u_dry, self.aw_solid, self.awice, self.aw, self.lw,
                         self.iw,
                         self.diss, np.ascontiguousarray(self.mol), self.flag.astype(np.int64))


def _pair_range(chem, extrapolate):
    lo = [p.T_min for p in chem.pairs]
    hi = [p.T_max for p in chem.pairs]
    return (min(lo) if extrapolate else max(lo)), min(hi), max(lo)


def _equilibrium(chem, b, u, T, start):
    """equilibrate at u kg water per kg salt; an assemblage that holds no water counts as all solid."""
    with np.errstate(divide="ignore", invalid="ignore"):  # a failed state's log(0) is reported as unconverged
        return equilibrate(chem, b, u / MW, T, start=start)


#: A brine whose ionic strength exceeds this multiple of the largest ionic strength of its binaries'
#: data (at their m_max) is outside the model (the Pitzer polynomials can show spurious minima
#: there): such states count as dry, in the spirit of
#: :func:`wetcycle.brines.paths.mutual_deliquescence_rh` (which limits each pair; a sparingly soluble
#: pair such as CaSO4, m_max 0.03 mol/kg, is legitimately exceeded in a concentrated chloride brine).
STRENGTH_LIMIT = 1.25


def _trusted(chem, r):
    if not r.liquid:
        return True
    used = chem.pair_limits(r.molality)
    return chem.ionic_strength(r.molality) <= STRENGTH_LIMIT * max(p.ionic_strength_max for p in used)


def _solid_only(r, chem=None):
    """All water bound in salt solids (no brine, no ice), including 'no solid holds this water'."""
    if not r.converged:
        # the model's driest solids hold more water than this: all solid; any other failure is the
        # solver losing a vanishing, extremely concentrated brine: wet
        return r.message.startswith("the liquid vanishes but no solid")
    if r.liquid:
        return chem is not None and not _trusted(chem, r)
    ice = sum(x for nm, x in zip(r.solids, r.solid_moles) if nm == ch.ICE)
    return not ice > 0


def _solid_water_activity(chem, b, T, u_dry, n):
    """a_w of the all-solid parcel at u = s u_dry (s on [0, 1], n points): the water row's dual of the
    solid-only linear programme min sum_s x_s ln K_s, A x = b, h.x = W, x >= 0 (its ln a_w: the water's
    chemical potential relative to pure liquid, as in :mod:`wetcycle.brines.equilibrium`).  Between two
    hydrates it is their transition RH (K_low / K_high)^(1/dn); a parcel drier than the model's driest
    solids holds (no solid holds that little water) gets 0, so it takes up water at any RH.
    """
    from scipy.optimize import linprog
    ice = (ch.ICE,) if T <= ch.T_ICE_MAX else ()
    cols, _ = considered_solids(chem, T, exclude=ice)
    A_all, h_all = chem.stoichiometry
    A, h = A_all[:, cols], h_all[cols]
    lnK = chem.ln_k(T)[cols]
    out = np.zeros(n)
    for j, sj in enumerate(np.linspace(0.0, 1.0, n)):
        W = sj * u_dry / MW
        res = linprog(lnK, A_eq=np.vstack([A, h[None, :]]), b_eq=np.concatenate([b, [W]]), bounds=(0, None),
                      method="highs")
        out[j] = math.exp(min(res.eqlin.marginals[-1], 0.0)) if res.status == 0 else 0.0
    return np.maximum.accumulate(out)


def _best(chem, b, u, T, starts):
    """The equilibrium at u from the first start that gives a converged state with brine, else the first
    converged state (else the last).  A converged brine with every solid at or below saturation is the
    Gibbs minimum (G is convex there), whereas a solver that loses its brine on the way falls back on the
    best all-solid state, which a brine may beat: so a brine found from any start wins."""
    first = None
    last = None
    for st in starts:
        r = _equilibrium(chem, b, u, T, st)
        if r.converged and r.liquid and _trusted(chem, r):
            return r
        if r.converged and first is None:
            first = r
        last = r
    return first if first is not None else last


def _start(r):
    return {nm: x for nm, x in zip(r.solids, r.solid_moles) if x > 0} if r.converged else None


def build_tables(mixture, *, name="mixture", extrapolate_binaries=False, dT=1.0, T_range=None,
                 v_last=V_LAST, v_per_decade=V_PER_DECADE):
    """Equilibrium tables of a mixture for the time stepper (see module docstring).

    Parameters
    ----------
    mixture : dict {salt system: mass fraction}
    name : str, the mixture's name (results' salt coordinate)
    extrapolate_binaries : bool
        Extend the tables below the common range of the binaries (flagged rows), down to the
        lowest T_min among them.
    dT : float [K], temperature spacing
    T_range : (lo, hi) [K], optional narrower range (tests); must lie inside the allowed one
    v_last, v_per_decade : the v grid (kg water beyond u_dry per kg salt)

    Cost: ~50 equilibrium states per temperature plus a bisection (~3 ms each): ~20-40 s for a
    Mars range at 1 K.  Cached in memory by :func:`mixture_tables`.
    """
    comp, ions = parse_mixture(mixture)
    chem = ch.load(tuple(ions), "fitted")
    b = np.array([ions[i] for i in chem.ions])
    lo, hi, valid_lo = _pair_range(chem, extrapolate_binaries)
    if T_range is not None:
        tlo, thi = float(T_range[0]), float(T_range[1])
        if tlo < lo - 1e-9 or thi > hi + 1e-9 or thi <= tlo:
            raise ValidityError(f"T_range: {tlo:g}-{thi:g} K is outside the mixture's range {lo:g}-{hi:g} K "
                                + ("" if extrapolate_binaries else "(extrapolate_binaries=True extends it down)"))
        lo, hi = tlo, thi
    if not hi > lo:
        raise ValidityError(f"{name}: its binaries have no common temperature range ({lo:g}-{hi:g} K)")
    nT = int(math.floor((hi - lo) / dT + 1e-9)) + 1
    Ts = lo + dT * np.arange(nT)
    dlv = math.log(10.0) / v_per_decade
    nv = int(round(math.log(v_last / V_FIRST) / dlv)) + 1
    vs = V_FIRST * np.exp(dlv * np.arange(nv))
    eq = np.abs(chem.z) * b
    eq_total = float(eq.sum())
    u_dry = np.zeros(nT)
    aw_solid = np.zeros((nT, N_SOLID))
    awice = np.full(nT, 2.0)
    aw = np.full((nT, nv), np.nan)
    lw = np.zeros((nT, nv))
    iw = np.zeros((nT, nv))
    diss = np.zeros((nT, nv))
    mol = np.zeros((nT, nv, chem.n))
    flag = np.zeros((nT, nv), dtype=np.int8)
    failed = 0
    # rows from warm to cold, each state also started from the warmer row's (a cooling path: the
    # solver follows a brine down in temperature, as brines.freeze does)
    march_prev = {}
    col_prev = [None] * nv
    for k in range(nT - 1, -1, -1):
        T = float(Ts[k])
        if T <= 273.15:
            awice[k] = ice_activity_kernel(T)
        row_flag = FLAG_EXTRAPOLATED if any(T < p.T_min - 1e-9 or T > p.T_max + 1e-9 for p in chem.pairs) else 0
        # u_dry: march down from a wet state in halving steps, each state started from the last wet
        # one (the solver follows a shrinking brine; a cold start at little water can land on a
        # metastable hydrate), then bisect on ln u between the last wet and the first all-solid state
        ulo, uhi = 1e-7, V_FIRST + v_last
        wet = _best(chem, b, uhi, T, (march_prev.get(0), None))
        march_prev[0] = _start(wet)
        c = math.log(uhi)
        a = None
        q = 0
        while c > math.log(ulo):
            q += 1
            r = _best(chem, b, math.exp(c - math.log(2.0)), T, (_start(wet), march_prev.get(q)))
            if r.converged:
                march_prev[q] = _start(r)
            if _solid_only(r, chem):
                a = c - math.log(2.0)
                break
            c, wet = c - math.log(2.0), r
        if a is None:
            ud = 0.0
        else:
            for _ in range(60):
                mid = 0.5 * (a + c)
                r = _best(chem, b, math.exp(mid), T, (_start(wet),))
                if _solid_only(r, chem):
                    a = mid
                else:
                    c, wet = mid, r
                if c - a < 1e-4:
                    break
            ud = math.exp(a)
        u_dry[k] = ud
        prev = _start(wet)
        for j, v in enumerate(vs):
            r = _best(chem, b, ud + v, T, (prev, col_prev[j]))
            if not r.converged:
                failed += 1
                continue
            prev = col_prev[j] = _start(r)
            ice = sum(x for nm, x in zip(r.solids, r.solid_moles) if nm == ch.ICE)
            iw[k, j] = ice * MW
            if r.liquid:
                aw[k, j] = math.exp(r.ln_aw)
                lw[k, j] = r.liquid_water_mol * MW
                diss[k, j] = min(float(np.dot(np.abs(chem.z), r.ion_moles)) / eq_total, 1.0)
                mol[k, j] = r.molality
                f = row_flag | (FLAG_EXTRAPOLATED if chem.pair_excess(r.molality) > 1.0 + 1e-9 else 0)
                flag[k, j] = f
            elif ice > 0:
                aw[k, j] = awice[k]
        # fill unconverged states from the neighbour on the drier side (then the wetter one)
        row = aw[k]
        for j in range(nv):
            if not np.isfinite(row[j]):
                src = j - 1 if j > 0 and np.isfinite(row[j - 1]) else next(
                    (q for q in range(j + 1, nv) if np.isfinite(row[q])), None)
                if src is None:
                    raise ValidityError(f"{name}: no equilibrium state converged at {T:g} K")
                aw[k, j], lw[k, j], iw[k, j], diss[k, j] = aw[k, src], lw[k, src], iw[k, src], diss[k, src]
                mol[k, j], flag[k, j] = mol[k, src], flag[k, src]
        # equilibrium a_w is non-decreasing in water; remove round-off wiggles
        aw[k] = np.maximum.accumulate(aw[k])
        if ud > 0.0:
            aw_solid[k] = np.minimum(_solid_water_activity(chem, b, T, ud, N_SOLID), aw[k, 0])
        else:
            aw_solid[k] = aw[k, 0]
    return MixtureTables(
        name=str(name), composition_json=json.dumps(comp, sort_keys=True), ions=tuple(chem.ions),
        ion_mol_per_kg=b, extrapolate_binaries=bool(extrapolate_binaries), T0=float(Ts[0]), dT=float(dT),
        T_min=float(Ts[0]), T_max=float(Ts[-1]), T_valid_min=float(valid_lo), v0=V_FIRST, dlv=dlv,
        u_dry=u_dry, aw_solid=aw_solid, awice=awice, aw=aw, lw=lw, iw=iw, diss=diss, mol=mol, flag=flag, failed=failed,
        notes="equilibrium only: no supersaturated brine, supercooling or ice-nucleation barrier")


_CACHE = {}
#: Temperature spacing [K] of tables built for scenarios (tests may coarsen it to build faster).
DEFAULT_DT = 1.0


def mixture_tables(mixture, *, name="mixture", extrapolate_binaries=False, **kw):
    """:func:`build_tables`, built once per (composition, name, settings) in this process."""
    comp, _ = parse_mixture(mixture)
    kw.setdefault("dT", DEFAULT_DT)
    key = hashlib.sha256(json.dumps([comp, name, bool(extrapolate_binaries), sorted(kw.items())],
                                    sort_keys=True, default=str).encode()).hexdigest()
    tb = _CACHE.get(key)
    if tb is None:
        tb = _CACHE[key] = build_tables(comp, name=name, extrapolate_binaries=extrapolate_binaries, **kw)
    return tb


def valid_range(mixture, extrapolate_binaries=False):
    """(lowest, highest) table temperature [K] of a mixture (without building tables)."""
    _, ions = parse_mixture(mixture)
    lo, hi, _ = _pair_range(ch.load(tuple(ions), "fitted"), extrapolate_binaries)
    return lo, hi


__all__ = ["parse_mixture", "build_tables", "mixture_tables", "MixtureTables", "valid_range"]
