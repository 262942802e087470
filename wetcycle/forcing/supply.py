"""Water supply from the atmosphere: column climatologies and their vertical distribution.

The atmosphere above a site holds a column of water vapour W [kg m-2] that
varies with latitude and season.  wetcycle reads it from a table on
(Ls, latitude[, longitude]) -- the shipped default climatology, or a table of
the user's own (CSV or NetCDF) -- and turns it into the mass mixing ratio q0
of the free atmosphere just above the near-surface air, the value the
boundary layer exchanges with (:mod:`wetcycle.forcing.column`).

Vertical distribution
---------------------
Well mixed below a condensation level, saturated above it: the profile used
to retrieve and interpret spacecraft column abundances (e.g. Smith, M. D.
(2002), J. Geophys. Res. 107(E11), 5115; the column-closure form below is
common practice).  With a background temperature profile falling linearly
with height, T(z) = T0 - G z, and hydrostatic pressure
p(z) = p_s (T(z)/T0)^(g / (R_d G)) (the barometric formula for a constant
lapse rate, common practice), the saturation mixing ratio over ice is
q_sat(z) = eps p_ice(T(z)) / p(z), eps = M_w / M_air, p_ice from Murphy &
Koop (2005).  If the air is well mixed at q0 below the level z_c where
q_sat(z_c) = q0 and saturated above, the column is

    W = (1/g) [q0 (p_s - p_c) + integral from 0 to p_c of q_sat dp]

which falls monotonically as z_c rises; it is inverted for z_c, and
q0 = q_sat(z_c).  A column too large to stay unsaturated at the ground gives
q0 = q_sat(0) (flagged by ``z_c = 0``); a column so dry that the
condensation level lies above the top of the profile gives the fully mixed
q0 = W g / p_s.  The default lapse rate, 2.5 K km-1, is the mean lower
atmosphere lapse rate of Mars (Zurek, R. W. et al. (1992), in Mars, Univ.
Arizona Press, 835-933; from memory).  Validity: T0 120-300 K,
p_s 10-2e5 Pa.

References
----------
1. Murphy, D. M. and Koop, T. (2005), Q. J. R. Meteorol. Soc. 131, 1539-1565.
2. Smith, M. D. (2002), J. Geophys. Res. 107(E11), 5115, doi:10.1029/2001JE001522.
3. Wallace, J. M. and Hobbs, P. V. (2006), Atmospheric Science, 2nd ed., sec. 3.2.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path

import numpy as np
from numba import njit

from ..errors import ConfigError, InputDataError
from ..inputs import file_sha256
from ..water import MK05_ICE, MOLAR_MASS_WATER

__all__ = ["PRECIPITABLE_MICRON_KG_M2", "WaterColumnTable", "default_climatology",
           "read_column_table", "constant_mixing_ratio_table", "near_surface_mixing_ratio",
           "DEFAULT_LAPSE_RATE_K_M", "R_GAS"]

#: One precipitable micrometre of water [kg m-2] (1e-6 m x 1000 kg m-3; common practice).
PRECIPITABLE_MICRON_KG_M2 = 1.0e-3
#: Molar gas constant [J mol-1 K-1] (CODATA 2018, exact).
R_GAS = 8.314462618
#: Default lapse rate of the background atmosphere [K m-1] (Zurek et al. 1992, from memory).
DEFAULT_LAPSE_RATE_K_M = 2.5e-3
#: Largest column a table may hold [kg m-2]: 1000 pr-um, ten times the largest Mars column on
#: record (~100 pr-um, Smith 2002): larger values are taken for a unit mix-up.
MAX_COLUMN_KG_M2 = 1.0
#: Name of the default climatology file (package data).
DEFAULT_CLIMATOLOGY_FILE = "water_column_climatology.csv"

_COLUMN_UNITS = {"pr-um": PRECIPITABLE_MICRON_KG_M2, "pr_um": PRECIPITABLE_MICRON_KG_M2,
                 "pr-µm": PRECIPITABLE_MICRON_KG_M2, "precipitable_micrometre": PRECIPITABLE_MICRON_KG_M2,
                 "precipitable_micrometer": PRECIPITABLE_MICRON_KG_M2, "kg m-2": 1.0, "kg/m2": 1.0,
                 "kg m**-2": 1.0}
_LS_NAMES = ("ls", "ls_deg", "solar_longitude", "Ls")
_LAT_NAMES = ("lat", "latitude", "latitude_deg")
_LON_NAMES = ("lon", "longitude", "longitude_deg")


@dataclass(frozen=True)
class WaterColumnTable:
    """Atmospheric water column on (Ls, latitude[, longitude]) [kg m-2].

    Interpolation: linear and periodic in Ls and longitude, linear in latitude;
    poleward of the outermost latitude the outermost value holds (a table of band
    centres covers its bands to the pole).  Build with :func:`default_climatology`,
    :func:`read_column_table` or :func:`constant_mixing_ratio_table`.

    Attributes
    ----------
    ls_deg : [n_ls] strictly increasing in [0, 360)
    latitude_deg : [n_lat] strictly increasing in [-90, 90]
    longitude_deg : [n_lon] strictly increasing in [0, 360), or None (zonal table)
    column_kg_m2 : [n_ls, n_lat] or [n_ls, n_lat, n_lon], finite, >= 0
    name : str     what the run's result records as its water supply
    sha256 : str   of the file the table came from ("" for a built-in constant)
    """

    ls_deg: np.ndarray
    latitude_deg: np.ndarray
    longitude_deg: np.ndarray | None
    column_kg_m2: np.ndarray
    name: str
    sha256: str = ""
    vmr: float | None = field(default=None, compare=False)

    def __post_init__(self):
        ls = np.asarray(self.ls_deg, dtype=float)
        lat = np.asarray(self.latitude_deg, dtype=float)
        w = np.asarray(self.column_kg_m2, dtype=float)
        where = self.name
        if ls.ndim != 1 or ls.size < 1 or np.any(np.diff(ls) <= 0) or ls[0] < 0 or ls[-1] >= 360:
            raise InputDataError(f"{where}: Ls values {ls.tolist()[:6]}... not allowed; allowed: each Ls once, "
                                 "0 <= Ls < 360 (Ls 360 is Ls 0: give it once)")
        if lat.ndim != 1 or lat.size < 1 or np.any(np.diff(lat) <= 0) or lat[0] < -90 or lat[-1] > 90:
            raise InputDataError(f"{where}: latitudes {lat.tolist()[:6]}... not allowed; allowed: "
                                 "strictly increasing, -90 to 90")
        shape = (ls.size, lat.size)
        if self.longitude_deg is not None:
            lon = np.asarray(self.longitude_deg, dtype=float)
            if lon.ndim != 1 or np.any(np.diff(lon) <= 0) or lon[0] < 0 or lon[-1] >= 360:
                raise InputDataError(f"{where}: longitudes not allowed; allowed: strictly increasing, "
                                     "0 <= lon < 360 (east)")
            shape = shape + (lon.size,)
            object.__setattr__(self, "longitude_deg", lon)
        if w.shape != shape:
            raise InputDataError(f"{where}: column values have shape {w.shape}; expected {shape} "
                                 "(Ls, latitude[, longitude])")
        bad = ~(np.isfinite(w) & (w >= 0) & (w <= MAX_COLUMN_KG_M2))
        if np.any(bad):
            v = float(w[bad].flat[0])
            raise InputDataError(f"{where}: column value {v / PRECIPITABLE_MICRON_KG_M2:g} pr-um ({v:g} kg m-2) not "
                                 f"allowed; allowed: finite, 0 to {MAX_COLUMN_KG_M2 / PRECIPITABLE_MICRON_KG_M2:g} "
                                 "pr-um (check the units: 1 pr-um = 1e-3 kg m-2)")
        object.__setattr__(self, "ls_deg", ls)
        object.__setattr__(self, "latitude_deg", lat)
        object.__setattr__(self, "column_kg_m2", w)

    def column(self, ls_deg, latitude_deg, longitude_deg):
        """Column water [kg m-2] on ``[step, cell]`` for Ls ``[step]`` and cells ``[cell]``."""
        ls = np.mod(np.asarray(ls_deg, dtype=float), 360.0)
        lat = np.asarray(latitude_deg, dtype=float)
        lon = np.mod(np.asarray(longitude_deg, dtype=float), 360.0)
        i0, i1, fl = _periodic_weights(ls, self.ls_deg, 360.0)
        j0, j1, fa = _clamped_weights(lat, self.latitude_deg)
        w = self.column_kg_m2
        if self.longitude_deg is None:
            a = w[:, j0] * (1 - fa) + w[:, j1] * fa                       # [ls, cell]
        else:
            k0, k1, fo = _periodic_weights(lon, self.longitude_deg, 360.0)
            a = ((w[:, j0, k0] * (1 - fo) + w[:, j0, k1] * fo) * (1 - fa)
                 + (w[:, j1, k0] * (1 - fo) + w[:, j1, k1] * fo) * fa)
        return a[i0] * (1 - fl)[:, None] + a[i1] * fl[:, None]

    def scaled(self, factor):
        """The same table with every column multiplied by ``factor`` (0-10), e.g. 0.7 for the
        smaller polar-summer columns of later instruments; the name records the factor."""
        f = float(factor)
        if not (np.isfinite(f) and 0.0 <= f <= 10.0):
            raise ConfigError(f"forcing.water_column_scale: {factor!r} not allowed; allowed 0 to 10")
        if f == 1.0 or self.vmr is not None:
            return self
        return WaterColumnTable(self.ls_deg, self.latitude_deg, self.longitude_deg, self.column_kg_m2 * f,
                                f"{self.name} x {f:g}", self.sha256)

    def describe(self):
        """One line for a result's attributes: name and file hash."""
        return self.name + (f" (sha256 {self.sha256})" if self.sha256 else "")


