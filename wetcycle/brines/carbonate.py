"""The carbonate system of the mixed-brine model: species, parameters, aqueous equilibria, pH.

Method
------
Species H+, OH-, HCO3-, CO3 2- and CO2(aq) (and the neutral ion pairs CaCO3(aq), MgCO3(aq) when
Ca or Mg is present, as in HMW 1984) join the ions of stages 1-2 whenever a composition holds
inorganic carbon or a CO2 pressure is fixed.  Their Pitzer parameters are those of
Harvie, Møller & Weare (1984), Geochim. Cosmochim. Acta 48, 723 (25 °C, recalled: flagged
"from memory", held constant in T), with the neutral CO2(aq) entering through lambda terms
(HMW 1984 eq. A8-A10 form).  The homogeneous equilibria (water dissociation; CO2(aq) + H2O =
H+ + HCO3-; HCO3- = H+ + CO3 2-) and, in an open system, CO2(g) = CO2(aq) are reactions whose
extents carry no sign constraint in the Gibbs-energy minimisation of
:func:`wetcycle.brines.equilibrium.equilibrate`; charge balance, conserved by every reaction,
closes the pH.  Equilibrium constants: Plummer & Busenberg (1982), Geochim. Cosmochim. Acta
46, 1011, valid 0-90 °C; Kw: Harned & Robinson (1940), 0-60 °C.

pH here is -log10(m_H gamma_H) on the Pitzer (HMW 1984) activity scale of single ions
(common practice in Pitzer models; it differs from an electrode pH by a liquid-junction term
in concentrated brines).

Validity: 273.15-323.15 K for the brine (the recalled 25 °C Pitzer parameters held constant;
the pairs declare that range, so paths stop or flag below 0 °C); the CO2 pressure up to 2e5 Pa
(ideal gas: fugacity = pressure, common practice below ~2 bar).
"""

from __future__ import annotations

import math
import tomllib
from functools import lru_cache
from pathlib import Path

import numpy as np

from ..errors import InputDataError
from ..salts.pitzer import MW

PATH = Path(__file__).parent / "data" / "carbonate.toml"
#: Species of the carbonate system, in the order they are appended to a Chemistry's ions.
CARBON_CATIONS = ("H",)
CARBON_ANIONS = ("OH", "HCO3", "CO3")
NEUTRALS = ("CO2",)
#: neutral ion pairs, present when their cation is
ION_PAIRS = {"Ca": "CaCO3(aq)", "Mg": "MgCO3(aq)"}
SPECIES = CARBON_CATIONS + CARBON_ANIONS + NEUTRALS + tuple(ION_PAIRS.values())
#: Composition keys that switch the carbonate system on (H and OH are set by the model).
INPUT_SPECIES = ("HCO3", "CO3", "CO2")
T_VALID = (273.15, 323.15)
ATM = 101325.0
CO2_PRESSURE_MAX_PA = 2.0e5
LN10 = math.log(10.0)
HMW = "Harvie, Møller & Weare (1984) Geochim. Cosmochim. Acta 48, 723, 25 °C (from memory); held constant in T"


def log10k_pb(coef, T):
    """log10 K = a + b T + c/T + d log10 T + e/T^2 (Plummer & Busenberg 1982 form), T [K]."""
    a, b, c, d, e = coef
    return a + b * T + c / T + d * math.log10(T) + e / (T * T)


#: The keys each table of ``data/carbonate.toml`` may hold.  A key outside its table's set is
#: refused: in TOML a key written after an array-of-tables header silently belongs to that
#: header's last entry (a mixing value placed after a ``[[pair]]`` would be ignored).
ALLOWED_KEYS = {
    "": {"species", "pair", "mixing", "reaction", "gas", "solid", "solubility"},
    "solubility": {"solid", "T_K", "molality", "source", "use"},
    "species": {"name", "charge", "molar_mass", "source"},
    "pair": {"ions", "beta", "alpha", "m_max", "source"},
    "mixing": {"null_pairs", "theta", "psi", "lambda", "source"},
    "reaction": {"name", "stoich", "hydration", "log10K", "T_min", "T_max", "source"},
    "gas": {"name", "stoich", "log10K", "T_min", "T_max", "source"},
    "solid": {"name", "mineral", "ions", "hydration", "log10K", "T_min", "T_max", "narrow", "keep_below", "source",
              "flag"},
}


