"""An invented plan, twice: as QGIS memory layers + a partial plan file, and
as one hand-written zsplan plan file that says the same thing.

Unit 2, Brackenfold Yard (invented): a 12 m x 8 m workshop with its office,
one board (CU1) and five circuits.  Circuits 1-4 are listed in the plan file
(devices and cables there); circuit 5 exists only on the routes layer, its
device and cable given in the layer's fields.  Circuit 2's rating is given
both in the plan file (16 A) and on its route feature (20 A): the layer wins.

Map coordinates are the plan's with y turned over: map (x, y) = (X, -Y);
with ``scale`` (map units per metre, e.g. 20 for paper millimetres at
1:50) and ``offset`` map (x, y) = (ox + scale X, oy - scale Y).
"""
from __future__ import annotations

from qgis.core import QgsFeature, QgsField, QgsGeometry, QgsPointXY, QgsVectorLayer
from qgis.PyQt.QtCore import QVariant

TITLE = "Unit 2, Brackenfold Yard (invented)"

# Plan coordinates (metres, y down), shared by both descriptions.
BOARD_AT = (0.5, 1.0)
ROUTES = {
    "1": [(0.5, 1.0), (0.5, 7.5), (6.0, 7.5), (6.0, 1.5), (0.9, 1.5), (0.5, 1.0)],  # ring
    "2": [(0.5, 1.0), (11.5, 1.0), (11.5, 7.5)],
    "3": [(0.5, 1.0), (0.8, 1.0), (0.8, 4.0), (9.0, 4.0)],
    "4": [(0.5, 1.0), (0.5, 0.3), (11.8, 0.3), (11.8, 7.9), (2.0, 7.9)],
    "5": [(0.5, 1.0), (0.2, 1.0), (0.2, 6.5), (10.0, 6.5), (10.0, 2.5), (3.0, 2.5), (3.0, 5.0)],
}
OUTLETS = [  # (circuit label on the layer, at, height m, name)
    ("CU1/1", (0.5, 4.0), 0.45, "S1"),
    ("CU1/1", (3.0, 7.5), 0.45, "S2"),
    ("CU1/1", (6.0, 4.0), 0.45, "S3"),
    ("CU1/2", (8.0, 1.0), 1.1, "W1"),
    ("CU1/2", (11.5, 7.5), 1.1, "W2"),
    ("3", (0.8, 4.0), 2.4, "L1"),
    ("3", (9.0, 4.0), 2.4, "L2"),
]

# The plan file the QGIS user keeps: supply, defaults and circuits 1-4,
# without positions, routes or outlets.
PLAN_FILE = f"""\
# {TITLE}: supply, defaults and the circuits' devices and cables.
# Positions, routes and outlets are drawn in QGIS.
zsplan: 1
title: {TITLE}
supply: {{u0: 230 V, earthing: TN-C-S, ze: 0.35 ohm, cmin: 0.95}}
defaults: {{ceiling: 2.4 m, allowance: 10 %, extra: 0.5 m, ambient: 25 degC}}
boards:
  - {{ref: CU1, height: 1.5 m}}      # the boards layer says 1.6 m, and wins
circuits:
  - ref: "1"
    board: CU1
    name: Office sockets
    topology: ring
    device: {{type: mcb, curve: B, rating: 32 A}}
    rcd: 30 mA
    cable: {{line: 2.5 mm2, cpc: 1.5 mm2}}
    load: 20 A
  - ref: "2"
    board: CU1
    name: Workshop sockets
    device: {{type: mcb, curve: B, rating: 16 A}}   # the route feature says 20
    rcd: 30 mA
    cable: {{line: 2.5 mm2, cpc: 1.5 mm2}}
    load: 16 A
  - ref: "3"
    board: CU1
    name: Lighting
    use: lighting
    device: {{type: mcb, curve: B, rating: 6 A}}
    cable: {{line: 1.5 mm2, cpc: 1.0 mm2}}
    load: 3 A
  - ref: "4"
    board: CU1
    name: Yard heater
    use: fixed
    device: {{type: mcb, curve: C, rating: 32 A}}
    cable: {{line: 4 mm2, cpc: 1.5 mm2}}
    load: 26 A
"""


def _pts(pts):
    return "[" + ", ".join(f"[{x:g}, {y:g}]" for x, y in pts) + "]"


def _outlets(label):
    rows = [o for o in OUTLETS if o[0] in (f"CU1/{label}", label)]
    if not rows:
        return ""
    out = "    outlets:\n"
    for _, at, h, name in rows:
        out += f"      - {{at: {_pts([at])[1:-1]}, height: {h:g} m, name: {name}}}\n"
    return out


