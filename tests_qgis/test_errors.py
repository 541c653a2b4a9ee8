"""User mistakes reach the user as a clear Processing error naming the layer,
the feature id and the field (or the plan file's line and key path), never
a traceback, and nothing is written."""
from __future__ import annotations

import re

import processing
import pytest
from qgis.core import QgsGeometry, QgsPointXY, QgsProcessingException

import plandata


def _params(tmp_path, plan_text=plandata.PLAN_FILE, routes=None, outlets=None, **over):
    plan = tmp_path / "site.yaml"
    plan.write_text(plan_text, encoding="utf-8")
    p = {"ROUTES": routes if routes is not None else plandata.routes_layer(),
         "BOARDS": plandata.boards_layer(),
         "OUTLETS": outlets if outlets is not None else plandata.outlets_layer(),
         "PLAN": str(plan), "OUTPUT": "TEMPORARY_OUTPUT"}
    p.update(over)
    return p


def _error(params, feedback, alg="zsplan:checkroutes") -> str:
    with pytest.raises(QgsProcessingException) as ei:
        processing.run(alg, params, feedback=feedback)
    msg = str(ei.value.args[0]) if ei.value.args else str(ei.value)
    assert "Traceback" not in msg and "File \"" not in msg
    assert "unexpected" not in msg            # a user mistake, not a plugin fault
    return msg


def _fid(layer, label):
    return next(f.id() for f in layer.getFeatures() if f["circuit"] == label)


def _routes_with(changes: dict):
    feats = [(changes.get(label, (label, values))) for label, values in plandata.ROUTE_FEATURES]
    return plandata.routes_layer(features=feats)


def test_route_without_a_circuit(qgis_app, tmp_path, feedback):
    routes = _routes_with({"CU1/3": ("", {})})
    fid = next(f.id() for f in routes.getFeatures() if not f["circuit"])
    msg = _error(_params(tmp_path, routes=routes), feedback)
    assert f"layer 'routes': feature {fid}, field 'circuit': no circuit named" in msg
    assert any(f"feature {fid}, field 'circuit'" in e for e in feedback.errors)


def test_route_naming_a_circuit_missing_from_the_plan(qgis_app, tmp_path, feedback):
    routes = _routes_with({"CU1/3": ("CU1/9", {})})
    msg = _error(_params(tmp_path, routes=routes), feedback)
    fid = _fid(routes, "CU1/9")
    assert re.search(rf"layer 'routes': feature {fid}, field 'circuit': circuit 'CU1/9' is "
                     r"not in the plan file .*site\.yaml", msg)


def test_unknown_device_on_the_layer(qgis_app, tmp_path, feedback):
    # no type C 45 A breaker in zsplan's data (BS EN 60898-1 preferred ratings stop at
    # 40 A then 50 A; from memory)
    values = dict(plandata.ROUTE_FEATURES[4][1], rating=45.0)
    routes = _routes_with({"CU1/5": ("CU1/5", values)})
    msg = _error(_params(tmp_path, routes=routes), feedback)
    fid = _fid(routes, "CU1/5")
    assert f"layer 'routes': feature {fid}, field" in msg
    assert "'rating'" in msg and "45 A" in msg


def test_unknown_device_in_the_plan_file(qgis_app, tmp_path, feedback):
    text = plandata.PLAN_FILE.replace("{type: mcb, curve: B, rating: 6 A}",
                                      "{type: mcb, curve: B, rating: 7 A}")
    line = next(i for i, t in enumerate(text.splitlines(), 1) if "rating: 7 A" in t)
    msg = _error(_params(tmp_path, plan_text=text), feedback)
    assert re.search(rf"site\.yaml:{line}: circuits\[2\]\.device: .*7 A", msg)


def test_bad_quantity_in_a_field(qgis_app, tmp_path, feedback):
    values = dict(plandata.ROUTE_FEATURES[4][1], line="2.5 bananas")
    routes = _routes_with({"CU1/5": ("CU1/5", values)})
    msg = _error(_params(tmp_path, routes=routes), feedback)
    assert f"layer 'routes': feature {_fid(routes, 'CU1/5')}, field 'line':" in msg
    assert "2.5 bananas" in msg


def test_outlet_naming_no_circuit(qgis_app, tmp_path, feedback):
    outlets = plandata.outlets_layer()
    fid = next(f.id() for f in outlets.getFeatures() if f["name"] == "W1")
    outlets.dataProvider().changeAttributeValues({fid: {0: "CU2/2"}})
    msg = _error(_params(tmp_path, outlets=outlets), feedback)
    assert f"layer 'outlets': feature {fid}, field 'circuit': circuit 'CU2/2' matches no circuit" in msg


