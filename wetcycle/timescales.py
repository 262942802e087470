"""Time scales: civil UTC time stamps <-> Julian dates in Terrestrial Time.

The orbital geometry (:mod:`wetcycle.orbit`) is written in Terrestrial Time
(TT); measured forcing and scenario start dates are given in UTC.  The two
differ by TT - UTC = (TAI - UTC) + 32.184 s.

Method
------
The conversions are those of the IAU SOFA/ERFA library (pyerfa): ``dtf2d``,
``utctai`` and ``taitt`` one way, ``tttai``, ``taiutc`` and ``d2dtf`` back.
ERFA keeps the table of TAI - UTC (IERS Bulletin C, leap seconds since 1972,
and the drift rates of 1960-1971 UTC), so no table is kept here; a pyerfa
release after a new leap second knows it.  UTC before 1960-01-01 is refused;
after the last leap second ERFA knows, TAI - UTC keeps its last value (a
leap second announced later would put later times 1 s off).

Conventions
-----------
* ``jd_tt`` [d]: Julian date in TT.  UTC values are naive or
  timezone-aware ISO-8601 strings, :class:`datetime.datetime` or
  ``numpy.datetime64`` (naive means UTC).
* A leap second itself (``23:59:60``) cannot be represented by
  ``numpy.datetime64`` and is refused on input; on output it comes out as
  the following 00:00:00.

References
----------
1. IAU SOFA Board, SOFA Time Scale and Calendar Tools (2021); ERFA, its
   BSD-licensed derivative, through pyerfa.
2. IERS Bulletin C (International Earth Rotation and Reference Systems
   Service), table of TAI - UTC.
3. IAU (1991), Resolution A4, Recommendation IV: TT - TAI = 32.184 s.
"""

from __future__ import annotations

import datetime as _dt
import warnings

import erfa
import numpy as np

from .errors import ValidityError

__all__ = ["J2000", "utc_to_jd_tt", "jd_tt_to_utc", "tt_minus_utc_days"]

#: J2000.0 epoch, 2000 January 1 12:00 TT [JD] (IAU 1976 system; common practice).
J2000 = 2451545.0
#: 1970-01-01T00:00 UTC as a Julian date [d] (common practice).
_UNIX_EPOCH_JD = 2440587.5
#: First UTC date ERFA converts without its "dubious year" warning.
UTC_START = "1960-01-01"
_UTC_START_JD = 2436934.5


def _to_datetime64(value):
    """Parse ISO-8601 strings / datetimes / datetime64 into datetime64[ns] (UTC, naive).

    Text is parsed in one vectorised call (pandas, ISO-8601 format); offsets are
    converted to UTC; a string that is not ISO-8601 raises ValidityError naming it.
    """
    arr = np.atleast_1d(np.asarray(value))
    if arr.dtype.kind == "M":
        return arr.astype("datetime64[ns]")
    import pandas as pd

    flat = arr.ravel()
    text = pd.Series([v.isoformat() if isinstance(v, _dt.datetime) else str(v) for v in flat]
                     if arr.dtype == object else flat.astype(str)).str.strip()
    parsed = pd.to_datetime(text, utc=True, format="ISO8601", errors="coerce")
    bad = parsed.isna().to_numpy()
    if bad.any():
        v = text.iloc[int(np.flatnonzero(bad)[0])]
        raise ValidityError(f"time: {v!r} is not an ISO-8601 UTC time stamp; allowed: e.g. 2024-01-31T06:00:00Z")
    return parsed.dt.tz_convert(None).to_numpy(dtype="datetime64[ns]").reshape(arr.shape)


def _erfa(func, *args):
    """Call an ERFA function quietly.

    ERFA warns of a "dubious year" before 1960 (refused by the callers here, before calling) and
    more than five years after its release (no leap second known that far ahead: TAI - UTC is
    held at its last value; a future leap second would put later times 1 s off).
    """
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", erfa.ErfaWarning)
        return func(*args)


