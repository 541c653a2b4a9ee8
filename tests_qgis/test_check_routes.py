"""The plugin's numbers are zsplan's: routes drawn in QGIS, checked through
processing.run, against `zsplan check` on the same plan written by hand."""
from __future__ import annotations

import dataclasses
import json
import subprocess
import sys

import processing
import pytest
from qgis.core import QgsApplication, QgsGraduatedSymbolRenderer

import plandata
from zsplan.check import check
from zsplan.loader import load_plan
from zsplan.model import Where
from zsplan_qgis.layers import python_value


def _params(tmp_path, scale=1.0, crs="EPSG:27700", **over):
    plan = tmp_path / "site.yaml"
    plan.write_text(plandata.PLAN_FILE, encoding="utf-8")
    p = {"ROUTES": plandata.routes_layer(scale, crs), "BOARDS": plandata.boards_layer(scale, crs),
         "OUTLETS": plandata.outlets_layer(scale, crs), "PLAN": str(plan),
         "OUTPUT": "TEMPORARY_OUTPUT"}
    p.update(over)
    return p


def _rows(layer) -> dict[str, dict]:
    names = layer.fields().names()
    return {f["circuit"]: {n: python_value(f[n]) for n in names} for f in layer.getFeatures()}


@pytest.fixture
def full_plan(tmp_path):
    path = tmp_path / "by-hand.yaml"
    path.write_text(plandata.FULL_PLAN, encoding="utf-8")
    return path


def _expected(path) -> dict[str, dict]:
    return {f"{c['board']}/{c['ref']}": c for c in check(load_plan(path)).to_dict()["circuits"]}


def _assert_same(rows: dict, expected: dict):
    assert sorted(rows) == sorted(expected)
    for label, rec in expected.items():
        row = rows[label]
        compared = 0
        for key, value in rec.items():
            if isinstance(value, (list, dict)):
                continue
            assert row[key] == value, f"{label} {key}: plugin {row[key]!r}, zsplan {value!r}"
            compared += 1
        assert row["checks"] == "; ".join(f"{k}: {v}" for k, v in rec["checks"].items())
        assert row["messages"] == " | ".join(rec["messages"])
        assert compared >= 12        # every contract field at least


def test_provider_registered_through_class_factory(qgis_app):
    reg = QgsApplication.processingRegistry()
    assert reg.providerById("zsplan") is not None
    assert reg.algorithmById("zsplan:checkroutes") is not None
    assert reg.algorithmById("zsplan:writeplan") is not None


def test_every_result_field_equals_zsplan_check(qgis_app, tmp_path, full_plan, feedback):
    res = processing.run("zsplan:checkroutes", _params(tmp_path), feedback=feedback)
    layer = res["OUTPUT"]
    assert layer.featureCount() == 5
    _assert_same(_rows(layer), _expected(full_plan))
    s = check(load_plan(full_plan)).summary()
    assert (res["PASS"], res["TIGHT"], res["FAIL"]) == (s["pass"], s["tight"], s["fail"])
    # the invented plan covers all three verdicts, so the check above can catch a swap
    assert (s["pass"] > 0, s["tight"] > 0, s["fail"] > 0) == (True, True, True)
    assert not feedback.errors


def test_output_keeps_the_drawn_geometry(qgis_app, tmp_path, feedback):
    params = _params(tmp_path)
    res = processing.run("zsplan:checkroutes", params, feedback=feedback)
    drawn = {f["circuit"]: f.geometry().asPolyline() for f in params["ROUTES"].getFeatures()}
    for f in res["OUTPUT"].getFeatures():
        label = f["circuit"] if f["circuit"] in drawn else f["ref"]   # "4" is typed as REF
        assert f.geometry().asPolyline() == drawn[label]
        assert f["route_fid"] is not None
    assert res["OUTPUT"].crs().authid() == "EPSG:27700"


def test_output_is_graduated_by_margin(qgis_app, tmp_path, feedback):
    res = processing.run("zsplan:checkroutes", _params(tmp_path), feedback=feedback)
    r = res["OUTPUT"].renderer()
    assert isinstance(r, QgsGraduatedSymbolRenderer)
    assert '"margin"' in r.classAttribute() and '"band"' in r.classAttribute()
    assert res["OUTPUT"].labelsEnabled()


def test_written_plan_is_the_hand_written_plan(qgis_app, tmp_path, full_plan, feedback):
    out = tmp_path / "out" / "written.yaml"
    out.parent.mkdir()
    processing.run("zsplan:writeplan", _params(tmp_path, OUTPUT=str(out)), feedback=feedback)
    written, by_hand = load_plan(out), load_plan(full_plan)

    def plain(items):
        return [dataclasses.replace(x, where=Where()) for x in items]

    # hand-worked: map (x, y) = (X, -Y) turns back into the plan's (X, Y)
    assert plain(written.circuits) == plain(by_hand.circuits)
    assert plain(written.boards) == plain(by_hand.boards)
    assert written.supply == by_hand.supply
    assert written.extra["x-qgis"]["metres_per_unit"] == 1.0
    text = out.read_text(encoding="utf-8")
    assert text.startswith("# zsplan plan (format version 1)")


