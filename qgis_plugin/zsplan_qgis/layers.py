"""QGIS layers -> plain records (:class:`zsplan_qgis.planbuild.LayerData`).

Reads the features of a Processing feature source into plain Python: the
feature id, the vertices in map units of the routes layer's CRS (other
layers are transformed into it) and the attribute values, NULL as ``None``.
Nothing here knows about circuits; :mod:`zsplan_qgis.planbuild` does the
merging.
"""
from __future__ import annotations

from qgis.core import (
    QgsCoordinateReferenceSystem,
    QgsCoordinateTransform,
    QgsCoordinateTransformContext,
    QgsCsException,
    QgsGeometry,
    QgsProcessingException,
    QgsUnitTypes,
    QgsWkbTypes,
)
from qgis.PyQt.QtCore import QVariant

from .planbuild import CIRCUIT_FIELDS, Feature, LayerData

__all__ = ["read_layer", "metres_per_unit", "circuit_field_roles", "python_value"]


def python_value(v):
    """An attribute value as plain Python (``None`` for NULL)."""
    if v is None:
        return None
    if isinstance(v, QVariant):
        if v.isNull():
            return None
        v = v.value()
    if isinstance(v, (bool, int, float, str)):
        return v
    try:
        return str(v.toString()) if hasattr(v, "toString") else str(v)
    except Exception:   # pragma: no cover - exotic field types
        return str(v)


def circuit_field_roles(field_names, exclude=()) -> dict[str, str]:
    """The routes layer's circuit fields (:data:`CIRCUIT_FIELDS`), matched
    case-insensitively: role -> field name on the layer."""
    lower = {}
    for n in field_names:
        if n not in exclude:
            lower.setdefault(n.lower(), n)
    return {role: lower[role] for role in CIRCUIT_FIELDS if role in lower}


def metres_per_unit(crs: QgsCoordinateReferenceSystem, given: float, layer_name: str,
                    feedback=None) -> float:
    """Metres per map unit: ``given`` when above zero, else from the CRS.

    A CRS in degrees is refused (lengths in degrees are not lengths); a layer
    without a CRS, or with a CRS of unknown units, is taken as metres.
    """
    if given and given > 0:
        return float(given)
    if crs is None or not crs.isValid():
        if feedback is not None:
            feedback.pushInfo(f"Layer '{layer_name}' has no CRS: its map units are taken "
                              "as metres (set 'metres per map unit' for other units).")
        return 1.0
    units = crs.mapUnits()
    if units == QgsUnitTypes.DistanceDegrees or crs.isGeographic():
        raise QgsProcessingException(
            f"Layer '{layer_name}': its CRS {crs.authid() or crs.description()} is "
            "geographic (degrees); expected a projected or engineering CRS in metres or "
            "feet, or 'metres per map unit' set for a plan digitised in paper units")
    if units == QgsUnitTypes.DistanceUnknownUnit:
        if feedback is not None:
            feedback.pushInfo(f"The CRS of layer '{layer_name}' has unknown units: they "
                              "are taken as metres.")
        return 1.0
    if crs.authid() in ("EPSG:3857", "EPSG:900913") and feedback is not None:
        feedback.pushWarning(
            f"Layer '{layer_name}' is in Web Mercator, whose 'metres' are stretched away "
            "from the equator; lengths will be too long. Use a local projected CRS.")
    return QgsUnitTypes.fromUnitToUnitFactor(units, QgsUnitTypes.DistanceMeters)


def _vertices(geom: QgsGeometry, kind: str):
    """(vertices, problem): a single line or point, curves segmentised."""
    if geom is None or geom.isNull() or geom.isEmpty():
        return None, "no geometry"
    if kind == "line":
        if geom.type() != QgsWkbTypes.LineGeometry:
            return None, "the geometry is not a line"
        if geom.isMultipart():
            parts = geom.asMultiPolyline()
            if len(parts) != 1:
                return None, (f"the line has {len(parts)} parts; expected one unbroken "
                              "line per circuit")
            pts = parts[0]
        else:
            pts = geom.asPolyline()
        return tuple((p.x(), p.y()) for p in pts), ""
    if geom.type() != QgsWkbTypes.PointGeometry:
        return None, "the geometry is not a point"
    if geom.isMultipart():
        pts = geom.asMultiPoint()
        if len(pts) != 1:
            return None, f"the geometry has {len(pts)} points; expected one"
        p = pts[0]
    else:
        p = geom.asPoint()
    return ((p.x(), p.y()),), ""


def read_layer(source, name: str, roles: dict, kind: str, target_crs=None,
               context=None, feedback=None) -> LayerData:
    """Read a feature source.

    Parameters
    ----------
    source : QgsProcessingFeatureSource
    name : str
        The layer's name, for messages.
    roles : dict
        Role -> field name on the layer (``None`` values are dropped).
    kind : str
        ``"line"`` or ``"point"``.
    target_crs : QgsCoordinateReferenceSystem, optional
        The CRS to give vertices in (the routes layer's).
    context : QgsProcessingContext, optional
        Its transform context is used for the coordinate transform.

    Returns
    -------
    LayerData
        Vertices in map units of ``target_crs``; a feature whose geometry
        cannot be used has ``xy = None`` and says why.
    """
    roles = {k: v for k, v in roles.items() if v}
    names = source.fields().names()
    for role, fname in roles.items():
        if fname not in names:
            raise QgsProcessingException(
                f"Layer '{name}' has no field '{fname}' (for the {role}); its fields are: "
                + (", ".join(names) or "none"))
    transform = None
    src_crs = source.sourceCrs()
    if target_crs is not None and src_crs.isValid() and target_crs.isValid() \
            and src_crs != target_crs:
        tc = context.transformContext() if context is not None else QgsCoordinateTransformContext()
        transform = QgsCoordinateTransform(src_crs, target_crs, tc)
    elif target_crs is not None and src_crs.isValid() != target_crs.isValid():
        raise QgsProcessingException(
            f"Layer '{name}' and the routes layer: one has a CRS and the other has none; "
            "expected both in the same CRS (or both without one)")
    features = []
    for f in source.getFeatures():
        if feedback is not None and feedback.isCanceled():
            break
        geom = QgsGeometry(f.geometry())
        why = ""
        if transform is not None and not geom.isNull():
            try:
                geom.transform(transform)
            except QgsCsException as exc:
                geom, why = None, f"cannot be transformed to the routes layer's CRS ({exc})"
        xy = None
        if geom is not None:
            xy, why = _vertices(geom, kind)
        attrs = {fname: python_value(f[fname]) for fname in set(roles.values())}
        features.append(Feature(f.id(), xy, attrs, why))
    return LayerData(name, tuple(features), roles)
