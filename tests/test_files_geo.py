"""Tests of the projection helpers in core.geo."""

from __future__ import annotations

import math

import pytest
from pyproj import Geod
from pyproj.aoi import AreaOfInterest
from pyproj.database import query_utm_crs_info

from core import geo
from core.errors import InputError


@pytest.mark.parametrize(
    ("lon", "lat"),
    [(-32.0, 47.0), (-32.0, -47.0), (-177.5, 10.0), (177.5, -10.0), (2.9, 0.5), (121.1, 30.3)],
)
def test_utm_zone_matches_the_pyproj_database(lon: float, lat: float) -> None:
    # Reference: the EPSG registry's UTM zone areas of use, as queried by pyproj.
    infos = query_utm_crs_info(
        datum_name="WGS 84", area_of_interest=AreaOfInterest(lon, lat, lon, lat)
    )
    codes = {f"{i.auth_name}:{i.code}" for i in infos}
    assert geo.utm_crs_for(lon, lat) in codes


def test_utm_zone_examples() -> None:
    # EPSG registry: 32625 = WGS 84 / UTM zone 25N (36°W to 30°W), 32725 = 25S.
    assert geo.utm_crs_for(-32.0, 47.0) == "EPSG:32625"
    assert geo.utm_crs_for(-32.0, -47.0) == "EPSG:32725"
    # Beyond 84°N / 80°S UTM is not defined; EPSG 32661/32761 are the polar
    # stereographic CRSs (UPS North / South).
    assert geo.utm_crs_for(-32.0, 86.0) == "EPSG:32661"
    assert geo.utm_crs_for(-32.0, -85.0) == "EPSG:32761"


@pytest.mark.parametrize(("lon", "lat"), [(181.0, 0.0), (0.0, 91.0), (math.nan, 0.0)])
def test_utm_zone_rejects_points_off_the_globe(lon: float, lat: float) -> None:
    with pytest.raises(InputError):
        geo.utm_crs_for(lon, lat)


def test_transformers_round_trip_and_keep_lonlat_order() -> None:
    crs = geo.utm_crs_for(-32.0, 47.0)
    x, y = geo.from_lonlat(crs).transform(-32.0, 47.0)
    # UTM eastings are near 500 000 m at the central meridian (33°W for zone
    # 25); northings of 47°N are about 5.2e6 m.
    assert 400_000 < x < 600_000
    assert 5_100_000 < y < 5_300_000
    lon, lat = geo.to_lonlat(crs).transform(x, y)
    assert lon == pytest.approx(-32.0, abs=1e-9)
    assert lat == pytest.approx(47.0, abs=1e-9)
    assert geo.from_lonlat(crs) is geo.from_lonlat(crs)  # cached


def test_projected_distance_matches_geodesic() -> None:
    # Reference: the geodesic distance on the WGS 84 ellipsoid (pyproj.Geod,
    # Karney's algorithm); UTM scale error is below 0.1 % near the zone centre.
    crs = geo.utm_crs_for(-32.0, 47.0)
    fwd = geo.from_lonlat(crs)
    (x0, y0), (x1, y1) = fwd.transform(-32.0, 47.0), fwd.transform(-31.99, 47.01)
    _, _, dist = Geod(ellps="WGS84").inv(-32.0, 47.0, -31.99, 47.01)
    assert math.hypot(x1 - x0, y1 - y0) == pytest.approx(dist, rel=0.001)


def test_crs_predicates() -> None:
    assert geo.is_geographic("EPSG:4326")
    assert not geo.is_geographic("EPSG:32625")
    assert geo.is_metric("EPSG:32625")
    assert not geo.is_metric("EPSG:4326")
    assert geo.crs_code("urn:ogc:def:crs:EPSG::32625") == "EPSG:32625"
    # Web Mercator stretches distances by 1/cos(latitude): 1.466 at 47°.
    assert geo.scale_error("EPSG:3857", -32.0, 47.0) == pytest.approx(
        1 / math.cos(math.radians(47.0)) - 1, rel=0.01
    )
    assert geo.scale_error("EPSG:32625", -32.0, 47.0) < 0.001
    with pytest.raises(InputError, match="not known"):
        geo.is_geographic("EPSG:999999")