def _periodic_weights(x, xp, period):
    n = xp.size
    if n == 1:
        z = np.zeros(x.shape, dtype=np.int64)
        return z, z, np.zeros(x.shape)
    xw = np.concatenate([xp, [xp[0] + period]])
    i = np.clip(np.searchsorted(xw, x, side="right") - 1, -1, n - 1)
    below = i < 0                                  # before the first point: wrap from the last
    lo = np.where(below, xp[-1] - period, xw[np.maximum(i, 0)])
    hi = np.where(below, xp[0], xw[np.maximum(i, 0) + 1])
    f = (x - lo) / (hi - lo)
    i0 = np.where(below, n - 1, i)
    i1 = np.where(below, 0, (i + 1) % n)
    return i0.astype(np.int64), i1.astype(np.int64), f


def _clamped_weights(x, xp):
    n = xp.size
    if n == 1:
        z = np.zeros(x.shape, dtype=np.int64)
        return z, z, np.zeros(x.shape)
    xc = np.clip(x, xp[0], xp[-1])
    i = np.clip(np.searchsorted(xp, xc, side="right") - 1, 0, n - 2)
    f = (xc - xp[i]) / (xp[i + 1] - xp[i])
    return i.astype(np.int64), (i + 1).astype(np.int64), f


def _from_long_frame(df, where, sha):
    """A table from long-format rows (ls_deg, latitude_deg[, longitude_deg], value)."""
    cols = set(df.columns)
    unit_cols = [c for c in ("column_pr_um", "column_kg_m2") if c in cols]
    need = {"ls_deg", "latitude_deg"}
    if not need <= cols or len(unit_cols) != 1:
        raise InputDataError(f"{where}: needs columns ls_deg, latitude_deg, optional longitude_deg, and one of "
                             f"column_pr_um, column_kg_m2; found {', '.join(df.columns)}")
    extra = sorted(cols - need - {"longitude_deg"} - set(unit_cols))
    if extra:
        raise InputDataError(f"{where}: unknown column {extra[0]!r}; allowed: ls_deg, latitude_deg, "
                             "longitude_deg, column_pr_um or column_kg_m2")
    scale = PRECIPITABLE_MICRON_KG_M2 if unit_cols[0] == "column_pr_um" else 1.0
    keys = ["ls_deg", "latitude_deg"] + (["longitude_deg"] if "longitude_deg" in cols else [])
    num = df.apply(lambda s: __import__("pandas").to_numeric(s, errors="coerce"))
    bad = num.isna().any(axis=1)
    if bad.any():
        row = int(np.flatnonzero(bad.to_numpy())[0])
        raise InputDataError(f"{where}: row {row + 1} has an empty or non-numeric value")
    if "longitude_deg" in cols:
        num["longitude_deg"] = np.mod(num["longitude_deg"], 360.0)
    vcol = num[unit_cols[0]].to_numpy()
    badv = ~np.isfinite(vcol) | (vcol < 0) | (vcol * scale > MAX_COLUMN_KG_M2)
    if badv.any():
        row = int(np.flatnonzero(badv)[0])
        raise InputDataError(f"{where}: row {row + 1}: {unit_cols[0]} = {vcol[row]:g} not allowed; allowed 0 to "
                             f"{MAX_COLUMN_KG_M2 / scale:g} (check the units)")
    if "ls_deg" in cols and (num["ls_deg"] >= 360.0).any():
        row = int(np.flatnonzero((num["ls_deg"] >= 360.0).to_numpy())[0])
        raise InputDataError(f"{where}: row {row + 1}: ls_deg = {num['ls_deg'].iloc[row]:g} not allowed; allowed "
                             "0 <= Ls < 360 (Ls 360 is Ls 0: give it once)")
    if num.duplicated(keys).any():
        row = int(np.flatnonzero(num.duplicated(keys).to_numpy())[0])
        raise InputDataError(f"{where}: row {row + 1} repeats an (Ls, latitude[, longitude]) point")
    axes = [np.unique(num[k].to_numpy()) for k in keys]
    shape = tuple(a.size for a in axes)
    if num.shape[0] != int(np.prod(shape)):
        raise InputDataError(f"{where}: {num.shape[0]} rows do not fill the grid of {' x '.join(map(str, shape))} "
                             f"points ({', '.join(keys)}); give every combination once")
    idx = tuple(np.searchsorted(a, num[k].to_numpy()) for a, k in zip(axes, keys))
    vals = np.empty(shape)
    vals[idx] = num[unit_cols[0]].to_numpy() * scale
    return WaterColumnTable(axes[0], axes[1], axes[2] if len(axes) == 3 else None, vals, where, sha)