def test_plugin_equals_zsplan_check_cli_on_the_written_plan(qgis_app, tmp_path, feedback):
    params = _params(tmp_path)
    res = processing.run("zsplan:checkroutes", params, feedback=feedback)
    out = tmp_path / "written.yaml"
    processing.run("zsplan:writeplan", {**params, "OUTPUT": str(out)}, feedback=feedback)
    run = subprocess.run(
        [sys.executable, "-c", "import sys; from zsplan.cli import main; sys.exit(main())",
         "check", str(out), "--json"], capture_output=True, text=True, timeout=120)
    assert run.returncode == 1, run.stderr      # exit 1: a circuit fails (the contract)
    doc = json.loads(run.stdout)
    expected = {f"{c['board']}/{c['ref']}": c for c in doc["circuits"]}
    _assert_same(_rows(res["OUTPUT"]), expected)


def test_paper_units_with_a_scale_factor(qgis_app, tmp_path, full_plan, feedback):
    # digitised in paper millimetres at 1:50: 20 map units per metre, 0.05 m per unit
    params = _params(tmp_path, scale=20.0, crs="", METRES_PER_UNIT=0.05)
    res = processing.run("zsplan:checkroutes", params, feedback=feedback)
    _assert_same(_rows(res["OUTPUT"]), _expected(full_plan))


def test_crs_in_feet_is_converted(qgis_app, tmp_path, full_plan, feedback):
    ft = 0.3048006096012192       # US survey foot = 1200/3937 m (NIST SP 811, B.6)
    params = _params(tmp_path, scale=1 / ft, crs="EPSG:2263")
    res = processing.run("zsplan:checkroutes", params, feedback=feedback)
    rows, expected = _rows(res["OUTPUT"]), _expected(full_plan)
    for label, rec in expected.items():
        # coordinates come back within 1 µm; lengths to the display's 0.01 m
        assert rows[label]["length_m"] == pytest.approx(rec["length_m"], abs=0.0101)
        assert rows[label]["status"] == rec["status"]


def test_schedule_is_written(qgis_app, tmp_path, feedback):
    sched = tmp_path / "schedule.csv"
    processing.run("zsplan:checkroutes", _params(tmp_path, SCHEDULE=str(sched)),
                   feedback=feedback)
    text = sched.read_text(encoding="utf-8-sig")
    for name in ("Office sockets", "Workshop sockets", "Lighting", "Yard heater", "Compressor"):
        assert name in text
    assert "Caution" in text


def test_field_names_match_case_insensitively(qgis_app, tmp_path, full_plan, feedback):
    # a layer with RATING instead of rating: the same values are read
    from qgis.PyQt.QtCore import QVariant
    layer = plandata.memory_layer("LineString", "routes", [
        ("circuit", QVariant.String), ("Device", QVariant.String), ("CURVE", QVariant.String),
        ("RATING", QVariant.Double), ("Line", QVariant.String), ("CPC", QVariant.Double),
        ("Use", QVariant.String), ("Name", QVariant.String), ("LOAD", QVariant.String)])
    for label, values in plandata.ROUTE_FEATURES:
        ref = label.split("/")[-1]
        renamed = {{"device": "Device", "curve": "CURVE", "rating": "RATING", "line": "Line",
                    "cpc": "CPC", "use": "Use", "name": "Name", "load": "LOAD"}[k]: v
                   for k, v in values.items()}
        from qgis.core import QgsGeometry, QgsPointXY
        plandata.add(layer, QgsGeometry.fromPolylineXY(
            [QgsPointXY(x, -y) for x, y in plandata.ROUTES[ref]]), {"circuit": label, **renamed})
    res = processing.run("zsplan:checkroutes", _params(tmp_path, ROUTES=layer),
                         feedback=feedback)
    _assert_same(_rows(res["OUTPUT"]), _expected(full_plan))


def test_layers_in_other_crss_are_transformed(qgis_app, tmp_path, full_plan, feedback):
    # routes and outlets at a real grid position (invented site, British National
    # Grid metres); the board given in WGS 84 degrees and transformed by QGIS
    from qgis.core import (QgsCoordinateReferenceSystem, QgsCoordinateTransform,
                           QgsProject, QgsVectorLayer)
    offset = (451200.0, 208300.0)
    routes = plandata.routes_layer(offset=offset)
    outlets = plandata.outlets_layer(offset=offset)
    bng = plandata.boards_layer(offset=offset)
    to_wgs = QgsCoordinateTransform(QgsCoordinateReferenceSystem("EPSG:27700"),
                                    QgsCoordinateReferenceSystem("EPSG:4326"),
                                    QgsProject.instance().transformContext())
    boards = QgsVectorLayer("Point?crs=EPSG:4326", "boards", "memory")
    boards.dataProvider().addAttributes(bng.fields().toList())
    boards.updateFields()
    for f in bng.getFeatures():
        g = f.geometry()
        g.transform(to_wgs)
        f.setGeometry(g)
        boards.dataProvider().addFeatures([f])
    res = processing.run("zsplan:checkroutes", _params(tmp_path, ROUTES=routes, OUTLETS=outlets,
                                                       BOARDS=boards), feedback=feedback)
    rows, expected = _rows(res["OUTPUT"]), _expected(full_plan)
    for label, rec in expected.items():
        # a translation changes lengths only by floating-point rounding (~1e-10 m)
        assert rows[label]["length_m"] == pytest.approx(rec["length_m"], abs=0.0101)
        assert rows[label]["status"] == rec["status"]
        assert rows[label]["zs_ohm"] == pytest.approx(rec["zs_ohm"], abs=0.00011)
