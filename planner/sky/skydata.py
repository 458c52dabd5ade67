"""The bundled planetary ephemeris and time scale. Nothing is ever downloaded.

DE421 comes from the skyfield-data package; skyfield's built-in tables give ΔT and leap seconds.
astropy (used by some checks) is told never to fetch IERS tables: astropy-iers-data ships them.
"""

from __future__ import annotations

import functools
import warnings

import numpy as np

from planner.core.errors import InputError
from planner.core.timegrid import SPAN_TEXT

#: Span of DE421 (JD TDB), with a day of margin each side for light-time.
DE421_FIRST_JD = 2414864.5 + 1.0
DE421_LAST_JD = 2471184.5 - 1.0


@functools.lru_cache(maxsize=1)
def timescale():
    from skyfield.api import load

    return load.timescale(builtin=True)


@functools.lru_cache(maxsize=1)
def planets():
    """DE421 as a skyfield SpiceKernel, read from the skyfield-data package."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        from skyfield.api import Loader
        from skyfield_data import get_skyfield_data_path

        return Loader(get_skyfield_data_path(), expire=False, verbose=False)("de421.bsp")


def no_iers_download() -> None:
    """Keep astropy offline: IERS tables come from astropy-iers-data, never from the network."""
    from astropy.utils import iers

    iers.conf.auto_download = False
    iers.conf.auto_max_age = None


def utc_times(times_utc: np.ndarray, file: str = "command line", field: str = "time"):
    """datetime64[ns] UTC array → skyfield Time (vectorised), checked against DE421's span."""
    t = np.atleast_1d(np.asarray(times_utc, dtype="datetime64[ns]"))
    ns = (t - np.datetime64("2000-01-01T00:00:00", "ns")).astype(np.int64)
    day, ns_of_day = np.divmod(ns, 86_400_000_000_000)
    # Whole days go in the day argument and the rest in seconds, so leap seconds are not added twice.
    st = timescale().utc(2000, 1, 1 + day, 0, 0, ns_of_day / 1e9)
    tdb = np.atleast_1d(st.tdb)
    if tdb.size and (tdb.min() < DE421_FIRST_JD or tdb.max() > DE421_LAST_JD):
        raise InputError(file, field, f"outside {SPAN_TEXT}")
    return st
