"""Python side of the phase-state model: time laws, parcel state, stepping blocks.

>>> from wetcycle.phase import PhaseModel
>>> model = PhaseModel("NaCl", law="equilibrium")
>>> state = model.initial_state(n_cells=2, loading_kg_m2=0.01, temperature_K=280.0, relative_humidity=0.3)
>>> int(state.phase[0])   # crystalline
0
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import ConfigError, UnknownNameError, shown
from ..salts import load as load_salt
from ..salts.tables import build_phase_tables
from . import kernel
from .states import CRYSTALLINE

MW = kernel.MW

#: Time laws by name (registry; the scenario and the CLI list these).
TIME_LAWS = {
    "equilibrium": "state follows T and RH at once (hysteresis kept)",
    "vapour_limited": "water exchange limited by vapour diffusion through a near-surface layer",
}
_ALIASES = {"vapor_limited": "vapour_limited"}


def time_law(name):
    """Canonical time-law name; raises UnknownNameError listing the valid ones."""
    key = _ALIASES.get(str(name), str(name))
    if key not in TIME_LAWS:
        raise UnknownNameError(f"law: {name!r} is not a time law; allowed: {', '.join(TIME_LAWS)}")
    return key


@dataclass
class ParcelState:
    """State of one salt in every cell (arrays over cells), carried from block to block.

    ``phase`` state codes (see :mod:`wetcycle.phase.states`), ``solid`` index of the
    current hydrate, water as hydrate / brine / ice [kg m-2], moles dissolved
    [mol m-2], salt moles [mol m-2], the last forcing sample (T, RH, frost) and
    whether it is valid, and the cumulative water exchanged [kg m-2].
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
    """Per-step outputs of one block for one salt, arrays [step, cell]."""

    phase: np.ndarray
    liquid_fraction: np.ndarray
    water_activity: np.ndarray
    liquid_water: np.ndarray
    hydrate_water: np.ndarray
    ice_water: np.ndarray
    exchanged: np.ndarray
    clamped: np.ndarray


@dataclass(frozen=True)
class PhaseModel:
    """One salt's phase model with its time law.

    Parameters
    ----------
    salt : str
        Salt-system name (see :func:`wetcycle.salts.names`).
    law : {"equilibrium", "vapour_limited"}
    layer_thickness_m : float [m]
        Vapour-limited law: thickness of the near-surface diffusion layer (> 0).
    diffusivity_factor : float [-]
        Vapour-limited law: porosity/tortuosity factor multiplying the free-gas
        diffusivity (0 < f <= 1).
    """

    salt: str
    law: str = "equilibrium"
    layer_thickness_m: float = 0.01
    diffusivity_factor: float = 1.0
    tables: object = field(default=None, repr=False, compare=False)

    def __post_init__(self):
        object.__setattr__(self, "law", time_law(self.law))
        if not (self.layer_thickness_m > 0):
            raise ConfigError(f"layer_thickness_m: {self.layer_thickness_m!r} must be > 0 m")
        if not (0 < self.diffusivity_factor <= 1):
            raise ConfigError(f"diffusivity_factor: {self.diffusivity_factor!r} must lie in (0, 1]")
        if self.tables is None:
            object.__setattr__(self, "tables", phase_tables(self.salt))

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
        T = np.ascontiguousarray(temperature_K, dtype=np.float64)
        if T.ndim != 2:
            raise ValueError("forcing arrays must be [step, cell]")
        shape = T.shape
        RH = np.ascontiguousarray(np.broadcast_to(relative_humidity, shape), dtype=np.float64)
        P = np.ascontiguousarray(np.broadcast_to(surface_pressure_Pa, shape), dtype=np.float64)
        F = np.ascontiguousarray(np.broadcast_to(frost_kg_m2, shape), dtype=np.float64)
        tb = self.tables
        inv = tb.inverse
        out = BlockResult(
            phase=np.empty(shape, np.int64), liquid_fraction=np.empty(shape), water_activity=np.empty(shape),
            liquid_water=np.empty(shape), hydrate_water=np.empty(shape), ice_water=np.empty(shape),
            exchanged=np.empty(shape), clamped=np.empty(shape, np.int64),
        )
        dt = np.ascontiguousarray(np.broadcast_to(np.asarray(dt_s, dtype=np.float64), (shape[0],)))
        kernel.step_block(
            T, RH, P, F, dt, state.n_salt, self.law == "equilibrium",
            float(self.layer_thickness_m), float(self.diffusivity_factor),
            tb.T0, tb.dT, tb.lnk, tb.msat, tb.drh, tb.stable, tb.mice, tb.awice, tb.hydration, tb.scalars, tb.packed,
            inv.T0, inv.dT, inv.ds, inv.m,
            state.phase, state.solid, state.w_hyd, state.w_brine, state.w_ice, state.n_diss,
            state.prev, state.started,
            out.phase, out.liquid_fraction, out.water_activity, out.liquid_water, out.hydrate_water,
            out.ice_water, out.exchanged, out.clamped,
        )
        state.exchanged += out.exchanged.sum(axis=0)
        return out


_TABLE_CACHE = {}


def phase_tables(salt):
    """PhaseTables for ``salt``, built once per process."""
    s = load_salt(salt)
    if s.name not in _TABLE_CACHE:
        _TABLE_CACHE[s.name] = build_phase_tables(s)
    return _TABLE_CACHE[s.name]
