"""QGIS's Python and zsplan's dependencies side by side in one process.

QGIS links the system's GEOS; shapely 2's wheels bring their own.  Both are
loaded here (QGIS first, through the session fixture, then shapely) and must
agree on the same geometry.  Debian's shapely (1.8) and pint (0.19) are older
than zsplan needs, so the venv's PyPI copies must be the ones imported.
"""
from __future__ import annotations

import math

import pytest
from qgis.core import Qgis, QgsGeometry


def test_shapely_2_and_qgis_geos_agree(qgis_app):
    import shapely
    assert int(shapely.__version__.split(".")[0]) >= 2
    wkt = "LINESTRING (0 0, 3 4, 3 10)"
    # hand-worked: 5 m (3-4-5 triangle) + 6 m = 11 m
    assert shapely.length(shapely.from_wkt(wkt)) == pytest.approx(11.0, abs=1e-12)
    assert QgsGeometry.fromWkt(wkt).length() == pytest.approx(11.0, abs=1e-12)
    # a GEOS operation in each library: the buffer of a point, area pi r^2 within the
    # polygon approximation (quadrant segments 8 in both; same algorithm)
    a = shapely.area(shapely.buffer(shapely.points(0, 0), 1.0, quad_segs=8))
    b = QgsGeometry.fromWkt("POINT (0 0)").buffer(1.0, 8).area()
    assert a == pytest.approx(b, rel=1e-12)
    assert a == pytest.approx(math.pi, rel=0.01)     # 32-gon: 0.64 % below pi
    assert Qgis.geosVersionMajor() == 3


def test_pypi_copies_shadow_debians(qgis_app):
    import pint
    import shapely
    for mod in (shapely, pint):
        assert "/usr/lib/python3/dist-packages" not in mod.__file__, mod.__file__
    major, minor = (int(x) for x in pint.__version__.split(".")[:2])
    assert (major, minor) >= (0, 22)            # zsplan's requirement (pyproject.toml)


def test_qgis_own_numpy_users_still_load(qgis_app):
    # Debian's GDAL Python is built against numpy 1.x: installing zsplan must not
    # bring a numpy that breaks it (.ci/qgis keeps numpy < 2)
    from osgeo import gdal_array
    assert gdal_array.NumericTypeCodeToGDALTypeCode is not None
