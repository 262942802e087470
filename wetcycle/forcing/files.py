"""Forcing read from files: CSV with a header, or NetCDF through xarray.

Both readers return a :class:`~wetcycle.forcing.prescribed.ForcingSeries` in
SI units on the caller's clock (``clock.time_s``), by linear interpolation in
time between the file's samples (values at the clock's step start times; no
extrapolation: the file must cover the whole clock).

Units convention
----------------
CSV columns are named ``<quantity>_<unit>``; NetCDF variables carry a
``units`` attribute.  Accepted (other spellings are refused):

==================  =====================================  ==============================
quantity            CSV column names                        NetCDF ``units``
==================  =====================================  ==============================
time (relative)     ``time_s``, ``time_sol``                ``s``, ``seconds``, ``sol``
time (absolute)     ``time_utc`` (ISO-8601, UTC)            ``<unit> since <date>`` (CF)
temperature         ``temperature_K``, ``temperature_degC`` ``K``, ``degC``
vapour pressure     ``vapor_pressure_Pa``, ``_hPa``         ``Pa``, ``hPa``
relative humidity   ``relative_humidity`` (0-1),            ``1``, ``fraction``, ``%``,
                    ``relative_humidity_percent``           ``percent``
surface pressure    ``surface_pressure_Pa``, ``_hPa``       ``Pa``, ``hPa``
==================  =====================================  ==============================

Relative times count from the clock start (``time_sol`` in sols of the
clock's planet).  Absolute times are placed with the clock's ``jd_tt``.

NetCDF ``calendar`` (CF conventions, sec. 4.4.1): ``standard``,
``gregorian`` and ``proleptic_gregorian`` are decoded as real dates.  The
model calendars ``noleap``/``365_day``, ``all_leap``/``366_day`` and
``360_day`` are moved to real dates by ``xarray.convert_calendar``
(:func:`model_calendar_dates`): a date label keeps its meaning, as
climate-model output is meant; a label the real calendar lacks (29 February
of a common year, 30 February) is dropped, and a day a model lacks (a leap
day in ``noleap``, the 31st of a month in ``360_day``) is a one-day gap (see
Gaps).  Other calendars (``julian``, ``none``) are refused.
Relative humidity is with respect to liquid water.  Lines of a CSV file that
begin with ``#`` are comments.

Gaps
----
``gap_policy="refuse"`` (default): any missing value (empty, ``NaN``, ``NA``,
or a NetCDF fill value) or missing row (a time step more than 1.5 times the
median spacing) is an error.  ``gap_policy="interpolate"`` with
``max_gap_s``: missing values are filled linearly in time, provided no
stretch between two valid samples is longer than ``max_gap_s`` [s].  Every
error is one line naming the file, the column (variable) and the row (index).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from ..errors import ConfigError, InputDataError, ValidityError
from ..timescales import utc_to_jd_tt
from .prescribed import RANGES, ForcingSeries

__all__ = ["read_csv_forcing", "read_netcdf_forcing", "CSV_COLUMNS", "NETCDF_UNITS", "NETCDF_NAMES"]

_K0 = 273.15
# CSV column -> (quantity, converter to SI)
CSV_COLUMNS = {
    "time_s": ("time", None),
    "time_sol": ("time", "sol"),
    "time_utc": ("time", "utc"),
    "temperature_K": ("temperature_K", lambda x: x),
    "temperature_degC": ("temperature_K", lambda x: x + _K0),
    "vapor_pressure_Pa": ("vapor_pressure_Pa", lambda x: x),
    "vapor_pressure_hPa": ("vapor_pressure_Pa", lambda x: 100.0 * x),
    "relative_humidity": ("relative_humidity", lambda x: x),
    "relative_humidity_percent": ("relative_humidity", lambda x: 0.01 * x),
    "surface_pressure_Pa": ("surface_pressure_Pa", lambda x: x),
    "surface_pressure_hPa": ("surface_pressure_Pa", lambda x: 100.0 * x),
}
#: Our names for NetCDF mapping -> quantity
NETCDF_NAMES = {"time": "time", "temperature": "temperature_K", "vapor_pressure": "vapor_pressure_Pa",
                "relative_humidity": "relative_humidity", "surface_pressure": "surface_pressure_Pa"}
#: Allowed NetCDF units per quantity -> converter to SI
NETCDF_UNITS = {
    "temperature_K": {"K": lambda x: x, "degC": lambda x: x + _K0},
    "vapor_pressure_Pa": {"Pa": lambda x: x, "hPa": lambda x: 100.0 * x},
    "surface_pressure_Pa": {"Pa": lambda x: x, "hPa": lambda x: 100.0 * x},
    "relative_humidity": {"1": lambda x: x, "fraction": lambda x: x,
                          "%": lambda x: 0.01 * x, "percent": lambda x: 0.01 * x},
}
_MISSING = {"", "nan", "na", "n/a"}
_REAL_CALENDARS = ("standard", "gregorian", "proleptic_gregorian")
_MODEL_CALENDARS = ("noleap", "365_day", "all_leap", "366_day", "360_day")
_GAP_POLICIES = ("refuse", "interpolate")


def _check_policy(gap_policy, max_gap_s):
    if gap_policy not in _GAP_POLICIES:
        raise ConfigError(f"gap_policy: {gap_policy!r} is not allowed; allowed: {', '.join(_GAP_POLICIES)}")
    if gap_policy == "interpolate":
        if isinstance(max_gap_s, bool) or max_gap_s is None or not np.isfinite(max_gap_s) or max_gap_s <= 0:
            raise ConfigError(f"max_gap_s: {max_gap_s!r} is not allowed; allowed: a number > 0 s "
                              "with gap_policy='interpolate'")


def _relative_seconds(kind, values, clock):
    """File times -> seconds since the clock start."""
    if kind == "utc":
        return (utc_to_jd_tt(values) - clock.jd_tt[0]) * 86400.0
    if kind == "jd_tt":
        return (np.asarray(values, dtype=float) - clock.jd_tt[0]) * 86400.0
    if kind == "sol":
        return np.asarray(values, dtype=float) * clock.planet.sol_s
    return np.asarray(values, dtype=float)


def model_calendar_dates(values, tunits, calendar):
    """Times of a model calendar as real dates: ``(datetime64[ns] dates, kept indices)``.

    Each time is decoded in its own calendar (cftime) and moved to the real (proleptic
    Gregorian) calendar by ``xarray.convert_calendar``: a date label keeps its meaning (a
    "noleap" 1 July is 1 July); a label the real calendar lacks (29 February of a common year in
    "all_leap", 30 February in "360_day") is dropped, and real days a model lacks (31 March in
    "360_day") have no sample.  Dropped and missing days become gaps (see Gaps in the module
    notes).

    Raises ValueError/TypeError/OverflowError (from cftime) for undecodable units.
    """
    import cftime
    import xarray as xr

    dates = cftime.num2date(values, tunits, calendar=calendar, only_use_cftime_datetimes=True)
    da = xr.DataArray(np.arange(np.size(values)), dims="t", coords={"t": np.ravel(dates)})
    conv = da.convert_calendar("proleptic_gregorian", dim="t", use_cftime=False,
                               align_on="date" if calendar == "360_day" else None)
    return conv["t"].values.astype("datetime64[ns]"), conv.values


def _model_calendar_seconds(src, tname, tunits, values, calendar, clock):
    """'<unit> since <date>' in a model calendar -> (seconds since the clock start, kept indices)."""
    try:
        dates, keep = model_calendar_dates(values, tunits, calendar)
    except (ValueError, TypeError, OverflowError) as exc:
        raise InputDataError(f"{src}: variable {tname!r}: units {tunits!r} could not be decoded in calendar "
                             f"{calendar!r} ({exc})") from None
    try:
        return _relative_seconds("utc", dates, clock), keep
    except ValidityError as exc:
        raise InputDataError(f"{src}: variable {tname!r}: {exc}") from None


def _assemble(src, t_file, cols, clock, gap_policy, max_gap_s, label, as_series=True):
    """Check times, ranges and gaps, then interpolate onto clock.time_s.

    cols : {quantity: (values_SI, column_label)}; label(i) names row i for messages.
    Returns a ForcingSeries, or with ``as_series=False`` a dict quantity -> values on the clock.
    """
    if t_file.size < 2:
        raise InputDataError(f"{src}: has {t_file.size} data rows; allowed: at least 2")
    d = np.diff(t_file)
    if np.any(~(d > 0)):
        i = int(np.flatnonzero(~(d > 0))[0]) + 1
        raise InputDataError(f"{src}: {label(i)}, time column: times must increase strictly "
                             f"({t_file[i - 1]:.3f} s then {t_file[i]:.3f} s after the clock start)")
    if gap_policy == "refuse":
        med = float(np.median(d))
        big = d > 1.5 * med
        if np.any(big):
            i = int(np.flatnonzero(big)[0])
            raise InputDataError(
                f"{src}: {label(i + 1)}, time column: {d[i]:g} s after the previous row, more than 1.5 x the "
                f"median spacing {med:g} s (missing rows); gap_policy 'refuse' (use 'interpolate' with max_gap_s)")
    for qty, (v, colname) in cols.items():
        lo, hi = _CELL_RANGES[qty]
        nan = np.isnan(v)
        bad = ~nan & ~((v >= lo) & (v <= hi))
        if np.any(bad):
            i = int(np.flatnonzero(bad)[0])
            raise InputDataError(f"{src}: {label(i)}, column {colname!r}: {float(v[i])!r} (as {qty}) is outside "
                                 f"the allowed {lo:g}-{hi:g}")
        if np.any(nan) and gap_policy == "refuse":
            i = int(np.flatnonzero(nan)[0])
            raise InputDataError(f"{src}: {label(i)}, column {colname!r}: missing value; gap_policy "
                                 "'refuse' (use 'interpolate' with max_gap_s)")
    t_clock = clock.time_s
    if t_clock[0] < t_file[0] or t_clock[-1] > t_file[-1]:
        raise InputDataError(
            f"{src}: covers {t_file[0]:g} to {t_file[-1]:g} s of the run; the clock needs "
            f"{t_clock[0]:g} to {t_clock[-1]:g} s (no extrapolation)")
    out = {}
    for qty, (v, colname) in cols.items():
        nan = np.isnan(v)
        if np.any(nan):
            good = np.flatnonzero(~nan)
            if good.size < 2:
                raise InputDataError(f"{src}: column {colname!r}: fewer than 2 valid values")
            tg = t_file[good]
            # a gap at either end cannot be interpolated: it must lie outside the clock span
            if tg[0] > t_clock[0] or tg[-1] < t_clock[-1]:
                i = int(good[0] - 1) if tg[0] > t_clock[0] else int(good[-1] + 1)
                raise InputDataError(f"{src}: {label(i)}, column {colname!r}: missing values at the edge of "
                                     "the record, inside the clock span (no extrapolation)")
            gaps = np.diff(tg)
            if np.any(gaps > max_gap_s):
                k = int(np.flatnonzero(gaps > max_gap_s)[0])
                raise InputDataError(
                    f"{src}: {label(int(good[k]) + 1)}, column {colname!r}: gap of {gaps[k]:g} s between valid "
                    f"values exceeds max_gap_s = {max_gap_s:g} s")
            out[qty] = np.interp(t_clock, tg, v[good])
        else:
            if gap_policy == "interpolate" and np.any(d > max_gap_s):
                k = int(np.flatnonzero(d > max_gap_s)[0])
                raise InputDataError(f"{src}: {label(k + 1)}, time column: gap of {d[k]:g} s between rows "
                                     f"exceeds max_gap_s = {max_gap_s:g} s")
            out[qty] = np.interp(t_clock, t_file, v)
    return ForcingSeries(time_s=t_clock, **out) if as_series else out


def _check_quantities(src, qtys, what):
    if "temperature_K" not in qtys:
        raise InputDataError(f"{src}: no temperature {what}; allowed: temperature_K or temperature_degC")
    if ("vapor_pressure_Pa" in qtys) == ("relative_humidity" in qtys):
        raise InputDataError(f"{src}: give exactly one humidity {what} (vapour pressure or relative humidity)")


def _line_table(raw):
    """Physical lines of a CSV text (bytes), vectorised: data-line numbers and fields per line.

    Returns (line numbers [1-based] of the data lines, the header first; field counts of those
    lines; 0-based numbers of the comment lines).  A comment line begins with ``#`` after
    optional blanks; blank lines are skipped; fields are separated by commas (no quoted commas).
    """
    b = np.frombuffer(raw, np.uint8)
    nl = np.flatnonzero(b == 10)
    starts = np.concatenate([[0], nl + 1])
    ends = np.concatenate([nl, [b.size]])
    if starts[-1] >= b.size:
        starts, ends = starts[:-1], ends[:-1]
    # the first non-blank character of each line: the line's first byte, except on the (rare)
    # lines that start with a blank, which are looked at one by one
    first = starts.copy()
    lead = np.flatnonzero((starts < ends) & np.isin(b[np.minimum(starts, b.size - 1)], (9, 13, 32)))
    for i in lead:
        text = raw[starts[i]:ends[i]]
        first[i] = starts[i] + len(text) - len(text.lstrip(b" \t\r")) if text.strip() else ends[i]
    blank = first >= ends
    comment = ~blank & (b[np.minimum(first, b.size - 1)] == ord("#"))
    commas = np.bincount(np.searchsorted(starts, np.flatnonzero(b == 44), side="right") - 1,
                         minlength=starts.size)
    data = ~blank & ~comment
    return np.flatnonzero(data) + 1, commas[data] + 1, np.flatnonzero(comment)


def read_csv_forcing(path, clock, *, gap_policy="refuse", max_gap_s=None, ignore_columns=()):
    """Read a forcing series from a CSV file with a header row (conventions in the module notes).

    Parsed by ``pandas.read_csv`` (C engine); a spreadsheet's byte-order mark is accepted.

    Parameters
    ----------
    path : str or Path
    clock : wetcycle.clock.Clock    target grid (``time_s``), planet and start date
    gap_policy : "refuse" or "interpolate"
    max_gap_s : float [s], > 0      longest stretch filled when interpolating
    ignore_columns : iterable of str   extra columns to skip (others are refused)

    Returns
    -------
    ForcingSeries   on ``clock.time_s``, SI units

    Raises
    ------
    InputDataError   one line naming the file, the row (with its line number) and the column.
    ConfigError      bad gap policy.
    """
    import codecs
    import io

    _check_policy(gap_policy, max_gap_s)
    path = Path(path)
    src = path.name
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise InputDataError(f"{path}: cannot be read ({exc.strerror})") from None
    raw = raw[len(codecs.BOM_UTF8):] if raw.startswith(codecs.BOM_UTF8) else raw
    line_no, n_fields, comments = _line_table(raw)
    if line_no.size == 0:
        raise InputDataError(f"{src}: no header row")
    header_line = int(line_no[0])

    def label(i):
        return f"row {i + 1} (line {line_no[i + 1]})"

    bad = np.flatnonzero(n_fields[1:] != n_fields[0])
    if bad.size:
        i = int(bad[0])
        raise InputDataError(f"{src}: {label(i)}: {n_fields[i + 1]} fields, the header has {n_fields[0]}")
    try:
        header = [h.strip() for h in raw.split(b"\n", header_line)[header_line - 1].decode().split(",")]
    except UnicodeDecodeError:
        raise InputDataError(f"{path}: is not UTF-8 text") from None
    ignore = set(ignore_columns)
    cols, seen = {}, {}
    for h in header:
        if h in ignore:
            continue
        if h not in CSV_COLUMNS:
            raise InputDataError(f"{src}: line {header_line}, column {h!r} is not known; allowed: "
                                 f"{', '.join(CSV_COLUMNS)} (or pass ignore_columns)")
        qty = CSV_COLUMNS[h][0]
        if qty in seen:
            raise InputDataError(f"{src}: columns {seen[qty]!r} and {h!r} both give {qty}; allowed: one")
        seen[qty] = h
        cols[h] = True
    if "time" not in seen:
        raise InputDataError(f"{src}: no time column; allowed: time_s, time_sol, time_utc")
    _check_quantities(src, seen, "column")
    missing_tokens = sorted({t for m in _MISSING for t in (m, m.upper(), m.capitalize())})
    try:
        table = pd.read_csv(io.BytesIO(raw), skiprows=list(comments) or None, header=0, names=header,
                            usecols=list(cols), skipinitialspace=True, na_values=missing_tokens,
                            keep_default_na=False, dtype={"time_utc": str}, engine="c")
    except UnicodeDecodeError:
        raise InputDataError(f"{path}: is not UTF-8 text") from None
    except (ValueError, pd.errors.ParserError) as exc:
        raise InputDataError(f"{src}: not a readable CSV table ({str(exc).splitlines()[0]})") from None
    data = {}
    for h in cols:
        col = table[h]
        if CSV_COLUMNS[h][1] == "utc":
            missing = col.isna().to_numpy()
            if missing.any():
                raise InputDataError(f"{src}: {label(int(np.flatnonzero(missing)[0]))}, column {h!r}: missing time")
            data[h] = col.str.strip().to_numpy(dtype=str)
            continue
        if col.dtype.kind != "f" and col.dtype.kind not in "iu":
            text = col.astype(str).str.strip()
            vals = pd.to_numeric(text.where(~col.isna(), "nan"), errors="coerce").to_numpy(dtype=float)
            notnum = ~col.isna().to_numpy() & np.isnan(vals)
            if notnum.any():
                i = int(np.flatnonzero(notnum)[0])
                raise InputDataError(f"{src}: {label(i)}, column {h!r}: {text.iloc[i]!r} is not a number")
        else:
            vals = col.to_numpy(dtype=float)
        inf = np.isinf(vals)
        if inf.any():
            i = int(np.flatnonzero(inf)[0])
            raise InputDataError(f"{src}: {label(i)}, column {h!r}: {str(table[h].iloc[i])!r} is not a finite number")
        data[h] = vals
    th = seen["time"]
    kind = CSV_COLUMNS[th][1]
    if kind == "utc":
        stamps = pd.to_datetime(pd.Series(data[th]), utc=True, format="ISO8601", errors="coerce")
        if stamps.isna().any():  # row-level parse errors first, in one vectorised pass
            i = int(np.flatnonzero(stamps.isna().to_numpy())[0])
            try:
                utc_to_jd_tt(data[th][i])
            except ValueError as exc:
                raise InputDataError(f"{src}: {label(i)}, column {th!r}: {exc}") from None
        t_file = _relative_seconds("utc", data[th], clock)
    else:
        tv = np.array(data[th], dtype=float)
        if np.any(np.isnan(tv)):
            i = int(np.flatnonzero(np.isnan(tv))[0])
            raise InputDataError(f"{src}: {label(i)}, column {th!r}: missing time")
        t_file = _relative_seconds(kind, tv, clock)
    qcols = {CSV_COLUMNS[h][0]: (CSV_COLUMNS[h][1](np.array(data[h], dtype=float)), h)
             for h in cols if h != th}
    return _assemble(src, t_file, qcols, clock, gap_policy, max_gap_s, label)


def read_netcdf_forcing(path, clock, variables, *, gap_policy="refuse", max_gap_s=None):
    """Read a forcing series from a NetCDF file with xarray, mapping our names to the file's.

    Parameters
    ----------
    path : str or Path
    clock : wetcycle.clock.Clock
    variables : dict
        Our name -> variable name in the file.  Our names: ``time``,
        ``temperature``, ``vapor_pressure`` or ``relative_humidity``, and
        optionally ``surface_pressure``.  Variables must be 1-D along time and
        carry a ``units`` attribute from the table in the module notes.
    gap_policy, max_gap_s : see :func:`read_csv_forcing`

    Returns
    -------
    ForcingSeries   on ``clock.time_s``, SI units

    Raises
    ------
    InputDataError   one line naming the file, the variable and the index.
    ConfigError      bad mapping or gap policy.
    """
    import xarray as xr

    _check_policy(gap_policy, max_gap_s)
    if not isinstance(variables, dict):
        raise ConfigError(f"variables: {variables!r} is not allowed; allowed: a dict of our name -> file variable")
    unknown = set(variables) - set(NETCDF_NAMES)
    if unknown:
        raise ConfigError(f"variables: {sorted(unknown)[0]!r} is not one of our names; allowed: {', '.join(NETCDF_NAMES)}")
    if "time" not in variables:
        raise ConfigError("variables: 'time' is missing; map it to the file's time variable")
    path = Path(path)
    src = path.name
    try:
        ds = xr.open_dataset(path, decode_times=False, decode_timedelta=False)
    except (OSError, ValueError) as exc:
        raise InputDataError(f"{path}: cannot be read as NetCDF ({exc})") from None
    with ds:
        arrays = {}
        for ours, theirs in variables.items():
            if theirs not in ds.variables:
                raise InputDataError(f"{src}: variable {theirs!r} (for {ours}) is not in the file; "
                                     f"it has: {', '.join(map(str, ds.variables))}")
            da = ds[theirs]
            if da.ndim != 1:
                raise InputDataError(f"{src}: variable {theirs!r} has dimensions {da.dims}; allowed: 1-D along time")
            units = da.attrs.get("units")
            if units is None:
                raise InputDataError(f"{src}: variable {theirs!r} has no units attribute")
            arrays[ours] = (da, str(units).strip())
        tda, tunits = arrays.pop("time")
        tname = variables["time"]
        for ours, (da, _) in arrays.items():
            if da.dims != tda.dims or da.size != tda.size:
                raise InputDataError(f"{src}: variable {variables[ours]!r} ({ours}) has dimensions "
                                     f"{dict(da.sizes)}; allowed: the time variable's {dict(tda.sizes)}")
        calendar = str(tda.attrs.get("calendar", "standard")).strip().lower()
        keep = None
        if " since " in tunits and calendar in _MODEL_CALENDARS:
            t_file, keep = _model_calendar_seconds(src, tname, tunits, np.asarray(tda.values, dtype=float),
                                                   calendar, clock)
        elif " since " in tunits and calendar in _REAL_CALENDARS:
            try:
                dec = xr.decode_cf(xr.Dataset({"_t": ("_n", tda.values, dict(tda.attrs))}))["_t"].values
            except (ValueError, TypeError, OverflowError):
                dec = np.array([], dtype=object)
            if dec.dtype.kind != "M":
                raise InputDataError(f"{src}: variable {tname!r}: units {tunits!r} could not be decoded")
            t_file = _relative_seconds("utc", dec.astype("datetime64[ns]"), clock)
        elif " since " in tunits:
            raise InputDataError(f"{src}: variable {tname!r}: calendar {calendar!r} not allowed; allowed: "
                                 f"{', '.join(_REAL_CALENDARS + _MODEL_CALENDARS)}")
        elif tunits in ("s", "seconds", "second"):
            t_file = _relative_seconds("s", tda.values, clock)
        elif tunits in ("sol", "sols"):
            t_file = _relative_seconds("sol", tda.values, clock)
        else:
            raise InputDataError(f"{src}: variable {variables['time']!r}: units {tunits!r} not allowed; allowed: "
                                 "s, sol, or '<unit> since <date>'")
        if np.any(np.isnan(t_file)):
            i = int(np.flatnonzero(np.isnan(t_file))[0])
            raise InputDataError(f"{src}: variable {variables['time']!r}, index {i}: missing time")
        qcols = {}
        for ours, (da, units) in arrays.items():
            qty = NETCDF_NAMES[ours]
            conv = NETCDF_UNITS[qty].get(units)
            if conv is None:
                raise InputDataError(f"{src}: variable {variables[ours]!r} ({ours}): units {units!r} not allowed; "
                                     f"allowed: {', '.join(NETCDF_UNITS[qty])}")
            v = conv(np.asarray(da.values, dtype=float))
            qcols[qty] = (v if keep is None else v[keep], variables[ours])
    _check_quantities(src, qcols, "variable")
    return _assemble(src, t_file, qcols, clock, gap_policy, max_gap_s, lambda i: f"index {i}")


# ---- NetCDF forcing on (time, lat, lon): climate-model and gridded measured fields ----------
#: Our names in ``forcing.variables`` -> quantity; ``time`` and ``temperature`` (the surface
#: temperature) and one of vapour pressure / relative humidity are required.
CELL_NAMES = dict(NETCDF_NAMES, water_frost="water_frost_kg_m2", salt_temperature="salt_temperature_K")
_CELL_UNITS = dict(NETCDF_UNITS, water_frost_kg_m2={"kg m-2": lambda x: x, "kg/m2": lambda x: x,
                                                   "kg m**-2": lambda x: x},
                   salt_temperature_K=NETCDF_UNITS["temperature_K"])
_CELL_RANGES = dict(RANGES, water_frost_kg_m2=(0.0, 1.0e4), salt_temperature_K=RANGES["temperature_K"])


def _horizontal(ds, da, src, theirs):
    """Names of the latitude and longitude dimensions of ``da`` (CF: by standard name or units)."""
    found = {}
    for dim in da.dims:
        if dim not in ds.coords:
            continue
        c = ds[dim]
        std = str(c.attrs.get("standard_name", "")).lower()
        units = str(c.attrs.get("units", "")).lower()
        if std == "latitude" or units in ("degrees_north", "degree_north", "degrees_n") or dim in ("lat", "latitude"):
            found["lat"] = dim
        elif std == "longitude" or units in ("degrees_east", "degree_east", "degrees_e") or dim in ("lon", "longitude"):
            found["lon"] = dim
    if set(found) != {"lat", "lon"}:
        raise InputDataError(f"{src}: variable {theirs!r} has dimensions {da.dims}; allowed: time only, or time "
                             "with latitude and longitude coordinates (CF standard_name or degrees_north/east units)")
    return found["lat"], found["lon"]


def _nearest(src, axis, values, wanted, periodic):
    """Index of the file cell nearest each wanted coordinate; refused beyond half a file spacing."""
    v = np.asarray(values, dtype=float)
    w = np.asarray(wanted, dtype=float)
    d = v[None, :] - w[:, None]
    if periodic:
        d = (d + 180.0) % 360.0 - 180.0
    idx = np.argmin(np.abs(d), axis=1)
    step = float(np.median(np.abs(np.diff(np.sort(v))))) if v.size > 1 else 360.0
    far = np.abs(d[np.arange(w.size), idx]) > 0.5 * step + 1e-6
    if np.any(far):
        k = int(np.flatnonzero(far)[0])
        raise InputDataError(f"{src}: does not cover {axis} {w[k]:g} (nearest {v[idx[k]]:g}, file spacing "
                             f"{step:g} degrees)")
    return idx


def _interp_cells(src, t_file, v, t_clock, qty, colname, gap_policy, max_gap_s):
    """Check one quantity [file time, cell] and interpolate it onto the clock, all cells at once."""
    lo, hi = _CELL_RANGES[qty]
    nan = np.isnan(v)
    bad = ~nan & ~((v >= lo) & (v <= hi))
    if np.any(bad):
        i, c = (int(x[0]) for x in np.nonzero(bad))
        raise InputDataError(f"{src}: index {i}, cell {c}, variable {colname!r}: {float(v[i, c])!r} (as {qty}) is "
                             f"outside the allowed {lo:g}-{hi:g}")
    if np.any(nan):
        if gap_policy == "refuse":
            i, c = (int(x[0]) for x in np.nonzero(nan))
            raise InputDataError(f"{src}: index {i}, cell {c}, variable {colname!r}: missing value; gap_policy "
                                 "'refuse' (use 'interpolate' with max_gap_s)")
        out = np.empty((t_clock.size, v.shape[1]))
        for c in np.flatnonzero(nan.any(axis=0)):  # only cells with gaps, one at a time
            out[:, c] = _assemble(src, t_file, {qty: (v[:, c], colname)}, _ClockTimes(t_clock), gap_policy,
                                  max_gap_s, lambda i, c=c: f"index {i}, cell {c}", as_series=False)[qty]
        clean = ~nan.any(axis=0)
    else:
        out = np.empty((t_clock.size, v.shape[1]))
        clean = np.ones(v.shape[1], bool)
    # one set of interpolation weights for every clean cell
    j = np.clip(np.searchsorted(t_file, t_clock, side="right") - 1, 0, t_file.size - 2)
    w = (t_clock - t_file[j]) / (t_file[j + 1] - t_file[j])
    out[:, clean] = v[j][:, clean] * (1.0 - w[:, None]) + v[j + 1][:, clean] * w[:, None]
    return out


class _ClockTimes:
    """A stand-in clock holding only ``time_s`` (for :func:`_assemble` on one cell)."""

    def __init__(self, t):
        self.time_s = t


def read_netcdf_cells(path, clock, variables, latitude, longitude, *, gap_policy="refuse", max_gap_s=None,
                      time_block=4096):
    """Read forcing for cells from a NetCDF file on (time[, lat, lon]), as climate models write it.

    Parameters
    ----------
    path : str or Path
    clock : wetcycle.clock.Clock
    variables : dict
        Our name -> the file's variable: ``time``, ``temperature`` (surface) and ``vapor_pressure``
        or ``relative_humidity``; optional ``surface_pressure``, ``water_frost`` [kg m-2] and
        ``salt_temperature``.  Units from each variable's ``units`` (module notes).
    latitude, longitude : array [cell] [degrees north, east]
        The cells.  A variable on (time, lat, lon) is taken at the nearest file cell (within
        half its spacing; latitudes in either direction, longitudes 0-360 or -180-180); a
        variable on time alone applies to every cell.  Dimensions in any order.
    gap_policy, max_gap_s : see :func:`read_csv_forcing`
    time_block : int
        File records read at a time (dask chunks): a file larger than memory is read lazily,
        only the cells asked for.

    Returns
    -------
    dict quantity -> ndarray [step, cell] in SI units on ``clock.time_s`` (quantities as in
    :data:`CELL_NAMES`).
    """
    import xarray as xr

    _check_policy(gap_policy, max_gap_s)
    if not isinstance(variables, dict):
        raise ConfigError(f"forcing.variables: {variables!r} is not allowed; allowed: a table of our name = "
                          "the file's variable")
    unknown = set(variables) - set(CELL_NAMES)
    if unknown:
        raise ConfigError(f"forcing.variables.{sorted(unknown)[0]}: not one of our names; allowed: "
                          f"{', '.join(CELL_NAMES)}")
    if "time" not in variables:
        raise ConfigError("forcing.variables.time: missing; map it to the file's time variable")
    path = Path(path)
    src = path.name
    lat = np.atleast_1d(np.asarray(latitude, dtype=float))
    lon = np.atleast_1d(np.asarray(longitude, dtype=float))
    try:
        ds = xr.open_dataset(path, decode_times=False, decode_timedelta=False, chunks={})
    except (OSError, ValueError) as exc:
        raise InputDataError(f"{path}: cannot be read as NetCDF ({exc})") from None
    with ds:
        for ours, theirs in variables.items():
            if theirs not in ds.variables:
                raise InputDataError(f"{src}: variable {theirs!r} (for {ours}) is not in the file; "
                                     f"it has: {', '.join(map(str, ds.variables))}")
        tda = ds[variables["time"]]
        if tda.ndim != 1:
            raise InputDataError(f"{src}: variable {variables['time']!r} (time) has dimensions {tda.dims}; allowed: 1-D")
        tdim = tda.dims[0]
        t_file, keep = _file_seconds(src, variables["time"], tda, clock)
        cols = {}
        for ours, theirs in variables.items():
            if ours == "time":
                continue
            da = ds[theirs]
            if tdim not in da.dims:
                raise InputDataError(f"{src}: variable {theirs!r} ({ours}) has dimensions {da.dims}; allowed: "
                                     f"the time dimension {tdim!r} with or without latitude and longitude")
            units = da.attrs.get("units")
            qty = CELL_NAMES[ours]
            conv = _CELL_UNITS[qty].get(None if units is None else str(units).strip())
            if conv is None:
                raise InputDataError(f"{src}: variable {theirs!r} ({ours}): units {units!r} not allowed; allowed: "
                                     f"{', '.join(_CELL_UNITS[qty])}")
            if da.ndim == 1:
                v = np.repeat(np.asarray(da.values, dtype=float)[:, None], lat.size, axis=1)
            else:
                ydim, xdim = _horizontal(ds, da, src, theirs)
                extra = set(da.dims) - {tdim, ydim, xdim}
                if extra:
                    raise InputDataError(f"{src}: variable {theirs!r} has other dimensions {sorted(extra)}; "
                                         "allowed: time, latitude, longitude")
                ii = _nearest(src, "latitude", ds[ydim].values, lat, periodic=False)
                jj = _nearest(src, "longitude", ds[xdim].values, lon, periodic=True)
                sel = da.chunk({tdim: time_block}).isel({ydim: xr.DataArray(ii, dims="_cell"),
                                                         xdim: xr.DataArray(jj, dims="_cell")})
                v = np.asarray(sel.transpose(tdim, "_cell").values, dtype=float)
            v = conv(v)
            cols[qty] = (v if keep is None else v[keep], theirs)
    _check_quantities(src, cols, "variable")
    t_clock = clock.time_s
    _assemble(src, t_file, {}, clock, gap_policy, max_gap_s, lambda i: f"index {i}", as_series=False)  # times
    return {qty: _interp_cells(src, t_file, v, t_clock, qty, name, gap_policy, max_gap_s)
            for qty, (v, name) in cols.items()}


def _file_seconds(src, tname, tda, clock):
    """A file's time variable as seconds since the clock start (and the records kept)."""
    import xarray as xr

    tunits = str(tda.attrs.get("units", "")).strip()
    if not tunits:
        raise InputDataError(f"{src}: variable {tname!r} has no units attribute")
    calendar = str(tda.attrs.get("calendar", "standard")).strip().lower()
    values = np.asarray(tda.values, dtype=float)
    if " since " in tunits and calendar in _MODEL_CALENDARS:
        return _model_calendar_seconds(src, tname, tunits, values, calendar, clock)
    if " since " in tunits and calendar in _REAL_CALENDARS:
        try:
            dec = xr.decode_cf(xr.Dataset({"_t": ("_n", values, dict(tda.attrs))}))["_t"].values
        except (ValueError, TypeError, OverflowError):
            dec = np.array([], dtype=object)
        if dec.dtype.kind != "M":
            raise InputDataError(f"{src}: variable {tname!r}: units {tunits!r} could not be decoded")
        return _relative_seconds("utc", dec.astype("datetime64[ns]"), clock), None
    if " since " in tunits:
        raise InputDataError(f"{src}: variable {tname!r}: calendar {calendar!r} not allowed; allowed: "
                             f"{', '.join(_REAL_CALENDARS + _MODEL_CALENDARS)}")
    if tunits in ("s", "seconds", "second"):
        return _relative_seconds("s", values, clock), None
    if tunits in ("sol", "sols"):
        return _relative_seconds("sol", values, clock), None
    raise InputDataError(f"{src}: variable {tname!r}: units {tunits!r} not allowed; allowed: s, sol, or "
                         "'<unit> since <date>'")


