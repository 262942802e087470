"""Ions, binary pairs, mixing parameters and solids assembled into one mixed-brine model.

A :class:`Chemistry` is the parameter object of the mixed-brine model for a set of
ions: the binary Pitzer parameters of every cation-anion pair (read through
:mod:`wetcycle.salts`, so a single salt gives exactly the binary system's numbers),
the mixing parameters theta and psi (``data/mixing.toml``, fitted by
``scripts/fit_mixing.py``), and every solid that can form from those ions, each
with its ln K(T) and validity range: the solids of the binaries, the double salts of
``data/mixing.toml`` and ice (ln K = ln a_w,ice(T), Murphy & Koop 2005).

Binary pairs missing from the binary registry (K2SO4, CaSO4, KClO4) are binary data
files of the same format in ``data/binaries/``, fitted with ``scripts/fit_salts.py``.

Validity: each pair is valid over its binary's T_min-T_max; :meth:`Chemistry.pair_limits`
says which pairs a brine uses and their limits, so callers stop (or flag) a path
there instead of extrapolating silently (design decision 9).
"""

from __future__ import annotations

import math
import re
import tomllib
from dataclasses import dataclass, field
from functools import cached_property, lru_cache
from pathlib import Path

import numpy as np

from .. import salts
from ..errors import InputDataError, UnknownNameError, ValidityError
from ..salts.pitzer import MW, T_REF
from ..water import ice_activity_kernel
from . import carbonate as co
from . import efunc
from . import pitzer as mpz

DATA_DIR = Path(__file__).parent / "data"
BINARY_DIR = DATA_DIR / "binaries"
MIXING_PATH = DATA_DIR / "mixing.toml"
FIT_MARKER = "# ==== fitted by scripts/fit_mixing.py: do not edit below this line ===="
FLAGS = ("read", "from memory", "fitted", "common practice")

#: Ions of stages 1 and 2: charge and molar mass [kg mol-1] (IUPAC 2013 abridged atomic weights).
IONS = {
    "Na": (1, 0.02298977),
    "K": (1, 0.0390983),
    "Mg": (2, 0.024305),
    "Ca": (2, 0.040078),
    "Cl": (-1, 0.035453),
    "SO4": (-2, 0.0960626),
    "ClO4": (-1, 0.0994513),
}
#: Stage 1-2 ions and the carbonate species (stage 3; :mod:`wetcycle.brines.carbonate`).
ALL_SPECIES = dict(IONS, **co.data()["species"])
CATIONS = ("Na", "K", "Mg", "Ca")
ANIONS = ("Cl", "SO4", "ClO4")
ICE = "ice"
#: Ice is a solid only at or below the triple point [K].
T_ICE_MAX = 273.16


def ion_name(label):
    """'Mg+2' -> 'Mg', 'SO4-2' -> 'SO4', 'Na' -> 'Na'."""
    return re.sub(r"[+-]\d*$", "", str(label).strip())


def _tform(c, T):
    return c[0] + c[1] * (1.0 / T - 1.0 / T_REF) + c[2] * math.log(T / T_REF) + c[3] * (T - T_REF)


@dataclass(frozen=True)
class Pair:
    """A cation-anion pair with its binary system's Pitzer parameters and validity."""

    cation: str
    anion: str
    system: str
    alpha1: float
    alpha2: float
    coef: np.ndarray = field(repr=False, compare=False)
    T_min: float = 0.0
    T_max: float = 0.0
    m_max: float = 0.0
    nu_cation: int = 1
    nu_anion: int = 1

    @property
    def ionic_strength_max(self):
        """Ionic strength [mol kg-1] of the binary at its m_max (the binary's range in a mixture)."""
        zc, za = IONS[self.cation][0], IONS[self.anion][0]
        return 0.5 * self.m_max * (self.nu_cation * zc * zc + self.nu_anion * za * za)


