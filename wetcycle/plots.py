"""Figures: a result's phase history, and a salt system's temperature-humidity phase diagram.

>>> import wetcycle.plots as wp
>>> path = wp.plot_diagram("NaCl", "/tmp/nacl-diagram.png")      # doctest: +SKIP

matplotlib is imported inside the functions (``import wetcycle`` stays light) and
figures are drawn on the Agg canvas directly, never through ``pyplot``: nothing
depends on an interactive backend or on global figure state.  The ``*_figure``
functions return a :class:`matplotlib.figure.Figure` for notebooks and tests;
the ``plot_*`` functions save it and return the path.

Colours: phase states use the colour-blind-safe palette of Okabe & Ito (2008,
"Color Universal Design", https://jfly.uni-koeln.de/color/); salts use Paul Tol's
colour-blind-safe "muted" scheme (Tol 2021, SRON/EPS/TN/09-002).
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np

from .errors import ConfigError, InputDataError, ValidityError
from .phase.states import (BRINE, BRINE_WITH_ICE, BRINE_WITH_SALT, CRYSTALLINE, FROZEN, LIQUID,
                           NAMES, SUPERCOOLED, SUPERSATURATED)

__all__ = ["plot_result", "plot_diagram", "result_figure", "diagram_figure", "STATE_COLOURS", "CAVEAT"]

CAVEAT = "Model estimate, not evidence of liquid water or life."
#: Mars mean solar day [s] (1.027491251 d, Allison & McEwen 2000), used when a result
#: does not say how many steps make a sol.
MARS_SOL_S = 1.027491251 * 86400.0
T_MELT = 273.15

#: One colour per phase state (Okabe & Ito 2008 palette, plus a neutral grey).
STATE_COLOURS = {
    CRYSTALLINE: "#E6C700",      # salt crystals: a deepened Okabe-Ito yellow (reads on white)
    BRINE: "#0072B2",            # blue
    SUPERSATURATED: "#56B4E9",   # sky blue
    BRINE_WITH_SALT: "#009E73",  # bluish green
    BRINE_WITH_ICE: "#CC79A7",   # reddish purple
    SUPERCOOLED: "#E69F00",      # orange
    FROZEN: "#7F7F7F",           # grey
}
SALT_COLOURS = ("#332288", "#CC6677", "#117733", "#882255", "#44AA99", "#999933", "#AA4499",
                "#88CCEE", "#DDCC77", "#6F6F6F")   # darker ones first: they also draw on pale fields
_FORMATS = ("png", "pdf", "svg")


# ---- small helpers ----------------------------------------------------------------
def _state_label(code):
    return NAMES[code].replace("_", " ")


def _tint(colour, f):
    """Mix a colour with white: f = 1 keeps it, f = 0 gives white."""
    from matplotlib.colors import to_rgb
    return tuple(1.0 - f * (1.0 - c) for c in to_rgb(colour))


def _new_figure(width, height):
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure
    fig = Figure(figsize=(width, height), layout="constrained")
    FigureCanvasAgg(fig)
    return fig


def _check_path(path):
    p = Path(path)
    fmt = p.suffix.lower().lstrip(".")
    if fmt not in _FORMATS:
        raise ConfigError(f"path: {str(p)!r} has suffix {p.suffix!r}; allowed: {', '.join('.' + f for f in _FORMATS)}")
    if not p.parent.is_dir():
        raise ConfigError(f"path: directory {str(p.parent)!r} does not exist")
    return p, fmt


def _save(fig, path):
    """Write the figure next to its target and move it into place (no half-written file)."""
    p, fmt = _check_path(path)
    tmp = p.with_name(f".{p.name}.part")
    try:
        fig.savefig(tmp, format=fmt, dpi=150)
        os.replace(tmp, p)
    finally:
        if tmp.exists():
            tmp.unlink()
    return p


def _runs(values):
    """(start, stop, value) of runs of equal values in a 1-D array."""
    v = np.asarray(values)
    if v.size == 0:
        return []
    edges = np.flatnonzero(v[1:] != v[:-1]) + 1
    starts = np.concatenate([[0], edges])
    stops = np.concatenate([edges, [v.size]])
    return [(int(a), int(b), v[a]) for a, b in zip(starts, stops)]


def _read_dataset(ds):
    """An ``xarray.Dataset`` given as itself or as a NetCDF path (one-line errors otherwise)."""
    import xarray as xr
    if isinstance(ds, (str, os.PathLike)):
        if not Path(ds).is_file():
            raise InputDataError(f"result: file {str(ds)!r} does not exist")
        try:
            with xr.open_dataset(ds) as f:
                ds = f.load()
        except (OSError, ValueError) as exc:
            raise InputDataError(f"result: {str(ds)!r} is not a readable NetCDF file ({exc})") from None
    if not isinstance(ds, xr.Dataset):
        raise InputDataError(f"result: expected an xarray.Dataset or a NetCDF path, got {type(ds).__name__}")
    return ds


def _open(ds):
    """A result dataset from an ``xarray.Dataset`` or a NetCDF path; single series made site/salt-shaped."""
    ds = _read_dataset(ds)
    if "site" not in ds.dims and "time" in ds.dims and "salt" in ds.attrs:
        # a wetcycle.run_series result: one salt at one place
        per_salt = [v for v in ds.data_vars if v in _SALT_VARS]
        ds = ds.expand_dims(site=[str(ds.attrs.get("site", "series"))])
        ds = ds.assign({v: ds[v].expand_dims(salt=[ds.attrs["salt"]]) for v in per_salt})
    if "site" not in ds.dims or "salt" not in ds.dims:
        raise InputDataError("result: dataset has no 'site' and 'salt' dimensions; allowed: a site result "
                             "(a gridded result is drawn by 'wetcycle map')")
    return ds


_SALT_VARS = ("phase_state", "brine_water_activity", "liquid_water", "hydrate_water", "ice_water",
              "liquid_fraction", "water_exchanged", "validity_flag")


def _has_series(ds):
    return "time" in ds.dims and "phase_state" in ds and "salt_temperature" in ds


def _site_index(ds, site):
    names = [str(s) for s in ds["site"].values]
    if isinstance(site, (int, np.integer)) and not isinstance(site, bool):
        if not 0 <= site < len(names):
            raise ConfigError(f"site: index {site} is outside the result (0-{len(names) - 1})")
        return int(site)
    if str(site) in names:
        return names.index(str(site))
    raise ConfigError(f"site: {site!r} is not in the result; sites: {', '.join(names)}")


def _salt_names(ds, salts):
    have = [str(s) for s in ds["salt"].values]
    if salts is None:
        return have
    if isinstance(salts, str):
        salts = [salts]
    out = []
    for s in salts:
        match = [h for h in have if h.lower() == str(s).strip().lower()]
        if not match:
            raise ConfigError(f"salts: {s!r} is not in the result; salts in it: {', '.join(have)}")
        out.append(match[0])
    if not out:
        raise ConfigError("salts: empty list; give at least one salt of the result")
    return out


def _sol_position(ds):
    """Position of every step in sols since the run start: sol number + fraction of the sol."""
    t = np.asarray(ds["time"].values)
    if t.dtype.kind == "M":  # a result opened with xarray's default time decoding: back to seconds
        t = (t - t[0]) / np.timedelta64(1, "s")
    t = t.astype(float)
    sol_s = MARS_SOL_S
    n = ds.attrs.get("steps_per_sol")
    if n and t.size > 1:
        sol_s = float(n) * float(t[1] - t[0])
    x = t / sol_s
    if "sol" in ds.coords:
        sol = np.asarray(ds["sol"].values, dtype=float)
        x = sol + np.clip(x - np.floor(x + 1e-9), 0.0, 1.0 - 1e-12)
    return x, sol_s


# ---- result figure --------------------------------------------------------------------
def _choose_steps(ds, x, sols, site_i, salts):
    sol = np.floor(x + 1e-9).astype(int)
    first_sol, last_sol = int(sol.min()), int(sol.max())
    if sols is None:
        liquid = np.isin(ds["phase_state"].sel(salt=salts).isel(site=site_i).values, LIQUID).any(axis=0)
        wet = np.unique(sol[liquid])
        start = int(wet[0]) if wet.size else first_sol
        start = max(first_sol, min(start, last_sol - 2))
        sols = (start, min(start + 2, last_sol))
    try:
        a, b = (int(v) for v in sols)
    except (TypeError, ValueError):
        raise ConfigError(f"sols: {sols!r} is not a pair (first, last) of sol numbers") from None
    if a > b or a < first_sol or b > last_sol:
        raise ConfigError(f"sols: ({a}, {b}) is outside the run or reversed; the run has sols {first_sol}-{last_sol}")
    return np.flatnonzero((sol >= a) & (sol <= b)), (a, b)


def _planet_of(ds):
    """The result's planet: its ``planet`` attribute, else its grid mapping's name, else Mars."""
    name = str(ds.attrs.get("planet", "")).lower()
    if not name and "crs" in ds:
        name = "earth" if "WGS" in str(ds["crs"].attrs.get("geographic_crs_name", "")) else "mars"
    return name if name in ("mars", "earth") else "mars"


def sun_up(ds, site_i, idx):
    """Whether the sun is above the horizon at the site at each step (None when unknown).

    Solar elevation from sin(e) = sin(phi) sin(delta) + cos(phi) cos(delta) cos(h): declination
    sin(delta) = sin(obliquity) sin(Ls) and hour angle h = 15 deg (LTST - 12 h) (common practice;
    Allison & McEwen 2000 eq. 7 for Mars).  Refraction and the disc's size are neglected.
    """
    need = ("local_solar_time", "solar_longitude", "latitude")
    if any(k not in ds.variables for k in need) or "site" not in ds["local_solar_time"].dims:
        return None
    from .orbit import get_planet
    eps = np.deg2rad(get_planet(_planet_of(ds)).obliquity_deg)
    lt = np.asarray(ds["local_solar_time"].isel(site=site_i).values, dtype=float)[idx]
    ls = np.deg2rad(np.asarray(ds["solar_longitude"].values, dtype=float)[idx])
    phi = np.deg2rad(float(ds["latitude"].values[site_i]))
    dec = np.arcsin(np.sin(eps) * np.sin(ls))
    h = np.deg2rad(15.0 * (lt - 12.0))
    return np.sin(phi) * np.sin(dec) + np.cos(phi) * np.cos(dec) * np.cos(h) > 0.0


def _night_shading(axes, ds, site_i, idx, x):
    up = sun_up(ds, site_i, idx)
    if up is None:
        return False
    dx = np.median(np.diff(x)) if x.size > 1 else 0.0
    for a, b, day in _runs(up):
        if not day:
            for ax in axes:
                ax.axvspan(x[a], x[b - 1] + dx, color="0.5", alpha=0.13, lw=0, zorder=0)
    return True


def _day_word(ds):
    return "day" if _planet_of(ds) == "earth" else "sol"


def _legend_right(ax, **kw):
    kw.setdefault("fontsize", 8)
    return ax.legend(loc="upper left", bbox_to_anchor=(1.115, 1.0), borderaxespad=0.0, frameon=False, **kw)


def _drh_series(name, T):
    """DRH of the salt's stable solid along a temperature series; NaN outside its validity.

    A salt mixture (its own name, not a salt system) has no single-salt DRH: NaN throughout.
    """
    from .errors import UnknownNameError
    from .salts import load
    T = np.asarray(T, dtype=float)
    try:
        s = load(name)
    except UnknownNameError:
        return np.full(T.shape, np.nan)
    ok = np.isfinite(T) & (T >= s.T_min) & (T <= s.T_max)
    out = np.full(T.shape, np.nan)
    if ok.any():
        out[ok] = s.deliquescence_rh(np.clip(T[ok], s.T_min, s.T_max))
    return out


#: Windows longer than this many sols are drawn as daily summaries (a year of steps would alias).
DAILY_AFTER_SOLS = 10


def _daily_panels(fig, gs, ds, site_i, salts, idx, x):
    """Daily summaries of a long window: temperature and RH ranges, liquid hours per sol per salt."""
    day = np.floor(x + 1e-9).astype(int)
    starts = np.flatnonzero(np.r_[True, day[1:] != day[:-1]])
    days = day[starts]
    sub = ds.isel(time=idx, site=site_i)
    t = np.asarray(sub["time"].values)
    t = ((t - t[0]) / np.timedelta64(1, "s")).astype(float) if t.dtype.kind == "M" else t.astype(float)
    dt = np.median(np.diff(t)) if t.size > 1 else 0.0
    ax_t = fig.add_subplot(gs[0])
    axes = [ax_t] + [fig.add_subplot(gs[i], sharex=ax_t) for i in range(1, 2 + len(salts))]
    for name, colour, label in (("salt_temperature", "black", "salt"), ("surface_temperature", "#D55E00", "surface")):
        if name in sub:
            v = np.asarray(sub[name].values, dtype=float)
            lo, hi = np.minimum.reduceat(v, starts), np.maximum.reduceat(v, starts)
            ax_t.fill_between(days + 0.5, lo, hi, step="mid", color=colour, alpha=0.25 if label == "salt" else 0.15,
                              lw=0, label=f"{label}: daily range")
    ax_t.set_ylabel("temperature [K]")
    _legend_right(ax_t, title="temperature", title_fontsize=8)
    rh = np.asarray(sub["relative_humidity"].values, dtype=float)
    axes[1].fill_between(days + 0.5, np.minimum.reduceat(rh, starts), np.maximum.reduceat(rh, starts), step="mid",
                         color="#0072B2", alpha=0.35, lw=0, label="RH (liquid water): daily range")
    axes[1].set_ylim(0.0, 1.02)
    axes[1].set_ylabel("relative humidity [–]")
    _legend_right(axes[1], title="humidity", title_fontsize=8)
    for k, name in enumerate(salts):
        ax = axes[2 + k]
        lf = np.asarray(sub["liquid_fraction"].sel(salt=name).values, dtype=float)
        hours = np.add.reduceat(np.nan_to_num(lf), starts) * dt / 3600.0
        ax.bar(days + 0.5, hours, width=0.9, color=SALT_COLOURS[k % len(SALT_COLOURS)])
        ax.set_ylabel(f"{name}\nliquid h/{_day_word(ds)}", fontsize=9)
        if not hours.any():
            ax.text(0.5, 0.5, "no liquid in these sols", transform=ax.transAxes, ha="center", va="center",
                    fontsize=8, color="0.35")
    for ax in axes[:-1]:
        ax.tick_params(labelbottom=False)
    axes[-1].set_xlim(days[0], days[-1] + 1)
    axes[-1].set_xlabel(f"{_day_word(ds)} since run start (daily summaries: the window is longer than "
                        f"{DAILY_AFTER_SOLS} {_day_word(ds)}s)")
    for ax in axes:
        ax.grid(axis="x", color="0.85", lw=0.6)
        ax.set_axisbelow(True)
    return axes


def result_figure(ds, *, sols=None, salts=None, site=0):
    """The figure of :func:`plot_result` (a ``matplotlib.figure.Figure``); same arguments."""
    from matplotlib.patches import Patch
    ds = _open(ds)
    site_i = _site_index(ds, site)
    salts = _salt_names(ds, salts)
    series = _has_series(ds)
    yearly = "liquid_hours_by_ls" in ds
    if not series and not yearly:
        raise InputDataError("result: has neither series (salt_temperature, phase_state) nor liquid_hours_by_ls")
    site_name = str(ds["site"].values[site_i])
    n_time = 2 + len(salts) if series else 0
    ratios = [1.0, 1.0] + [0.62] * len(salts) if series else []
    if yearly:
        ratios.append(1.1)
    fig = _new_figure(11.5, 1.2 + 1.65 * sum(ratios) + (0.5 if not series else 0.0))
    fig.get_layout_engine().set(rect=(0.0, 0.03, 1.0, 0.97), h_pad=0.06)
    gs = fig.add_gridspec(len(ratios), 1, height_ratios=ratios)
    axes = []
    chosen = None
    if series:
        x_all, _ = _sol_position(ds)
        idx, chosen = _choose_steps(ds, x_all, sols, site_i, salts)
        if chosen[1] - chosen[0] + 1 > DAILY_AFTER_SOLS:
            axes = _daily_panels(fig, gs, ds, site_i, salts, idx, x_all[idx])
            series = False  # drawn: skip the step-by-step panels
    if series:
        x = x_all[idx]
        dx = float(np.median(np.diff(x))) if x.size > 1 else 1.0 / 24
        sub = ds.isel(time=idx, site=site_i)
        ax_t = fig.add_subplot(gs[0])
        axes = [ax_t] + [fig.add_subplot(gs[i], sharex=ax_t) for i in range(1, n_time)]
        # panel 1: temperatures
        ax_t.plot(x, sub["salt_temperature"].values, color="black", lw=1.4, label="salt")
        if "surface_temperature" in sub:
            ax_t.plot(x, sub["surface_temperature"].values, color="#D55E00", lw=1.1, ls="--", label="surface")
        if "air_temperature" in sub:
            ax_t.plot(x, sub["air_temperature"].values, color="#009E73", lw=1.0, ls=":",
                      label="air at the sensor height")
        ax_t.set_ylabel("temperature [K]")
        _legend_right(ax_t, title="temperature", title_fontsize=8)
        # panel 2: humidity and the salts' deliquescence RH
        ax_h = axes[1]
        rh = sub["relative_humidity"].values
        ax_h.plot(x, rh, color="#0072B2", lw=1.4, label="RH (liquid water)")
        top = np.nanmax(rh) if np.isfinite(rh).any() else 1.0
        if "relative_humidity_ice" in sub:
            rhi = sub["relative_humidity_ice"].values
            ax_h.plot(x, rhi, color="#56B4E9", lw=1.1, ls="--", label="RH w.r.t. ice")
            top = max(top, np.nanmax(rhi) if np.isfinite(rhi).any() else 0.0)
        T_salt = sub["salt_temperature"].values
        for k, name in enumerate(salts):
            drh = _drh_series(name, T_salt)
            if np.isfinite(drh).any():
                ax_h.plot(x, drh, color=SALT_COLOURS[k % len(SALT_COLOURS)], lw=1.0, ls=":",
                          label=f"DRH {name}")
        ax_h.set_ylim(0.0, min(max(1.02, 1.05 * top), 1.6))
        ax_h.set_ylabel("relative humidity [–]")
        _legend_right(ax_h, title="humidity", title_fontsize=8)
        # panels 3..: phase state band + liquid water
        band = 0.2
        for k, name in enumerate(salts):
            ax = axes[2 + k]
            ph = sub["phase_state"].sel(salt=name).values
            for code in STATE_COLOURS:
                spans = [(x[a], (x[b - 1] + dx) - x[a]) for a, b, v in _runs(ph) if v == code]
                if spans:
                    ax.broken_barh(spans, (0.0, band * 0.85), facecolors=STATE_COLOURS[code], lw=0, zorder=2)
            ax.set_ylim(0.0, 1.0)
            ax.set_yticks([])
            ax.set_ylabel(name, rotation=0, ha="right", va="center", fontsize=10, fontweight="bold")
            tw = ax.twinx()
            lw = sub["liquid_water"].sel(salt=name).values if "liquid_water" in sub else np.zeros_like(x)
            lw_top = float(np.nanmax(lw)) if np.isfinite(lw).any() else 0.0
            if lw_top > 0:
                tw.plot(x, lw, color="black", lw=1.2)
                ticks = _ticks(0.0, lw_top)
            else:
                lw_top = 1.0
                ticks = [0.0]
                ax.text(0.5, 0.6, "no liquid in these sols", transform=ax.transAxes, ha="center",
                        va="center", fontsize=8, color="0.35")
            top = 1.12 * lw_top
            tw.set_ylim(-band / (1 - band) * top, top)
            tw.set_yticks(ticks)
            tw.tick_params(labelsize=8)
            tw.yaxis.set_major_formatter("{x:g}")
            tw.set_ylabel("liquid water\n[kg m⁻²]", fontsize=8)
            tw.axhline(0.0, color="0.6", lw=0.5, zorder=1)
            if k == 0:
                handles = [Patch(color=STATE_COLOURS[c], label=_state_label(c)) for c in STATE_COLOURS]
                many = len(salts) > 1
                leg = _legend_right(ax, handles=handles, title="phase state (band)", title_fontsize=8,
                                    ncol=1 if many else 2)
                # with several salts the legend hangs down the margin beside the salt panels
                leg.set_in_layout(not many)
        for ax in axes[:-1]:
            ax.tick_params(labelbottom=False)
        night = _night_shading(axes, ds, site_i, idx, x)
        ax_last = axes[-1]
        ax_last.set_xlim(x[0], x[-1] + dx)
        ax_last.set_xlabel(f"{_day_word(ds)} since run start" + (" (grey: the sun below the horizon at the site)"
                                                                  if night else ""))
        for ax in axes:
            ax.grid(axis="x", color="0.85", lw=0.6)
            ax.set_axisbelow(True)
    if yearly:
        axes.append(_yearly_panel(fig, gs[len(ratios) - 1], ds, site_i, salts))
    # titles and the caution
    title = str(ds.attrs.get("scenario_name") or ds.attrs.get("title") or "wetcycle result")
    where = _site_text(ds, site_i, site_name)
    sub_t = f"sols {chosen[0]}–{chosen[1]}" if chosen else "statistics only: this result saved no time series"
    law = ds.attrs.get("law")
    fig.suptitle(f"{title} — {where}\n{sub_t}" + (f" · time law: {law}" if law else ""), fontsize=11)
    fig.text(0.5, 0.008, CAVEAT, ha="center", va="bottom", fontsize=8, style="italic", color="0.3")
    return fig


def _ticks(lo, hi):
    from matplotlib.ticker import MaxNLocator
    return [t for t in MaxNLocator(nbins=3).tick_values(lo, hi) if lo <= t <= hi * 1.0001]


def _site_text(ds, i, name):
    out = f"site {name}"
    if "latitude" in ds.coords and "longitude" in ds.coords:
        lat = float(ds["latitude"].values[i])
        lon = float(ds["longitude"].values[i])
        out += f" ({abs(lat):.1f}°{'N' if lat >= 0 else 'S'}, {lon % 360:.1f}°E)"
    return out


def _yearly_panel(fig, spec, ds, site_i, salts):
    ax = fig.add_subplot(spec)
    hours = ds["liquid_hours_by_ls"].isel(site=site_i)
    centres = np.asarray(ds["ls_bin"].values, dtype=float) if "ls_bin" in ds.coords else 15.0 + 30.0 * np.arange(12)
    width = (np.median(np.diff(centres)) if centres.size > 1 else 30.0) * 0.84
    w = width / len(salts)
    total = 0.0
    for k, name in enumerate(salts):
        h = np.nan_to_num(hours.sel(salt=name).values, nan=0.0)
        total += float(np.nansum(h))
        label = name
        if "liquid_hours_per_year" in ds:
            label += f"  ({float(ds['liquid_hours_per_year'].sel(salt=name).isel(site=site_i)):.0f} h/yr)"
        ax.bar(centres - width / 2 + (k + 0.5) * w, h, width=w, color=SALT_COLOURS[k % len(SALT_COLOURS)],
               edgecolor="white", lw=0.3, label=label)
    if total == 0:
        ax.text(0.5, 0.5, "no liquid in any Ls bin", transform=ax.transAxes, ha="center", va="center",
                fontsize=9, color="0.35")
        ax.set_ylim(0, 1)
    ax.set_xlim(0, 360)
    ax.set_xticks(np.arange(0, 361, 30))
    ax.set_xlabel("solar longitude Ls [°] (bins of 30°)")
    ax.set_ylabel("liquid hours\nin the bin [h]")
    ax.set_title("hours with liquid brine by season (per occurrence of each Ls bin simulated; "
                 "bins not simulated are empty)", fontsize=9, loc="left")
    ax.grid(axis="y", color="0.85", lw=0.6)
    ax.set_axisbelow(True)
    _legend_right(ax, title="salt (total per year)", title_fontsize=8)
    return ax


def plot_result(ds, path, *, sols=None, salts=None, site=0):
    """Draw a result's phase history and yearly liquid hours; save to ``path``.

    Panels (series results): (1) salt and surface temperature [K]; (2) relative
    humidity w.r.t. liquid water and ice, with each salt's deliquescence RH at the
    salt temperature (masked outside the salt's validity range); (3...) per salt,
    the phase state as a colour band and the liquid water [kg m-2] on the right
    axis; (last) liquid hours by Ls bin (per occurrence simulated), bars grouped by salt.  A result
    with statistics only gets the last panel alone.  A window longer than
    ``DAILY_AFTER_SOLS`` sols is drawn as daily summaries instead (daily temperature and RH
    ranges, liquid hours per sol).  Local night (the sun below the horizon at the site, from
    its latitude, Ls and local solar time) is shaded where the result has ``local_solar_time``.

    Parameters
    ----------
    ds : xarray.Dataset or path
        A wetcycle site result (see DEVELOPERS.md, "Result files"), its NetCDF file, or a
        :func:`wetcycle.run_series` dataset.
    path : str or Path
        Output file, ``.png``, ``.pdf`` or ``.svg``; its directory must exist.
    sols : (int, int), optional
        First and last sol (inclusive, run sol numbers).  Default: three sols
        from the first sol with liquid for any chosen salt (else the first three).
    salts : list of str, optional
        Salts to show (case ignored); default all of the result's.
    site : int or str
        Site index or name; default the first.

    Returns
    -------
    pathlib.Path

    Raises
    ------
    ConfigError
        Salt or site not in the result, sols outside the run, bad file suffix or directory.
    InputDataError
        Not a wetcycle result, or neither series nor statistics in it.
    """
    return _save(result_figure(ds, sols=sols, salts=salts, site=site), path)


# ---- phase diagram ----------------------------------------------------------------------
def diagram_figure(name, *, trajectory=None, site=0, T_range=None, n_points=400):
    """The figure of :func:`plot_diagram` (a ``matplotlib.figure.Figure``); same arguments."""
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch
    from .salts import load
    from .water import ice_water_activity
    system = load(name)
    lo, hi = system.T_min, system.T_max
    if T_range is not None:
        try:
            lo, hi = (float(v) for v in T_range)
        except (TypeError, ValueError):
            raise ConfigError(f"T_range: {T_range!r} is not a pair (low, high) in K") from None
        if not (system.T_min <= lo < hi <= system.T_max):
            raise ValidityError(f"T_range: ({lo:g}, {hi:g}) K must be increasing and inside the validity of "
                                f"{system.name} ({system.T_min:g}-{system.T_max:g} K)")
    traj = _trajectory(trajectory, site, system.name) if trajectory is not None else None

    T = np.linspace(lo, hi, n_points)
    stable = np.asarray(system.stable_solid(T), dtype=object)
    drh = np.asarray(system.deliquescence_rh(T), dtype=float)
    cold = T <= T_MELT
    aw_ice = np.full(T.shape, np.nan)
    aw_ice[cold] = ice_water_activity(T[cold])
    eut = system.eutectic()
    Te = eut["temperature_K"] if eut else -np.inf
    above_e = T >= Te
    # upper edge of the crystalline field: DRH above the eutectic, the frost line below it
    cryst_top = np.where(above_e, drh, aw_ice)
    ordered = sorted(system.solids, key=lambda s: s.hydration)
    trans = {h["lower"]: np.asarray(h["rh"], dtype=float) for h in system.hydration_transitions(T)}

    fig = _new_figure(10.5, 6.8)
    fig.get_layout_engine().set(rect=(0.0, 0.035, 1.0, 0.965))
    ax = fig.add_subplot()
    handles = []
    fields = []                                    # (lower, upper, label) for in-plot names
    # fields: crystalline hydrates stacked by water content, split by the hydration RH
    bottom = np.zeros_like(T)
    for j, s in enumerate(ordered):
        top = np.minimum(trans[s.name], cryst_top) if s.name in trans else cryst_top
        top = np.where(np.isfinite(top), np.maximum(top, bottom), np.nan)
        colour = _tint(STATE_COLOURS[CRYSTALLINE], 0.16 + 0.34 * j / max(len(ordered) - 1, 1))
        ax.fill_between(T, bottom, top, where=np.isfinite(top), color=colour, lw=0, zorder=0)
        fields.append((bottom, top, f"crystalline\n{s.name}"))
        handles.append(Patch(color=colour, label=f"crystalline {s.name}"))
        bottom = np.where(np.isfinite(top), top, bottom)
    brine_top = np.where(cold, aw_ice, 1.0)
    for mask, lower, upper, colour, label in (
            (above_e & np.isfinite(drh), drh, brine_top, _tint(STATE_COLOURS[BRINE], 0.28), "brine"),
            (above_e & cold, aw_ice, 1.0, _tint(STATE_COLOURS[BRINE_WITH_ICE], 0.35), "brine with ice"),
            (~above_e & cold, aw_ice, 1.0, _tint(STATE_COLOURS[FROZEN], 0.4), "frozen (ice + hydrate)")):
        if mask.any():
            ax.fill_between(T, lower, upper, where=mask, color=colour, lw=0, zorder=0)
            fields.append((np.where(mask, lower, np.nan), np.where(mask, upper, np.nan), label.replace(" (", "\n(")))
            handles.append(Patch(color=colour, label=label))
    gap = above_e & ~np.isfinite(drh)
    if gap.any():
        ax.fill_between(T, 0.0, 1.0, where=gap, facecolor="white", edgecolor="0.7", hatch="xx", lw=0, zorder=0)
        handles.append(Patch(facecolor="white", edgecolor="0.7", hatch="xx",
                             label=f"saturation above {system.m_max:g} mol/kg\n(outside the model)"))
    # supercooled brine: between the supercooling limit and the eutectic, above the ERH
    erh = system.efflorescence_rh
    scl = system.supercooling_limit
    if eut and scl is not None and Te > lo:
        # the model follows a supercooled brine only down to its validity limit T_min
        t_low = max(scl, system.T_min)
        sc = (T >= max(t_low, lo)) & (T <= Te)
        ax.fill_between(T, erh or 0.0, 1.0, where=sc, facecolor="none", edgecolor=STATE_COLOURS[SUPERCOOLED],
                        hatch="///", lw=0, zorder=1)
        where = (f"{t_low:.0f} K; published limit {scl:.0f} K" if scl < system.T_min else f"{scl:.0f} K")
        handles.append(Patch(facecolor="none", edgecolor=STATE_COLOURS[SUPERCOOLED], hatch="///",
                             label=f"supercooled brine possible\n(eutectic down to {where}, above ERH)"))
    # lines
    for j, s in enumerate(ordered):
        colour = SALT_COLOURS[j % 7]
        d = np.asarray(system.deliquescence_rh(T, s.name), dtype=float)
        is_stable = (stable == s.name) & above_e
        ax.plot(T, np.where(is_stable, d, np.nan), color=colour, lw=2.2, zorder=3)
        ax.plot(T, np.where(is_stable, np.nan, d), color=colour, lw=1.0, ls=":", zorder=3)
        handles.append(Line2D([], [], color=colour, lw=2.2, label=f"DRH {s.name}"))
    handles.append(Line2D([], [], color="0.3", lw=1.0, ls=":", label="DRH where metastable"))
    for rh in trans.values():
        ax.plot(T, np.where(rh <= cryst_top, rh, np.nan), color="#7A6A00", lw=0.9, ls="-.", zorder=3)
    if trans:
        handles.append(Line2D([], [], color="#7A6A00", lw=0.9, ls="-.", label="solid-state hydration RH"))
    if cold.any():
        ax.plot(T, aw_ice, color=STATE_COLOURS[BRINE], lw=1.6, ls="--", zorder=3)
        handles.append(Line2D([], [], color=STATE_COLOURS[BRINE], lw=1.6, ls="--",
                              label="ice saturation (RH = $a_{w,ice}$)"))
    if eut and lo <= Te <= hi:
        ax.axvline(Te, color="black", lw=1.2, zorder=4)
        handles.append(Line2D([], [], color="black", lw=1.2, label=f"eutectic {Te:.1f} K"))
    if erh:
        ax.axhline(erh, color="#D55E00", lw=1.2, ls="--", zorder=4)
        handles.append(Line2D([], [], color="#D55E00", lw=1.2, ls="--",
                              label=f"efflorescence RH {erh:.2f}\n(brine persists above it)"))
    elif erh is not None:
        handles.append(Line2D([], [], ls="", label="no efflorescence observed: a drying brine\n"
                                                   "persists to the end of its range"))
    s_nuc = system.metastability.get("ice_nucleation_rh_ice")
    if s_nuc and cold.any():
        lim = np.where(cold, s_nuc * aw_ice, np.nan)
        ax.plot(T, np.where(lim <= 1.0, lim, np.nan), color=STATE_COLOURS[BRINE_WITH_ICE], lw=1.0, ls=(0, (1, 1)),
                zorder=3)
        handles.append(Line2D([], [], color=STATE_COLOURS[BRINE_WITH_ICE], lw=1.0, ls=(0, (1, 1)),
                              label=f"ice nucleates in brine (RH over ice {s_nuc:.2f});\n"
                                    "below it, brine without ice stays liquid"))
    # trajectory
    if traj is not None:
        tT, trh, ph, where = traj
        n_out = int((~((tT >= lo) & (tT <= hi))).sum())
        head = f"run at {where}" + (f"\n({n_out} of {tT.size} points off the T axis)" if n_out else "")
        handles.append(Line2D([], [], ls="", label=head))
        ax.plot(tT, trh, color="0.25", lw=0.3, alpha=0.15 if tT.size > 2000 else 0.45, zorder=5)
        if ph is None:
            ax.scatter(tT, trh, s=9, color="0.35", zorder=5, lw=0, rasterized=True)
            handles.append(Line2D([], [], color="0.35", marker="o", ls="", label="  state not modelled (salt not in run)"))
        else:
            for code, colour in STATE_COLOURS.items():
                m = ph == code
                if m.any():
                    ax.scatter(tT[m], trh[m], s=12, color=colour, edgecolor="black", lw=0.25, zorder=5,
                               rasterized=True)
                    handles.append(Line2D([], [], color=colour, marker="o", markeredgecolor="black",
                                          markeredgewidth=0.25, ls="", label=f"  {_state_label(code)}"))
    ax.set_xlim(lo, hi)
    ax.set_ylim(0.0, 1.0)
    ax.set_xlabel("temperature [K]")
    ax.set_ylabel("relative humidity w.r.t. liquid water [–]")
    secx = ax.secondary_xaxis("top", functions=(lambda t: t - 273.15, lambda c: c + 273.15))
    secx.set_xlabel("temperature [°C]", fontsize=8)
    secx.tick_params(labelsize=8)
    ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.02, 1.0), borderaxespad=0.0,
              frameon=False, fontsize=8)
    fig.suptitle(f"{system.name} – water: temperature–humidity phase diagram", fontsize=12)
    fig.text(0.5, 0.008, "Boundaries derived from the Pitzer model and solubility products of the system's "
             "data file; fields are equilibrium phases. " + CAVEAT, ha="center", va="bottom", fontsize=7.5,
             style="italic", color="0.3")
    _label_fields(fig, ax, T, fields, prefer=T > Te + 0.03 * (hi - lo))
    return fig


def _label_order(h, prefer):
    """Candidate columns for a label: the middle of the field's tall part first (preferred columns)."""
    order = []
    for mask in (prefer, ~prefer):
        hm = np.where(mask, h, 0.0)
        if hm.max() <= 0:
            continue
        tall = np.flatnonzero(hm >= 0.6 * hm.max())
        mid = np.median(tall)
        order += sorted(tall, key=lambda i: abs(i - mid))[::3]
        order += [i for i in np.argsort(-hm, kind="stable")[::5] if hm[i] > 0 and i not in set(tall)]
    return order[:80]


def _label_fields(fig, ax, T, fields, prefer):
    """Write each field's name where it fits inside the field (after layout, so sizes are final)."""
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    to_data = ax.transData.inverted()
    for lower, upper, text in fields:
        lower = np.broadcast_to(np.asarray(lower, dtype=float), T.shape)
        upper = np.broadcast_to(np.asarray(upper, dtype=float), T.shape)
        h = np.where(np.isfinite(lower) & np.isfinite(upper), upper - lower, 0.0)
        for i in _label_order(h, prefer):
            t = ax.text(T[i], 0.5 * (lower[i] + upper[i]), text, ha="center", va="center", fontsize=8,
                        color="0.15", zorder=6, linespacing=1.1)
            t.set_in_layout(False)
            (x0, y0), (x1, y1) = to_data.transform(t.get_window_extent(renderer).expanded(1.08, 1.25))
            cols = (T >= x0) & (T <= x1)
            if (x0 >= T[0] and x1 <= T[-1] and cols.any()
                    and np.all(lower[cols] <= y0) and np.all(upper[cols] >= y1)):
                break
            t.remove()


def _trajectory(ds, site, salt):
    ds = _open(ds)
    if not _has_series(ds) or "relative_humidity" not in ds:
        raise InputDataError("trajectory: the result has no series (salt_temperature, relative_humidity); "
                             "run with series saved")
    i = _site_index(ds, site)
    sub = ds.isel(site=i)
    T = np.asarray(sub["salt_temperature"].values, dtype=float)
    rh = np.asarray(sub["relative_humidity"].values, dtype=float)
    match = [str(s) for s in ds["salt"].values if str(s).lower() == salt.lower()]
    ph = np.asarray(sub["phase_state"].sel(salt=match[0]).values) if match else None
    return T, rh, ph, f"site {ds['site'].values[i]}"


def plot_diagram(name, path, *, trajectory=None, site=0, T_range=None):
    """Draw the temperature-humidity phase diagram of one salt system; save to ``path``.

    Everything is derived from the system's thermodynamic model
    (:func:`wetcycle.salts.load`): the deliquescence RH of each solid (thick
    where that solid is stable with its saturated brine, dotted where
    metastable), the solid-state hydration RH between successive hydrates, the
    ice saturation line RH = a_w,ice(T) (Murphy & Koop 2005), the stable
    eutectic, the efflorescence RH and the supercooling limit of the data file.
    Fields: crystalline (each hydrate), brine, brine with ice (between the
    eutectic and 273.15 K, above the ice line), frozen (ice + hydrate, below the
    eutectic above the ice line; below the ice line the salt stays crystalline
    since ice sublimates there), and hatched where a supercooled brine may
    persist (supercooling limit to eutectic, above the efflorescence RH).

    Parameters
    ----------
    name : str
        Salt-system name (``wetcycle.salts.names()``; case ignored).
    path : str or Path
        Output file, ``.png``, ``.pdf`` or ``.svg``; its directory must exist.
    trajectory : xarray.Dataset or path, optional
        A result with series: its (salt_temperature, relative_humidity) at ``site``
        are drawn, coloured by this salt's phase_state if the salt is in it, else grey.
    site : int or str
        Site of the trajectory (index or name).
    T_range : (float, float) [K], optional
        Temperature axis; default, and limit, the system's validity range.

    Returns
    -------
    pathlib.Path

    Raises
    ------
    UnknownNameError
        Unknown salt system.
    ValidityError
        T_range outside the system's validity.
    InputDataError
        Trajectory without series.
    ConfigError
        Site not in the trajectory, bad file suffix or directory.
    """
    return _save(diagram_figure(name, trajectory=trajectory, site=site, T_range=T_range), path)