def _read_csv(path):
    import pandas as pd
    try:
        df = pd.read_csv(path, comment="#", skipinitialspace=True, encoding="utf-8-sig", dtype=str)
    except (OSError, UnicodeDecodeError, pd.errors.ParserError, pd.errors.EmptyDataError) as exc:
        raise InputDataError(f"{path}: could not be read as a CSV text table ({type(exc).__name__})") from None
    df.columns = [c.strip() for c in df.columns]
    return _from_long_frame(df, str(path), file_sha256(path))


def _read_netcdf(path, variable):
    import xarray as xr
    try:
        ds = xr.open_dataset(path, decode_times=False)
    except (OSError, ValueError) as exc:
        first = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise InputDataError(f"{path}: could not be read as NetCDF ({first[:120]})") from None
    with ds:
        if variable is None:
            raise ConfigError(f"forcing.water_column_variable: required for a NetCDF table ({path.name}); "
                              f"it has {', '.join(map(str, ds.data_vars))}")
        if variable not in ds:
            raise ConfigError(f"forcing.water_column_variable: {variable!r} is not in {path.name}; it has "
                              f"{', '.join(map(str, ds.data_vars))}")
        v = ds[variable]
        units = str(v.attrs.get("units", "")).strip()
        if units not in _COLUMN_UNITS:
            raise InputDataError(f"{path.name}: {variable}.units {units!r} not allowed; allowed: "
                                 f"{', '.join(sorted(_COLUMN_UNITS))}")

        def dim(names, what, required=True):
            found = [d for d in v.dims if d in names]
            if not found and required:
                raise InputDataError(f"{path.name}: {variable} needs a {what} dimension named one of "
                                     f"{', '.join(names)}; it has {', '.join(v.dims)}")
            return found[0] if found else None
        dls, dlat, dlon = dim(_LS_NAMES, "Ls"), dim(_LAT_NAMES, "latitude"), dim(_LON_NAMES, "longitude", False)
        other = [d for d in v.dims if d not in (dls, dlat, dlon)]
        if other:
            raise InputDataError(f"{path.name}: {variable} has an unexpected dimension {other[0]!r}; allowed: "
                                 "Ls, latitude, optional longitude")
        order = [dls, dlat] + ([dlon] if dlon else [])
        v = v.transpose(*order)
        axes = {}
        for d in order:
            if d not in v.coords:
                raise InputDataError(f"{path.name}: dimension {d!r} has no coordinate values")
            axes[d] = np.asarray(v[d].values, dtype=float)
        vals = np.asarray(v.values, dtype=float) * _COLUMN_UNITS[units]
        if np.any(axes[dls] >= 360.0) or np.any(axes[dls] < 0.0):
            raise InputDataError(f"{path.name}: {dls} values must lie in 0 <= Ls < 360 (Ls 360 is Ls 0: give it "
                                 "once)")
        ls = axes[dls]
        lat = axes[dlat]
        perm = [np.argsort(ls), np.argsort(lat)]
        vals = vals[perm[0]][:, perm[1]]
        lon = None
        if dlon:
            lon = np.mod(axes[dlon], 360.0)
            p = np.argsort(lon)
            lon, vals = lon[p], vals[:, :, p]
        return WaterColumnTable(np.sort(ls), np.sort(lat), lon, vals, str(path), file_sha256(path))