@dataclass(frozen=True)
class MixSolid:
    """A solid that dissolves to ions and water: ln K(T) on the molality scale, with its validity.

    ``origin`` is ``"ice"``, ``"binary <system>"`` or ``"double salt"``.
    """

    name: str
    mineral: str
    stoich: tuple  # ((ion, nu), ...)
    hydration: float
    lnk_coef: tuple
    T_min: float
    T_max: float
    origin: str
    source: str
    flag: str
    narrow: bool = False  # carbonate solids with a 25 °C log K only: left out outside T_min-T_max
    keep_below: bool = False  # narrow, but kept below T_min (a fitted ln K(T), extrapolated in flagged steps)

    def ln_k(self, T):
        """ln K [-] at T [K]; ice: ln a_w,ice(T) (NaN above 273.16 K)."""
        if self.origin == ICE:
            return math.log(ice_activity_kernel(T)) if T <= T_ICE_MAX else math.nan
        return _tform(self.lnk_coef, T)

    @property
    def ions(self):
        return tuple(i for i, _ in self.stoich)

    def label(self):
        return f"{self.name} ({self.mineral})" if self.mineral else self.name


def _strip_ions(system):
    return ion_name(system.cation), ion_name(system.anion)


@lru_cache(maxsize=None)
def binary_pairs():
    """Every cation-anion pair of the stage 1-2 ions with a binary system: {(cation, anion): SaltSystem}.

    Systems of :mod:`wetcycle.salts` come first; ``data/binaries/*.toml`` fill the pairs the
    registry lacks.
    """
    out = {}
    for name in salts.names():
        s = salts.load(name)
        key = _strip_ions(s)
        if key[0] in IONS and key[1] in IONS:
            out[key] = s
    for path in sorted(BINARY_DIR.glob("*.toml")):
        s = salts.from_file(path)
        key = _strip_ions(s)
        if key not in out:
            out[key] = s
    return out


def _read_mixing(path=MIXING_PATH, use_fitted=True):
    try:
        doc = tomllib.loads(Path(path).read_text(encoding="utf-8"))
    except tomllib.TOMLDecodeError as exc:
        raise InputDataError(f"{Path(path).name}: not valid TOML: {exc}") from None
    fitted = doc.get("fitted", {}) if use_fitted else {}
    theta, psi, solids = {}, {}, []
    for kind, store, n in (("theta", theta, 2), ("psi", psi, 3)):
        for k, e in enumerate(doc.get(kind, [])):
            ions = tuple(e.get("ions", ()))
            where = f"{Path(path).name}: [[{kind}]] #{k + 1}"
            if len(ions) != n or any(i not in IONS for i in ions):
                raise InputDataError(f"{where}: ions {list(ions)} must be {n} of {list(IONS)}")
            c = e.get("c")
            if c is None or len(c) != 4:
                raise InputDataError(f"{where}: needs c = [c0, c1, c2, c3]")
            if e.get("flag") not in FLAGS or not e.get("source"):
                raise InputDataError(f"{where}: needs a source and a flag in {FLAGS}")
            key = "-".join(ions)
            c = np.array(fitted.get(kind, {}).get(key, c), dtype=float)
            store[ions] = dict(c=c, fit=list(e.get("fit", [False] * 4)), source=e["source"], flag=e["flag"],
                               start=np.array(e["c"], dtype=float))
    for k, e in enumerate(doc.get("solid", [])):
        where = f"{Path(path).name}: [[solid]] #{k + 1}"
        for key in ("name", "ions", "hydration", "lnK", "T_min", "T_max", "source", "flag"):
            if key not in e:
                raise InputDataError(f"{where}: missing '{key}'")
        stoich = tuple((i, float(v)) for i, v in e["ions"].items())
        if any(i not in IONS for i, _ in stoich):
            raise InputDataError(f"{where}: ions {list(e['ions'])} must be among {list(IONS)}")
        if abs(sum(IONS[i][0] * v for i, v in stoich)) > 1e-12:
            raise InputDataError(f"{where}: {e['name']} is not neutral")
        lnk = np.array(fitted.get("lnK", {}).get(e["name"], e["lnK"]), dtype=float)
        solids.append(dict(name=e["name"], mineral=e.get("mineral", ""), stoich=stoich,
                           hydration=float(e["hydration"]), lnk=lnk, start=np.array(e["lnK"], dtype=float),
                           fit=list(e.get("fit", [False] * 4)), T_min=float(e["T_min"]), T_max=float(e["T_max"]),
                           source=e["source"], flag=e["flag"]))
    return dict(theta=theta, psi=psi, solids=solids, data=doc.get("data", []), fitted=doc.get("fitted"), doc=doc)


