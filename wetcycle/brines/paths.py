"""Freezing and evaporation paths of a mixed brine, mutual deliquescence, and chemical divides.

Method
------
A path is a sequence of equilibrium states (:func:`wetcycle.brines.equilibrium.equilibrate`)
of a closed system: on cooling at fixed water (``freeze``) or on removing water at fixed
temperature (``evaporate``), each step started from the previous one.  ``mode="fractional"``
removes every solid (and ice) from the reacting system as soon as it forms (Rayleigh-type
fractional crystallisation, common practice in evaporite and sea-ice geochemistry).  The
temperature at which the last liquid freezes (the eutectic of the mixture) and the water
removed when the last liquid dries are found by bisection to 1e-3 K and 1e-6 respectively.

Chemical divides (Hardie & Eugster 1970, Mineral. Soc. Am. Spec. Pap. 3, 273; for Mars
Tosca & McLennan 2006, Earth Planet. Sci. Lett. 241, 21): when a mineral made of two ions
(water aside) starts to precipitate, the ion present in the brine in less than the
mineral's stoichiometric proportion is drawn down toward exhaustion and the other is
enriched; the brine continues on the branch rich in the enriched ion.  Each event records
the exhausted and the enriched ion from the equivalent ratio at first appearance.

Validity: each step is checked against the temperature range of every binary pair the
brine uses (design decision 9).  By default a path stops at the first limit it meets and
says so (``stopped_by``); ``extrapolate_binaries=True`` continues with extrapolated
binaries and flags every such step (``validity_flag`` bit 1).  Solids whose ln K has no
data at a temperature (double salts outside 288-308 K) are left out and listed.
"""

from __future__ import annotations

import math

import numpy as np

from .. import __version__
from ..errors import ConfigError, ValidityError, shown
from ..salts.pitzer import MW
from . import carbonate as co
from . import chemistry as ch
from .equilibrium import equilibrate

#: Largest charge imbalance accepted in a composition: |sum z m| / (half the sum of |z| m).
MAX_IMBALANCE = 0.01
CAUTION = ("Model estimates from a Pitzer model whose low-temperature mixing terms are the project's fits to few "
           "published points; not evidence of liquid water or life. Planetary-protection decisions belong to the "
           "official policy and its review bodies.")
FLAG_MASKS = (1, 2, 4)
FLAG_MEANINGS = "binary_extrapolated beyond_binary_molality not_converged"
#: mutual deliquescence: a liquid whose pair molality exceeds this multiple of the binary's m_max is not trusted
MDRH_PAIR_LIMIT = 1.25


def _ion_list():
    return ", ".join(tuple(ch.IONS) + co.INPUT_SPECIES + ("DIC",))


def _charge(ion):
    return ch.ALL_SPECIES[ion][0]


def check_composition(composition, field="composition"):
    """Validate ``{ion: mol/kg water}``; return (ions tuple, molalities array, imbalance fraction).

    Ion names are those of :data:`wetcycle.brines.chemistry.IONS` without charge, plus the
    carbonate system's ``HCO3`` and ``CO3`` (the alkalinity) and ``CO2`` (dissolved CO2, neutral:
    the inorganic carbon beyond the alkalinity).  Instead of those three, ``DIC`` gives the total
    inorganic carbon and the carbonate alkalinity closes the charge of the other ions (it must lie
    between 0 and 2 DIC); the returned table then holds the equivalent HCO3, CO3 and CO2.  Zero
    entries are dropped.  A charge imbalance above 1 % is refused; a smaller one is removed by
    scaling cations and anions toward their mean charge (reported by the callers).
    """
    if not isinstance(composition, dict) or not composition:
        raise ConfigError(f"{field}: expected a table of ion = mol/kg water, got {shown(composition)}")
    vals = {}
    for k, v in composition.items():
        if k not in ch.IONS and k not in co.INPUT_SPECIES and k != "DIC":
            raise ConfigError(f"{field}: ion {k!r} is not known; allowed: {_ion_list()} (names without charge)")
        if isinstance(v, bool) or not isinstance(v, (int, float, np.integer, np.floating)) or not math.isfinite(v) or v < 0:
            raise ConfigError(f"{field}.{k}: {shown(v)} is not allowed; allowed: a molality >= 0 [mol/kg water]")
        if v > 0:
            vals[k] = float(v)
    if "DIC" in vals:
        vals = _from_dic(vals, field)
    cats = [i for i in vals if _charge(i) > 0]
    ans = [i for i in vals if _charge(i) < 0]
    if not cats or not ans:
        raise ConfigError(f"{field}: needs at least one cation and one anion with a molality > 0, got {sorted(vals)}")
    qp = sum(vals[i] * _charge(i) for i in cats)
    qn = sum(-vals[i] * _charge(i) for i in ans)
    imbalance = (qp - qn) / (0.5 * (qp + qn))
    if abs(imbalance) > MAX_IMBALANCE:
        raise ConfigError(f"{field}: charge imbalance {100 * imbalance:+.2f} % (cations {qp:.6g}, anions {qn:.6g} "
                          f"eq/kg) exceeds 1 %; allowed: a charge-balanced composition")
    return vals, imbalance