def read_column_table(path, variable=None):
    """Read a water-column table of the user's own.

    Parameters
    ----------
    path : str or Path
        A CSV text file (``#`` comment lines allowed) in long format, one row per
        point, columns ``ls_deg``, ``latitude_deg``, optional ``longitude_deg``
        (east), and ``column_pr_um`` [precipitable micrometres] or
        ``column_kg_m2``; every combination of the axes given once.  Or a NetCDF
        file (``.nc``) with a variable on dimensions (Ls, latitude[, longitude])
        named ``ls``/``solar_longitude``, ``lat``/``latitude``, ``lon``/``longitude``,
        with ``units`` ``pr-um`` or ``kg m-2``.
    variable : str, optional
        The NetCDF variable (required for NetCDF).

    Returns
    -------
    WaterColumnTable

    Raises
    ------
    InputDataError / ConfigError  one line naming the file, column or row.
    """
    path = Path(path)
    if not path.is_file():
        raise ConfigError(f"forcing.water_column: {str(path)!r} is not a file")
    if path.suffix.lower() in (".nc", ".nc4", ".cdf"):
        return _read_netcdf(path, variable)
    return _read_csv(path)


#: Factor applied to the shipped (TES-based) table by default: 0.7, the ratio of the polar-summer
#: maxima of later instruments (SPICAM 60-70 pr-um, Trokhimovskiy et al. 2015; CRISM 60 over
#: ice-free ground, Khayat et al. 2019; both read) to TES's ~100 (Smith 2002, read).  It also
#: brings the table's 59 pr-um at Phoenix (68 N, Ls 100) to within 40 % of the ~30 measured
#: there (Savijarvi et al. 2020, read).
DEFAULT_CLIMATOLOGY_SCALE = 0.7


