"""Layers + plan file -> one zsplan plan document (QGIS-free).

The plugin never computes anything itself.  It merges what was drawn in
QGIS (routes, boards, outlets, read into plain :class:`LayerData` records by
:mod:`zsplan_qgis.layers`) into the user's plan file and hands the merged
YAML text to :func:`zsplan.loader.load_plan_text`, so that every default,
every validation and every number is zsplan's own.  The same text is what
the "write plan file" algorithm saves, so ``zsplan check`` on that file
gives the numbers the plugin shows.

The merge works on the composed YAML node tree, never on constructed
Python values: scalars keep their source text (``ref: 03`` stays ``03``,
``scale: 1:50`` stays a scale), anchors and merge keys keep working, and
nodes shared through aliases are copied before they are changed.

Coordinates
-----------
QGIS map coordinates have y pointing up; zsplan plan coordinates have y
pointing down (as in SVG).  A map point :math:`(x, y)` becomes the plan
point

.. math:: (X, Y) = (k\\,x,\\; -k\\,y)

with :math:`k` the metres per map unit (:class:`Frame`), rounded to 1 µm.
Lengths do not depend on the reflection; the fixed origin keeps plan and map
coordinates one formula apart whatever features exist.  An image opened in
QGIS without a CRS lies with its top-left corner at (0, 0) and y negative
downwards, so plan coordinates then match the image's own.

Errors
------
Every problem, the loader's and the geometry check's included, is reported
against where it came from: a layer, a feature id and a field (or the
feature's geometry), or the plan file with its line and key path
(:meth:`Built.explain`).
"""
from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path

import yaml
from yaml.nodes import MappingNode, ScalarNode, SequenceNode

from zsplan.errors import PlanError, Problem

from .yamlnodes import LOADER as _LOADER
from .yamlnodes import MAP as _MAP
from .yamlnodes import MERGE as _MERGE
from .yamlnodes import SEQ as _SEQ
from .yamlnodes import STR as _STR
from .yamlnodes import get as _get
from .yamlnodes import line_at as _line_at
from .yamlnodes import node as _node
from .yamlnodes import own as _own
from .yamlnodes import text as _text
from .yamlnodes import with_key as _with
from .yamlnodes import without_key as _without

__all__ = ["Feature", "LayerData", "Frame", "Built", "build", "CIRCUIT_FIELDS",
           "circuit_label"]


#: Fields a routes layer may carry for its circuits: field name -> key path in
#: a circuit of the plan file (docs/plan-format.md).  Matched case-insensitively.
CIRCUIT_FIELDS: dict[str, tuple[str, ...]] = {
    "board": ("board",),
    "name": ("name",),
    "use": ("use",),
    "topology": ("topology",),
    "device": ("device", "type"),
    "curve": ("device", "curve"),
    "rating": ("device", "rating"),
    "standard": ("device", "standard"),
    "family": ("device", "family"),
    "rcd": ("rcd",),
    "line": ("cable", "line"),
    "cpc": ("cable", "cpc"),
    "material": ("cable", "material"),
    "temp_rating": ("cable", "temp_rating"),
    "cpc_with_line": ("cable", "cpc_with_line"),
    "insulation": ("cable", "insulation"),
    "ambient": ("ambient",),
    "load": ("load",),
    "run": ("run",),
    "allowance": ("allowance",),
    "extra": ("extra",),
    "ceiling": ("ceiling",),
    "test_temperature": ("test_temperature",),
}
_DEVICE_FIELDS = tuple(f for f, k in CIRCUIT_FIELDS.items() if k[0] == "device")
_BOOL_KEYS = {("cable", "cpc_with_line")}
#: the fields that give a whole mapping a new circuit lacks
_HINTS = {"device": ("device", "curve", "standard", "rating"), "cable": ("line", "cpc")}
_TEXT_KEYS = {("board",), ("name",)}

#: Plan coordinates are rounded to this many decimals of a metre (1 µm).
DECIMALS = 6


# --------------------------------------------------------------------------- records

@dataclass(frozen=True)
class Feature:
    """One feature of a layer, in plain Python.

    Attributes
    ----------
    fid : int
        The feature id QGIS shows.
    xy : tuple of (x, y) or None
        Vertices in map units of the routes layer's CRS (a point: one
        vertex); ``None`` when the feature has no usable geometry.
    attrs : dict
        Field name (as on the layer) -> value (``None`` for NULL).
    geometry_problem : str
        Why ``xy`` is ``None`` (empty, several parts, ...), else ``""``.
    """

    fid: int
    xy: tuple[tuple[float, float], ...] | None
    attrs: dict
    geometry_problem: str = ""


