"""Map projection helpers (pyproj).

Street networks are planned in metres, so files in longitude/latitude
(GeoJSON, RFC 7946 section 4: WGS 84, longitude first) are projected to the
Universal Transverse Mercator (UTM) zone of the district, and projected back
to longitude/latitude when they are written out again.

Transformers are built with ``always_xy=True`` so that every coordinate pair
in Roundsman is ``(x, y)`` = ``(easting, northing)`` or ``(longitude,
latitude)``, whatever axis order the CRS definition declares.  They are cached
per CRS; pyproj (3.1 and later) makes them safe to share between threads.
"""

from __future__ import annotations

import math
from functools import lru_cache

from pyproj import CRS, Proj, Transformer
from pyproj.exceptions import CRSError

from core.errors import InputError

WGS84 = "EPSG:4326"
"""Longitude/latitude on the WGS 84 datum, the only CRS of RFC 7946 GeoJSON."""

_UTM_NORTH_LIMIT = 84.0
_UTM_SOUTH_LIMIT = -80.0
_UPS_NORTH = "EPSG:32661"
_UPS_SOUTH = "EPSG:32761"


def utm_crs_for(lon: float, lat: float) -> str:
    """The EPSG code of the WGS 84 UTM zone containing a point.

    Parameters
    ----------
    lon, lat
        Degrees on WGS 84; longitude in [-180, 180], latitude in [-90, 90].

    Returns
    -------
    str
        ``"EPSG:326zz"`` (northern hemisphere) or ``"EPSG:327zz"``
        (southern), or the Universal Polar Stereographic CRS
        (``"EPSG:32661"`` / ``"EPSG:32761"``) beyond the UTM limits of
        84° N and 80° S.

    Notes
    -----
    The zone number is the standard formula ``floor((lon + 180) / 6) + 1``
    (the UTM zone definition of the EPSG registry: 6° strips from 180° W).
    It is written out rather than looked up with
    ``pyproj.database.query_utm_crs_info`` because that query takes tens of
    milliseconds and returns two or four zones for a point on a zone or
    hemisphere border, where a choice has to be made anyway.  The special
    zones around Norway and Svalbard are not applied: any zone whose strip
    contains the district is an equally good metric projection.
    """
    if not (math.isfinite(lon) and math.isfinite(lat)):
        raise InputError(f"the point ({lon}, {lat}) is not a pair of finite numbers")
    if not (-180.0 <= lon <= 180.0 and -90.0 <= lat <= 90.0):
        raise InputError(
            f"the point ({lon}, {lat}) is not a longitude in [-180, 180] "
            "and a latitude in [-90, 90]"
        )
    if lat > _UTM_NORTH_LIMIT:
        return _UPS_NORTH
    if lat < _UTM_SOUTH_LIMIT:
        return _UPS_SOUTH
    zone = int((lon + 180.0) // 6.0) % 60 + 1
    return f"EPSG:{32600 + zone}" if lat >= 0.0 else f"EPSG:{32700 + zone}"


@lru_cache(maxsize=64)
def _crs(crs: str) -> CRS:
    try:
        return CRS.from_user_input(crs)
    except CRSError as exc:
        raise InputError(f"the coordinate reference system {crs!r} is not known: {exc}") from None


def crs_code(crs: str) -> str:
    """A short, stable name for a CRS: ``"EPSG:32625"`` where it has one.

    Any string pyproj accepts (``"urn:ogc:def:crs:EPSG::32625"``,
    ``"epsg:32625"``, a PROJ string, WKT) is reduced to ``AUTHORITY:CODE``
    when the database knows it, else returned unchanged.
    """
    auth = _crs(crs).to_authority()
    return f"{auth[0]}:{auth[1]}" if auth else crs


def is_geographic(crs: str) -> bool:
    """Whether the CRS has angular (longitude/latitude) coordinates."""
    return bool(_crs(crs).is_geographic)


def is_metric(crs: str) -> bool:
    """Whether the CRS is projected with both axes in metres."""
    c = _crs(crs)
    if not c.is_projected:
        return False
    return all((axis.unit_name or "").lower() in ("metre", "meter") for axis in c.axis_info[:2])


def scale_error(crs: str, lon: float, lat: float) -> float:
    """How much a projected CRS stretches distances at a point, as a fraction.

    The larger of ``|k - 1|`` and ``|h - 1|`` for the parallel and meridional
    point scale factors that PROJ computes (``Proj.get_factors``): about
    0.0004 within a UTM zone, 0.47 for Web Mercator at 47° latitude.
    """
    factors = Proj(_crs(crs)).get_factors(lon, lat)
    return max(abs(factors.parallel_scale - 1.0), abs(factors.meridional_scale - 1.0))


@lru_cache(maxsize=64)
def to_lonlat(crs: str) -> Transformer:
    """A transformer from ``crs`` to WGS 84 longitude/latitude (x = longitude)."""
    return Transformer.from_crs(_crs(crs), WGS84, always_xy=True)


@lru_cache(maxsize=64)
def from_lonlat(crs: str) -> Transformer:
    """A transformer from WGS 84 longitude/latitude (x = longitude) to ``crs``."""
    return Transformer.from_crs(WGS84, _crs(crs), always_xy=True)