def default_climatology(scale=DEFAULT_CLIMATOLOGY_SCALE):
    """The shipped default column climatology (zonal mean by Ls; see its file for sources),
    times ``scale`` (default :data:`DEFAULT_CLIMATOLOGY_SCALE`; 1 gives the TES-based table)."""
    ref = resources.files("wetcycle.forcing") / "data" / DEFAULT_CLIMATOLOGY_FILE
    with resources.as_file(ref) as path:
        t = _read_csv(path)
    name = (f"wetcycle default climatology ({DEFAULT_CLIMATOLOGY_FILE}: zonal means reconstructed from "
            "memory of the TES retrievals, see the file)")
    if scale != 1.0:
        name += f" x {scale:g} (later instruments' polar-summer columns)"
    return WaterColumnTable(t.ls_deg, t.latitude_deg, None, t.column_kg_m2 * float(scale), name, t.sha256)


def constant_mixing_ratio_table(vmr):
    """A 'table' standing for a constant near-surface volume mixing ratio [mol mol-1].

    Used by the scenario field ``forcing.vapour_mixing_ratio``: the free-atmosphere mixing
    ratio is held at ``vmr`` (no column, no vertical distribution)."""
    if not (np.isfinite(vmr) and 0 <= vmr <= 0.1):
        raise ConfigError(f"forcing.vapour_mixing_ratio: {vmr!r} not allowed; allowed 0 to 0.1 mol/mol")
    return WaterColumnTable(np.array([0.0]), np.array([0.0]), None, np.zeros((1, 1)),
                            f"constant volume mixing ratio {vmr:g} mol/mol", "", vmr=float(vmr))


# ------------------------------------------------------------------------------------
# Vertical distribution (numba)
# ------------------------------------------------------------------------------------
#: Levels of the background profile used to invert the column (equally spaced in ln p from the
#: ground to the profile's top; integrals between them exact for a power law in p, see
#: :func:`free_mixing_ratio_kernel`).
PROFILE_LEVELS = 25
#: Top of the background profile [m]: 40 km, or lower where the profile reaches PROFILE_T_MIN.
PROFILE_TOP_M = 40000.0
#: Lowest temperature of the background profile [K] (Murphy & Koop's ice formula holds to 110 K;
#: the profile is cut where it would fall below this).
PROFILE_T_MIN = 115.0