@dataclass(frozen=True)
class LayerData:
    """A layer's features and which field plays which part.

    ``roles`` maps a role (``circuit``, ``ref``, ``height``, ``name``,
    ``kind`` or a name of :data:`CIRCUIT_FIELDS`) to the field name on the
    layer; a role without a field is absent.
    """

    name: str
    features: tuple[Feature, ...]
    roles: dict[str, str] = field(default_factory=dict)

    def where(self, fid: int, role: str | None = None, *, field_name: str | None = None) -> str:
        """``feature 7, field 'circuit'`` (or ``..., geometry``)."""
        if field_name is None:
            field_name = self.roles.get(role, role) if role else None
        if isinstance(field_name, (list, tuple)):
            if len(field_name) > 1:
                return f"feature {fid}, fields " + ", ".join(f"'{n}'" for n in field_name)
            field_name = field_name[0]
        part = "geometry" if field_name in (None, "geometry") else f"field '{field_name}'"
        return f"feature {fid}, {part}"

    def problem(self, fid: int, role: str | None, message: str, *, field_name=None) -> Problem:
        return Problem(f"layer '{self.name}'", message, self.where(fid, role, field_name=field_name))


@dataclass(frozen=True)
class Frame:
    """Map units -> plan metres: :math:`X = k x`, :math:`Y = -k y`."""

    metres_per_unit: float = 1.0

    def to_plan(self, x: float, y: float) -> tuple[float, float]:
        k = self.metres_per_unit
        return (_r(k * x), _r(-k * y))

    def to_map(self, X: float, Y: float) -> tuple[float, float]:
        k = self.metres_per_unit
        return (X / k, -Y / k)


def _r(v: float) -> float:
    v = round(float(v), DECIMALS)
    return 0.0 if v == 0 else v          # no "-0.0" in the plan file


def circuit_label(board: str, ref: str) -> str:
    return f"{board}/{ref}"


def _field_value(v, key: tuple[str, ...]):
    """A field's value -> the plan value (``None``: not given)."""
    if v is None:
        return None
    if isinstance(v, str):
        v = v.strip()
        if not v:
            return None
        if key in _BOOL_KEYS:
            low = v.lower()
            if low in ("true", "yes", "1"):
                return True
            if low in ("false", "no", "0"):
                return False
        return v
    if isinstance(v, bool):
        return v
    if isinstance(v, (int, float)):
        if key in _TEXT_KEYS:
            return f"{v:g}" if isinstance(v, float) else str(v)
        if key in _BOOL_KEYS and v in (0, 1):
            return bool(v)
        return v
    return str(v)


# --------------------------------------------------------------------------- origins

@dataclass
class _CircuitOrigin:
    label: str
    plan_index: int | None = None        # index in the plan file's circuits
    route: tuple[str, int] | None = None  # (layer name, fid) of the route feature
    outlets: list[int] | None = None     # fids on the outlets layer
    fields: dict[str, str] = field(default_factory=dict)   # key suffix -> layer field


@dataclass
class _BoardOrigin:
    plan_index: int | None = None
    fid: int | None = None
    height_field: str | None = None


_CIRCUIT_PATH = re.compile(r"^circuits\[(\d+)\](.*)$")
_BOARD_PATH = re.compile(r"^boards\[(\d+)\](.*)$")
_OUTLET_REST = re.compile(r"^\.outlets\[(\d+)\](?:\.(\w+))?")