# The same plan written out by hand: what `zsplan check` reads.
FULL_PLAN = f"""\
zsplan: 1
title: {TITLE}
supply: {{u0: 230 V, earthing: TN-C-S, ze: 0.35 ohm, cmin: 0.95}}
defaults: {{ceiling: 2.4 m, allowance: 10 %, extra: 0.5 m, ambient: 25 degC}}
boards:
  - {{ref: CU1, at: {_pts([BOARD_AT])[1:-1]}, height: 1.6 m}}
circuits:
  - ref: "1"
    board: CU1
    name: Office sockets
    topology: ring
    device: {{type: mcb, curve: B, rating: 32 A}}
    rcd: 30 mA
    cable: {{line: 2.5 mm2, cpc: 1.5 mm2}}
    load: 20 A
    route: {_pts(ROUTES["1"])}
{_outlets("1")}\
  - ref: "2"
    board: CU1
    name: Workshop sockets
    device: {{type: mcb, curve: B, rating: 20 A}}
    rcd: 30 mA
    cable: {{line: 2.5 mm2, cpc: 1.5 mm2}}
    load: 16 A
    route: {_pts(ROUTES["2"])}
{_outlets("2")}\
  - ref: "3"
    board: CU1
    name: Lighting
    use: lighting
    device: {{type: mcb, curve: B, rating: 6 A}}
    cable: {{line: 1.5 mm2, cpc: 1.0 mm2}}
    load: 3 A
    route: {_pts(ROUTES["3"])}
{_outlets("3")}\
  - ref: "4"
    board: CU1
    name: Yard heater
    use: fixed
    device: {{type: mcb, curve: C, rating: 32 A}}
    cable: {{line: 4 mm2, cpc: 1.5 mm2}}
    load: 26 A
    route: {_pts(ROUTES["4"])}
  - ref: "5"
    board: CU1
    name: Compressor
    use: fixed
    device: {{type: mcb, curve: C, rating: 16 A}}
    cable: {{line: 2.5 mm2, cpc: 1.5 mm2}}
    load: 12 A
    route: {_pts(ROUTES["5"])}
"""

# Per route feature: circuit label as typed on the layer, and field values.
ROUTE_FEATURES = [
    ("CU1/1", {}),
    ("CU1/2", {"rating": 20.0}),
    ("CU1/3", {}),
    ("4", {}),                                   # REF alone: unique in the plan file
    ("CU1/5", {"name": "Compressor", "use": "fixed", "device": "mcb", "curve": "C",
               "rating": 16.0, "line": "2.5 mm2", "cpc": 1.5, "load": "12 A"}),
]
ROUTE_FIELDS = [("circuit", QVariant.String), ("name", QVariant.String),
                ("use", QVariant.String), ("device", QVariant.String),
                ("curve", QVariant.String), ("rating", QVariant.Double),
                ("line", QVariant.String), ("cpc", QVariant.Double),
                ("load", QVariant.String)]


def _map(p, scale, offset=(0.0, 0.0)):
    return QgsPointXY(offset[0] + p[0] * scale, offset[1] - p[1] * scale)


def memory_layer(kind: str, name: str, fields, crs: str = "EPSG:27700") -> QgsVectorLayer:
    uri = f"{kind}?crs={crs}" if crs else kind
    layer = QgsVectorLayer(uri, name, "memory")
    assert layer.isValid()
    layer.dataProvider().addAttributes([QgsField(n, t) for n, t in fields])
    layer.updateFields()
    return layer


def add(layer, geom, values: dict):
    f = QgsFeature(layer.fields())
    f.setGeometry(geom)
    for k, v in values.items():
        f[k] = v
    ok, out = layer.dataProvider().addFeatures([f])
    assert ok
    layer.updateExtents()
    return out[0].id()


def routes_layer(scale: float = 1.0, crs: str = "EPSG:27700", features=None, name="routes",
                 offset=(0.0, 0.0)):
    layer = memory_layer("LineString", name, ROUTE_FIELDS, crs)
    for label, values in (features if features is not None else ROUTE_FEATURES):
        ref = label.split("/")[-1]
        pts = ROUTES.get(ref, ROUTES["2"])
        add(layer, QgsGeometry.fromPolylineXY([_map(p, scale, offset) for p in pts]),
            {"circuit": label, **values})
    return layer


def boards_layer(scale: float = 1.0, crs: str = "EPSG:27700", name="boards", offset=(0.0, 0.0)):
    layer = memory_layer("Point", name, [("ref", QVariant.String), ("height", QVariant.String)],
                         crs)
    add(layer, QgsGeometry.fromPointXY(_map(BOARD_AT, scale, offset)),
        {"ref": "CU1", "height": "1.6 m"})
    return layer


def outlets_layer(scale: float = 1.0, crs: str = "EPSG:27700", name="outlets",
                  offset=(0.0, 0.0)):
    layer = memory_layer("Point", name, [("circuit", QVariant.String),
                                         ("height", QVariant.Double),
                                         ("name", QVariant.String)], crs)
    for label, at, h, oname in OUTLETS:
        add(layer, QgsGeometry.fromPointXY(_map(at, scale, offset)),
            {"circuit": label, "height": h, "name": oname})
    return layer
