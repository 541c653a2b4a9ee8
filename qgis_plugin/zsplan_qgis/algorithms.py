"""The plugin's two Processing algorithms.

* :class:`CheckRoutes` (``zsplan:checkroutes``): routes, boards and outlets
  drawn in QGIS plus a plan file -> a line layer with zsplan's result fields
  for every circuit, styled by margin with zsplan's palette, and the
  installers' schedule.
* :class:`WritePlan` (``zsplan:writeplan``): the same inputs -> a zsplan plan
  file (YAML, version 1) for the command line.

Both merge the layers into the plan file with :func:`zsplan_qgis.planbuild.build`
and let zsplan load and check the result, so their numbers are
``zsplan check``'s.  Every user mistake ends as a ``QgsProcessingException``
whose message names the layer, the feature id and the field (or the plan
file's line and key path); the problems are also sent one by one to the
Processing log with ``feedback.reportError``.
"""
from __future__ import annotations

import datetime
import os
import re
import traceback
from pathlib import Path

from qgis.core import (
    Qgis,
    QgsFeature,
    QgsFeatureSink,
    QgsField,
    QgsFields,
    QgsGeometry,
    QgsMessageLog,
    QgsPointXY,
    QgsProcessing,
    QgsProcessingAlgorithm,
    QgsProcessingException,
    QgsProcessingOutputNumber,
    QgsProcessingParameterFeatureSink,
    QgsProcessingParameterFeatureSource,
    QgsProcessingParameterField,
    QgsProcessingParameterFile,
    QgsProcessingParameterFileDestination,
    QgsProcessingParameterNumber,
    QgsProcessingUtils,
    QgsWkbTypes,
)
from qgis.PyQt.QtCore import QVariant

from zsplan import CAUTION
from zsplan.errors import PlanError

from . import layers as _layers
from .planbuild import Frame, build, circuit_label
from .styling import band_of, label_settings, margin_renderer

__all__ = ["CheckRoutes", "WritePlan", "result_fields"]

_HELP_INPUTS = """
<p><b>Routes</b>: one line per circuit, drawn from its board; a field names the
circuit as <i>BOARD/REF</i> (such as <code>CU1/3</code>) or <i>REF</i>. Fields named like
the plan file's circuit keys (<code>device</code>, <code>curve</code>, <code>rating</code>,
<code>standard</code>, <code>line</code>, <code>cpc</code>, <code>use</code>, <code>rcd</code>,
<code>run</code>, ...) give or override the circuit's values.</p>
<p><b>Boards</b>: one point per board with its ref and (optionally) the height of
its cable entry. <b>Outlets</b> (optional): points naming their circuit, with a
height above the floor and optionally a name and kind.</p>
<p><b>Plan file</b>: a zsplan plan (YAML, <code>zsplan: 1</code>) giving at least the
supply; circuits listed there take their devices and cables from it.</p>
<p><b>Metres per map unit</b>: 0 takes the layers' CRS units (metres, feet); for a
plan digitised in paper millimetres at 1:50 give 0.05.</p>
<p>Map y points up, plan y points down: plan (X, Y) = (k x, -k y).</p>
"""


def _field_type(name: str, values) -> object:
    """Double for numbers, String for text; a field with no value anywhere is
    typed by its name's unit suffix."""
    seen = [v for v in values if v is not None]
    if seen:
        if all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in seen):
            return QVariant.Double
        return QVariant.String
    if name == "margin" or re.search(r"_(m|ohm|a|s|pct|mm2|c|v)$", name):
        return QVariant.Double
    return QVariant.String


_OWN_FIELDS = (("band", QVariant.String), ("checks", QVariant.String),
               ("messages", QVariant.String), ("route_fid", QVariant.LongLong))