def salt_temperature_from_surface(surface_temperature, dt_s, depth_m, thermal_inertia, density, heat_capacity,
                                  planet):
    """Temperature at the salt's depth under a prescribed surface temperature series (per cell).

    Method: the project's regolith conduction (:mod:`wetcycle.forcing.regolith`, implicit
    Crank-Nicolson on a grid resolving the diurnal skin depth) driven by the file's surface
    temperature as the upper boundary, insulated at the bottom.  The column starts at the series'
    mean surface temperature, runs through the series once to spin up, and the second pass gives
    the result: the series is taken as representative of the period before it (a year, or a
    season of a roughly periodic record).  A cell at depth 0 gets its surface temperature.

    Parameters
    ----------
    surface_temperature : ndarray [step, cell] [K], on a uniform step ``dt_s`` [s]
    depth_m, thermal_inertia, density, heat_capacity : array [cell]
        [m], [J m-2 K-1 s-1/2], [kg m-3], [J kg-1 K-1] (validated ranges of the scenario schema).
    planet : wetcycle.orbit.Planet (sets the diurnal and annual skin depths of the grid)

    Returns
    -------
    ndarray [step, cell] [K]
    """
    from .regolith import build_columns, conduct_prescribed, factorize, probe_weights

    T = np.ascontiguousarray(surface_temperature, dtype=float)
    depth = np.broadcast_to(np.asarray(depth_m, dtype=float), (T.shape[1],))
    if not np.any(depth > 0):
        return T.copy()
    cols = build_columns(np.broadcast_to(thermal_inertia, depth.shape), np.broadcast_to(density, depth.shape),
                         np.broadcast_to(heat_capacity, depth.shape), planet.sol_s, planet.year_days * 86400.0)
    fac = factorize(cols, float(dt_s))
    idx, w = probe_weights(cols, depth)
    start = np.repeat(T.mean(axis=0)[None, :], cols.n_nodes, axis=0)
    spun, _ = conduct_prescribed(start, T, fac, idx, w)
    _, probe = conduct_prescribed(spun, T, fac, idx, w)
    return np.where(depth[None, :] > 0, probe, T)