@dataclass
class Built:
    """The merged plan document and where each part came from.

    Attributes
    ----------
    text : str
        The merged plan (YAML, format version 1).
    plan_file : str
        The user's plan file (names the plan and resolves a floor plan).
    route_fids : list of int or None
        Per merged circuit: the route feature's id, or ``None`` when the route
        is the plan file's.
    notes : list of str
        Things the user should know (what replaced what).
    """

    text: str
    plan_file: str
    frame: Frame
    route_fids: list
    notes: list
    _root: object = None
    _circuits: list = field(default_factory=list)
    _boards: list = field(default_factory=list)
    _layers: dict = field(default_factory=dict)

    # -- loading
    def load(self, base_dir=None):
        """The merged plan as a :class:`zsplan.model.Plan` (problems explained).

        ``base_dir``: the folder a floor plan is relative to (default: the
        plan file's; the output's folder when the plan is to be written).
        """
        from zsplan.loader import load_plan_text
        try:
            return load_plan_text(self.text, file=self.plan_file,
                                  base_dir=Path(self.plan_file).parent if base_dir is None
                                  else base_dir)
        except PlanError as exc:
            raise self.explained(exc) from None

    def explained(self, exc: PlanError) -> PlanError:
        return PlanError([self.explain(p) for p in exc.problems])

    # -- errors
    def explain(self, p: Problem) -> Problem:
        """A problem of the merged plan, placed where its input came from."""
        if p.file and Path(p.file) != Path(self.plan_file):
            return p                   # e.g. the floor plan's own problems
        m = _CIRCUIT_PATH.match(p.path or "")
        if m and int(m.group(1)) < len(self._circuits):
            return self._explain_circuit(p, self._circuits[int(m.group(1))], m.group(2))
        m = _BOARD_PATH.match(p.path or "")
        if m and int(m.group(1)) < len(self._boards):
            return self._explain_board(p, self._boards[int(m.group(1))], m.group(2))
        return self._in_file(p, p.path)

    def _in_file(self, p: Problem, path: str | None) -> Problem:
        line = _line_at(self._root, path or "")
        return Problem(self.plan_file, p.message, path or "", line)

    def _explain_circuit(self, p: Problem, o: _CircuitOrigin, rest: str) -> Problem:
        routes = self._layers["routes"]
        msg = p.message
        if o.route is not None:
            if rest.startswith(".route"):
                return routes.problem(o.route[1], None, msg)
            m = _OUTLET_REST.match(rest)
            if m and o.outlets is not None:
                outlets = self._layers["outlets"]
                fid = o.outlets[int(m.group(1))]
                sub = m.group(2)
                role = sub if sub in ("height", "name", "kind") else None
                if role is not None and role not in outlets.roles:
                    return outlets.problem(fid, None, f"{msg} (the layer has no "
                                           f"'{role}' field)")
                return outlets.problem(fid, role, msg)
            suffix = rest.lstrip(".")
            exact = [f for k, f in o.fields.items() if suffix == k or suffix.startswith(k + ".")]
            if exact:
                return routes.problem(o.route[1], None, msg, field_name=exact[0])
            under = [f for k, f in o.fields.items() if k.startswith(suffix + ".")] if suffix else []
            if under:          # e.g. the device as a whole: every device field given
                return routes.problem(o.route[1], None, msg, field_name=under)
            if o.plan_index is None:
                # a circuit drawn only on the layer: name the field that would give it
                want = list(_HINTS.get(suffix, ())) or [
                    f for f, k in CIRCUIT_FIELDS.items() if ".".join(k) == suffix]
                if not suffix or suffix in ("ref",):
                    return routes.problem(o.route[1], "circuit", msg)
                if want:
                    names = ", ".join(f"'{w}'" for w in want)
                    return routes.problem(o.route[1], None, f"{msg} (give it in field "
                                          f"{names} of this layer)",
                                          field_name=routes.roles.get(want[0], want[0]))
                return routes.problem(o.route[1], "circuit", msg)
        elif rest.startswith(".outlets") and o.outlets is not None:
            m = _OUTLET_REST.match(rest)
            if m:
                outlets = self._layers["outlets"]
                sub = m.group(2)
                role = sub if sub in ("height", "name", "kind") else None
                return outlets.problem(o.outlets[int(m.group(1))], role, msg)
        if o.plan_index is not None:
            return self._in_file(p, f"circuits[{o.plan_index}]{rest}")
        return p

    def _explain_board(self, p: Problem, o: _BoardOrigin, rest: str) -> Problem:
        boards = self._layers["boards"]
        if o.fid is not None:
            if rest.startswith(".at"):
                return boards.problem(o.fid, None, p.message)
            if rest.startswith(".height") and o.height_field:
                return boards.problem(o.fid, None, p.message, field_name=o.height_field)
            if o.plan_index is None:
                return boards.problem(o.fid, "ref", p.message)
        if o.plan_index is not None:
            return self._in_file(p, f"boards[{o.plan_index}]{rest}")
        return p