def _from_dic(vals, field):
    """Replace DIC by HCO3, CO3, CO2 with the carbonate alkalinity closing the other ions' charge."""
    given = [k for k in co.INPUT_SPECIES if k in vals]
    if given:
        raise ConfigError(f"{field}.DIC: given with {', '.join(given)}; allowed: either DIC (the alkalinity then "
                          "closes the charge) or HCO3/CO3/CO2")
    dic = vals.pop("DIC")
    alk = sum(v * _charge(k) for k, v in vals.items())
    if not -1e-12 * dic <= alk <= 2 * dic * (1 + 1e-12):
        raise ConfigError(f"{field}.DIC: the other ions leave an alkalinity of {alk:.6g} eq/kg for DIC {dic:.6g} mol/kg; "
                          "allowed: an alkalinity between 0 and 2 DIC (cations in excess of the strong anions)")
    alk = min(max(alk, 0.0), 2 * dic)
    co3 = max(alk - dic, 0.0)
    hco3 = alk - 2 * co3
    out = dict(vals)
    for k, v in (("HCO3", hco3), ("CO3", co3), ("CO2", dic - hco3 - co3)):
        if v > 1e-15 * dic:
            out[k] = v
    return out


def _neutral(chem, vals):
    b = np.array([vals.get(i, 0.0) for i in chem.ions])
    qp = float(np.sum(np.where(chem.z > 0, b * chem.z, 0.0)))
    qn = float(np.sum(np.where(chem.z < 0, -b * chem.z, 0.0)))
    q = 0.5 * (qp + qn)
    return np.where(chem.z > 0, b * q / qp, np.where(chem.z < 0, b * q / qn, b))


def _initial(chem, vals):
    """(b [mol], W [mol]) per kg of initial water; the carbonate species seeded positive when present."""
    b, W = _neutral(chem, vals), 1.0 / MW
    if chem.carbon:
        b, W = co.seed(chem, b, W)
    return b, W


def check_co2_pressure(p, field="co2_pressure_Pa"):
    """None (closed system) or a CO2 pressure [Pa] in (0, 2e5]."""
    if p is None:
        return None
    if isinstance(p, bool) or not isinstance(p, (int, float, np.integer, np.floating)) or not math.isfinite(p) \
            or not 0 < p <= co.CO2_PRESSURE_MAX_PA:
        raise ConfigError(f"{field}: {shown(p)} is not allowed; allowed: a CO2 pressure > 0 and <= "
                          f"{co.CO2_PRESSURE_MAX_PA:g} Pa (omit it for a closed system)")
    return float(p)


def _load_chem(vals, mixing, co2):
    ions = tuple(vals) + (("CO2",) if co2 is not None and not any(i in co.INPUT_SPECIES for i in vals) else ())
    return ch.load(ions, mixing)


class _Checker:
    """Temperature-validity bookkeeping of a path (design decision 9)."""

    def __init__(self, chem, extrapolate):
        self.chem = chem
        self.extrapolate = extrapolate
        self.extrapolated = set()

    def check(self, T, m_or_b):
        """(ok, flag bits, limiting pair description)."""
        used = self.chem.pair_limits(m_or_b)
        low = [p for p in used if T < p.T_min - 1e-9]
        high = [p for p in used if T > p.T_max + 1e-9]
        bad = low + high
        if not bad and self.chem.carbon:
            lo, hi = co.T_VALID
            if not (lo - 1e-9 <= T <= hi + 1e-9):
                desc = (f"carbonate system (HMW 1984 25 °C parameters held constant) valid {lo:g}-{hi:g} K")
                if self.extrapolate:
                    self.extrapolated.add(f"carbonate system ({lo:g}-{hi:g} K)")
                    return True, 1, desc
                return False, 0, desc
        if not bad:
            return True, 0, ""
        p = max(low, key=lambda q: q.T_min) if low else min(high, key=lambda q: q.T_max)
        desc = f"binary {p.system} ({p.cation}-{p.anion}) valid {p.T_min:g}-{p.T_max:g} K"
        if self.extrapolate:
            self.extrapolated.update(f"{q.system} ({q.T_min:g}-{q.T_max:g} K)" for q in bad)
            return True, 1, desc
        return False, 0, desc