@lru_cache(maxsize=None)
def mixing_file(use_fitted=True):
    """The parsed ``data/mixing.toml`` (theta, psi, double salts, data tables, fitted section)."""
    return _read_mixing(MIXING_PATH, use_fitted)


@dataclass(frozen=True)
class Chemistry:
    """The mixed-brine model for a set of ions (cations first, then anions, in a fixed order).

    Build with :func:`load`.  ``mixing`` is ``"fitted"`` (the stored fit), ``"start"``
    (the recalled 25 °C starting values) or ``"none"`` (theta = psi = 0: the baseline
    that shows what the mixing terms change; E-theta stays, it has no parameters).
    """

    ions: tuple
    nc: int
    mixing: str
    pairs: tuple = field(repr=False)
    solids: tuple = field(repr=False)
    z: np.ndarray = field(repr=False, compare=False)
    molar_mass: np.ndarray = field(repr=False, compare=False)
    alpha: np.ndarray = field(repr=False, compare=False)
    beta_coef: np.ndarray = field(repr=False, compare=False)
    theta_c: np.ndarray = field(repr=False, compare=False)
    theta_a: np.ndarray = field(repr=False, compare=False)
    psi_c: np.ndarray = field(repr=False, compare=False)
    psi_a: np.ndarray = field(repr=False, compare=False)
    #: number of neutral species (CO2(aq)), last in :attr:`ions`; lam[k, i] their lambda with ion i
    nn: int = 0
    lam: np.ndarray = field(default=None, repr=False, compare=False)

    @property
    def carbon(self):
        """True when the carbonate system (H, OH, HCO3, CO3, CO2) is part of the model."""
        return self.nn > 0

    @property
    def neutral_args(self):
        """(nn, lam) for :func:`wetcycle.brines.pitzer.activity_full`."""
        return self.nn, self.lam

    # ---- structure -------------------------------------------------------------
    @property
    def n(self):
        return len(self.ions)

    def index(self, ion):
        return self.ions.index(ion)

    @cached_property
    def solid_names(self):
        return tuple(s.name for s in self.solids)

    def solid(self, name):
        for s in self.solids:
            if s.name == name or (s.mineral and s.mineral == name):
                return s
        raise UnknownNameError(f"solid: {name!r} is not a solid of ions {', '.join(self.ions)}; "
                               f"solids: {', '.join(self.solid_names)}")

    @cached_property
    def stoichiometry(self):
        """(A, h): A[i, s] moles of ion i and h[s] moles of water released by dissolving one mole of solid s."""
        A = np.zeros((self.n, len(self.solids)))
        h = np.zeros(len(self.solids))
        for k, s in enumerate(self.solids):
            for ion, nu in s.stoich:
                A[self.index(ion), k] = nu
            h[k] = s.hydration
        return A, h

    def ln_k(self, T):
        """ln K(T) of every solid (order of :attr:`solids`); NaN for ice above 273.16 K."""
        return np.array([s.ln_k(T) for s in self.solids])

    # ---- Pitzer --------------------------------------------------------------
    def at(self, T):
        """Kernel arguments at T: (T, z, nc, alpha, beta, theta_c, theta_a, psi_c, psi_a, J, DJ, meta)."""
        beta, thc, tha, psc, psa = mpz.params_at_T(float(T), self.beta_coef, self.theta_c, self.theta_a,
                                                    self.psi_c, self.psi_a)
        J, DJ, meta = efunc.table()
        return (float(T), self.z, self.nc, self.alpha, beta, thc, tha, psc, psa, J, DJ, meta)

    def activities(self, m, T):
        """(ln gamma [n], ln a_w, phi, I) of one brine: m [mol kg-1] per ion (order :attr:`ions`), T [K].

        Harvie, Møller & Weare (1984) form (:mod:`wetcycle.brines.pitzer`).  No validity check:
        see :meth:`pair_limits`.
        """
        m = np.ascontiguousarray(m, dtype=float)
        if m.shape != (self.n,):
            raise ValidityError(f"molality: expected {self.n} values for ions {', '.join(self.ions)}, got shape {m.shape}")
        lng = np.empty(self.n)
        a = self.at(T)
        lnaw, phi, ionic = mpz.activity_full(m, a[0], *a[1:], self.nn, self.lam, lng)
        return lng, lnaw, phi, ionic

    def water_activity(self, m, T):
        """Water activity a_w [-] of a brine (molalities per ion [mol kg-1], T [K])."""
        return math.exp(self.activities(m, T)[1])

    def osmotic_coefficient(self, m, T):
        return self.activities(m, T)[2]

    def activity_coefficients(self, m, T):
        """Molal activity coefficient of each ion [-] (single-ion, the Pitzer convention)."""
        return np.exp(self.activities(m, T)[0])

    def ionic_strength(self, m):
        """I = 1/2 sum m_i z_i^2 [mol kg-1]."""
        return 0.5 * float(np.dot(np.asarray(m, dtype=float), self.z * self.z))

    # ---- validity -----------------------------------------------------------------
    def pair_limits(self, m):
        """The pairs a brine uses (both ions present) as a list of :class:`Pair`."""
        m = np.asarray(m, dtype=float)
        out = []
        for p in self.pairs:
            if m[self.index(p.cation)] > 0 and m[self.index(p.anion)] > 0:
                out.append(p)
        return out

    def pair_excess(self, m):
        """Largest ratio, over the pairs, of the pair's molality min(m_c/nu_c, m_a/nu_a) to its binary's m_max.

        Above 1 the brine holds a pair more concentrated than its binary was fitted to.
        """
        m = np.asarray(m, dtype=float)
        worst = 0.0
        for p in self.pairs:
            pm = min(m[self.index(p.cation)] / p.nu_cation, m[self.index(p.anion)] / p.nu_anion)
            worst = max(worst, pm / p.m_max)
        return worst

    def lowest_valid_temperature(self, m):
        """(T [K], pair) below which a pair the brine uses leaves its binary's validity."""
        ps = self.pair_limits(m)
        if not ps:
            return 0.0, None
        p = max(ps, key=lambda q: q.T_min)
        return p.T_min, p

    def highest_valid_temperature(self, m):
        ps = self.pair_limits(m)
        if not ps:
            return math.inf, None
        p = min(ps, key=lambda q: q.T_max)
        return p.T_max, p