def check_keys(doc, name=None):
    """Refuse a key of ``data/carbonate.toml`` outside :data:`ALLOWED_KEYS` in one line."""
    name = name or PATH.name
    def bad(table, entries):
        for i, e in enumerate(entries):
            extra = sorted(set(e) - ALLOWED_KEYS[table])
            if extra:
                where = f"[[{table}]] entry {i + 1}" if isinstance(doc.get(table), list) else f"[{table}]"
                raise InputDataError(f"{name}: {where}: key {extra[0]!r} is not allowed; allowed: "
                                     f"{', '.join(sorted(ALLOWED_KEYS[table]))}")
    top = sorted(set(doc) - ALLOWED_KEYS[""])
    if top:
        raise InputDataError(f"{name}: top-level key {top[0]!r} is not allowed; allowed: "
                             f"{', '.join(sorted(ALLOWED_KEYS['']))}")
    for table in ALLOWED_KEYS:
        if table and table in doc:
            v = doc[table]
            bad(table, v if isinstance(v, list) else [v])


@lru_cache(maxsize=None)
def data():
    """The parsed ``data/carbonate.toml``."""
    try:
        doc = tomllib.loads(PATH.read_text(encoding="utf-8"))
    except tomllib.TOMLDecodeError as exc:
        raise InputDataError(f"{PATH.name}: not valid TOML: {exc}") from None
    check_keys(doc)
    species = {s["name"]: (int(s["charge"]), float(s["molar_mass"])) for s in doc["species"]}
    pairs = {}
    for p in doc["pair"]:
        pairs[tuple(p["ions"])] = dict(beta=[float(v) for v in p["beta"]], alpha=[float(v) for v in p["alpha"]],
                                       m_max=float(p["m_max"]), source=p.get("source", HMW))
    mix = doc["mixing"]
    null = {tuple(p) for p in mix["null_pairs"]}
    theta = {tuple(e["ions"]): float(e["value"]) for e in mix["theta"]}
    psi = {tuple(e["ions"]): float(e["value"]) for e in mix["psi"]}
    lam = {tuple(e["ions"]): float(e["value"]) for e in mix["lambda"]}
    reactions = []
    for r in doc["reaction"]:
        reactions.append(dict(name=r["name"], stoich={k: float(v) for k, v in r["stoich"].items()},
                              hydration=float(r["hydration"]), coef=tuple(float(v) for v in r["log10K"]),
                              T_min=float(r["T_min"]), T_max=float(r["T_max"]), source=r["source"]))
    g = doc["gas"]
    gas = dict(name=g["name"], stoich={k: float(v) for k, v in g["stoich"].items()}, hydration=0.0,
               coef=tuple(float(v) for v in g["log10K"]), T_min=float(g["T_min"]), T_max=float(g["T_max"]),
               source=g["source"])
    solids = []
    for s in doc["solid"]:
        solids.append(dict(name=s["name"], mineral=s["mineral"], stoich=tuple((k, float(v)) for k, v in s["ions"].items()),
                           hydration=float(s["hydration"]), coef=tuple(float(v) for v in s["log10K"]),
                           T_min=float(s["T_min"]), T_max=float(s["T_max"]), narrow=bool(s["narrow"]),
                           keep_below=bool(s.get("keep_below", False)),
                           source=s["source"], flag=s["flag"]))
    return dict(species=species, pairs=pairs, null=null, theta=theta, psi=psi, lam=lam, reactions=reactions,
                gas=gas, solids=solids)


def pb_to_tform(coef, T_ref):
    """Exact conversion of a Plummer-Busenberg log10 K without the 1/T^2 term to the project's ln K form.

    ln K = c0 + c1 (1/T - 1/T_ref) + c2 ln(T/T_ref) + c3 (T - T_ref).
    """
    a, b, c, d, e = coef
    if e != 0.0:
        raise ValueError("a 1/T^2 term has no exact equivalent in the 4-term form")
    c0 = LN10 * log10k_pb(coef, T_ref)
    return (c0, LN10 * c, d, LN10 * b)