def _flags_for(chem, r, base):
    f = base
    if r.liquid and chem.pair_excess(r.molality) > 1.0 + 1e-9:
        f |= 2
    if not r.converged:
        f |= 4
    return f


_CARBON = ("HCO3", "CO3")


def _divide(chem, solid, m):
    """(exhausted ion, enriched ion, branch text) when ``solid`` first appears in a brine of molalities m.

    A carbonate mineral compares its cation with the carbonate alkalinity (HCO3 + 2 CO3 + OH - H,
    in equivalents), as Hardie & Eugster (1970) compare Ca with alkalinity at calcite: the cation in
    excess (in equivalents) is enriched; if alkalinity is in excess the brine takes the alkaline
    (carbonate) branch.
    """
    if solid.origin == "ice":
        return "", "", ""
    if chem.carbon and any(i in _CARBON for i, _ in solid.stoich):
        cats = [(i, nu) for i, nu in solid.stoich if i not in _CARBON]
        if len(cats) != 1:
            return "", "", ""
        cat = cats[0][0]
        eq_cat = m[chem.index(cat)] * ch.ALL_SPECIES[cat][0]
        alk = co.alkalinity(chem, m)
        if eq_cat < alk:
            return cat, "alkalinity", f"alkaline (carbonate-rich), {cat}-poor"
        return "alkalinity", cat, f"{cat}-rich, carbonate-poor"
    if len(solid.stoich) != 2:
        return "", "", ""
    (i1, n1), (i2, n2) = solid.stoich
    r1 = m[chem.index(i1)] / n1
    r2 = m[chem.index(i2)] / n2
    ex, en = (i1, i2) if r1 < r2 else (i2, i1)
    return ex, en, f"{en}-rich, {ex}-poor"


def _events(chem, coord, states, final_at=math.nan):
    """First appearance of each solid along a path, with its divide.

    A solid first met in the liquid-free state at the end of a path (the last one to join at the
    eutectic or at drying) is dated ``final_at`` (the eutectic temperature or drying point).
    """
    seen = set()
    ev = []
    for k, r in enumerate(states):
        at = float(coord[k]) if (r.liquid or math.isnan(final_at)) else float(final_at)
        for name, x in zip(r.solids, r.solid_moles):
            if x > 0 and name not in seen:
                seen.add(name)
                prev = states[k - 1] if k > 0 else None
                m = prev.molality if (prev is not None and prev.liquid) else r.molality
                s = chem.solid(name)
                ex, en, br = _divide(chem, s, m) if np.all(np.isfinite(m)) else ("", "", "")
                ev.append(dict(solid=name, mineral=s.mineral, at=at, exhausted=ex, enriched=en, branch=br))
    return ev


