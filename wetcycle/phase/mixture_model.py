"""Python side of the mixture phase model: the same interface as :class:`~wetcycle.phase.model.PhaseModel`.

>>> from wetcycle.phase.mixture_model import MixtureModel
>>> m = MixtureModel("salty soil", {"NaCl": 1.0}, law="equilibrium", T_range=(296.0, 300.0), dT=2.0)  # doctest: +SKIP
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..brines.mixture import mixture_tables, parse_mixture
from ..errors import ConfigError, shown
from . import kernel
from . import mixture_kernel as mk
from .model import DEFAULTS, BlockResult, check_phase_settings, forcing_arrays

#: What results record about a mixture entry (global attribute ``mixture_notes``).
NOTES = ("equilibrium states only: no supersaturated brine below the mutual deliquescence RH, no supercooling "
         "below the mixture's eutectic, no ice-nucleation barrier; solid hydrates exchange water with the air "
         "at the vapour-limited rate, with no kinetics of their own")


@dataclass
class MixtureState:
    """State of one mixture in every cell: total water W [kg m-2], salt mass [kg m-2], last sample, exchange."""

    W: np.ndarray
    mass: np.ndarray
    prev: np.ndarray
    started: np.ndarray
    exchanged: np.ndarray

    def copy(self):
        return MixtureState(**{k: v.copy() for k, v in self.__dict__.items()})

    @property
    def total_water(self):
        return self.W


@dataclass(frozen=True)
class MixtureModel:
    """A salt mixture's phase model (equilibrium tables, see :mod:`wetcycle.phase.mixture_kernel`).

    Parameters
    ----------
    name : str, the mixture's name (results' salt coordinate)
    mixture : dict {salt system: mass fraction of the anhydrous salts}
    law, diffusion_length_m, diffusivity_factor, liquid_threshold, hydrate_kinetics : as PhaseModel
        (hydrate kinetics do not apply: the solids' hydrate water is not exchanged).
    extrapolate_binaries : bool
        Build the tables below the binaries' common range (flagged, bit 8), down to the lowest of them.
    tables : MixtureTables, optional (built and cached from the composition otherwise)
    table_options : dict, optional, passed to :func:`~wetcycle.brines.mixture.build_tables` (dT, T_range)
    """

    name: str
    mixture: dict
    law: str = DEFAULTS["law"]
    diffusion_length_m: float = DEFAULTS["diffusion_length_m"]
    diffusivity_factor: float = DEFAULTS["diffusivity_factor"]
    liquid_threshold: float = DEFAULTS["liquid_threshold"]
    hydrate_kinetics: str = DEFAULTS["hydrate_kinetics"]
    extrapolate_binaries: bool = False
    tables: object = field(default=None, repr=False, compare=False)
    table_options: dict = field(default=None, repr=False, compare=False)

    def __post_init__(self):
        check_phase_settings(self)
        comp, _ = parse_mixture(self.mixture)
        object.__setattr__(self, "mixture", comp)
        if self.tables is None:
            object.__setattr__(self, "tables", mixture_tables(comp, name=self.name,
                                                              extrapolate_binaries=self.extrapolate_binaries,
                                                              **(self.table_options or {})))
        object.__setattr__(self, "_ktab", self.tables.kernel_tables())
        object.__setattr__(self, "_xtab", mk.exchange_table(float(self.diffusivity_factor),
                                                            float(self.diffusion_length_m)))
        object.__setattr__(self, "_law", kernel.LawParams(
            self.law == "equilibrium", float(self.diffusion_length_m), float(self.diffusivity_factor),
            float(self.liquid_threshold), True))

    is_mixture = True

    @classmethod
    def from_entry(cls, entry, phase, tables=None, table_options=None):
        """The model of a scenario's ``[[salt]]`` mixture entry with its validated ``[phase]`` table."""
        return cls(entry["name"], entry["mixture"], law=phase["law"], diffusion_length_m=phase["diffusion_length"],
                   diffusivity_factor=phase["diffusivity_factor"], liquid_threshold=phase["liquid_threshold"],
                   hydrate_kinetics=phase["hydrate_kinetics"],
                   extrapolate_binaries=bool(entry.get("extrapolate_binaries", False)), tables=tables,
                   table_options=table_options)

    @property
    def ions(self):
        return self.tables.ions

    @property
    def settings(self):
        return dict(law=self.law, diffusion_length_m=self.diffusion_length_m,
                    diffusivity_factor=self.diffusivity_factor, liquid_threshold=self.liquid_threshold,
                    hydrate_kinetics=self.hydrate_kinetics)

    def initial_state(self, n_cells, loading_kg_m2, temperature_K, relative_humidity=None):
        """All-solid parcels in every cell, their hydrates in equilibrium with the first (T, RH).

        Without a humidity (or above the mutual deliquescence RH) the salts hold their most hydrated
        assemblage, u_dry(T).
        """
        tb = self.tables
        load = np.broadcast_to(np.asarray(loading_kg_m2, dtype=float), (n_cells,)).copy()
        if np.any(~(load > 0)):
            raise ConfigError(f"loading: {shown(load[~(load > 0)][0])} kg/m2 must be > 0")
        T = np.clip(np.broadcast_to(np.asarray(temperature_K, dtype=float), (n_cells,)), tb.T_min, tb.T_max)
        kt = self._ktab
        ud = np.empty(n_cells)
        rh = np.broadcast_to(np.asarray(1.0 if relative_humidity is None else relative_humidity, dtype=float),
                             (n_cells,))
        for c in range(n_cells):  # once per run: a Python loop over cells is fine here
            i, f = mk._tloc(float(T[c]), tb.T0, tb.dT, tb.u_dry.size)
            u_top = (1.0 - f) * tb.u_dry[i] + f * tb.u_dry[min(i + 1, tb.u_dry.size - 1)]
            ud[c] = min(mk.u_of_aw(kt, i, f, min(max(float(rh[c]), 1e-9), 1.0), False), u_top)
        return MixtureState(W=ud * load, mass=load, prev=np.zeros((5, n_cells)),
                            started=np.zeros(n_cells, dtype=np.int64), exchanged=np.zeros(n_cells))

    def step(self, state, temperature_K, relative_humidity, surface_pressure_Pa, frost_kg_m2, dt_s,
             ion_molality=False):
        """Advance ``state`` in place through a block [step, cell]; a :class:`BlockResult`.

        With ``ion_molality`` the result also carries ``ion_molality`` [step, cell, ion] (mol kg-1, NaN
        without brine), in the order of :attr:`ions`.
        """
        T, RH, P, F, dt = forcing_arrays(temperature_K, relative_humidity, surface_pressure_Pa, frost_kg_m2, dt_s)
        shape = T.shape
        out = BlockResult(
            phase=np.empty(shape, np.int64), liquid_fraction=np.empty(shape), water_activity=np.empty(shape),
            liquid_water=np.empty(shape), hydrate_water=np.empty(shape), ice_water=np.empty(shape),
            exchanged=np.empty(shape), validity_flag=np.empty(shape, np.int64))
        mol = np.empty(shape + (len(self.ions),)) if ion_molality else np.empty((0, 0, 0))
        kst = mk.MixState(state.W, state.prev, state.started)
        kout = mk.MixOut(out.phase, out.liquid_fraction, out.water_activity, out.liquid_water, out.hydrate_water,
                         out.ice_water, out.exchanged, out.validity_flag, mol)
        mk.step_mixture_block(T, RH, P, F, dt, state.mass, self._law, self._xtab, self._ktab, kst, kout)
        state.exchanged += out.exchanged.sum(axis=0)
        if ion_molality:
            out.ion_molality = mol
        return out

    def attributes(self):
        """What results record about this mixture (composition, range, flags, limitations)."""
        tb = self.tables
        return {"composition_mass_fraction": tb.composition_json, "ions": " ".join(tb.ions),
                "extrapolate_binaries": int(tb.extrapolate_binaries),
                "table_temperature_range_K": f"{tb.T_min:g}-{tb.T_max:g}",
                "binaries_valid_from_K": tb.T_valid_min, "eutectic_K": tb.eutectic_K, "notes": NOTES}