@njit(cache=True, nogil=True)
def free_mixing_ratio_kernel(w, p_s, t_s, lapse, g, r_air, eps, lq, pq, wk):
    """Scalar kernel: (q0 [kg kg-1], z_c [m]) for column ``w`` [kg m-2], surface pressure
    ``p_s`` [Pa], background air temperature ``t_s`` [K] (see the module notes).  ``lq``, ``pq``
    (ln q_sat and q_sat at the levels), ``wk`` are scratch arrays of :data:`PROFILE_LEVELS` values.

    Discretisation: PROFILE_LEVELS levels equally spaced in ln p (equivalently in ln T, since
    p ~ T^(g / (R_d G))) from the ground to the profile's top (PROFILE_TOP_M, or where T falls to
    PROFILE_T_MIN).  Between two levels q_sat is taken as a power law in p (ln q_sat linear in
    ln p), whose integral over dp is exact: (q_k p_k - q_k+1 p_k+1) / (1 + alpha); the
    condensation level is found inside its segment by safeguarded Newton iteration on the column
    (the same power law).  Against an integration of the continuous profile on a 0.5-m grid the
    column closes within 1.4e-3 relative (median 5e-5, 95 % within 4e-4, over 941 random columns
    with a condensation level inside the profile; tests/test_supply.py checks six to 2e-3), where
    the earlier 81 levels 500 m apart with the trapezoid in p closed within ~1.7e-2 (median 3e-3)
    at 3.3 times the cost (0.37 against 1.2-1.4 us per call).
    NaN where the profile is warmer than 273.16 K (as psat_ice_kernel).
    """
    nz = PROFILE_LEVELS
    t_top = max(PROFILE_T_MIN, t_s - lapse * PROFILE_TOP_M)
    if not t_s > t_top:
        return w * g / p_s, 0.0
    expo = g / (r_air * lapse)
    d = math.log(t_s / t_top) / (nz - 1)          # ln T step between levels
    dlp = expo * d                                 # ln p step
    r = math.exp(-d)
    ir = 1.0 / r
    lps = math.log(p_s)
    lts = math.log(t_s)
    mk_a, mk_b, mk_c, mk_d = MK05_ICE
    base = math.log(eps) + mk_a
    # ln q_sat at each level: Murphy & Koop (2005) eq. (7) for p_ice (water.MK05_ICE, as
    # psat_ice_kernel), over p_k = p_s exp(-k dlp)
    tk = t_s
    itk = 1.0 / t_s
    for k in range(nz):
        v = base - mk_b * itk + mk_c * (lts - d * k) - mk_d * tk - (lps - dlp * k)
        lq[k] = v if tk <= 273.16 else math.nan
        tk *= r
        itk *= ir
    for k in range(nz):                            # q_sat at each level
        pq[k] = math.exp(lq[k])
    # column with the condensation level at level k: q_k (p_s - p_k) + the saturated column above
    # (pq holds q_k; p_k by recursion downwards from the top)
    ig = 1.0 / g
    rpu = math.exp(dlp)
    pk = math.exp(lps - dlp * (nz - 1))
    sat = 0.0
    wk[nz - 1] = pq[nz - 1] * (p_s - pk) * ig
    for k in range(nz - 2, -1, -1):
        pk1 = pk
        pk = pk1 * rpu
        sat += (pq[k] * pk - pq[k + 1] * pk1) / (1.0 + (lq[k] - lq[k + 1]) / dlp)
        wk[k] = (pq[k] * (p_s - pk) + sat) * ig
    if w >= wk[0]:
        return pq[0], 0.0
    if w <= wk[nz - 1]:
        return w * g / p_s, (t_s - t_top) / lapse
    if not w < wk[0]:                               # NaN: the profile is above 273.16 K
        return math.nan, math.nan
    k = 0
    while wk[k + 1] > w:
        k += 1
    # inside segment k: x = ln(p_c / p_k) in [-dlp, 0]; column at a condensation level there
    # F(x) = q_c p_s - q_k p_k e^((1+a) x) a / (1+a) - q_k+1 p_k+1 / (1+a) + S_k+1 - g w, with
    # q_c = q_k e^(a x), increasing in x: Newton, kept inside a bracket (bisection if it leaves)
    alpha = (lq[k] - lq[k + 1]) / dlp
    a1 = 1.0 + alpha
    qk = pq[k]
    pk = p_s * math.exp(-dlp * k)
    qpk = qk * pk
    qpk1 = pq[k + 1] * pk * math.exp(-dlp)
    s1 = wk[k + 1] * g - pq[k + 1] * p_s + qpk1           # saturated column above level k+1
    cst = s1 - qpk1 / a1 - g * w
    lo, hi = -dlp, 0.0
    x = -dlp * (wk[k] - w) / (wk[k] - wk[k + 1])
    for _ in range(60):
        e1 = math.exp(alpha * x)
        e2 = e1 * math.exp(x)
        fx = qk * e1 * p_s - qpk * e2 * alpha / a1 + cst
        if fx > 0.0:
            hi = x
        else:
            lo = x
        dfx = alpha * (qk * e1 * p_s - qpk * e2)
        xn = x - fx / dfx if dfx > 0.0 else 0.5 * (lo + hi)
        if not (lo < xn < hi):
            xn = 0.5 * (lo + hi)
        done = abs(xn - x) <= 1e-14 * dlp
        x = xn
        if done:
            break
    return qk * math.exp(alpha * x), t_s * (1.0 - math.exp((x - k * dlp) / expo)) / lapse