def _dataset(chem, coord_name, coord, coord_attrs, states, flags, events, attrs, extra_coords=None):
    import xarray as xr

    names = list(chem.solid_names)
    nT = len(states)
    solid = np.zeros((nT, len(names)))
    mol = np.full((nT, chem.n), np.nan)
    aw = np.full(nT, np.nan)
    ionic = np.full(nT, np.nan)
    ice = np.zeros(nT)
    liq = np.zeros(nT)
    for k, r in enumerate(states):
        for nm, x in zip(r.solids, r.cum_moles if hasattr(r, "cum_moles") else r.solid_moles):
            solid[k, names.index(nm)] = x
        ice[k] = solid[k, names.index(ch.ICE)] * MW if ch.ICE in names else 0.0
        liq[k] = r.liquid_water_mol * MW
        if r.liquid:
            mol[k] = r.molality
            aw[k] = math.exp(r.ln_aw)
            ionic[k] = r.ionic_strength
    minerals = [chem.solid(n).mineral or n for n in names]
    ds = xr.Dataset(
        data_vars=dict(
            solid_moles=((coord_name, "solid"), solid, dict(
                units="mol kg-1", long_name="moles of each solid per kg of initial water (cumulative in fractional mode)")),
            ice_mass=((coord_name,), ice, dict(units="kg kg-1", long_name="ice per kg of initial water")),
            liquid_water_mass=((coord_name,), liq, dict(units="kg kg-1",
                                                       long_name="liquid water of the brine per kg of initial water")),
            ion_molality=((coord_name, "ion"), mol, dict(units="mol kg-1", long_name="molality of each ion in the brine")),
            water_activity=((coord_name,), aw, dict(units="1", long_name="water activity of the brine")),
            ionic_strength=((coord_name,), ionic, dict(units="mol kg-1", long_name="ionic strength of the brine")),
            validity_flag=((coord_name,), np.asarray(flags, dtype=np.int8), dict(
                long_name="model-limit flags", flag_masks=np.array(FLAG_MASKS, dtype=np.int8),
                flag_meanings=FLAG_MEANINGS)),
            event_solid=(("event",), np.array([e["solid"] for e in events], dtype=object),
                         dict(long_name="solid in order of first appearance")),
            event_at=(("event",), np.array([e["at"] for e in events], dtype=float),
                      dict(units=coord_attrs.get("units", ""), long_name=f"{coord_name} at first appearance")),
            event_exhausted_ion=(("event",), np.array([e["exhausted"] for e in events], dtype=object),
                                 dict(long_name="ion drawn toward exhaustion by this mineral (chemical divide)")),
            event_enriched_ion=(("event",), np.array([e["enriched"] for e in events], dtype=object),
                                dict(long_name="ion enriched in the brine by this mineral (chemical divide)")),
            event_branch=(("event",), np.array([e["branch"] for e in events], dtype=object),
                          dict(long_name="brine branch after the divide (Hardie & Eugster 1970)")),
        ),
        coords={coord_name: (coord_name, np.asarray(coord, dtype=float), coord_attrs),
                "solid": ("solid", np.array(names, dtype=object)),
                "mineral": ("solid", np.array(minerals, dtype=object)),
                "ion": ("ion", np.array(chem.ions, dtype=object))},
    )
    if chem.carbon:
        ph = np.full(nT, np.nan)
        alk = np.full(nT, np.nan)
        dic = np.full(nT, np.nan)
        for k, r in enumerate(states):
            if r.liquid:
                ph[k] = r.ph
                alk[k] = co.alkalinity(chem, r.molality)
                dic[k] = co.dic(chem, r.molality)
        ds["pH"] = ((coord_name,), ph, dict(units="1", long_name="pH of the brine, -log10(m_H gamma_H) on the "
                                                                  "Pitzer (HMW 1984) single-ion scale"))
        ds["alkalinity"] = ((coord_name,), alk, dict(units="mol kg-1", long_name="carbonate alkalinity of the brine, "
                                                                                  "m_HCO3 + 2 m_CO3 + m_OH - m_H (eq kg-1)"))
        ds["dissolved_inorganic_carbon"] = ((coord_name,), dic, dict(
            units="mol kg-1", long_name="dissolved inorganic carbon of the brine, m_CO2 + m_HCO3 + m_CO3"))
    for k, v in (extra_coords or {}).items():
        ds = ds.assign_coords({k: v})
    ds.attrs.update(dict(Conventions="CF-1.8", title="wetcycle mixed-brine path", wetcycle_version=__version__,
                         mixing_parameters=chem.mixing, caution=CAUTION))
    ds.attrs.update(attrs)
    return ds


def _start(chem, r):
    if r is None or not r.liquid:
        return None
    return {n: x for n, x in zip(r.solids, r.solid_moles) if x > 0}


def _solve(chem, b, W, T, exclude, start, co2=None):
    return equilibrate(chem, b, W, T, exclude=exclude, start=start, co2_pressure_Pa=co2)