def utc_to_jd_tt(utc):
    """Convert UTC time stamps to Julian dates in Terrestrial Time.

    TT = UTC + (TAI - UTC) + 32.184 s by ERFA (``dtf2d``, ``utctai``, ``taitt``).

    Parameters
    ----------
    utc : str, datetime, numpy.datetime64 or array of these
        ISO-8601 strings ("2024-01-31T06:00:00Z"; no offset means UTC).
        Valid from 1960-01-01 (start of UTC).

    Returns
    -------
    ndarray [d]
        Julian date (TT), same shape as the input (at least 1-D).

    Raises
    ------
    ValidityError
        For a string that is not ISO-8601, or a time before 1960-01-01.

    Examples
    --------
    >>> round(float(utc_to_jd_tt("2024-01-01T00:00:00Z")[0] - 2460310.5) * 86400.0, 3)
    69.184
    """
    import pandas as pd

    t = _to_datetime64(utc)
    flat = pd.DatetimeIndex(t.ravel())
    if flat.size and flat.min() < pd.Timestamp(UTC_START):
        raise ValidityError(f"time: {flat.min()} UTC is not allowed; allowed: {UTC_START} or later (start of UTC)")
    day = flat.normalize()
    sec = ((flat - day) / pd.Timedelta(1, "s")).to_numpy(dtype=float)
    # the seconds of the day go in separately: in a day with a leap second ERFA's quasi-JD has
    # 86401 s, so the fraction is taken by ERFA from h:m:s, not by dividing by 86400 here
    h = (sec // 3600).astype(int)
    m = ((sec - 3600 * h) // 60).astype(int)
    s = sec - 3600 * h - 60 * m
    u1, u2 = _erfa(erfa.dtf2d, "UTC", flat.year.to_numpy(), flat.month.to_numpy(), flat.day.to_numpy(), h, m, s)
    a1, a2 = _erfa(erfa.utctai, u1, u2)
    t1, t2 = _erfa(erfa.taitt, a1, a2)
    return np.asarray(t1 + t2, dtype=float).reshape(t.shape)


def _utc_parts(jd_tt):
    jd_tt = np.atleast_1d(np.asarray(jd_tt, dtype=float))
    bad = ~(np.isfinite(jd_tt) & (jd_tt >= _UTC_START_JD))
    if np.any(bad):
        raise ValidityError(f"jd_tt: {float(jd_tt[bad].flat[0])!r} is not allowed; allowed: JD(TT) >= "
                            f"{_UTC_START_JD} ({UTC_START} UTC, start of UTC)")
    a1, a2 = _erfa(erfa.tttai, jd_tt, np.zeros_like(jd_tt))
    return jd_tt, _erfa(erfa.taiutc, a1, a2)


def tt_minus_utc_days(jd_tt):
    """TT - UTC [d] at Julian dates in TT: ((TAI - UTC) + 32.184 s) / 86400, by ERFA.

    Exact on both sides of a leap second (the TAI - UTC of the UTC date that TT falls on).

    Parameters
    ----------
    jd_tt : float or array [d]
        Julian date (TT), from 1960-01-01 on.

    Returns
    -------
    ndarray [d]   same shape as ``jd_tt``

    Raises
    ------
    ValidityError  for a date before 1960-01-01 or not finite.
    """
    shape = np.shape(jd_tt)
    jd, (u1, u2) = _utc_parts(jd_tt)
    y, mo, d, fd = _erfa(erfa.jd2cal, u1, u2)
    dat = _erfa(erfa.dat, y, mo, d, fd)
    return ((dat + 32.184) / 86400.0).reshape(shape)


def jd_tt_to_utc(jd_tt):
    """Inverse of :func:`utc_to_jd_tt`: Julian dates (TT) to UTC time stamps (ERFA).

    A leap second itself (23:59:60) is not representable in ``datetime64`` and comes out as the
    following 00:00:00.  Rounded to the microsecond.

    Parameters
    ----------
    jd_tt : float or array [d]
        Julian date (TT), from 1960-01-01 on (ValidityError before).

    Returns
    -------
    ndarray of datetime64[ns]   UTC, naive; at least 1-D.
    """
    jd, (u1, u2) = _utc_parts(jd_tt)
    ymdf = _erfa(erfa.d2dtf, "UTC", 6, u1, u2)
    y, mo, d, hmsf = (np.atleast_1d(x) for x in ymdf)
    hmsf = np.asarray(hmsf.tolist(), dtype=np.int64).reshape(-1, 4)
    days = _dates(y, mo, d)
    us = ((hmsf[:, 0] * 60 + hmsf[:, 1]) * 60 + hmsf[:, 2]) * 1_000_000 + hmsf[:, 3]
    return (days.astype("datetime64[ns]") + us.astype("timedelta64[us]")).astype("datetime64[ns]")


def _dates(y, mo, d):
    import pandas as pd
    return pd.to_datetime(pd.DataFrame({"year": y, "month": mo, "day": d})).to_numpy(dtype="datetime64[D]")