# --------------------------------------------------------------------------- build

def _read_plan_root(plan_file: str):
    """Compose the plan file; its unusable forms raise zsplan's own PlanError."""
    from zsplan.loader import load_plan, load_plan_text
    p = Path(plan_file)
    try:
        text = p.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError):
        load_plan(plan_file)            # raises the loader's message
        raise
    try:
        root = yaml.compose(text, Loader=_LOADER)
    except yaml.YAMLError:
        load_plan_text(text, file=plan_file, base_dir=p.parent)   # raises with the line
        raise
    if not isinstance(root, MappingNode):
        load_plan_text(text, file=plan_file, base_dir=p.parent)
        raise PlanError(Problem(plan_file, "expected a plan: a mapping starting with 'zsplan: 1'"))
    return root


def _match(value: str, circuits: list[tuple[str | None, str | None]]):
    """Indices of the circuits a label names: ``BOARD/REF`` exactly, else ``REF``."""
    exact = [i for i, (b, r) in enumerate(circuits)
             if b is not None and r is not None and f"{b}/{r}" == value]
    if exact:
        return exact
    return [i for i, (_, r) in enumerate(circuits) if r == value]


def _label_text(v) -> str | None:
    if v is None:
        return None
    if isinstance(v, float) and v.is_integer():
        v = int(v)
    t = str(v).strip()
    return t or None


def build(plan_file, routes: LayerData, boards: LayerData, outlets: LayerData | None = None,
          frame: Frame = Frame(), *, target_dir=None, extra: dict | None = None) -> Built:
    """Merge the layers into the plan file.

    Parameters
    ----------
    plan_file : path
        The user's plan file (YAML, version 1): at least ``zsplan: 1`` and the
        ``supply``; ``defaults``, ``settings``, boards and circuits optional.
    routes, boards, outlets : LayerData
        The layers, read by :mod:`zsplan_qgis.layers`.
    frame : Frame
        Map units -> plan metres.
    target_dir : path, optional
        Where the merged plan will be written; a floor plan named in the plan
        file is re-pointed there or, if it cannot be, left out.
    extra : dict, optional
        Written under the plan's ``x-qgis`` key (the plan format keeps
        ``x-`` keys for their owners).

    Returns
    -------
    Built

    Raises
    ------
    zsplan.errors.PlanError
        Every problem found, each naming a layer, feature id and field, or
        the plan file's line and key path.

    Notes
    -----
    What wins where both say something: a board's position and height on
    the boards layer; a circuit's route and outlets on the layers; a field
    on the route feature over the plan file's key (a ``device`` field
    brings a whole new device).  Circuits of the plan file keep their order;
    circuits drawn only on the layer follow, in feature order.
    """
    m = _Merge(str(plan_file), routes, boards, outlets, frame)
    m.boards()
    m.routes()
    m.outlets()
    m.circuits()
    if m.problems:
        raise PlanError(m.problems)
    return m.result(target_dir, extra)