def _order(ions):
    """(cations, anions, neutrals) in the model's fixed order; any carbonate species brings all five."""
    ions = [str(i) for i in ions if str(i) not in co.ION_PAIRS.values()]
    for i in ions:
        if i not in IONS and i not in co.SPECIES:
            raise UnknownNameError(f"ion: {i!r} is not known; known ions: {', '.join(ALL_SPECIES)}")
    cats = [i for i in CATIONS if i in ions]
    ans = [i for i in ANIONS if i in ions]
    neu = []
    if any(i in co.SPECIES for i in ions):
        cats += list(co.CARBON_CATIONS)
        ans += list(co.CARBON_ANIONS)
        neu = list(co.NEUTRALS) + [p for c, p in co.ION_PAIRS.items() if c in cats]
    return tuple(cats), tuple(ans), tuple(neu)


def load(ions=tuple(IONS), mixing="fitted"):
    """The :class:`Chemistry` of a set of ions (names without charge, e.g. ``("Na", "Cl", "SO4")``).

    Parameters
    ----------
    ions : iterable of str
        Any of Na, K, Mg, Ca, Cl, SO4, ClO4.  Needs at least one cation and one anion.
    mixing : {"fitted", "start", "none"}
        Which theta/psi to use (see :class:`Chemistry`).
    """
    if isinstance(mixing, dict):
        return _build(tuple(ions), "custom", mixing)
    if mixing not in ("fitted", "start", "none"):
        raise UnknownNameError(f"mixing: {mixing!r} is not one of fitted, start, none")
    return _load(tuple(ions), mixing)


