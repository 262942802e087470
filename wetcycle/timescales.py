"""Time scales: civil UTC time stamps <-> Julian dates in Terrestrial Time.

The orbital geometry (:mod:`wetcycle.orbit`) is written in Terrestrial Time
(TT); measured forcing and scenario start dates are given in UTC.  The two
differ by TT - UTC = (TAI - UTC) + 32.184 s, where TAI - UTC is the whole
number of seconds accumulated by leap seconds.

Method
------
TT - TAI = 32.184 s exactly (IAU 1991, Resolution A4).  TAI - UTC is looked
up in the leap-second table of IERS Bulletin C (values from memory, listed
below).  The table starts on 1972-01-01, when UTC became TAI minus a whole
number of seconds; earlier UTC time stamps are refused.  No leap second has
been announced after 2017-01-01 as far as this table knows; later dates use
37 s -- a future leap second would make times after it 1 s off.

Conventions
-----------
* ``jd_tt`` [d]: Julian date in TT.  UTC values are naive or
  timezone-aware ISO-8601 strings, :class:`datetime.datetime` or
  ``numpy.datetime64`` (naive means UTC).
* A leap second itself (``23:59:60``) cannot be represented by
  ``numpy.datetime64`` and is refused on input.

References
----------
1. IERS Bulletin C (International Earth Rotation and Reference Systems
   Service), table of TAI - UTC since 1972.
2. IAU (1991), Resolution A4, Recommendation IV: TT - TAI = 32.184 s.
"""

from __future__ import annotations

import datetime as _dt

import numpy as np

from .errors import ValidityError

__all__ = ["J2000", "utc_to_jd_tt", "jd_tt_to_utc", "tt_minus_utc_days"]

#: J2000.0 epoch, 2000 January 1 12:00 TT [JD] (IAU 1976 system; common practice).
J2000 = 2451545.0
#: 1970-01-01T00:00 UTC as a Julian date [d] (common practice).
_UNIX_EPOCH_JD = 2440587.5
#: TT - TAI = 32.184 s exactly (IAU 1991).
_TT_MINUS_TAI_S = 32.184

#: TAI - UTC [s] from each UTC date on (IERS Bulletin C), from memory.
_LEAP_TABLE = (
    ("1972-01-01", 10), ("1972-07-01", 11), ("1973-01-01", 12), ("1974-01-01", 13),
    ("1975-01-01", 14), ("1976-01-01", 15), ("1977-01-01", 16), ("1978-01-01", 17),
    ("1979-01-01", 18), ("1980-01-01", 19), ("1981-07-01", 20), ("1982-07-01", 21),
    ("1983-07-01", 22), ("1985-07-01", 23), ("1988-01-01", 24), ("1990-01-01", 25),
    ("1991-01-01", 26), ("1992-07-01", 27), ("1993-07-01", 28), ("1994-07-01", 29),
    ("1996-01-01", 30), ("1997-07-01", 31), ("1999-01-01", 32), ("2006-01-01", 33),
    ("2009-01-01", 34), ("2012-07-01", 35), ("2015-07-01", 36), ("2017-01-01", 37),
)
#: Start of each table row as a UTC Julian date [d].
_LEAP_JD = np.array(
    [(_dt.date.fromisoformat(d) - _dt.date(1970, 1, 1)).days + _UNIX_EPOCH_JD for d, _ in _LEAP_TABLE]
)
#: TAI - UTC of each row [s].
_LEAP_S = np.array([s for _, s in _LEAP_TABLE], dtype=float)
#: Start of each row as a TT Julian date [d]: TT is continuous across a leap second, so the
#: row applies from UTC midnight + the row's own offset on.
_LEAP_JD_TT = _LEAP_JD + (_LEAP_S + _TT_MINUS_TAI_S) / 86400.0


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


def utc_to_jd_tt(utc):
    """Convert UTC time stamps to Julian dates in Terrestrial Time.

    TT = UTC + (TAI - UTC) + 32.184 s, with TAI - UTC from the leap-second
    table of IERS Bulletin C (module docstring).

    Parameters
    ----------
    utc : str, datetime, numpy.datetime64 or array of these
        ISO-8601 strings ("2024-01-31T06:00:00Z"; no offset means UTC).
        Valid from 1972-01-01 (start of the leap-second era).

    Returns
    -------
    ndarray [d]
        Julian date (TT), same shape as the input (at least 1-D).

    Raises
    ------
    ValidityError
        For a string that is not ISO-8601, or a time before 1972-01-01.

    Examples
    --------
    >>> round(float(utc_to_jd_tt("2024-01-01T00:00:00Z")[0] - 2460310.5) * 86400.0, 3)
    69.184
    """
    t = _to_datetime64(utc)
    jd_utc = (t - np.datetime64("1970-01-01T00:00:00", "ns")) / np.timedelta64(1, "D") + _UNIX_EPOCH_JD
    if np.any(jd_utc < _LEAP_JD[0]):
        raise ValidityError(
            f"time: {np.min(t)} UTC is not allowed; allowed: 1972-01-01 or later "
            "(start of the leap-second table)"
        )
    idx = np.searchsorted(_LEAP_JD, jd_utc, side="right") - 1
    return jd_utc + (_LEAP_S[idx] + _TT_MINUS_TAI_S) / 86400.0


def tt_minus_utc_days(jd_tt):
    """TT - UTC [d] at Julian dates in TT: ((TAI - UTC) + 32.184 s) / 86400.

    The table row is chosen by TT (each row starts at TT = UTC midnight +
    its own offset), so the result is exact on both sides of a leap second.

    Parameters
    ----------
    jd_tt : float or array [d]
        Julian date (TT), from 1972-01-01 on (start of the leap-second table).

    Returns
    -------
    ndarray [d]   same shape as ``jd_tt``

    Raises
    ------
    ValidityError  for a date before 1972-01-01 or not finite.
    """
    jd_tt = np.asarray(jd_tt, dtype=float)
    bad = ~((jd_tt >= _LEAP_JD_TT[0]) & np.isfinite(jd_tt))
    if np.any(bad):
        raise ValidityError(
            f"jd_tt: {float(jd_tt[bad].flat[0] if jd_tt.ndim else jd_tt)!r} is not allowed; allowed: "
            f"JD(TT) >= {_LEAP_JD_TT[0]:.6f} (1972-01-01 UTC, start of the leap-second table)"
        )
    idx = np.searchsorted(_LEAP_JD_TT, jd_tt, side="right") - 1
    return (_LEAP_S[idx] + _TT_MINUS_TAI_S) / 86400.0


def jd_tt_to_utc(jd_tt):
    """Inverse of :func:`utc_to_jd_tt`: Julian dates (TT) to UTC time stamps.

    UTC = TT - (TT - UTC), with TT - UTC from :func:`tt_minus_utc_days`.  A
    leap second itself (23:59:60) is not representable in ``datetime64`` and
    comes out as the following 00:00:00.  Rounded to the nanosecond.

    Parameters
    ----------
    jd_tt : float or array [d]
        Julian date (TT), from 1972-01-01 on (ValidityError before).

    Returns
    -------
    ndarray of datetime64[ns]   UTC, naive; at least 1-D.
    """
    jd_tt = np.atleast_1d(np.asarray(jd_tt, dtype=float))
    jd_utc = jd_tt - tt_minus_utc_days(jd_tt)
    ns = np.round((jd_utc - _UNIX_EPOCH_JD) * 86400e9).astype("int64")
    return np.datetime64("1970-01-01T00:00:00", "ns") + ns.astype("timedelta64[ns]")
