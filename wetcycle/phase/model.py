"""Python side of the phase-state model: time laws, parcel state, stepping blocks.

>>> from wetcycle.phase import PhaseModel
>>> model = PhaseModel("NaCl", law="equilibrium")   # default law: vapour_limited (see DEFAULTS)
>>> state = model.initial_state(n_cells=2, loading_kg_m2=0.01, temperature_K=280.0, relative_humidity=0.3)
>>> int(state.phase[0])   # crystalline
0
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import ConfigError, InputDataError, UnknownNameError, shown
from ..salts import load as load_salt
from ..salts.tables import build_phase_tables
from . import kernel
from .states import CRYSTALLINE

MW = kernel.MW

#: Stands for "no tables": a model built only to validate and record settings.
_NO_TABLES = object()

#: Time laws by name (registry; the scenario and the CLI list these).
TIME_LAWS = {
    "equilibrium": "state follows T and RH at once (hysteresis kept); for equilibrium questions and lab replays",
    "vapour_limited": "water exchange limited by vapour diffusion over the salt's own crust/grain scale",
}
_ALIASES = {"vapor_limited": "vapour_limited"}
#: Solid-hydrate kinetics by name.
HYDRATE_KINETICS = {
    "rate": "solid hydrates relax at the published rate of their system (instant where none is published)",
    "instant": "solid hydrates follow the stable hydrate at once",
}

#: The one set of defaults of the phase model, used by scenarios, run_series and PhaseModel alike
#: (DESIGN decision 2).  Reasons (README, "Defaults of the phase model"):
#: * law: from vapour alone, bulk deliquescence of perchlorates is too slow for the daily window,
#:   while salt touching ice forms brine in minutes (Fischer et al. 2014, Geophys. Res. Lett. 41,
#:   4456); the vapour-limited law gives the first, its contact-melting rule the second.
#: * diffusion_length_m: the salt's own scale (the forcing gives the vapour at the salt's depth, so the
#:   overburden is not counted again): 2.5 mm, the mean depth of salt spread through the top 5 mm of
#:   soil that the default loading assumes.
#: * diffusivity_factor: 0.2, the effective vapour diffusivity of Mars-analogue soils at Mars pressure,
#:   ~3-5 cm2 s-1 against ~20 cm2 s-1 in free CO2 (Hudson et al. 2007, J. Geophys. Res. 112, E05016;
#:   from memory).  With these, Ca(ClO4)2 at the default loading needs ~7 h above its DRH at 220 K
#:   (and days at Mars night temperatures) to deliquesce fully from vapour -- slower than the few-hour
#:   window of Fischer et al. (2014) -- while a partly deliquesced salt counts as liquid (above the
#:   threshold) within minutes to an hour.
#: * loading_kg_m2: 0.05 kg m-2, ~0.6 wt% (Phoenix perchlorate: 0.4-0.7 wt%, Hecht et al. 2009,
#:   Science 325, 64) of the top ~5 mm of soil at 1500 kg m-3.
#: * liquid_threshold: 0.01 -- a brine holding less than 1 % of the water of the salt's saturated
#:   solution (less than 1 % of the salt dissolved) is a damp salt, not liquid.
#: * hydrate_kinetics: "rate" (published rates where a system has them).
DEFAULTS = {
    "law": "vapour_limited",
    "loading_kg_m2": 0.05,
    "diffusion_length_m": 2.5e-3,
    "diffusivity_factor": 0.2,
    "liquid_threshold": 0.01,
    "hydrate_kinetics": "rate",
}


def time_law(name):
    """Canonical time-law name; raises UnknownNameError listing the valid ones."""
    key = _ALIASES.get(str(name), str(name))
    if key not in TIME_LAWS:
        raise UnknownNameError(f"law: {name!r} is not a time law; allowed: {', '.join(TIME_LAWS)}")
    return key


def hydrate_kinetics(name):
    """Canonical hydrate-kinetics name; raises UnknownNameError listing the valid ones."""
    if str(name) not in HYDRATE_KINETICS:
        raise UnknownNameError(f"hydrate_kinetics: {name!r} is not known; allowed: {', '.join(HYDRATE_KINETICS)}")
    return str(name)


def check_phase_settings(model):
    """Normalise and check the time-law settings shared by :class:`PhaseModel` and the mixture
    model (frozen dataclasses): law and hydrate-kinetics names, diffusion length, diffusivity
    factor, liquid threshold.  Raises ConfigError in one line."""
    object.__setattr__(model, "law", time_law(model.law))
    object.__setattr__(model, "hydrate_kinetics", hydrate_kinetics(model.hydrate_kinetics))
    if not (model.diffusion_length_m > 0):
        raise ConfigError(f"diffusion_length_m: {shown(model.diffusion_length_m)} must be > 0 m")
    if not (0 < model.diffusivity_factor <= 1):
        raise ConfigError(f"diffusivity_factor: {shown(model.diffusivity_factor)} must lie in (0, 1]")
    if not (0 <= model.liquid_threshold < 1):
        raise ConfigError(f"liquid_threshold: {shown(model.liquid_threshold)} must lie in [0, 1)")


def _readonly(a):
    """A read-only view of ``a`` (the caller's array keeps its flags)."""
    v = a.view()
    v.flags.writeable = False
    return v


def forcing_arrays(temperature_K, relative_humidity, surface_pressure_Pa, frost_kg_m2, dt_s):
    """The forcing of one block as the kernels take it: C-contiguous float64 [step, cell] (``dt``
    [step]), always read-only views, so every caller -- runner blocks, series, dask chunks, arrays
    that happen to be writeable or not -- meets one compiled signature of a kernel (numba compiles
    and caches one specialisation per distinct argument type, and each costs tens of seconds)."""
    T = np.ascontiguousarray(temperature_K, dtype=np.float64)
    if T.ndim != 2:
        raise InputDataError(f"temperature_K: forcing arrays must be [step, cell], got {T.ndim} dimension(s)")
    shape = T.shape
    RH = np.ascontiguousarray(np.broadcast_to(relative_humidity, shape), dtype=np.float64)
    P = np.ascontiguousarray(np.broadcast_to(surface_pressure_Pa, shape), dtype=np.float64)
    F = np.ascontiguousarray(np.broadcast_to(frost_kg_m2, shape), dtype=np.float64)
    dt = np.ascontiguousarray(np.broadcast_to(np.asarray(dt_s, dtype=np.float64), (shape[0],)))
    return tuple(_readonly(a) for a in (T, RH, P, F, dt))


@dataclass
class ParcelState:
    """State of one salt in every cell (arrays over cells), carried from block to block.

    ``phase`` state codes (see :mod:`wetcycle.phase.states`), ``solid`` index of the
    current hydrate, water as hydrate / brine / ice [kg m-2], moles dissolved
    [mol m-2], salt moles [mol m-2], the last forcing sample (T, RH, frost) and
    whether it is valid, and the cumulative water exchanged [kg m-2].  Below the liquid
    threshold a crystalline parcel may hold a film of brine water (a damp salt).
    """

    phase: np.ndarray
    solid: np.ndarray
    w_hyd: np.ndarray
    w_brine: np.ndarray
    w_ice: np.ndarray
    n_diss: np.ndarray
    n_salt: np.ndarray
    prev: np.ndarray
    started: np.ndarray
    exchanged: np.ndarray

    def copy(self):
        return ParcelState(**{k: v.copy() for k, v in self.__dict__.items()})

    @property
    def total_water(self):
        """Water held by the parcel [kg m-2]: hydrate + brine + ice."""
        return self.w_hyd + self.w_brine + self.w_ice


@dataclass
class BlockResult:
    """Per-step outputs of one block for one salt, arrays [step, cell].

    ``liquid_water`` is the brine water, including a sub-threshold film on a damp crystalline salt
    (which is not counted as liquid: its ``liquid_fraction`` is 0); ``validity_flag`` is the
    kernel's bit field (:mod:`wetcycle.phase.kernel`).
    """

    phase: np.ndarray
    liquid_fraction: np.ndarray
    water_activity: np.ndarray
    liquid_water: np.ndarray
    hydrate_water: np.ndarray
    ice_water: np.ndarray
    exchanged: np.ndarray
    validity_flag: np.ndarray


@dataclass(frozen=True)
class PhaseModel:
    """One salt's phase model with its time law.

    Parameters
    ----------
    salt : str
        Salt-system name (see :func:`wetcycle.salts.names`).
    law : {"vapour_limited", "equilibrium"}
    diffusion_length_m : float [m]
        Vapour-limited law: diffusion path through the salt's own crust or grain coating (> 0);
        not the overburden (the forcing gives the vapour at the salt's depth).
    diffusivity_factor : float [-]
        Vapour-limited law: porosity/tortuosity factor multiplying the free-gas
        diffusivity (0 < f <= 1).
    liquid_threshold : float [-]
        Fraction of the water of the salt's saturated solution below which a brine is not liquid
        (0 <= f < 1).
    hydrate_kinetics : {"rate", "instant"}
        Solid-hydrate changes at the system's published rate (instant where none), or at once.
    """

    salt: str
    law: str = DEFAULTS["law"]
    diffusion_length_m: float = DEFAULTS["diffusion_length_m"]
    diffusivity_factor: float = DEFAULTS["diffusivity_factor"]
    liquid_threshold: float = DEFAULTS["liquid_threshold"]
    hydrate_kinetics: str = DEFAULTS["hydrate_kinetics"]
    tables: object = field(default=None, repr=False, compare=False)

    def __post_init__(self):
        check_phase_settings(self)
        if self.tables is _NO_TABLES:
            return  # settings only (e.g. to record them), no salt
        if self.tables is None:
            object.__setattr__(self, "tables", phase_tables(self.salt))
        object.__setattr__(self, "_ktab", self.tables.kernel_tables())
        object.__setattr__(self, "_law", kernel.LawParams(
            self.law == "equilibrium", float(self.diffusion_length_m), float(self.diffusivity_factor),
            float(self.liquid_threshold), self.hydrate_kinetics == "instant"))

    @classmethod
    def from_settings(cls, salt, phase, tables=None):
        """The model of ``salt`` with a scenario's validated ``[phase]`` table (and its tables, if given)."""
        return cls(salt, law=phase["law"], diffusion_length_m=phase["diffusion_length"],
                   diffusivity_factor=phase["diffusivity_factor"], liquid_threshold=phase["liquid_threshold"],
                   hydrate_kinetics=phase["hydrate_kinetics"], tables=tables)

    @property
    def settings(self):
        """The model's settings as a plain dict (recorded in results)."""
        return dict(law=self.law, diffusion_length_m=self.diffusion_length_m,
                    diffusivity_factor=self.diffusivity_factor, liquid_threshold=self.liquid_threshold,
                    hydrate_kinetics=self.hydrate_kinetics)

    def liquid_threshold_water(self, state, temperature_K):
        """Brine water [kg m-2] below which a parcel counts as dry, per cell, at ``temperature_K``."""
        tb = self.tables
        T = np.clip(np.broadcast_to(np.asarray(temperature_K, dtype=float), state.n_salt.shape), tb.T_min, tb.T_max)
        i = np.clip(np.rint((T - tb.T0) / tb.dT).astype(int), 0, tb.lnk.shape[1] - 1)
        ks = tb.stable[i]
        ms = np.where(ks >= 0, tb.msat[np.maximum(ks, 0), i], np.nan)
        ms = np.where(np.isfinite(ms), ms, tb.m_max)
        return self.liquid_threshold * state.n_salt / ms

    def initial_state(self, n_cells, loading_kg_m2, temperature_K, relative_humidity):
        """A crystalline parcel in every cell, as the stable hydrate at the first (T, RH).

        Parameters
        ----------
        n_cells : int
        loading_kg_m2 : float or array [kg m-2], anhydrous salt per unit area (> 0)
        temperature_K, relative_humidity : float or array, the first forcing sample
        """
        tb = self.tables
        load = np.broadcast_to(np.asarray(loading_kg_m2, dtype=float), (n_cells,)).copy()
        if np.any(~(load > 0)):
            raise ConfigError(f"loading: {shown(load[~(load > 0)][0])} kg/m2 must be > 0")
        n = load / tb.molar_mass
        T = np.broadcast_to(np.asarray(temperature_K, dtype=float), (n_cells,))
        rh = np.clip(np.broadcast_to(np.asarray(relative_humidity, dtype=float), (n_cells,)), 1e-9, 1.0)
        Tc = np.clip(T, tb.T_min, tb.T_max)
        x = (Tc - tb.T0) / tb.dT
        i = np.clip(np.floor(x).astype(int), 0, tb.lnk.shape[1] - 1)
        score = tb.lnk[:, i] - tb.hydration[:, None] * np.log(rh)[None, :]
        solid = np.argmin(score, axis=0).astype(np.int64)
        return ParcelState(
            phase=np.full(n_cells, CRYSTALLINE, dtype=np.int64), solid=solid,
            w_hyd=n * tb.hydration[solid] * MW, w_brine=np.zeros(n_cells), w_ice=np.zeros(n_cells),
            n_diss=np.zeros(n_cells), n_salt=n, prev=np.zeros((4, n_cells)),
            started=np.zeros(n_cells, dtype=np.int64), exchanged=np.zeros(n_cells),
        )

    def step(self, state, temperature_K, relative_humidity, surface_pressure_Pa, frost_kg_m2, dt_s):
        """Advance ``state`` (in place) through a block of samples; arrays [step, cell].

        Returns a :class:`BlockResult`.  Interval k of the block ends at sample k;
        the first interval starts at the last sample of the previous block.  ``dt_s``
        [s] is a scalar (uniform clock) or one value per step.
        """
        T, RH, P, F, dt = forcing_arrays(temperature_K, relative_humidity, surface_pressure_Pa, frost_kg_m2, dt_s)
        shape = T.shape
        out = BlockResult(
            phase=np.empty(shape, np.int64), liquid_fraction=np.empty(shape), water_activity=np.empty(shape),
            liquid_water=np.empty(shape), hydrate_water=np.empty(shape), ice_water=np.empty(shape),
            exchanged=np.empty(shape), validity_flag=np.empty(shape, np.int64),
        )
        kst = kernel.KernelState(state.phase, state.solid, state.w_hyd, state.w_brine, state.w_ice, state.n_diss,
                                 state.prev, state.started)
        kout = kernel.KernelOut(out.phase, out.liquid_fraction, out.water_activity, out.liquid_water,
                                out.hydrate_water, out.ice_water, out.exchanged, out.validity_flag)
        kernel.step_block(T, RH, P, F, dt, state.n_salt, self._law, self._ktab, kst, kout)
        state.exchanged += out.exchanged.sum(axis=0)
        return out


def phase_settings_attrs(model):
    """Global attributes recording a phase model's settings (``phase_*``), for result files.

    ``model`` is a :class:`PhaseModel` or a scenario's validated ``[phase]`` table.
    """
    if isinstance(model, dict):
        model = PhaseModel.from_settings(None, model, tables=_NO_TABLES)
    out = {f"phase_{k}": v for k, v in model.settings.items()}
    out["phase_liquid_threshold_note"] = ("brine holding less than this fraction of the water of the salt's saturated "
                                          "solution is a damp salt, not counted as liquid")
    return out


_TABLE_CACHE = {}


def phase_tables(salt):
    """PhaseTables for ``salt``, built once per loaded system (a file registered again is rebuilt)."""
    s = load_salt(salt)
    cached = _TABLE_CACHE.get(s.name)
    if cached is None or cached[0] is not s:
        cached = _TABLE_CACHE[s.name] = (s, build_phase_tables(s))
    return cached[1]
