"""Figure of a mixed-brine path: solids and key ion molalities against temperature or concentration factor."""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np

from ..errors import ConfigError

_FORMATS = ("png", "pdf", "svg")


def path_figure(ds):
    """A matplotlib Figure of a :func:`~wetcycle.brines.freeze` or :func:`~wetcycle.brines.evaporate` dataset."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(8.0, 7.0), layout="constrained")
    FigureCanvasAgg(fig)
    ax1, ax2 = fig.subplots(2, 1, sharex=True)
    if "temperature" in ds.dims:
        x = ds["temperature"].values
        xlabel = "temperature [K]"
        ax1.invert_xaxis()
    else:
        x = ds["concentration_factor"].values
        xlabel = "concentration factor (initial water / remaining water)"
        ax1.set_xscale("log")
    sm = ds["solid_moles"]
    for k, name in enumerate(ds["solid"].values):
        y = sm.values[:, k]
        if name == "ice" or not np.any(y > 0):
            continue
        label = f"{name} ({ds['mineral'].values[k]})" if ds["mineral"].values[k] != name else str(name)
        ax1.plot(x, y, label=label)
    ax1.set_yscale("log")
    ax1.set_ylabel("solid [mol per kg initial water]")
    pos = sm.values[sm.values > 0]
    if pos.size:
        ax1.set_ylim(max(pos.min(), pos.max() * 1e-7) * 0.5, pos.max() * 2)
    if ax1.get_legend_handles_labels()[0]:
        ax1.legend(fontsize=7, loc="best")
    if "ice" in list(ds["solid"].values):
        axi = ax1.twinx()
        axi.plot(x, ds["ice_mass"].values, color="0.6", ls="--", label="ice")
        axi.set_ylabel("ice [kg per kg initial water] (dashed)")
    for k, ion in enumerate(ds["ion"].values):
        ax2.plot(x, ds["ion_molality"].values[:, k], label=str(ion), ls="-" if k < 10 else "--")
    ax2.set_yscale("log")
    ax2.set_ylabel("brine molality [mol/kg]")
    ax2.set_xlabel(xlabel)
    axw = ax2.twinx()
    axw.plot(x, ds["water_activity"].values, color="k", lw=1.0, ls=":")
    axw.set_ylabel("water activity (dotted)")
    axw.set_ylim(0, 1)
    ax2.legend(fontsize=7, ncol=4, loc="lower left")
    title = ds.attrs.get("title_name", "") or ds.attrs.get("composition", "")
    if "pH" in ds and np.isfinite(ds["pH"].values).any():
        ph = ds["pH"].values[np.isfinite(ds["pH"].values)]
        title += f"; pH {ph[0]:.2f} → {ph[-1]:.2f} ({ds.attrs.get('carbonate_system', '')} CO2)"
    ax1.set_title(f"{ds.attrs.get('path', '')} path: {title}", fontsize=9)
    return fig


def save_figure(fig, path):
    """Write the figure to a temporary file beside ``path`` and move it into place."""
    p = Path(path)
    fmt = p.suffix.lower().lstrip(".")
    if fmt not in _FORMATS:
        raise ConfigError(f"figure: {str(p)!r} has suffix {p.suffix!r}; allowed: {', '.join('.' + f for f in _FORMATS)}")
    if not p.parent.is_dir():
        raise ConfigError(f"figure: directory {str(p.parent)!r} does not exist")
    tmp = p.with_name(f".{p.name}.part")
    try:
        fig.savefig(tmp, format=fmt, dpi=130)
        os.replace(tmp, p)
    finally:
        if tmp.exists():
            tmp.unlink()
    return p
