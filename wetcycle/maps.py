"""Maps: one per-cell statistic of a gridded result, one panel per salt.

>>> import wetcycle.maps as wm
>>> path = wm.plot_map(ds, "/tmp/liquid-hours.png")              # doctest: +SKIP

A gridded result has dimensions ``(salt, lat, lon)``: coordinates ``lat``
[degrees_north] and ``lon`` [degrees_east, east-positive], both 1-D, and per-cell
statistics named as in :mod:`wetcycle.vocabulary`; NaN marks a masked cell (not
modelled).  As in :mod:`wetcycle.plots`, matplotlib is imported inside the
functions and figures are drawn on the Agg canvas, never through ``pyplot``.

Cells are drawn as quadrilaterals (``pcolormesh``) between cell edges: the CF
``bounds`` variable of ``lat``/``lon`` where the dataset has one, otherwise
midway between neighbouring centres, the outer edges half a spacing beyond the
outer centres (latitude edges clipped to ±90°); both by cf_xarray.  Axes are equal in degrees
(plate carrée).  Colours: the sequential "cividis" map, designed to read the
same with red-green colour-vision deficiency (Nuñez, Anderton & Renslow 2018,
PLoS ONE 13, e0199239, doi:10.1371/journal.pone.0199239); each panel has its own
colour scale by default (one shared scale on request); masked cells are white and
hatched, outside the map's colours.
"""

from __future__ import annotations

import textwrap

import numpy as np

from .errors import ConfigError, InputDataError
from .vocabulary import readable_units
from .plots import CAVEAT, _check_path, _new_figure, _read_dataset, _salt_names, _save

__all__ = ["plot_map", "map_figure", "MAP_COLORMAP", "MASKED_COLOUR"]

MAP_COLORMAP = "cividis"
MASKED_COLOUR = "white"       # masked cells: white with grey hatching, a colour cividis never takes
MASKED_HATCH = "////"
GRID_DIMS = ("salt", "lat", "lon")
#: statistics that count something from zero: their colour scale starts at 0
_COUNT_UNITS = ("hour", "h")
_COUNT_NAMES = ("wet_events_per_year", "clamped_steps", "clamped_liquid_steps", "molality_limit_steps",
                "lower_limit_freezes")


# ---- input -------------------------------------------------------------------------
def _open_grid(ds):
    """A gridded result from an ``xarray.Dataset`` or a NetCDF path."""
    ds = _read_dataset(ds)
    missing = [d for d in ("lat", "lon") if d not in ds.dims]
    if missing:
        raise InputDataError(f"result: dataset has no {' and '.join(repr(d) for d in missing)} "
                             f"dimension; not a gridded result: use wetcycle plot")
    if "salt" not in ds.dims:
        raise InputDataError("result: gridded dataset has no 'salt' dimension; expected (salt, lat, lon)")
    return ds


def _grid_stats(ds):
    return [str(v) for v in ds.data_vars if set(ds[v].dims) == set(GRID_DIMS)]


def _check_stat(ds, stat):
    if not isinstance(stat, str) or stat not in ds.data_vars:
        have = _grid_stats(ds)
        raise ConfigError(f"stat: {stat!r} is not in the result; per-cell statistics in it: "
                          f"{', '.join(have) if have else '(none)'}")
    dims = tuple(ds[stat].dims)
    if set(dims) != set(GRID_DIMS):
        raise ConfigError(f"stat: {stat!r} has dimensions {dims}, a map needs (salt, lat, lon); "
                          f"per-cell statistics in the result: {', '.join(_grid_stats(ds)) or '(none)'}")


def _edges(ds, name, lo, hi):
    """Cell edges [degree] along coordinate ``name``: CF bounds if given, else midway between centres.

    Both through cf_xarray: ``bounds_to_vertices`` turns a CF bounds variable into edges,
    ``add_bounds`` estimates bounds midway between neighbouring centres.
    """
    import cf_xarray

    c = np.asarray(ds[name].values, dtype=float)
    if c.ndim != 1 or not np.all(np.isfinite(c)):
        raise InputDataError(f"{name}: coordinate must be 1-D and finite")
    if c.size > 1 and not np.all(np.diff(c) > 0):
        raise InputDataError(f"{name}: centres must be strictly ascending; got {c[:4].tolist()}...")
    bname = ds[name].attrs.get("bounds")
    if bname and bname in ds.variables:
        b = ds[bname]
        if b.shape != (c.size, 2):
            raise InputDataError(f"{bname}: bounds of {name} must have shape ({c.size}, 2), got {b.shape}")
        b = b.copy(data=np.sort(np.asarray(b.values, dtype=float), axis=1))
        if c.size > 1 and not np.allclose(b.values[1:, 0], b.values[:-1, 1]):
            raise InputDataError(f"{bname}: cells of {name} are not contiguous; a map needs adjoining cells")
        bdim = [d for d in b.dims if d != name][0]
        e = np.asarray(cf_xarray.bounds_to_vertices(b, bounds_dim=bdim).values, dtype=float)
    elif c.size == 1:
        raise InputDataError(f"{name}: one centre and no CF bounds variable; the cell width is unknown")
    else:
        frame = ds[[name]].drop_vars([v for v in ds[[name]].coords if v != name]).cf.add_bounds(name)
        bnd = frame[f"{name}_bounds"]
        e = np.asarray(cf_xarray.bounds_to_vertices(bnd, bounds_dim="bounds").values, dtype=float)
    if lo is not None:
        e = np.clip(e, lo, hi)
    return e


