"""Salt-water systems: Pitzer thermodynamics, solid phases and derived phase boundaries.

>>> from wetcycle import salts
>>> nacl = salts.load("nacl")          # names match without regard to case
>>> round(float(nacl.deliquescence_rh(298.15)), 2)
0.75

Systems are registered by the data files in ``wetcycle/salts/data/`` (one
TOML file per system; see DEVELOPERS.md).  A user can register a file of
their own with :func:`register_file`.
"""

from __future__ import annotations

from functools import lru_cache
from pathlib import Path

import numpy as np

from ..errors import UnknownNameError
from . import datafile
from .system import ICE, SaltSystem, Solid

DATA_DIR = Path(__file__).parent / "data"
_extra_files: dict[str, Path] = {}

__all__ = ["load", "names", "register_file", "from_file", "SaltSystem", "Solid", "ICE", "DATA_DIR"]


@lru_cache(maxsize=None)
def _index():
    idx = {}
    for path in sorted(DATA_DIR.glob("*.toml")):
        info = datafile.read(path)
        idx[info["system"]["name"].lower()] = (info["system"]["name"], path)
    return idx


def names():
    """Names of every registered system, in the formula spelling of their data files."""
    listed = {k: v[0] for k, v in _index().items()}
    listed.update({k: k2 for k, (k2, _) in _extra_files.items()})
    return sorted(listed.values(), key=str.lower)


def from_file(path, **overrides):
    """Build a :class:`SaltSystem` from a data file (coefficients from its fitted section if any)."""
    info = datafile.read(path)
    s = info["system"]
    solids = tuple(
        Solid(name=d["name"], mineral=d["mineral"], hydration=d["hydration"],
              lnk_coef=tuple(float(x) for x in d["lnK"]), source=d["source"], flag=d["flag"])
        for d in info["solids"]
    )
    kwargs = dict(
        name=s["name"], cation=s["cation"], anion=s["anion"],
        nu_cation=int(s["nu_cation"]), nu_anion=int(s["nu_anion"]),
        z_cation=int(s["z_cation"]), z_anion=int(s["z_anion"]),
        molar_mass=float(s["molar_mass"]), T_min=float(s["T_min"]), T_max=float(s["T_max"]),
        m_max=float(s["m_max"]), alpha1=info["alpha1"], alpha2=info["alpha2"],
        coef=np.array(info["coef"]), solids=solids, metastability=info["metastability"],
        notes=str(s.get("notes", "")),
        sources=dict(pitzer=info["pitzer_sources"], pitzer_25C=info["source_25C"]),
        tables=tuple(info["tables"]), fitted=info["fitted"],
        supersaturated=info["supersaturated"], kinetics=info["kinetics"],
    )
    kwargs.update(overrides)
    return SaltSystem(**kwargs)


def register_file(path):
    """Register a user's own data file so that :func:`load` finds it by its system name."""
    info = datafile.read(path)
    _extra_files[info["system"]["name"].lower()] = (info["system"]["name"], Path(path))
    _load.cache_clear()
    return info["system"]["name"]


@lru_cache(maxsize=None)
def _load(key):
    if key in _extra_files:
        return from_file(_extra_files[key][1])
    return from_file(_index()[key][1])


def load(name):
    """The :class:`SaltSystem` called ``name`` (e.g. ``"NaCl"``, ``"mg(clo4)2"``; case ignored).

    Raises
    ------
    UnknownNameError
        If no system has that name; the message lists the known names.
    """
    key = str(name).strip().lower()
    if key not in _index() and key not in _extra_files:
        raise UnknownNameError(f"salt system: {name!r} is not known; known systems: {', '.join(names())}")
    return _load(key)