def result_fields(records: list[dict]) -> list[tuple[str, object]]:
    """The output fields: ``circuit``, the scalar fields of the results
    records (in the records' order), then ``band`` (the palette band of the
    unrounded margin), ``checks``, ``messages`` and ``route_fid``."""
    names: list[str] = []
    for rec in records:
        for k, v in rec.items():
            if k not in names and not isinstance(v, (list, dict)):
                names.append(k)
    own = {n for n, _ in _OWN_FIELDS} | {"circuit"}
    names = [n for n in names if n not in own]
    fields = [("circuit", QVariant.String)]
    fields += [(n, _field_type(n, [r.get(n) for r in records])) for n in names]
    return fields + list(_OWN_FIELDS)


class _Base(QgsProcessingAlgorithm):
    ROUTES = "ROUTES"
    CIRCUIT_FIELD = "CIRCUIT_FIELD"
    BOARDS = "BOARDS"
    BOARD_REF_FIELD = "BOARD_REF_FIELD"
    BOARD_HEIGHT_FIELD = "BOARD_HEIGHT_FIELD"
    OUTLETS = "OUTLETS"
    OUTLET_CIRCUIT_FIELD = "OUTLET_CIRCUIT_FIELD"
    OUTLET_HEIGHT_FIELD = "OUTLET_HEIGHT_FIELD"
    OUTLET_NAME_FIELD = "OUTLET_NAME_FIELD"
    OUTLET_KIND_FIELD = "OUTLET_KIND_FIELD"
    PLAN = "PLAN"
    METRES_PER_UNIT = "METRES_PER_UNIT"

    def group(self):
        return ""

    def groupId(self):
        return ""

    def icon(self):
        from .provider import plugin_icon
        return plugin_icon()

    def _add_inputs(self):
        P = QgsProcessingParameterField
        self.addParameter(QgsProcessingParameterFeatureSource(
            self.ROUTES, "Cable routes (lines)", [QgsProcessing.TypeVectorLine]))
        # field parameters are optional for Processing so that a script may leave
        # them out; a missing one means its default name (required roles are
        # then looked for under that name, see _field)
        self.addParameter(P(self.CIRCUIT_FIELD, "Field naming the circuit (BOARD/REF or REF)",
                            "circuit", self.ROUTES, optional=True))
        self.addParameter(QgsProcessingParameterFeatureSource(
            self.BOARDS, "Boards (points)", [QgsProcessing.TypeVectorPoint]))
        self.addParameter(P(self.BOARD_REF_FIELD, "Board ref field", "ref", self.BOARDS,
                            optional=True))
        self.addParameter(P(self.BOARD_HEIGHT_FIELD, "Board height field (cable entry above "
                            "floor)", "height", self.BOARDS, optional=True))
        self.addParameter(QgsProcessingParameterFeatureSource(
            self.OUTLETS, "Outlets (points)", [QgsProcessing.TypeVectorPoint], optional=True))
        self.addParameter(P(self.OUTLET_CIRCUIT_FIELD, "Outlet circuit field", "circuit",
                            self.OUTLETS, optional=True))
        self.addParameter(P(self.OUTLET_HEIGHT_FIELD, "Outlet height field", "height",
                            self.OUTLETS, optional=True))
        self.addParameter(P(self.OUTLET_NAME_FIELD, "Outlet name field", "name",
                            self.OUTLETS, optional=True))
        self.addParameter(P(self.OUTLET_KIND_FIELD, "Outlet kind field", "kind",
                            self.OUTLETS, optional=True))
        self.addParameter(QgsProcessingParameterFile(
            self.PLAN, "Plan file (supply, devices, cables)", QgsProcessingParameterFile.File,
            fileFilter="zsplan plan (*.yaml *.yml)"))
        self.addParameter(QgsProcessingParameterNumber(
            self.METRES_PER_UNIT, "Metres per map unit (0: from the layers' CRS)",
            QgsProcessingParameterNumber.Double, 0.0, minValue=0.0))

    # -- reading the inputs -------------------------------------------------
    def _field(self, parameters, name, context, source, required: bool, default: str):
        """The field chosen for a role; its default name when none is chosen.

        An optional role whose default name is not on the layer is left out; a
        required one raises, listing the layer's fields.
        """
        got = self.parameterAsFields(parameters, name, context)
        fname = got[0] if got else default
        names = source.fields().names()
        if fname not in names:
            if not required and fname == default:
                return None          # the default name is not on this layer: not used
            raise QgsProcessingException(
                f"Layer '{source.sourceName()}' has no field '{fname}' (parameter {name}); "
                f"its fields are: {', '.join(names) or 'none'}")
        return fname

    def _gather(self, parameters, context, feedback, target_dir=None):
        routes_src = self.parameterAsSource(parameters, self.ROUTES, context)
        boards_src = self.parameterAsSource(parameters, self.BOARDS, context)
        outlets_src = self.parameterAsSource(parameters, self.OUTLETS, context)
        if routes_src is None:
            raise QgsProcessingException(self.invalidSourceError(parameters, self.ROUTES))
        if boards_src is None:
            raise QgsProcessingException(self.invalidSourceError(parameters, self.BOARDS))
        plan_file = self.parameterAsFile(parameters, self.PLAN, context)
        if not plan_file:
            raise QgsProcessingException("No plan file given; expected a zsplan plan file "
                                         "(YAML) with at least 'zsplan: 1' and the supply")
        crs = routes_src.sourceCrs()
        routes_name = _layer_name(routes_src, "routes")
        boards_name = _layer_name(boards_src, "boards")
        k = _layers.metres_per_unit(crs, self.parameterAsDouble(
            parameters, self.METRES_PER_UNIT, context), routes_name, feedback)

        circuit_field = self._field(parameters, self.CIRCUIT_FIELD, context, routes_src, True,
                                    "circuit")
        roles = {"circuit": circuit_field}
        roles.update(_layers.circuit_field_roles(routes_src.fields().names(),
                                                 exclude=(circuit_field,)))
        routes = _layers.read_layer(routes_src, routes_name, roles, "line", crs, context,
                                       feedback)
        broles = {"ref": self._field(parameters, self.BOARD_REF_FIELD, context, boards_src,
                                     True, "ref"),
                  "height": self._field(parameters, self.BOARD_HEIGHT_FIELD, context,
                                        boards_src, False, "height")}
        boards = _layers.read_layer(boards_src, boards_name, broles, "point", crs, context,
                                       feedback)
        outlets = None
        outlets_name = None
        if outlets_src is not None:
            outlets_name = _layer_name(outlets_src, "outlets")
            oroles = {"circuit": self._field(parameters, self.OUTLET_CIRCUIT_FIELD, context,
                                             outlets_src, True, "circuit")}
            if not oroles["circuit"]:
                raise QgsProcessingException(f"Layer '{outlets_name}': no circuit field chosen; "
                                             "expected the field naming each outlet's circuit")
            for role, pname in (("height", self.OUTLET_HEIGHT_FIELD),
                                ("name", self.OUTLET_NAME_FIELD),
                                ("kind", self.OUTLET_KIND_FIELD)):
                oroles[role] = self._field(parameters, pname, context, outlets_src, False, role)
            outlets = _layers.read_layer(outlets_src, outlets_name, oroles, "point", crs,
                                            context, feedback)
        if feedback.isCanceled():
            raise QgsProcessingException("Cancelled")
        extra = {"crs": crs.authid() if crs.isValid() else "",
                 "metres_per_unit": k,
                 "layers": {"routes": routes_name, "boards": boards_name,
                            **({"outlets": outlets_name} if outlets_name else {})}}
        built = build(plan_file, routes, boards, outlets, Frame(k), target_dir=target_dir,
                      extra=extra)
        for note in built.notes:
            feedback.pushInfo(note)
        return built, routes, crs

    # -- errors ---------------------------------------------------------------
    def processAlgorithm(self, parameters, context, feedback):
        try:
            return self._process(parameters, context, feedback)
        except PlanError as exc:
            for p in exc.problems:
                feedback.reportError(str(p), False)
            raise QgsProcessingException(str(exc)) from None
        except QgsProcessingException:
            raise
        except Exception as exc:   # a bug, not the user's mistake: say so, keep it short
            # the traceback goes to the Log Messages panel (tab "zsplan") for a bug
            # report, not into the Processing dialog
            QgsMessageLog.logMessage(traceback.format_exc(), "zsplan", Qgis.Warning)
            raise QgsProcessingException(
                f"zsplan plugin: unexpected {type(exc).__name__}: {exc} (this is a fault in "
                "the plugin or zsplan, not in your data; please report it with the "
                "'zsplan' tab of the Log Messages panel)") from None

    def shortHelpString(self):
        return self._help + _HELP_INPUTS + f"<p><i>{CAUTION}</i></p>"