def freeze(composition, *, temperature_start_K=None, temperature_end_K=None, step_K=0.25, mode="equilibrium",
           exclude=(), mixing="fitted", extrapolate_binaries=False, co2_pressure_Pa=None):
    """Equilibrium (or fractional) freezing path of a brine at fixed water.

    Parameters
    ----------
    composition : dict {ion: mol/kg water}
        Ions Na, K, Mg, Ca, Cl, SO4, ClO4, HCO3, CO3 (names without charge) and CO2 (dissolved,
        neutral).  Charge imbalance <= 1 %.  Any of HCO3, CO3, CO2 (or ``co2_pressure_Pa``) brings
        in the carbonate system: H, OH, HCO3, CO3, CO2(aq), pH, carbonate solids.
    temperature_start_K : float [K], default 273.15 K or the highest temperature every pair allows
    temperature_end_K : float [K], default 150 K; the path ends earlier at the mixture's eutectic
        or (without ``extrapolate_binaries``) at the first binary validity limit
    step_K : float [K] > 0
    mode : {"equilibrium", "fractional"}
    exclude : solids (names or minerals) to leave out: a metastable path
    mixing : {"fitted", "start", "none"}; "none" is the theta = psi = 0 baseline
    extrapolate_binaries : bool; continue below binary T_min with flagged steps
    co2_pressure_Pa : float [Pa] or None; a fixed CO2 pressure (open system) or None (closed)

    Returns
    -------
    xarray.Dataset over ``temperature`` [K] with ``solid_moles`` (temperature, solid) [mol per kg
    of initial water], ``ice_mass``, ``liquid_water_mass`` [kg per kg of initial water],
    ``ion_molality`` (temperature, ion), ``water_activity``, ``ionic_strength``,
    ``validity_flag``, with the carbonate system ``pH``, ``alkalinity`` and
    ``dissolved_inorganic_carbon``, the mineral sequence with its chemical divides on ``event``, and
    attributes ``eutectic_temperature_K`` (NaN if not reached), ``eutectic_solids``,
    ``stopped_by`` and ``binaries_extrapolated``.
    """
    vals, imbalance = check_composition(composition)
    if mode not in ("equilibrium", "fractional"):
        raise ConfigError(f"mode: {mode!r} is not allowed; allowed: equilibrium, fractional")
    if not (isinstance(step_K, (int, float)) and step_K > 0 and math.isfinite(step_K)):
        raise ConfigError(f"step_K: {shown(step_K)} is not allowed; allowed: a positive number of kelvin")
    co2 = check_co2_pressure(co2_pressure_Pa)
    chem = _load_chem(vals, mixing, co2)
    b0, W0 = _initial(chem, vals)
    T_hi = min(p.T_max for p in chem.pairs)
    t0 = min(273.15, T_hi) if temperature_start_K is None else float(temperature_start_K)
    t1 = 150.0 if temperature_end_K is None else float(temperature_end_K)
    if not (150.0 <= t1 < t0 <= 373.15):
        raise ConfigError(f"temperature: start {t0:g} K and end {t1:g} K not allowed; allowed: "
                          "150 K <= end < start <= 373.15 K")
    chk = _Checker(chem, extrapolate_binaries)
    temps, states, flags = [], [], []
    b, W = b0.copy(), W0
    cum = np.zeros(len(chem.solids))
    prev = None
    stopped_by = ""
    eut_T, eut_solids = math.nan, []
    n = int(math.floor((t0 - t1) / step_K + 1e-9)) + 1
    grid = t0 - step_K * np.arange(n)
    for T in grid:
        m_now = prev.molality if (prev is not None and prev.liquid) else b
        ok, fbit, desc = chk.check(T, m_now)
        if not ok:
            stopped_by = f"{desc}: path stopped at {temps[-1] if temps else T:g} K (design decision 9)"
            break
        r = _solve(chem, b, W, T, exclude, _start(chem, prev), co2)
        if not r.liquid and r.converged and prev is not None and prev.liquid:
            eut_T, eut_state = _bisect_eutectic(chem, b, W, temps[-1], T, exclude, prev, co2)
            eut_solids = [nm for nm, x in zip(eut_state.solids, eut_state.solid_moles) if x > 0]
        if mode == "fractional":
            _accumulate(chem, r, cum)
            r.cum_moles = cum[[chem.solid_names.index(nm) for nm in r.solids]].copy()
            if r.liquid:
                b, W = r.ion_moles.copy(), r.liquid_water_mol
        temps.append(T)
        states.append(r)
        flags.append(_flags_for(chem, r, fbit))
        prev = r
        if not r.liquid:
            if not r.converged:
                stopped_by = f"no equilibrium at {T:g} K: {r.message}"
            elif math.isnan(eut_T):
                stopped_by = "no liquid at the start temperature"
            break
        if not r.converged:
            stopped_by = f"equilibrium not found at {T:g} K: {r.message}"
            break
    if not states:
        raise ValidityError(f"temperature_start_K: {t0:g} K is outside the validity of the binaries this "
                            f"composition needs ({stopped_by})")
    events = _events(chem, temps, states, eut_T)
    not_considered = sorted({n for r in states for n in r.not_considered})
    attrs = dict(
        path="freezing", mode=mode, composition=_comp_text(vals), charge_imbalance_removed=float(imbalance),
        eutectic_temperature_K=float(eut_T), eutectic_solids=", ".join(eut_solids),
        stopped_by=stopped_by or ("eutectic" if not math.isnan(eut_T) else "end temperature"),
        binaries_extrapolated=", ".join(sorted(chk.extrapolated)), solids_not_considered=", ".join(not_considered),
        excluded_on_request=", ".join(exclude), **_co2_attrs(chem, co2),
    )
    return _dataset(chem, "temperature", temps, dict(units="K", standard_name="temperature",
                                                     long_name="temperature of the system"),
                    states, flags, events, attrs)