def reaction_columns(chem, T, co2_pressure_Pa=None):
    """(A (n, F), h (F,), ln K (F,), names) of the homogeneous equilibria and, if a CO2 pressure is set, the gas.

    Columns follow the solids' convention: one unit of extent releases A[:, f] of each species and
    h[f] water; the extent has no sign constraint.
    """
    d = data()
    rows = [r for r in d["reactions"] if all(sp in chem.ions for sp in r["stoich"])]
    lnk = [LN10 * log10k_pb(r["coef"], T) for r in rows]
    if co2_pressure_Pa is not None:
        rows.append(d["gas"])
        lnk.append(LN10 * log10k_pb(d["gas"]["coef"], T) + math.log(co2_pressure_Pa / ATM))
    A = np.zeros((chem.n, len(rows)))
    h = np.zeros(len(rows))
    for f, r in enumerate(rows):
        for sp, nu in r["stoich"].items():
            A[chem.index(sp), f] = nu
        h[f] = r["hydration"]
    return A, h, np.array(lnk), tuple(r["name"] for r in rows)


def seed(chem, b, W):
    """Give every species of the carbonate system a small positive amount, by the system's own reactions.

    ``b`` [mol] (order ``chem.ions``, zeros allowed for H, OH, CO2, HCO3, CO3) and ``W`` [mol water] ->
    (b, W) with every entry > 0, conserving charge, carbon and hydrogen: H2O -> H + OH;
    2 HCO3 -> CO2 + CO3 + H2O; CO3 + H2O -> HCO3 + OH; CO2 + H2O -> H + HCO3.  The minimisation
    then moves the speciation to equilibrium.  With no carbon at all (open system), CO2(aq) starts
    at 1e-12 mol taken from the gas.
    """
    b = np.array(b, dtype=float)
    iH, iOH, iHC, iC, iCO2 = (chem.index(s) for s in ("H", "OH", "HCO3", "CO3", "CO2"))
    eps_w = 1e-7 * W * MW
    b[iH] += eps_w
    b[iOH] += eps_w
    W -= eps_w
    ctot = b[iHC] + b[iC] + b[iCO2]
    if ctot <= 0.0:
        b[iCO2] = 1e-12
        ctot = 1e-12
    if b[iHC] <= 0.0:
        if b[iC] > 0.0:
            e = 0.01 * b[iC]
            b[iC] -= e
            W -= e
            b[iHC] += e
            b[iOH] += e
        else:
            e = 0.01 * b[iCO2]
            b[iCO2] -= e
            W -= e
            b[iH] += e
            b[iHC] += e
    e = 0.01 * b[iHC]
    if b[iCO2] <= 0.0 or b[iC] <= 0.0:
        b[iHC] -= 2 * e
        b[iCO2] += e
        b[iC] += e
        W += e
    for cat, pair in ION_PAIRS.items():
        if pair in chem.ions and b[chem.index(pair)] <= 0.0:
            e = 1e-3 * min(b[chem.index(cat)], b[iC])
            b[chem.index(cat)] -= e
            b[iC] -= e
            b[chem.index(pair)] += e
    return b, W


def ph(chem, molality, ln_gamma):
    """pH = -log10(m_H gamma_H) on the Pitzer single-ion scale (NaN without the carbonate system)."""
    if "H" not in chem.ions:
        return math.nan
    k = chem.index("H")
    return -(math.log(molality[k]) + ln_gamma[k]) / LN10


def alkalinity(chem, molality):
    """Carbonate alkalinity [eq kg-1] = m_HCO3 + 2 (m_CO3 + m_CaCO3(aq) + m_MgCO3(aq)) + m_OH - m_H."""
    if "H" not in chem.ions:
        return math.nan
    m = dict(zip(chem.ions, molality))
    return m["HCO3"] + 2 * (m["CO3"] + sum(m.get(p, 0.0) for p in ION_PAIRS.values())) + m["OH"] - m["H"]


def dic(chem, molality):
    """Dissolved inorganic carbon [mol kg-1] = m_CO2 + m_HCO3 + m_CO3 + the neutral ion pairs."""
    if "H" not in chem.ions:
        return math.nan
    m = dict(zip(chem.ions, molality))
    return m["CO2"] + m["HCO3"] + m["CO3"] + sum(m.get(p, 0.0) for p in ION_PAIRS.values())