def _scale(values, stat, units):
    """Shared colour limits over every panel."""
    finite = values[np.isfinite(values)]
    if finite.size == 0:
        return 0.0, 1.0
    vmin, vmax = float(finite.min()), float(finite.max())
    if vmin >= 0.0 and (units in _COUNT_UNITS or readable_units(units).startswith("h per") or stat in _COUNT_NAMES):
        vmin = 0.0
    if vmax <= vmin:
        vmax = vmin + (abs(vmin) * 0.05 if vmin else 1.0)
    return vmin, vmax


def _units_text(units):
    return readable_units(units)


def _layout(n, aspect):
    """(rows, columns) of panels: wide maps stack in two columns at most."""
    ncols = min(n, 2 if aspect >= 1.4 else 3)
    return -(-n // ncols), ncols


# ---- figure ------------------------------------------------------------------------
def map_figure(ds, *, salts=None, stat="liquid_hours_per_year", shared_scale=False):
    """The figure of :func:`plot_map` (a ``matplotlib.figure.Figure``); same arguments."""
    from matplotlib import colormaps
    from matplotlib.patches import Patch
    from matplotlib.ticker import MaxNLocator
    ds = _open_grid(ds)
    _check_stat(ds, stat)
    salts = _salt_names(ds, salts)
    lat_e = _edges(ds, "lat", -90.0, 90.0)
    lon_e = _edges(ds, "lon", None, None)
    var = ds[stat].sel(salt=salts).transpose(*GRID_DIMS)
    values = np.asarray(var.values, dtype=float)
    units = str(var.attrs.get("units", ""))
    long_name = str(var.attrs.get("long_name", stat))
    scales = ([_scale(values, stat, units)] * len(salts) if shared_scale
              else [_scale(values[k], stat, units) for k in range(len(salts))])
    cmap = colormaps[MAP_COLORMAP].with_extremes(bad=(0.0, 0.0, 0.0, 0.0))  # masked: the hatched ground shows

    span_x, span_y = lon_e[-1] - lon_e[0], lat_e[-1] - lat_e[0]
    aspect = span_x / span_y
    nrows, ncols = _layout(len(salts), aspect)
    panel_w = min(7.5, 11.0 / ncols)                 # the whole figure stays within ~13 in
    panel_h = panel_w / aspect
    if panel_h > 6.0:                                # tall regions: limit the height instead
        panel_w, panel_h = 6.0 * aspect, 6.0
    panel_h = max(panel_h, 1.4)
    # width: panels + latitude label + colour bar.  Height: panels with their titles and x labels,
    # plus fixed bands in inches for the title and for the foot (masked-cell note, caveat), kept
    # outside the layout engine so panel titles never run into them.
    width = max(5.5, panel_w * ncols + 0.4 * (ncols - 1) + 2.0)
    title = str(ds.attrs.get("scenario_name") or ds.attrs.get("title") or "wetcycle result")
    head = (textwrap.fill(f"{title} — {long_name} ({stat})", width=int(width * 11))
            + ("\none panel per salt, one shared colour scale" if shared_scale
               else "\none panel per salt, each with its own colour scale"))
    top = (head.count("\n") + 1) * 11 * 1.3 / 72 + 0.15
    foot = 0.5
    height = (panel_h + 0.75) * nrows + top + foot + 0.2
    fig = _new_figure(width, height)
    fig.get_layout_engine().set(rect=(0.0, foot / height, 1.0, 1.0 - (foot + top) / height),
                                w_pad=0.06, h_pad=0.06)
    fig.text(0.5, 1.0 - 0.08 / height, head, ha="center", va="top", fontsize=11,
             linespacing=1.3).set_in_layout(False)
    gs = fig.add_gridspec(nrows, ncols)
    axes, mesh, meshes = [], None, []
    for k, name in enumerate(salts):
        ax = fig.add_subplot(gs[k // ncols, k % ncols], label=f"map {name}")
        data = np.ma.masked_invalid(values[k])
        from matplotlib.patches import Rectangle
        ax.add_patch(Rectangle((lon_e[0], lat_e[0]), lon_e[-1] - lon_e[0], lat_e[-1] - lat_e[0],
                               facecolor=MASKED_COLOUR, edgecolor="0.6", hatch=MASKED_HATCH, lw=0, zorder=0))
        vmin, vmax = scales[k]
        mesh = ax.pcolormesh(lon_e, lat_e, data, cmap=cmap, vmin=vmin, vmax=vmax, shading="flat",
                             rasterized=True, zorder=1)
        meshes.append(mesh)
        ax.set_xlim(lon_e[0], lon_e[-1])
        ax.set_ylim(lat_e[0], lat_e[-1])
        ax.set_aspect("equal")
        ax.xaxis.set_major_locator(MaxNLocator(nbins=int(np.clip(panel_w * 1.1, 3, 7)),
                                               steps=[1, 2, 3, 5, 6, 10]))
        ax.yaxis.set_major_locator(MaxNLocator(nbins=7, steps=[1, 2, 3, 5, 6, 10]))
        ax.grid(color="white", lw=0.4, alpha=0.5)
        ax.tick_params(labelsize=8)
        if k + ncols >= len(salts):            # no panel below this one
            ax.set_xlabel("longitude [°E]")
        if k % ncols == 0:
            ax.set_ylabel("latitude [°N]")
        n_ok = int(np.isfinite(values[k]).sum())
        note = (f"max {np.nanmax(values[k]):.3g}" + ("" if units in ("1", "") else f" {_units_text(units)}")
                if n_ok else "no modelled cell")
        if panel_w >= 3.5:
            ax.set_title(name, fontsize=10, fontweight="bold", loc="left")
            ax.set_title(note, fontsize=8, loc="right", color="0.3")
        else:                                        # narrow panel: the note goes under the name
            ax.set_title(f"{name}\n{note}", fontsize=9, loc="left")
        axes.append(ax)
    bars = [(meshes[0], axes)] if shared_scale else list(zip(meshes, [[a] for a in axes]))
    for m, owners in bars:
        cbar = fig.colorbar(m, ax=owners, shrink=0.9 if (nrows == 1 or not shared_scale) else 0.7, aspect=25,
                            pad=0.02)
        cbar.set_label(f"{long_name} [{_units_text(units)}]" if shared_scale else _units_text(units),
                       fontsize=9 if shared_scale else 8)
        cbar.ax.set_label("colour bar")
        cbar.ax.tick_params(labelsize=8)
    if not shared_scale:
        fig.text(0.5, 1.0 - (top + 0.02) / height, f"{long_name} [{_units_text(units)}]", ha="center", va="top",
                 fontsize=9, color="0.25").set_in_layout(False)
    masked = int((~np.isfinite(values)).sum())
    if masked:
        fig.legend(handles=[Patch(facecolor=MASKED_COLOUR, edgecolor="0.6", hatch=MASKED_HATCH, lw=0.5,
                                  label="no value: cell masked (not modelled)")],
                   loc="lower left", bbox_to_anchor=(0.0, 0.2 / height), borderaxespad=0.2,
                   frameon=False, fontsize=8).set_in_layout(False)
    fig.text(0.5, 0.06 / height, CAVEAT, ha="center", va="bottom", fontsize=8, style="italic", color="0.3")
    return fig


def plot_map(ds, path, *, salts=None, stat="liquid_hours_per_year", shared_scale=False):
    """Map one per-cell statistic of a gridded result, one panel per salt; save to ``path``.

    Each panel shows the statistic over the latitude-longitude grid as
    cells (``pcolormesh`` between cell edges; see the module docstring), equal
    aspect in degrees, in the colour-blind-safe sequential map "cividis", each
    panel on its own colour scale (a salt with 111 h is not drawn as zero beside
    one with 3,000 h) or, with ``shared_scale``, one scale for all panels (from 0
    for hours and counts, else the data range).  Masked cells (NaN) are white with
    grey hatching, which cividis never takes, and named in a legend.  The
    colour bar carries the variable's ``long_name`` and ``units``; the title the
    scenario name and the statistic.

    Parameters
    ----------
    ds : xarray.Dataset or path
        A gridded wetcycle result with dimensions ``(salt, lat, lon)`` (``lat``
        [degrees_north] and ``lon`` [degrees_east] 1-D ascending), or its NetCDF file.
    path : str or Path
        Output file, ``.png``, ``.pdf`` or ``.svg``; its directory must exist.
        Written to a temporary file in the same directory, then moved into place.
    salts : str or list of str, optional
        Salts to show (case ignored); default all of the result's.
    stat : str
        A variable of the result with dimensions ``(salt, lat, lon)``;
        default ``"liquid_hours_per_year"`` [hour].
    shared_scale : bool
        One colour scale for every panel instead of one per salt.

    Returns
    -------
    pathlib.Path

    Raises
    ------
    InputDataError
        Not a gridded result (no ``lat``/``lon`` dimensions), unreadable file,
        coordinates not strictly ascending or a single cell without bounds.
    ConfigError
        ``stat`` not in the result or not on (salt, lat, lon); a salt not in the
        result; bad suffix or missing directory.
    """
    _check_path(path)
    return _save(map_figure(ds, salts=salts, stat=stat, shared_scale=shared_scale), path)