def _accumulate(chem, r, cum):
    for nm, x in zip(r.solids, r.solid_moles):
        cum[chem.solid_names.index(nm)] += x


def _comp_text(vals):
    return ", ".join(f"{k}={v:g}" for k, v in vals.items()) + " mol/kg water"


def _co2_attrs(chem, co2):
    if not chem.carbon:
        return {}
    return dict(carbonate_system="open" if co2 is not None else "closed",
                co2_pressure_Pa=float(co2) if co2 is not None else math.nan)


def _bisect_eutectic(chem, b, W, T_liq, T_sol, exclude, prev, co2=None):
    lo, hi = T_sol, T_liq
    last_liq = prev
    sol = None
    while hi - lo > 1e-3:
        mid = 0.5 * (lo + hi)
        r = _solve(chem, b, W, mid, exclude, _start(chem, last_liq), co2)
        if r.liquid:
            hi, last_liq = mid, r
        else:
            lo, sol = mid, r
    if sol is None:
        sol = _solve(chem, b, W, lo, exclude, None, co2)
    return 0.5 * (lo + hi), sol


def evaporate(composition, *, temperature_K, step=0.05, concentration_factor_end=1e5, mode="equilibrium",
              exclude=(), mixing="fitted", extrapolate_binaries=False, co2_pressure_Pa=None):
    """Equilibrium (or fractional) evaporation path of a brine at fixed temperature.

    Parameters
    ----------
    composition : dict {ion: mol/kg water} (as :func:`freeze`)
    temperature_K : float [K]; ice takes part below 273.16 K
    step : float > 0; step in ln(concentration factor), the factor being initial water / remaining water
    concentration_factor_end : float > 1; the path ends earlier when the last liquid dries
    mode, exclude, mixing, extrapolate_binaries, co2_pressure_Pa : as :func:`freeze`

    Returns
    -------
    xarray.Dataset over ``water_removed`` [fraction of the initial water], with coordinate
    ``concentration_factor``, the variables of :func:`freeze`, and attributes
    ``dry_water_removed``, ``dry_solids`` and ``dry_water_activity`` (the water activity of
    the last liquid: the mutual deliquescence RH of the solids it leaves; NaN when the brine
    keeps a saturated liquid to the last drop, as over anhydrous salts alone, and then
    ``last_brine_water_activity`` is that RH).
    """
    vals, imbalance = check_composition(composition)
    if mode not in ("equilibrium", "fractional"):
        raise ConfigError(f"mode: {mode!r} is not allowed; allowed: equilibrium, fractional")
    T = float(temperature_K)
    if not (150.0 <= T <= 373.15):
        raise ConfigError(f"temperature_K: {T:g} is not allowed; allowed: 150-373.15 K")
    if not (step > 0 and math.isfinite(step)):
        raise ConfigError(f"step: {shown(step)} is not allowed; allowed: a positive step in ln(concentration factor)")
    co2 = check_co2_pressure(co2_pressure_Pa)
    chem = _load_chem(vals, mixing, co2)
    b0, W0 = _initial(chem, vals)
    chk = _Checker(chem, extrapolate_binaries)
    ok, fbit, desc = chk.check(T, b0)
    if not ok:
        raise ValidityError(f"temperature_K: {T:g} K is outside the {desc} (design decision 9; "
                            "extrapolate_binaries=True continues with flagged results)")
    fr, states, flags = [], [], []
    prev = None
    b, Wsys = b0.copy(), W0
    removed_total = 0.0
    cum = np.zeros(len(chem.solids))
    dry = dict(f=math.nan, solids=[], aw=math.nan)
    stopped_by = "end concentration factor"
    k = 0
    while True:
        cf = math.exp(step * k)
        if cf > concentration_factor_end * (1 + 1e-12):
            break
        f = 1.0 - 1.0 / cf
        if mode == "equilibrium":
            Wk = W0 * (1.0 - f)
        else:
            Wk = Wsys - (W0 * f - removed_total)
            if Wk <= 0:
                Wk = 0.0
        r = _solve(chem, b, Wk, T, exclude, _start(chem, prev), co2) if Wk > 0 else None
        if r is None or not r.liquid:
            if prev is not None and prev.liquid:
                dry = _bisect_dry(chem, b, W0, fr[-1], f, T, exclude, prev, mode, Wsys, removed_total, co2)
            stopped_by = "the last liquid dried" if prev is not None else "no liquid at the start"
            if r is not None and r.converged and mode == "equilibrium":
                fr.append(f)
                states.append(r)
                flags.append(_flags_for(chem, r, fbit))
            break
        if mode == "fractional":
            _accumulate(chem, r, cum)
            r.cum_moles = cum[[chem.solid_names.index(nm) for nm in r.solids]].copy()
            removed_total = W0 * f
            b, Wsys = r.ion_moles.copy(), r.liquid_water_mol
        fr.append(f)
        states.append(r)
        flags.append(_flags_for(chem, r, fbit))
        prev = r
        if not r.converged:
            stopped_by = f"equilibrium not found at water removed {f:.6g}: {r.message}"
            break
        k += 1
    events = _events(chem, fr, states, dry["f"])
    liquid_states = [r for r in states if r.liquid]
    last_aw = math.exp(liquid_states[-1].ln_aw) if liquid_states else math.nan
    not_considered = sorted({n for r in states for n in r.not_considered})
    fr_arr = np.asarray(fr, dtype=float)
    attrs = dict(
        path="evaporation", mode=mode, temperature_K=T, composition=_comp_text(vals),
        charge_imbalance_removed=float(imbalance), dry_water_removed=float(dry["f"]),
        dry_solids=", ".join(dry["solids"]), dry_water_activity=float(dry["aw"]),
        last_brine_water_activity=float(last_aw), stopped_by=stopped_by,
        binaries_extrapolated=", ".join(sorted(chk.extrapolated)), solids_not_considered=", ".join(not_considered),
        excluded_on_request=", ".join(exclude), **_co2_attrs(chem, co2),
    )
    cfc = ("water_removed", 1.0 / (1.0 - fr_arr), dict(units="1", long_name="concentration factor: initial water / remaining water"))
    return _dataset(chem, "water_removed", fr_arr, dict(units="1", long_name="fraction of the initial water removed"),
                    states, flags, events, attrs, extra_coords={"concentration_factor": cfc})