class _Merge:
    """The steps of :func:`build`, sharing what they found."""

    def __init__(self, plan_file, routes, boards, outlets, frame):
        self.plan_file = plan_file
        self.root = _read_plan_root(plan_file)
        self.routes_layer, self.boards_layer, self.outlets_layer = routes, boards, outlets
        self.frame = frame
        self.problems: list[Problem] = []
        self.notes: list[str] = []
        top = {k.value: v for k, v in self.root.value
               if isinstance(k, ScalarNode) and k.tag != _MERGE}
        seq = top.get("boards")
        self.file_boards = list(seq.value) if isinstance(seq, SequenceNode) else []
        seq = top.get("circuits")
        self.file_circuits = list(seq.value) if isinstance(seq, SequenceNode) else []
        self.keys = [(_text(_get(c, "board")), _text(_get(c, "ref"))) for c in self.file_circuits]
        self.board_refs = [_text(_get(b, "ref")) for b in self.file_boards]

    # -- boards ---------------------------------------------------------------
    def boards(self):
        layer = self.boards_layer
        found: dict[str, tuple[Feature, object]] = {}
        for f in layer.features:
            ref = _label_text(f.attrs.get(layer.roles.get("ref")))
            if ref is None:
                self.problems.append(layer.problem(
                    f.fid, "ref", "no board ref; expected the board's name, such as CU1"))
            elif ref in found:
                self.problems.append(layer.problem(
                    f.fid, "ref", f"board '{ref}' is also feature {found[ref][0].fid}; "
                    "expected one point per board"))
            elif f.xy is None:
                self.problems.append(layer.problem(
                    f.fid, None, f"board '{ref}': {f.geometry_problem or 'no geometry'}; "
                    "expected a point"))
            else:
                h = f.attrs.get(layer.roles["height"]) if "height" in layer.roles else None
                found[ref] = (f, _field_value(h, ("height",)))
        self.all_board_refs = [r for r in self.board_refs if r] + [
            r for r in found if r not in self.board_refs]

        height_field = layer.roles.get("height")
        self.merged_boards, self.board_origins, replaced = [], [], []
        for j, b in enumerate(self.file_boards):
            ref = self.board_refs[j]
            if ref in found and isinstance(b, MappingNode):
                f, h = found.pop(ref)
                if _own(b, "at") is not None:
                    replaced.append(ref)
                node = _with(b, "at", list(self.frame.to_plan(*f.xy[0])))
                if h is not None:
                    node = _with(node, "height", h)
                self.merged_boards.append(node)
                self.board_origins.append(
                    _BoardOrigin(j, f.fid, height_field if h is not None else None))
            else:
                self.merged_boards.append(b)
                self.board_origins.append(_BoardOrigin(j))
        for ref, (f, h) in found.items():
            d = {"ref": ref, "at": list(self.frame.to_plan(*f.xy[0]))}
            if h is not None:
                d["height"] = h
            self.merged_boards.append(_node(d))
            self.board_origins.append(
                _BoardOrigin(None, f.fid, height_field if h is not None else None))
        if replaced:
            self.notes.append(f"board positions from layer '{layer.name}' replace the plan "
                              f"file's for: {', '.join(replaced)}")

    # -- routes ---------------------------------------------------------------
    def _given(self, f: Feature) -> dict:
        """The circuit's values in this route feature's fields (NULL: not given)."""
        layer = self.routes_layer
        out = {}
        for name in CIRCUIT_FIELDS:
            if name in layer.roles:
                v = _field_value(f.attrs.get(layer.roles[name]), CIRCUIT_FIELDS[name])
                if v is not None:
                    out[name] = v
        return out

    def routes(self):
        """Match each route feature to a plan-file circuit, or make a new one."""
        layer = self.routes_layer
        self.drawn: dict[int, Feature] = {}                 # plan-file index -> feature
        self.new: list[tuple[str, str, Feature]] = []       # drawn-only circuits
        taken: dict[object, int] = {}
        for f in layer.features:
            value = _label_text(f.attrs.get(layer.roles.get("circuit")))
            if value is None:
                self.problems.append(layer.problem(
                    f.fid, "circuit", "no circuit named; expected the circuit as BOARD/REF "
                    "(such as CU1/3) or REF"))
                continue
            key = self._route_key(f, value)
            if key is None:
                continue
            board, ref = self.keys[key] if isinstance(key, int) else key
            if key in taken:
                self.problems.append(layer.problem(
                    f.fid, "circuit", f"circuit {circuit_label(board, ref)} is also drawn as "
                    f"feature {taken[key]}; expected one route per circuit"))
            elif f.xy is None:
                self.problems.append(layer.problem(
                    f.fid, None, f"circuit {circuit_label(board, ref)}: "
                    f"{f.geometry_problem or 'no geometry'}; expected a line"))
            else:
                taken[key] = f.fid
                if isinstance(key, int):
                    self.drawn[key] = f
                else:
                    self.new.append((board, ref, f))

    def _route_key(self, f: Feature, value: str):
        """Plan-file index, or (board, ref) of a circuit drawn only here, or None."""
        layer = self.routes_layer
        hits = _match(value, self.keys)
        if len(hits) > 1:
            self.problems.append(layer.problem(
                f.fid, "circuit", f"circuit '{value}' could be any of "
                + ", ".join(circuit_label(*self.keys[i]) for i in hits) + "; expected BOARD/REF"))
            return None
        if hits:
            return hits[0]
        given = self._given(f)
        if not any(k in given for k in _DEVICE_FIELDS):
            known = ", ".join(circuit_label(b or "?", r or "?") for b, r in self.keys) or "none"
            self.problems.append(layer.problem(
                f.fid, "circuit", f"circuit '{value}' is not in the plan file "
                f"{self.plan_file} (its circuits: {known}) and this feature gives no device; "
                "expected a circuit of the plan file, or the circuit's fields on this layer "
                "(device, curve or standard, rating, line, cpc)"))
            return None
        if "/" in value:
            return tuple(value.split("/", 1))
        if "board" in given:
            return (str(given["board"]), value)
        if len(self.all_board_refs) == 1:
            return (self.all_board_refs[0], value)
        self.problems.append(layer.problem(
            f.fid, "circuit", f"circuit '{value}' names no board and there are "
            f"{len(self.all_board_refs)} boards; expected BOARD/REF or a 'board' field"))
        return None

    # -- outlets --------------------------------------------------------------
    def outlets(self):
        """Outlet features grouped by circuit (index into plan-file + drawn-only)."""
        self.all_keys = list(self.keys) + [(b, r) for b, r, _ in self.new]
        self.outlet_lists: dict[int, list[tuple[Feature, dict]]] = {}
        layer = self.outlets_layer
        if layer is None:
            return
        for f in layer.features:
            value = _label_text(f.attrs.get(layer.roles.get("circuit")))
            if value is None:
                self.problems.append(layer.problem(
                    f.fid, "circuit", "no circuit named; expected BOARD/REF or REF of a circuit"))
                continue
            hits = _match(value, self.all_keys)
            if len(hits) > 1:
                self.problems.append(layer.problem(
                    f.fid, "circuit", f"circuit '{value}' could be any of "
                    + ", ".join(circuit_label(*self.all_keys[i]) for i in hits)
                    + "; expected BOARD/REF"))
                continue
            if not hits:
                known = ", ".join(circuit_label(b or "?", r or "?") for b, r in self.all_keys)
                self.problems.append(layer.problem(
                    f.fid, "circuit", f"circuit '{value}' matches no circuit of the plan file "
                    f"or the routes layer; expected BOARD/REF or REF of one of: {known or 'none'}"))
                continue
            if f.xy is None:
                self.problems.append(layer.problem(
                    f.fid, None, f"{f.geometry_problem or 'no geometry'}; expected a point"))
                continue
            o = {"at": list(self.frame.to_plan(*f.xy[0]))}
            for role in ("height", "name", "kind"):
                if role in layer.roles:
                    v = _field_value(f.attrs.get(layer.roles[role]),
                                     ("name",) if role == "name" else (role,))
                    if v is not None:
                        o[role] = v
            self.outlet_lists.setdefault(hits[0], []).append((f, o))

    # -- circuits -------------------------------------------------------------
    def _apply_fields(self, node: MappingNode, given: dict, origin: _CircuitOrigin):
        roles = self.routes_layer.roles
        reset_device = "device" in given   # a device type brings a whole new device
        for name in CIRCUIT_FIELDS:
            if name not in given:
                continue
            path = CIRCUIT_FIELDS[name]
            if path[0] == "device" and reset_device:
                node = _with(node, "device", {})
                reset_device = False
            if len(path) == 1:
                node = _with(node, path[0], given[name])
            else:
                sub = _get(node, path[0])
                if not isinstance(sub, MappingNode):
                    sub = MappingNode(_MAP, [], flow_style=True)
                node = _with(node, path[0], _with(sub, path[1], given[name]))
            origin.fields[".".join(path)] = roles[name]
        return node

    def _apply_outlets(self, node, idx: int, origin: _CircuitOrigin):
        if idx not in self.outlet_lists or not isinstance(node, MappingNode):
            return node
        items = self.outlet_lists[idx]
        origin.outlets = [f.fid for f, _ in items]
        return _with(node, "outlets", [_node(o, flow=True) for _, o in items])

    def circuits(self):
        self.merged_circuits, self.circuit_origins, self.route_fids = [], [], []
        routes = self.routes_layer
        circuit_field = routes.roles.get("circuit")
        replaced = []

        def keep(node, origin, fid=None):
            self.merged_circuits.append(node)
            self.circuit_origins.append(origin)
            self.route_fids.append(fid)

        for j, c in enumerate(self.file_circuits):
            board, ref = self.keys[j]
            origin = _CircuitOrigin(circuit_label(board or "?", ref or "?"), plan_index=j)
            if not isinstance(c, MappingNode):
                keep(c, origin)                  # the loader says what is wrong with it
            elif j in self.drawn:
                f = self.drawn[j]
                if _get(c, "route") is not None:
                    replaced.append(origin.label)
                node = _with(c, "route", _route_node(f.xy, self.frame))
                node = self._apply_fields(node, self._given(f), origin)
                origin.route = (routes.name, f.fid)
                keep(self._apply_outlets(node, j, origin), origin, f.fid)
            elif _get(c, "route") is None and board is not None and ref is not None:
                self.problems.append(Problem(
                    self.plan_file, f"circuit {origin.label} has no route: no feature of "
                    f"layer '{routes.name}' names it in field '{circuit_field}' and the plan "
                    "file gives no route; expected it drawn on the routes layer",
                    f"circuits[{j}]", _line_at(self.root, f"circuits[{j}]")))
            else:
                keep(self._apply_outlets(c, j, origin), origin)
        for n, (board, ref, f) in enumerate(self.new):
            origin = _CircuitOrigin(circuit_label(board, ref), route=(routes.name, f.fid))
            node = _node({"ref": ref, "board": board}, flow=False)
            origin.fields["ref"] = circuit_field
            given = self._given(f)
            if "/" in (_label_text(f.attrs.get(circuit_field)) or ""):
                origin.fields["board"] = circuit_field   # BOARD/REF: the label names the board
                given.pop("board", None)
            node = self._apply_fields(node, given, origin)
            node = _with(node, "route", _route_node(f.xy, self.frame))
            keep(self._apply_outlets(node, len(self.file_circuits) + n, origin), origin, f.fid)
        if replaced:
            self.notes.append(f"routes from layer '{routes.name}' replace the plan file's "
                              f"for: {', '.join(replaced)}")

    # -- the merged document --------------------------------------------------
    def result(self, target_dir, extra) -> Built:
        items, seen = [], set()
        for k, v in self.root.value:
            key = k.value if isinstance(k, ScalarNode) and k.tag != _MERGE else None
            if key == "boards":
                v = SequenceNode(_SEQ, self.merged_boards)
            elif key == "circuits":
                v = SequenceNode(_SEQ, self.merged_circuits)
            elif key == "drawing" and isinstance(v, MappingNode):
                v = _drawing(v, self.plan_file, target_dir, self.notes, self.routes_layer.name)
            elif key == "x-qgis" and extra is not None:
                v = _node(extra)
            seen.add(key)
            items.append((k, v))
        for key, value in (("boards", SequenceNode(_SEQ, self.merged_boards)),
                           ("circuits", SequenceNode(_SEQ, self.merged_circuits)),
                           ("x-qgis", None if extra is None else _node(extra))):
            if key not in seen and value is not None:
                items.append((ScalarNode(_STR, key), value))
        merged = MappingNode(self.root.tag, items, self.root.start_mark, self.root.end_mark,
                             flow_style=False)
        text = yaml.serialize(merged, Dumper=yaml.SafeDumper, allow_unicode=True, width=100)
        layers = {"routes": self.routes_layer, "boards": self.boards_layer,
                  "outlets": self.outlets_layer}
        return Built(text, self.plan_file, self.frame, self.route_fids, self.notes, self.root,
                     self.circuit_origins, self.board_origins, layers)


def _route_node(xy, frame: Frame):
    """A route as one flow sequence: ``[[x, y], [x, y], ...]`` in plan metres."""
    return _node([list(frame.to_plan(*p)) for p in xy], flow=True)


def _drawing(node: MappingNode, plan_file: str, target_dir, notes: list, routes_name: str):
    """The plan file's drawing settings, fit for routes drawn in QGIS."""
    if _own(node, "routes_layer") is not None:
        node = _without(node, "routes_layer")
        notes.append(f"the plan file's drawing.routes_layer is not read: routes come "
                     f"from layer '{routes_name}'")
    fp = _own(node, "floorplan")
    if target_dir is not None and isinstance(fp, ScalarNode) and _text(fp):
        src = (Path(plan_file).parent / fp.value).resolve()
        dest = Path(target_dir).resolve()
        if src.is_relative_to(dest):
            node = _with(node, "floorplan", src.relative_to(dest).as_posix())
        else:
            node = _without(node, "floorplan")
            notes.append(f"the floor plan {fp.value!r} lies outside the output's folder "
                         f"{dest}; it is left out of the written plan (copy it there and "
                         "add drawing.floorplan by hand)")
    return node