def test_outlet_off_its_route(qgis_app, tmp_path, feedback):
    outlets = plandata.outlets_layer()
    fid = next(f.id() for f in outlets.getFeatures() if f["name"] == "W1")
    # W1 moved from (8.0, 1.0) to (8.0, 2.0): 1 m from route 2 (hand-worked)
    outlets.dataProvider().changeGeometryValues(
        {fid: QgsGeometry.fromPointXY(QgsPointXY(8.0, -2.0))})
    msg = _error(_params(tmp_path, outlets=outlets), feedback)
    assert f"layer 'outlets': feature {fid}, geometry:" in msg
    assert "1.000 m from the route" in msg


def test_route_not_starting_at_its_board(qgis_app, tmp_path, feedback):
    routes = plandata.routes_layer()
    fid = _fid(routes, "CU1/2")
    # route 2 shifted to start at (0.5, 2.0): 1 m from the board at (0.5, 1.0) (hand-worked)
    routes.dataProvider().changeGeometryValues({fid: QgsGeometry.fromPolylineXY(
        [QgsPointXY(0.5, -2.0), QgsPointXY(11.5, -2.0), QgsPointXY(11.5, -7.5)])})
    msg = _error(_params(tmp_path, routes=routes, outlets=None, OUTLETS=None), feedback)
    assert f"layer 'routes': feature {fid}, geometry:" in msg
    assert "starts 1.000 m from board" in msg


def test_route_in_two_parts(qgis_app, tmp_path, feedback):
    from qgis.PyQt.QtCore import QVariant
    routes = plandata.memory_layer("MultiLineString", "routes", [("circuit", QVariant.String)])
    for label, _ in plandata.ROUTE_FEATURES[:3]:
        ref = label.split("/")[-1]
        plandata.add(routes, QgsGeometry.fromMultiPolylineXY(
            [[QgsPointXY(x, -y) for x, y in plandata.ROUTES[ref]]]), {"circuit": label})
    fid = plandata.add(routes, QgsGeometry.fromMultiPolylineXY(
        [[QgsPointXY(0.5, -1.0), QgsPointXY(2.0, -1.0)],
         [QgsPointXY(3.0, -1.0), QgsPointXY(4.0, -1.0)]]), {"circuit": "CU1/4"})
    msg = _error(_params(tmp_path, routes=routes), feedback)
    assert f"layer 'routes': feature {fid}, geometry:" in msg and "2 parts" in msg


def test_plan_file_circuit_not_drawn(qgis_app, tmp_path, feedback):
    routes = plandata.routes_layer(features=[f for f in plandata.ROUTE_FEATURES
                                             if f[0] != "CU1/3"])
    outlets = plandata.outlets_layer()
    outlets.dataProvider().deleteFeatures([f.id() for f in outlets.getFeatures()
                                           if f["circuit"] == "3"])
    text = plandata.PLAN_FILE
    line = next(i for i, t in enumerate(text.splitlines(), 1) if 'ref: "3"' in t)
    msg = _error(_params(tmp_path, routes=routes, outlets=outlets), feedback)
    assert re.search(rf"site\.yaml:{line}: circuits\[2\]: circuit CU1/3 has no route", msg)


def test_geographic_crs_is_refused(qgis_app, tmp_path, feedback):
    p = _params(tmp_path, ROUTES=plandata.routes_layer(crs="EPSG:4326"),
                BOARDS=plandata.boards_layer(crs="EPSG:4326"),
                OUTLETS=plandata.outlets_layer(crs="EPSG:4326"))
    msg = _error(p, feedback)
    assert "layer 'routes'" in msg.lower() and "geographic" in msg


def test_plan_file_syntax_error_names_the_line(qgis_app, tmp_path, feedback):
    text = plandata.PLAN_FILE.replace("  - ref: \"2\"", "  - ref: \"2\n")
    msg = _error(_params(tmp_path, plan_text=text), feedback)
    assert re.search(r"site\.yaml:\d+: YAML syntax error", msg)


def test_write_plan_never_overwrites_the_plan_file(qgis_app, tmp_path, feedback):
    p = _params(tmp_path)
    before = (tmp_path / "site.yaml").read_bytes()
    p["OUTPUT"] = str(tmp_path / "site.yaml")
    msg = _error(p, feedback, "zsplan:writeplan")
    assert "refusing to write over the input file" in msg
    assert (tmp_path / "site.yaml").read_bytes() == before


def test_write_plan_writes_nothing_on_error(qgis_app, tmp_path, feedback):
    routes = _routes_with({"CU1/3": ("", {})})
    out = tmp_path / "written.yaml"
    _error(_params(tmp_path, routes=routes, OUTPUT=str(out)), feedback, "zsplan:writeplan")
    assert not out.exists()
    assert [p.name for p in tmp_path.iterdir()] == ["site.yaml"]