def _bisect_dry(chem, b, W0, f_liq, f_dry, T, exclude, prev, mode, Wsys, removed_total, co2=None):
    lo, hi = f_liq, f_dry
    last = prev
    while hi - lo > 1e-6 * max(1.0 - lo, 1e-9):
        mid = 0.5 * (lo + hi)
        if mode == "equilibrium":
            Wm = W0 * (1.0 - mid)
        else:
            Wm = Wsys - (W0 * mid - removed_total)
        r = _solve(chem, b, Wm, T, exclude, _start(chem, last), co2) if Wm > 0 else None
        if r is not None and r.liquid:
            lo, last = mid, r
        else:
            hi = mid
    solids = [nm for nm, x in zip(last.solids, last.solid_moles) if x > 0]
    return dict(f=0.5 * (lo + hi), solids=solids, aw=math.exp(last.ln_aw))


def _solid_ions(chem_all, solids):
    """Ion totals [mol] of a mixture of solids given as {binary system or solid name: mol}."""
    if not isinstance(solids, dict) or not solids:
        raise ConfigError(f"solids: expected a table of salt name = moles, got {shown(solids)}")
    binaries = {s.name.lower(): s for s in ch.binary_pairs().values()}
    tot = {}
    for name, mol in solids.items():
        if isinstance(mol, bool) or not isinstance(mol, (int, float)) or not (mol > 0 and math.isfinite(mol)):
            raise ConfigError(f"solids.{name}: {shown(mol)} is not allowed; allowed: moles > 0")
        s = binaries.get(str(name).lower())
        if s is not None:
            stoich = ((ch.ion_name(s.cation), s.nu_cation), (ch.ion_name(s.anion), s.nu_anion))
        else:
            try:
                try:
                    stoich = chem_all.solid(name).stoich
                except Exception:
                    # carbonate solids (calcite, nahcolite, natron, ...) live in the carbonate chemistry
                    stoich = ch.load(tuple(ch.IONS) + ("HCO3",), "fitted").solid(name).stoich
            except Exception:
                raise ConfigError(f"solids: {name!r} is not a salt system or solid; allowed: "
                                  f"{', '.join(sorted(x.name for x in ch.binary_pairs().values()))} or a solid "
                                  "name such as 'MgCl2·6H2O'") from None
            if not stoich:
                raise ConfigError("solids: ice is not a salt; allowed: salt systems or salt solids")
        for ion, nu in stoich:
            tot[ion] = tot.get(ion, 0.0) + nu * mol
    return tot