def _layer_name(source, fallback: str) -> str:
    """The layer's name as the user sees it (for messages)."""
    return source.sourceName() or fallback


class CheckRoutes(_Base):
    """Check the drawn routes: result fields per circuit, styled by margin."""

    OUTPUT = "OUTPUT"
    SCHEDULE = "SCHEDULE"
    _help = ("<p>Takes each circuit's cable length off its drawn route and checks its "
             "earth-fault loop impedance and disconnection time with zsplan, exactly as "
             "<code>zsplan check</code> would on the same plan. The output layer carries "
             "the result fields (length_m, r1r2_ohm, zs_ohm, zs_max_ohm, fault_current_a, "
             "disconnect_s, margin, status, ...) and is coloured by margin: fail, tight, "
             "pass. The schedule (CSV, Markdown or HTML) lists what to expect when "
             "testing.</p>")

    def name(self):
        return "checkroutes"

    def displayName(self):
        return "Check drawn routes (loop impedance)"

    def createInstance(self):
        return CheckRoutes()

    def initAlgorithm(self, config=None):
        self._add_inputs()
        self.addParameter(QgsProcessingParameterFeatureSink(
            self.OUTPUT, "Checked routes", QgsProcessing.TypeVectorLine))
        self.addParameter(QgsProcessingParameterFileDestination(
            self.SCHEDULE, "Installers' schedule",
            "CSV files (*.csv);;Markdown (*.md);;HTML (*.html)", optional=True,
            createByDefault=False))
        for key in ("PASS", "TIGHT", "FAIL"):
            self.addOutput(QgsProcessingOutputNumber(key, f"Circuits: {key.lower()}"))

    def _process(self, parameters, context, feedback):
        from zsplan.check import check
        from zsplan.schedule import write_schedule

        built, routes, crs = self._gather(parameters, context, feedback)
        feedback.setProgress(20)
        plan = built.load()
        try:
            results = check(plan)
        except PlanError as exc:
            raise built.explained(exc) from None
        feedback.setProgress(70)

        records = [results.circuit_record(i) for i in range(len(plan.circuits))]
        spec = result_fields(records)
        fields = QgsFields()
        for n, t in spec:
            fields.append(QgsField(n, t))
        sink, dest_id = self.parameterAsSink(parameters, self.OUTPUT, context, fields,
                                             QgsWkbTypes.LineString, crs)
        if sink is None:
            raise QgsProcessingException(self.invalidSinkError(parameters, self.OUTPUT))
        by_fid = {f.fid: f for f in routes.features}
        for i, (c, rec) in enumerate(zip(plan.circuits, records)):
            fid = built.route_fids[i]
            if fid is not None:
                pts = by_fid[fid].xy
            else:
                pts = [built.frame.to_map(*p) for p in c.route]
            feat = QgsFeature(fields)
            feat.setGeometry(QgsGeometry.fromPolylineXY([QgsPointXY(x, y) for x, y in pts]))
            band = band_of(float(results.circuits["margin"][i]),
                           rec["checks"].get("disconnection"), plan.settings.tight)
            values = {"circuit": circuit_label(c.board, c.ref), "band": band,
                      "checks": "; ".join(f"{k}: {v}" for k, v in rec["checks"].items()),
                      "messages": " | ".join(rec["messages"]),
                      "route_fid": fid}
            for n, _ in spec:
                if n not in values and n in rec:
                    values[n] = rec[n]
            feat.setAttributes([values.get(n) for n, _ in spec])
            if not sink.addFeature(feat, QgsFeatureSink.FastInsert):
                raise QgsProcessingException(
                    f"Could not write circuit {circuit_label(c.board, c.ref)} to the output "
                    f"layer: {sink.lastError() if hasattr(sink, 'lastError') else ''}")
        feedback.setProgress(85)

        out = {self.OUTPUT: dest_id}
        schedule = self.parameterAsFileOutput(parameters, self.SCHEDULE, context)
        if schedule:
            written = write_schedule(results, schedule)
            out[self.SCHEDULE] = str(written)
        summary = results.summary()
        out.update({"PASS": summary["pass"], "TIGHT": summary["tight"],
                    "FAIL": summary["fail"]})
        feedback.pushInfo(f"{len(records)} circuits: {summary['pass']} pass, "
                          f"{summary['tight']} tight, {summary['fail']} fail")
        for c, rec in zip(plan.circuits, records):
            for m in rec["messages"]:
                feedback.pushInfo(f"{circuit_label(c.board, c.ref)}: {m}")
        feedback.pushInfo(CAUTION)
        self._dest_id = dest_id
        self._tight = plan.settings.tight
        feedback.setProgress(100)
        return out

    def postProcessAlgorithm(self, context, feedback):
        layer = QgsProcessingUtils.mapLayerFromString(getattr(self, "_dest_id", ""), context)
        if layer is not None:
            layer.setRenderer(margin_renderer(self._tight))
            layer.setLabeling(label_settings())
            layer.setLabelsEnabled(True)
            layer.triggerRepaint()
        return {}