@lru_cache(maxsize=64)
def _load(ions, mixing):
    return _build(ions, mixing, mixing_file(use_fitted=(mixing != "start")))


def _build(ions, mixing, mix):
    """Assemble a :class:`Chemistry`; ``mix`` is a parsed mixing file (``mixing="custom"``: its ``c`` values)."""
    cats, ans, neu = _order(tuple(ions))
    if not cats or not ans:
        raise ValidityError(f"ions: {list(ions)} need at least one cation and one anion")
    order = cats + ans + neu
    nc, na = len(cats), len(ans)
    z = np.array([float(ALL_SPECIES[i][0]) for i in order])
    mm = np.array([ALL_SPECIES[i][1] for i in order])
    cd = co.data() if neu else None
    binaries = binary_pairs()
    alpha = np.zeros((nc, na, 2))
    beta = np.zeros((nc, na, 4, 4))
    pairs = []
    for c, ci in enumerate(cats):
        for a, ai in enumerate(ans):
            s = binaries.get((ci, ai))
            if s is None and cd is not None and (ci in co.SPECIES or ai in co.SPECIES or (ci, ai) in cd["pairs"]
                                                 or (ci, ai) in cd["null"]):
                cp = cd["pairs"].get((ci, ai))
                if cp is None:
                    alpha[c, a] = (2.0, 0.0)   # no parameters: beta = C = 0 (see carbonate.toml null_pairs)
                    continue
                alpha[c, a] = cp["alpha"]
                beta[c, a, :, 0] = cp["beta"]
                zc, za = int(ALL_SPECIES[ci][0]), -int(ALL_SPECIES[ai][0])
                g = math.gcd(zc, za)
                pairs.append(Pair(ci, ai, f"{ci}-{ai} (HMW 1984, 25 °C)", cp["alpha"][0], cp["alpha"][1],
                                  beta[c, a].copy(), co.T_VALID[0], co.T_VALID[1], cp["m_max"], za // g, zc // g))
                continue
            if s is None:
                raise UnknownNameError(f"ions: no binary system for the pair {ci}-{ai}; known pairs: "
                                       + ", ".join(f"{k[0]}-{k[1]}" for k in sorted(binaries)))
            alpha[c, a] = (s.alpha1, s.alpha2)
            beta[c, a] = np.asarray(s.coef, dtype=float)
            pairs.append(Pair(ci, ai, s.name, s.alpha1, s.alpha2, np.asarray(s.coef, dtype=float),
                              s.T_min, s.T_max, s.m_max, int(s.nu_cation), int(s.nu_anion)))
    thc = np.zeros((nc, nc, 4))
    tha = np.zeros((na, na, 4))
    psc = np.zeros((nc, nc, na, 4))
    psa = np.zeros((na, na, nc, 4))
    if mixing != "none":
        for (i, j), e in mix["theta"].items():
            c = e["start"] if mixing == "start" else e["c"]
            for grp, arr in ((cats, thc), (ans, tha)):
                if i in grp and j in grp:
                    arr[grp.index(i), grp.index(j)] = c
                    arr[grp.index(j), grp.index(i)] = c
        for (i, j, k), e in mix["psi"].items():
            c = e["start"] if mixing == "start" else e["c"]
            if i in cats and j in cats and k in ans:
                psc[cats.index(i), cats.index(j), ans.index(k)] = c
                psc[cats.index(j), cats.index(i), ans.index(k)] = c
            elif i in ans and j in ans and k in cats:
                psa[ans.index(i), ans.index(j), cats.index(k)] = c
                psa[ans.index(j), ans.index(i), cats.index(k)] = c
    lam = np.zeros((len(neu), nc + na))
    if cd is not None and mixing != "none":
        for (i, j), v in cd["theta"].items():
            for grp, arr in ((cats, thc), (ans, tha)):
                if i in grp and j in grp:
                    arr[grp.index(i), grp.index(j), 0] = v
                    arr[grp.index(j), grp.index(i), 0] = v
        for (i, j, k), v in cd["psi"].items():
            if i in cats and j in cats and k in ans:
                psc[cats.index(i), cats.index(j), ans.index(k), 0] = v
                psc[cats.index(j), cats.index(i), ans.index(k), 0] = v
            elif i in ans and j in ans and k in cats:
                psa[ans.index(i), ans.index(j), cats.index(k), 0] = v
                psa[ans.index(j), ans.index(i), cats.index(k), 0] = v
    if cd is not None:
        # lambda is a property of the neutral species, not a mixing term: kept in the theta = psi = 0 baseline
        ionsx = cats + ans
        for (nme, ion), v in cd["lam"].items():
            if nme in neu and ion in ionsx:
                lam[neu.index(nme), ionsx.index(ion)] = v
    # solids: ice, the binaries' solids, double salts whose ions are all present
    solid_list = [MixSolid(ICE, "", (), 1.0, (0.0, 0.0, 0.0, 0.0), 123.0, T_ICE_MAX, ICE,
                           "ln K = ln(p_ice/p_liquid), Murphy & Koop (2005) Q. J. R. Meteorol. Soc. 131, 1539",
                           "read")]
    present = set(order)
    for (ci, ai), s in sorted(binaries.items()):
        if ci in present and ai in present:
            for sol in s.solids:
                solid_list.append(MixSolid(sol.name, sol.mineral, ((ci, float(s.nu_cation)), (ai, float(s.nu_anion))),
                                           float(sol.hydration), tuple(float(v) for v in sol.lnk_coef),
                                           s.T_min, s.T_max, f"binary {s.name}", sol.source, sol.flag))
    for d in mix["solids"]:
        if all(i in present for i, _ in d["stoich"]):
            lnk = d["start"] if mixing == "start" else d["lnk"]
            solid_list.append(MixSolid(d["name"], d["mineral"], d["stoich"], d["hydration"],
                                       tuple(float(v) for v in lnk), d["T_min"], d["T_max"], "double salt",
                                       d["source"], d["flag"]))
    if cd is not None:
        for d in cd["solids"]:
            if all(i in present for i, _ in d["stoich"]):
                solid_list.append(MixSolid(d["name"], d["mineral"], d["stoich"], d["hydration"],
                                           co.pb_to_tform(d["coef"], T_REF), d["T_min"], d["T_max"], "carbonate",
                                           d["source"], d["flag"], d["narrow"], d["keep_below"]))
    return Chemistry(ions=order, nc=nc, mixing=mixing, pairs=tuple(pairs), solids=tuple(solid_list),
                     z=z, molar_mass=mm, alpha=alpha, beta_coef=beta, theta_c=thc, theta_a=tha,
                     psi_c=psc, psi_a=psa, nn=len(neu), lam=lam)


def water_molar_mass():
    return MW