@njit(cache=True, nogil=True)
def _q0_kernel(w, ps, t0, lapse, g, r_air, eps, q0_out, zc_out):
    lq = np.empty(PROFILE_LEVELS)
    pq = np.empty(PROFILE_LEVELS)
    wk = np.empty(PROFILE_LEVELS)
    for c in range(w.size):
        q0_out[c], zc_out[c] = free_mixing_ratio_kernel(w[c], ps[c], t0[c], lapse, g, r_air, eps, lq, pq, wk)


def near_surface_mixing_ratio(column_kg_m2, surface_pressure_pa, temperature_k,
                              lapse_rate_k_m=DEFAULT_LAPSE_RATE_K_M, gravity_m_s2=3.71,
                              molar_mass_air_kg_mol=0.04334):
    """Mass mixing ratio below the condensation level for a given column (see module notes).

    Parameters
    ----------
    column_kg_m2 : array [kg m-2], >= 0
    surface_pressure_pa : array [Pa], 10-2e5
    temperature_k : array [K], 120-300   background near-surface air temperature T0
    lapse_rate_k_m : float [K m-1], 0.5e-3 to 9e-3
    gravity_m_s2, molar_mass_air_kg_mol : float   planet constants

    Returns
    -------
    q0 : ndarray [kg kg-1]      mixing ratio of the well-mixed layer
    z_c : ndarray [m]           condensation level (0: saturated at the ground;
                                the top of the profile, 40 km: fully mixed)
    """
    w, ps, t0 = np.broadcast_arrays(np.asarray(column_kg_m2, float), np.asarray(surface_pressure_pa, float),
                                    np.asarray(temperature_k, float))
    shape = w.shape
    w, ps, t0 = (np.ascontiguousarray(a.ravel()) for a in (w, ps, t0))
    for name, a, lo, hi in (("column_kg_m2", w, 0.0, np.inf), ("surface_pressure_pa", ps, 10.0, 2e5),
                            ("temperature_k", t0, 120.0, 300.0)):
        bad = ~(np.isfinite(a) & (a >= lo) & (a <= hi)) if np.isfinite(hi) else ~(np.isfinite(a) & (a >= lo))
        if np.any(bad):
            raise ConfigError(f"{name}: {float(a[bad][0])!r} not allowed; allowed {lo:g} to {hi:g}")
    if not 0.5e-3 <= lapse_rate_k_m <= 9e-3:
        raise ConfigError(f"lapse_rate_k_m: {lapse_rate_k_m!r} not allowed; allowed 0.0005 to 0.009 K/m")
    r_air = R_GAS / molar_mass_air_kg_mol
    eps = MOLAR_MASS_WATER / molar_mass_air_kg_mol
    q0 = np.empty_like(w)
    zc = np.empty_like(w)
    _q0_kernel(w, ps, t0, float(lapse_rate_k_m), float(gravity_m_s2), r_air, eps, q0, zc)
    return q0.reshape(shape), zc.reshape(shape)