class WritePlan(_Base):
    """Write the drawn plan as a zsplan plan file for the command line."""

    OUTPUT = "OUTPUT"
    _help = ("<p>Writes the routes, boards and outlets drawn in QGIS, merged into the "
             "plan file, as one zsplan plan file (YAML, format version 1), so that "
             "<code>zsplan check</code>, <code>zsplan render</code> and "
             "<code>zsplan schedule</code> work on what was drawn. The plan is checked "
             "before it is written; nothing is written when a problem is found. The "
             "input plan file is never overwritten; its comments are not carried over.</p>")

    def name(self):
        return "writeplan"

    def displayName(self):
        return "Write plan file from layers"

    def createInstance(self):
        return WritePlan()

    def initAlgorithm(self, config=None):
        self._add_inputs()
        self.addParameter(QgsProcessingParameterFileDestination(
            self.OUTPUT, "Plan file to write", "zsplan plan (*.yaml *.yml)"))

    def _process(self, parameters, context, feedback):
        from zsplan.geometry import circuit_lengths
        from zsplan.outputs import write_atomic

        out = self.parameterAsFileOutput(parameters, self.OUTPUT, context)
        if not out:
            raise QgsProcessingException("No output file given; expected a .yaml file name")
        target_dir = Path(out).expanduser().resolve().parent
        built, routes, crs = self._gather(parameters, context, feedback, target_dir=target_dir)
        plan = built.load(base_dir=target_dir)
        try:
            circuit_lengths(plan)         # routes start at their boards, outlets on routes
        except PlanError as exc:
            raise built.explained(exc) from None
        built_layers = ", ".join(f"'{n}'" for n in _names(routes, built))
        header = (
            "# zsplan plan (format version 1), written by the zsplan QGIS plugin on "
            f"{datetime.date.today().isoformat()}\n"
            f"# from layers {built_layers} and the plan file {os.path.basename(built.plan_file)}.\n"
            "# Plan coordinates are metres: (X, Y) = (k x, -k y) from the map coordinates\n"
            "# (x, y) of the routes layer, k = x-qgis.metres_per_unit (map y up, plan y down).\n")
        written = write_atomic(out, header + built.text, inputs=[built.plan_file])
        feedback.pushInfo(f"Wrote {written} ({len(plan.circuits)} circuits, "
                          f"{len(plan.boards)} boards)")
        return {self.OUTPUT: str(written)}


def _names(routes, built):
    names = [routes.name]
    for key in ("boards", "outlets"):
        ld = built._layers.get(key)
        if ld is not None:
            names.append(ld.name)
    return names