def mutual_deliquescence_rh(solids, temperature_K, *, mixing="fitted", extrapolate_binaries=False, exclude=(),
                            details=False, co2_pressure_Pa=None):
    """RH (fraction, liquid reference) at which a mixture of salts first forms brine at T.

    Method: equilibrium is path-independent, so the first brine to form on wetting is the
    last to dry on evaporation at the same temperature: the water activity of the liquid
    saturated with the solids the mixture leaves (its eutonic point; e.g. Tang &
    Munkelwitz 1993, Atmos. Environ. 27A, 467, for the concept).  Ice is left out: below
    the mixture's eutectic the first brine is metastable with respect to ice.

    Parameters
    ----------
    solids : dict {salt system or solid name: mol}, e.g. {"NaCl": 1, "MgCl2": 1}
    temperature_K : float [K]
    exclude : solids to leave out (a metastable eutonic), as in :func:`freeze`
    details : bool; return a dict (rh, solids at the eutonic, flags) instead of the RH
    co2_pressure_Pa : float [Pa] or None; with carbonate solids, a fixed CO2 pressure (open system);
        None: closed (the carbon of the solids is kept)

    Returns
    -------
    float, the mutual deliquescence RH [-]; or a dict if ``details``.
    """
    chem_all = ch.load(tuple(ch.IONS), "fitted")
    tot = _solid_ions(chem_all, solids)
    scale = 1.0 / max(tot.values())
    comp = {k: v * scale for k, v in tot.items()}
    vals, _ = check_composition(comp, "solids")
    co2 = check_co2_pressure(co2_pressure_Pa)
    chem = _load_chem(vals, mixing, co2)
    T = float(temperature_K)
    chk = _Checker(chem, extrapolate_binaries)
    ok, fbit, desc = chk.check(T, np.ones(chem.n))
    if not ok:
        raise ValidityError(f"temperature_K: {T:g} K is outside the {desc} (design decision 9; "
                            "extrapolate_binaries=True gives a flagged value)")
    b, _ = _initial(chem, vals)
    exclude = tuple(exclude) + ((ch.ICE,) if T <= ch.T_ICE_MAX else ())
    # bracket: a dilute brine (I ~ 0.5 mol/kg) that holds everything, and a vanishing amount of water
    W_hi = float(np.dot(b, chem.z ** 2)) / (2 * 0.5) / MW
    r_hi = equilibrate(chem, b, W_hi, T, exclude=exclude, co2_pressure_Pa=co2)
    if not r_hi.liquid:
        raise ValidityError("solids: no liquid forms even in dilute water; cannot locate the deliquescence point")
    # a liquid holding a pair far beyond its binary's m_max is outside the model (the Pitzer polynomial can
    # show spurious minima there): such states count as dry
    lo, hi = math.log(W_hi), math.log(W_hi) - 40.0
    last = r_hi
    for _ in range(80):
        mid = 0.5 * (lo + hi)
        r = equilibrate(chem, b, math.exp(mid), T, exclude=exclude, start=_start(chem, last), co2_pressure_Pa=co2)
        if r.liquid and r.converged and chem.pair_excess(r.molality) <= MDRH_PAIR_LIMIT:
            lo, last = mid, r
        else:
            hi = mid
        if lo - hi < 1e-7:
            break
    rh = math.exp(last.ln_aw)
    if not details:
        return rh
    return dict(rh=rh, solids=[nm for nm, x in zip(last.solids, last.solid_moles) if x > 0],
                molality=dict(zip(chem.ions, last.molality.tolist())), binaries_extrapolated=sorted(chk.extrapolated),
                flag=_flags_for(chem, last, fbit))
