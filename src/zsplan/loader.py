"""Read a plan file (YAML) into the immutable plan model.

The plan file format is described in ``docs/plan-format.md`` (version 1).
:func:`load_plan` reads a file, :func:`load_plan_text` a string.  Both
return a :class:`zsplan.model.Plan` or raise :class:`zsplan.errors.PlanError`
listing *every* problem found, each with the file, the key path (for
example ``circuits[2].cable.cpc``), the 1-based line and what was expected.

How it works
------------
The YAML text is *composed* (parsed to a node tree from libyaml's event
stream, by :mod:`zsplan.yaml_compose`) but never *constructed* into Python
objects: one walk over the nodes, driven by the plan's schema, checks and
converts each value straight into the model's units.  Every node keeps its
mark, so each value's line is known; the walk replaces PyYAML's constructor,
so the cost stays close to a bare ``yaml.load`` of the same file.  The
``circuits`` list is streamed: each circuit is walked as soon as it has been
read and its nodes are dropped, so memory grows with the model, not with the
YAML tree (a building of 50 000 circuits loads in about 0.4 GB instead of
2.2 GB).  Repeated small mappings (the same device or cable written on many
circuits) are converted once and reused, and quantity strings are parsed once
(:func:`zsplan.units.parse` caches them).

Scalars are read from their source text where YAML 1.1 would surprise: a
ref written ``03`` stays ``"03"`` and ``scale: 1:50`` is a scale, not the
sexagesimal integer 110.

References
----------
.. [1] YAML 1.1 (PyYAML's schema): https://yaml.org/spec/1.1/
"""
from __future__ import annotations

import difflib
import functools
import math
import os
import re
import stat
from dataclasses import replace
from pathlib import Path

import yaml
from yaml.nodes import MappingNode, ScalarNode, SequenceNode

from zsplan import units
from zsplan.errors import Collector, PlanError, Problem
from zsplan._runtime import gc_paused, read_bounded
from zsplan.yaml_compose import Composer
from zsplan.model import (DEVICE_TYPES, EARTHING, MATERIALS, RUNS, TOPOLOGIES,
                          USES, Board, Cable, Circuit, Device, Drawing, Outlet,
                          Plan, Settings, SubMain, Supply, Where)

__all__ = ["load_plan", "load_plan_text", "FORMAT_VERSION", "CURVES",
           "FUSE_STANDARDS", "INSULATIONS", "OUTLET_KINDS", "ALPHA_METHODS",
           "TEST_LIMIT_METHODS", "MAX_PLAN_BYTES", "LIMITS", "MAX_COORDINATE_M", "PHASES"]

#: The plan format version this loader reads.
FORMAT_VERSION = 1

# --- bounds on the input -------------------------------------------------------
# These are not judgements of good design (zsplan.guards warns about values
# outside physical sense); they stop absurd or hostile input at the door, far
# beyond any real installation, so that it never reaches the engine.

#: Largest plan file read, in bytes: a building of 50 000 circuits takes about
#: 33 MB of YAML (0.65 kB a circuit) and about 0.4 GB of memory to load; a
#: larger file is refused before it is read.
MAX_PLAN_BYTES = 40_000_000
#: Largest magnitude of a plan coordinate. [m]  Ten times the Earth's
#: circumference (about 4.0e7 m), so map coordinates of any projected
#: reference system fit.
MAX_COORDINATE_M = 1e8
#: kind -> largest magnitude accepted, in the kind's internal unit
LIMITS = {
    "length": 100_000.0,        # m: 100 km
    "area": 10_000.0,           # mm2
    "impedance": 1_000_000.0,   # ohm
    "current": 1_000_000.0,     # A
    "voltage": 1_000.0,         # V: BS 7671 Part 2, low voltage is at most 1000 V a.c.  # from memory
    "temperature": 1_000.0,     # degC
    "percent": 1_000.0,         # %
    "time": 1_000_000.0,        # s
}
_UNIT_SHOWN = {"length": "m", "area": "mm2", "impedance": "ohm", "current": "A",
               "voltage": "V", "temperature": "degC", "percent": "%", "time": "s"}
#: U0 must exceed this: BS 7671:2018 Table 41.1 gives disconnection times for
#: 50 V < U0 only (extra-low voltage is at most 50 V a.c., BS 7671 Part 2). [V]
MIN_U0_V = 50.0
#: Aliases (``*name``) may repeat parts of a plan, but a document whose
#: aliases expand to more values than this, and to more than
#: ``_MAX_EXPANSION`` times the values written, is refused (the YAML form of
#: an entity bomb).
_MAX_EXPANDED_NODES = 200_000
_MAX_EXPANSION = 10
#: Longest text shown back in a message (values, keys, refs). [characters]
_SHOW_CHARS = 60
#: Longest ref (board, circuit, device family) and name accepted. [characters]
_MAX_REF = 100
_MAX_NAME = 500

CURVES = ("B", "C", "D")
FUSE_STANDARDS = ("bs88-2", "bs88-3", "bs3036", "bs1362")
INSULATIONS = ("thermoplastic", "thermosetting")
OUTLET_KINDS = ("socket", "light", "switch", "spur", "fixed")
ALPHA_METHODS = ("bs7671", "iec60228")
TEST_LIMIT_METHODS = ("rule-of-0.8", "temperature-ratio")
#: phases of a circuit or sub-main: single-phase, or a balanced three-phase load
PHASES = ("1", "3")

# --- defaults (each with its source) -----------------------------------------
# BS 7671:2018 Appendix 4, Table 4B1: current ratings are tabulated for a
# reference ambient of 30 °C (correction factor 1.00)  # from memory
DEFAULT_AMBIENT_C = 30.0
# IEC 60228 Tables 1 and 2 state conductor resistance at 20 °C
DEFAULT_TEST_TEMPERATURE_C = 20.0
# common practice (no published source): 2.4 m ceiling above finished floor
DEFAULT_CEILING_M = 2.4
# common practice (no published source): consumer unit cable entry 1.6 m up
DEFAULT_BOARD_HEIGHT_M = 1.6
# IEC 60038: nominal 230/400 V; BS 7671:2018 Tables 41.2-41.4 use U0 = 230 V
DEFAULT_U0_V = 230.0
# BS 7671:2018 Regulation 411.4.5 (Cmin = 0.95)
DEFAULT_CMIN = 0.95
# BS 7671:2018 Table 54.3: 70 °C thermoplastic, 90 °C thermosetting insulation
TEMP_RATINGS_C = (70.0, 90.0)

_STR = "tag:yaml.org,2002:str"
_INT = "tag:yaml.org,2002:int"
_FLOAT = "tag:yaml.org,2002:float"
_BOOL = "tag:yaml.org,2002:bool"
_NULL = "tag:yaml.org,2002:null"
_MERGE = "tag:yaml.org,2002:merge"
_MAX_MERGE_DEPTH = 16


def _keys(*names: str) -> dict[str, None]:
    """An ordered key set (fast look-up, stable order in messages)."""
    return dict.fromkeys(names)


_TOP_KEYS = _keys("zsplan", "title", "supply", "defaults", "drawing", "boards",
                  "circuits", "settings")
_SUPPLY_KEYS = _keys("u0", "earthing", "ze", "cmin", "electrode", "private")
_DEFAULT_KEYS = _keys("ceiling", "allowance", "extra", "ambient", "test_temperature",
                      "run", "cable", "cpc_with_line")
_DRAWING_KEYS = _keys("floorplan", "scale", "units_per_metre", "calibrate",
                      "routes_layer")
_CALIBRATE_KEYS = _keys("from", "to", "length")
_BOARD_KEYS = _keys("ref", "at", "height", "fed_from")
_FED_KEYS = _keys("board", "cable", "length", "device", "load", "method", "phases",
                  "ambient", "rcd", "rcd_type")
_CIRCUIT_KEYS = _keys("ref", "board", "name", "use", "topology", "device", "rcd",
                      "cable", "ambient", "load", "run", "route", "outlets",
                      "allowance", "extra", "ceiling", "test_temperature", "method",
                      "insulation_length", "phases", "rcd_fault_protection", "rcd_type")
_DEVICE_KEYS = _keys("type", "curve", "rating", "standard", "family")
_CABLE_KEYS = _keys("line", "cpc", "material", "temp_rating", "cpc_with_line",
                    "insulation", "construction")
_OUTLET_KEYS = _keys("at", "height", "name", "kind")
_SETTINGS_KEYS = _keys("tight", "alpha", "test_limit", "vdrop_lighting",
                       "vdrop_other", "vdrop_load", "group_distance", "group_min_length",
                       "grouping")

#: the outlet kind a circuit's outlets take when none is given
_KIND_OF_USE = {"sockets": "socket", "lighting": "light", "fixed": "fixed",
                "distribution": "fixed"}

_SCALE = re.compile(r"^\s*(\d+(?:\.\d*)?|\.\d+)\s*:\s*(\d+(?:\.\d*)?|\.\d+)\s*$")


# --- public entry points -----------------------------------------------------

def load_plan(path, *, max_bytes: int = MAX_PLAN_BYTES) -> Plan:
    """Read and validate the plan file at ``path``.

    The file must be a regular file of at most ``max_bytes`` bytes: its size
    is checked before it is read and again while reading (so a special file
    such as ``/dev/zero``, or a file that grows, is bounded too).

    Parameters
    ----------
    path : str or os.PathLike
        The plan file (YAML, format version 1).  A floor plan named in it is
        looked for relative to the plan file's folder.
    max_bytes : int, optional
        Largest file accepted. [byte]

    Returns
    -------
    zsplan.model.Plan

    Raises
    ------
    zsplan.errors.PlanError
        Listing every problem found, each naming the file, the key path, the
        line and what was expected.
    """
    try:
        name = os.fspath(path)
    except TypeError:
        raise PlanError(Problem(_shown_name(path), "expected the path of a plan file (YAML)")) from None
    if isinstance(name, bytes):
        name = os.fsdecode(name)
    p = Path(name)
    text = _read_text(name, max_bytes)
    return load_plan_text(text, file=name, base_dir=p.parent)


def _shown_name(path) -> str:
    return _shown(str(path))[1:-1] if isinstance(path, str) else _shown(repr(path))




def _read_text(name: str, max_bytes: int) -> str:
    """The text of a plan file, bounded in size; every failure is a PlanError."""
    shown = name if (len(name) <= 4096 and name.isprintable()) else _shown_name(name)

    def fail(message, line=None):
        return PlanError(Problem(shown, message, "", line))

    expected = "expected a plan file (YAML)"
    try:
        st = os.stat(name)
    except FileNotFoundError:
        raise fail(f"no such file; {expected}") from None
    except (OSError, ValueError) as exc:    # ValueError: a NUL in the name
        why = getattr(exc, "strerror", None) or "not a usable file name"
        raise fail(f"cannot be read ({why}); {expected}") from None
    if stat.S_ISDIR(st.st_mode):
        raise fail(f"is a folder; {expected}")
    if not stat.S_ISREG(st.st_mode):
        raise fail(f"is not a regular file (a device, pipe or socket); {expected}")
    too_big = (f"larger than the {max_bytes:,}-byte limit for a plan file; expected a plan "
               "file (YAML) of a sensible size")
    if st.st_size > max_bytes:
        raise fail(f"the file is {st.st_size:,} bytes, {too_big}")
    try:
        data = read_bounded(name, st.st_size, max_bytes)
    except OSError as exc:
        raise fail(f"cannot be read ({exc.strerror or exc}); {expected}") from None
    if len(data) > max_bytes:
        raise fail(f"the file is over {max_bytes:,} bytes, {too_big}")
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):
        raise fail("is saved as UTF-16 text; expected a plan file (YAML) saved as UTF-8", 1)
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = data.count(b"\n", 0, exc.start) + 1
        column = exc.start - (data.rfind(b"\n", 0, exc.start) + 1) + 1
        what = "a binary file" if b"\0" in data[:8192] else "text in another encoding"
        raise fail(f"byte 0x{data[exc.start]:02x} at column {column} is not UTF-8 (this looks "
                   f"like {what}); expected a plan file (YAML) saved as UTF-8", line) from None


def load_plan_text(text: str, *, file: str = "<string>", base_dir=".") -> Plan:
    """Read and validate a plan given as YAML text.

    Parameters
    ----------
    text : str
        The plan (YAML, format version 1).
    file : str
        The name used in error messages and stored as ``Plan.path``.
    base_dir : str or os.PathLike
        The folder that a floor plan (``drawing.floorplan``) is relative to
        and must stay inside.

    Returns
    -------
    zsplan.model.Plan

    Raises
    ------
    zsplan.errors.PlanError
        Listing every problem found.
    """
    if not isinstance(text, str):
        raise TypeError(f"load_plan_text takes the plan as str, got {type(text).__name__}")
    with gc_paused():
        try:
            return _Reader(file, base_dir).read(text, stream=True)
        except _Restart:
            # the circuits were read before something they depend on (a
            # 'defaults' key after them, or one given by a merge key): read
            # the plan again with the whole tree kept
            return _Reader(file, base_dir).read(text, stream=False)


class _Restart(Exception):
    """The streamed circuits were read with other defaults than the plan's."""


# --- YAML ----------------------------------------------------------------------

def _compose(composer: Composer, text: str, file: str):
    """YAML text -> root node; syntax errors -> PlanError with the line.

    Then refuses a document whose aliases multiply it out of bounds (a YAML
    bomb), from the composer's count of the values it stands for.
    """
    try:
        root = composer.compose()
    except yaml.reader.ReaderError as exc:   # a character YAML does not allow
        line = text.count("\n", 0, exc.position) + 1 if isinstance(exc.position, int) else None
        column = (exc.position - text.rfind("\n", 0, exc.position)) if line else None
        char = exc.character if isinstance(exc.character, int) else ord(exc.character or "?")
        kind = "a control character" if char < 0x20 or 0x7f <= char < 0xa0 else "a character"
        raise PlanError(Problem(
            file, f"YAML error: {kind} (U+{char:04X}) at column {column}, which YAML does "
            "not allow; expected plain text (remove it, or write it inside a quoted "
            "string as an escape such as \\x07)", "", line)) from None
    except UnicodeEncodeError as exc:        # lone surrogates in a str given directly
        line = text.count("\n", 0, exc.start) + 1
        raise PlanError(Problem(
            file, f"the text holds a character that is not valid Unicode (U+"
            f"{ord(text[exc.start]):04X}); expected plain UTF-8 text", "", line)) from None
    except RecursionError:
        raise PlanError(Problem(file, "YAML error: values nested too deeply; expected a plan "
                                "file (YAML)", "", None)) from None
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        msg = f"YAML syntax error: {_one_line(exc.problem or exc.context)}"
        if exc.context and exc.problem:
            msg += f" ({_one_line(exc.context)}"
            if exc.context_mark is not None:
                msg += f" started on line {exc.context_mark.line + 1}"
            msg += ")"
        line = None
        if mark is not None:
            line = mark.line + 1
            msg += f", at column {mark.column + 1}"
        raise PlanError(Problem(file, msg, "", line)) from None
    except yaml.YAMLError as exc:
        pos = getattr(exc, "position", None)
        line = text.count("\n", 0, pos) + 1 if isinstance(pos, int) else None
        raise PlanError(Problem(file, f"YAML error: {_one_line(str(exc))}", "", line)) from None
    if root is None:
        raise PlanError(Problem(
            file, f"the plan is empty; expected a mapping starting with "
            f"'zsplan: {FORMAT_VERSION}'", "", 1))
    if _too_expanded(composer):
        raise PlanError(Problem(
            file, f"the plan's YAML aliases (*name) stand for {composer.expanded:,} values "
            f"although only {composer.written:,} are written; expected aliases that repeat "
            "small parts of a plan (a device, a cable), not aliases of aliases (a YAML "
            "bomb)", "", 1))
    return root


def _too_expanded(composer: Composer) -> bool:
    """Whether the aliases make the document too large to walk (so far)."""
    return (composer.expanded > _MAX_EXPANDED_NODES
            and composer.expanded > _MAX_EXPANSION * composer.written)


def _one_line(text) -> str:
    """A message fragment on one line (line breaks and tabs shown as escapes)."""
    text = str(text)
    if text.isprintable():
        return text
    return "".join(ch if ch.isprintable() else repr(ch)[1:-1] for ch in text)


def _shown(text, limit: int = _SHOW_CHARS) -> str:
    """``text`` quoted for a message: control characters escaped, long text cut."""
    text = str(text)
    if len(text) > limit:
        text = text[:limit] + f"... ({len(text):,} characters)"
    return repr(text)


class _Place:
    """Where a node was (its start mark), without the node."""

    __slots__ = ("start_mark",)

    def __init__(self, start_mark):
        self.start_mark = start_mark


def _line(node) -> int | None:
    return None if node is None else node.start_mark.line + 1


def _join(path: str, key: str) -> str:
    return f"{path}.{key}" if path else key


#: tags that YAML gives plain values by itself (a date typed by mistake reads as
#: a timestamp); any other tag was written on purpose and is named in messages
_PLAIN_TAGS = {"str", "int", "float", "bool", "null", "seq", "map", "merge", "timestamp"}


def _describe(node) -> str:
    tag = node.tag or ""
    if tag.startswith("!") or (tag and not tag.startswith("tag:yaml.org,2002:")) or (
            tag.startswith("tag:yaml.org,2002:") and tag[18:] not in _PLAIN_TAGS):
        shown = "!!" + tag[18:] if tag.startswith("tag:yaml.org,2002:") else tag
        return f"a value tagged {_shown(shown)} (zsplan reads plain YAML values only)"
    if node.__class__ is MappingNode:
        return "a mapping"
    if node.__class__ is SequenceNode:
        return "a list"
    if node.tag == _NULL:
        return "nothing"
    return _shown(node.value)


def _a(word: str) -> str:
    return ("an " if word[0] in "aeiou" else "a ") + word


def _expect_text(kind: str) -> str:
    examples = units.EXAMPLES.get(kind)
    return f"{_a(kind)} such as {examples}" if examples else _a(kind)


def _did_you_mean(word: str, choices) -> str:
    close = (difflib.get_close_matches(word, list(choices), n=1, cutoff=0.6)
             if len(word) <= _SHOW_CHARS else [])
    if close:
        return f"did you mean '{close[0]}'?"
    return "expected one of: " + ", ".join(choices)


@functools.lru_cache(maxsize=1)
def _engine_choices() -> dict:
    """The choices the engine's modules offer (imported only when a plan needs them).

    ``construction``, ``method`` and ``grouping`` from :mod:`zsplan.capacity`
    (the current-rating tables it holds), ``vdrop_load`` from
    :mod:`zsplan.vdrop`, ``rcd_type`` from :mod:`zsplan.rcd` (the RCD kinds it
    has break times for) and ``rated``: the (construction, method, phases)
    combinations that have a current-rating table (``rated_method``: the
    (construction, method) pairs).
    """
    from zsplan import capacity, rcd, vdrop
    return {"construction": tuple(capacity.constructions()),
            "method": tuple(capacity.methods()),
            "grouping": tuple(capacity.arrangements()),
            "vdrop_load": tuple(vdrop.load_models()),
            "rcd_type": tuple(sorted(rcd.break_times())),
            "rated": frozenset((k[0], k[3], int(k[4])) for k in capacity.capacity_table()),
            "rated_method": frozenset((k[0], k[3]) for k in capacity.capacity_table())}


def _private_limits() -> dict[str, float]:
    """Voltage-drop limits for a private supply (``zsplan.vdrop.LIMITS_PCT``), percent."""
    from zsplan.vdrop import LIMITS_PCT
    return LIMITS_PCT["private"]


def _device_checker():
    """``zsplan.protection.check_device``, or None while it does not exist."""
    try:
        from zsplan import protection
    except ModuleNotFoundError as exc:
        if exc.name == "zsplan.protection":
            return None
        raise
    return getattr(protection, "check_device", None)


def _read_drawing(*args, **kwargs):
    from zsplan.svgplan import read_drawing   # imported only for drawn plans
    return read_drawing(*args, **kwargs)


# --- the schema walk ---------------------------------------------------------

class _Reader:
    """One pass over the composed nodes, collecting problems as it goes."""

    def __init__(self, file: str, base_dir):
        self.file = file
        self.base_dir = Path(base_dir)
        self.c = Collector(file)
        self._yaml = yaml.constructor.SafeConstructor()
        self._choices: dict[tuple, dict[str, str]] = {}
        self._device_cache: dict = {}
        self._cable_cache: dict = {}
        self._cables: dict = {}
        self._merge_cache: dict = {}
        self._check_device = _device_checker()
        self._check_conductor = _conductor_checker()
        self._checked: dict[Device, str | None] = {}
        self._default_cable: dict = {}
        self._default_nodes: dict = {}
        self._reported: set = set()
        self._drawing_warnings: list = []
        self._drawing_failed = False
        self._vdrop_limits_given: set[str] = set()
        self._stream: dict | None = None

    # -- reading
    def read(self, text: str, stream: bool) -> Plan:
        """Compose ``text`` and walk it into a plan.

        With ``stream``, each circuit is walked as soon as the composer has
        read it and its nodes are dropped (see :meth:`_start_circuits`).
        """
        composer = Composer(text, stream_key="circuits",
                            on_stream=self._start_circuits if stream else None)
        root = _compose(composer, text, self.file)
        try:
            return self.plan(root)
        finally:
            del root   # free the node tree before the collector runs again

    def _start_circuits(self, composer: Composer, pairs, node):
        """The top-level 'circuits' list opens: read its items as they come.

        The circuits inherit the plan's ``defaults``: the first 'defaults'
        key before them is read now (its problems kept for their place in
        the report).  :meth:`plan` checks that it is the plan's own, else the
        plan is read again without streaming.  Problems are kept per circuit
        and reported in the order of the file.  While the aliases read so
        far stand for too many values (a YAML bomb in the making), an item
        is kept unwalked until the whole document has been counted.
        """
        dnode = next((v for k, v in pairs if k.__class__ is ScalarNode
                      and k.value == "defaults" and k.tag != _MERGE), None)
        outer, self.c = self.c, Collector(self.file)
        try:
            values = self.defaults(dnode)
        finally:
            problems, self.c = self.c.problems, outer
        stream = self._stream = {"node": node, "defaults_node": dnode, "defaults": values,
                                 "defaults_problems": problems, "items": []}
        items = stream["items"]

        def item(inode, index):
            if _too_expanded(composer):
                items.append((False, inode, index))
                return
            outer, self.c = self.c, Collector(self.file)
            try:
                c = self.circuit(inode, f"circuits[{index}]", values)
            finally:
                found, self.c = self.c.problems, outer
            items.append((True, c, found))
        return item

    def _streamed_circuits(self) -> list[dict]:
        """The streamed circuits, in order, their problems reported in order."""
        out = []
        for walked, c, found in self._stream["items"]:
            if not walked:                   # kept unwalked: walk it now
                c = self.circuit(c, f"circuits[{found}]", self._stream["defaults"])
            else:
                self.c.problems.extend(found)
            if c is not None:
                out.append(c)
        return out

    # -- reporting
    def add(self, message: str, path: str, node=None, line=None) -> None:
        self.c.add(_one_line(message), path, _line(node) if line is None else line)

    def missing(self, parent, path: str, key: str, what: str) -> None:
        self.add(f"missing required key '{key}' ({what})", _join(path, key), parent)

    # -- structure
    def mapping(self, node, path: str, keys, what: str, _depth: int = 0):
        """A mapping node -> {key: value node}, reporting unknown and repeated keys.

        Keys starting with ``x-`` are the user's own and are skipped.  YAML
        merge keys (``<<: *anchor``) are honoured: the mapping's own keys win.
        """
        if node.__class__ is not MappingNode:
            self.add(f"expected {what} (a mapping of keys), got {_describe(node)}",
                     path, node)
            return None
        out = {}
        merges = None
        for knode, vnode in node.value:
            key = knode.value if knode.__class__ is ScalarNode else None
            if key in keys and knode.tag != _MERGE:
                if key in out:
                    self.add(f"key {_shown(key)} appears twice in this mapping (first on "
                             f"line {_line(out[key])}); keep one", _join(path, key), knode)
                else:
                    out[key] = vnode
            elif knode.tag == _MERGE:
                merges = merges or []
                merges.append(vnode)
            elif key is None:
                self.add(f"expected a key name, got {_describe(knode)}", path, knode)
            elif not key.startswith("x-"):
                self.add(f"unknown key {_shown(key)}; {_did_you_mean(key, keys)}",
                         _join(path, _one_line(key[:_SHOW_CHARS])), knode)
        if merges:
            self._merge(merges, out, path, keys, what, _depth)
        return out

    def _merge(self, merges, out, path, keys, what, depth):
        if depth >= _MAX_MERGE_DEPTH:
            self.add("YAML merge keys nested too deeply (or a merge refers to "
                     "itself)", path, merges[0])
            return
        for vnode in merges:
            sources = vnode.value if vnode.__class__ is SequenceNode else [vnode]
            for src in sources:   # earlier sources take priority
                if src.__class__ is not MappingNode:
                    self.add(f"a merge ('<<') takes a mapping or a list of mappings, got "
                             f"{_describe(src)}", path, src)
                    continue
                cache_key = (id(src), path)
                sub = self._merge_cache.get(cache_key)
                if sub is None:
                    sub = self.mapping(src, path, keys, what, depth + 1) or {}
                    self._merge_cache[cache_key] = sub
                for k, v in sub.items():
                    out.setdefault(k, v)

    def sequence(self, node, path: str, what: str):
        if node.__class__ is not SequenceNode:
            self.add(f"expected a list of {what}, got {_describe(node)}", path, node)
            return None
        return node.value

    # -- scalars
    def _number(self, node) -> float | None:
        """An int- or float-tagged scalar -> float (YAML 1.1 forms, .nan, .inf)."""
        v = node.value
        try:
            if node.tag == _FLOAT:
                return float(v)
            if v.isdigit() and (v[0] != "0" or len(v) == 1):
                return float(v)
        except (ValueError, OverflowError):
            pass
        if len(v) > 400:            # no number is written that long
            return None
        try:
            if node.tag == _INT:
                return float(self._yaml.construct_yaml_int(node))
            return float(self._yaml.construct_yaml_float(node))
        except (ValueError, OverflowError, IndexError, yaml.YAMLError):
            # an explicit !!int or !!float on text that is no number ('', '-', '0x')
            return None

    def quantity(self, node, path: str, kind: str, rule: str | None = None,
                 limit: float | None = None):
        """A quantity (number in the kind's unit, or text with a unit) -> float.

        ``rule``: ``"pos"`` (> 0), ``"nonneg"`` (>= 0), ``"abs"`` (above
        absolute zero), or None.  ``limit``: the largest magnitude accepted
        (default :data:`LIMITS` of the kind).
        """
        if node.__class__ is ScalarNode:
            tag = node.tag
            if tag == _STR:
                try:
                    x = units.parse(node.value, kind)
                except units.UnitProblem as exc:
                    self.add(str(exc), path, node)
                    return None
            elif tag == _FLOAT or tag == _INT:
                x = self._number(node)
                if x is None or not math.isfinite(x):
                    self.add(f"expected a finite {kind}, got {_shown(node.value)}", path, node)
                    return None
            else:
                self.add(f"expected {_expect_text(kind)}, got {_describe(node)}",
                         path, node)
                return None
        else:
            self.add(f"expected {_expect_text(kind)}, got {_describe(node)}", path, node)
            return None
        if rule is not None:
            if rule == "pos" and not x > 0:
                self.add(f"expected {_a(kind)} greater than zero, got {_shown(node.value)}",
                         path, node)
                return None
            if rule == "nonneg" and not x >= 0:
                self.add(f"expected {_a(kind)} of zero or more, got {_shown(node.value)}",
                         path, node)
                return None
            if rule == "abs" and not x > -273.15:   # absolute zero, 0 K = -273.15 °C (SI)
                self.add(f"expected a temperature above absolute zero, got "
                         f"{_shown(node.value)}", path, node)
                return None
        limit = LIMITS[kind] if limit is None else limit
        if not abs(x) <= limit:
            unit = _UNIT_SHOWN[kind]
            self.add(f"{_shown(node.value)} is beyond {limit:g} {unit} in size, the largest "
                     f"{kind} zsplan accepts here; expected a real installation's value",
                     path, node)
            return None
        return x

    def plain(self, node, path: str, what: str, lo: float | None = None,
              hi: float | None = None):
        """A plain number (no unit), finite, with lo < x <= hi where given."""
        x = None
        if node.__class__ is ScalarNode:
            if node.tag in (_INT, _FLOAT):
                x = self._number(node)
            elif node.tag == _STR and len(node.value) <= 400:
                try:
                    x = float(node.value)
                except ValueError:
                    x = None
        if (x is None or not math.isfinite(x) or (lo is not None and not x > lo)
                or (hi is not None and x > hi)):
            rng = "a finite plain number"
            if lo is not None:
                rng += f" above {lo:g}"
            if hi is not None:
                rng += f"{' and' if lo is not None else ''} at most {hi:g}"
            self.add(f"expected {what}: {rng}, got {_describe(node)}", path, node)
            return None
        return x

    def text(self, node, path: str, what: str, max_chars: int | None = None):
        """Any non-empty scalar, as written (``ref: 03`` stays ``"03"``).

        ``max_chars``: the longest text accepted (refs and names are shown in
        messages and on drawings).
        """
        if node.__class__ is ScalarNode and node.tag != _NULL and node.value.strip():
            if max_chars is not None and len(node.value) > max_chars:
                self.add(f"expected {what} of at most {max_chars} characters, got "
                         f"{_shown(node.value)}", path, node)
                return None
            return node.value
        self.add(f"expected {what} (text), got {_describe(node)}", path, node)
        return None

    def choice(self, node, path: str, choices: tuple, what: str):
        """One of ``choices`` (case-insensitive) -> its canonical spelling."""
        table = self._choices.get(choices)
        if table is None:
            table = self._choices[choices] = {c.lower(): c for c in choices}
        if node.__class__ is ScalarNode and node.tag != _NULL:
            got = table.get(node.value.lower())
            if got is not None:
                return got
            hint = _did_you_mean(node.value, choices)
            if hint.startswith("did"):
                hint = f"expected one of {', '.join(choices)}; {hint}"
            self.add(f"unknown {what} {_shown(node.value)}; {hint}", path, node)
            return None
        self.add(f"expected {what}: one of {', '.join(choices)}, got {_describe(node)}",
                 path, node)
        return None

    def boolean(self, node, path: str, what: str):
        if (node.__class__ is ScalarNode and node.tag == _BOOL
                and node.value.lower() in self._yaml.bool_values):
            return self._yaml.bool_values[node.value.lower()]
        self.add(f"expected {what}: true or false, got {_describe(node)}", path, node)
        return None

    def engine_choice(self, node, path: str, name: str, what: str):
        """One of the engine's choices ``name`` (see :func:`_engine_choices`)."""
        return self.choice(node, path, _engine_choices()[name], what)

    def phases(self, node, path: str):
        """``1`` or ``3`` -> int."""
        got = self.choice(node, path, PHASES, "number of phases")
        return None if got is None else int(got)

    def rated(self, out: dict, construction, path: str, m: dict) -> None:
        """A current-rating table exists for the construction, method and phases.

        ``out`` holds ``method`` and ``phases`` (when given, else the model's
        defaults, which every construction has); the problem is put at the
        key that was given.
        """
        method, phases = out.get("method", "C"), out.get("phases", 1)
        if None in (construction, method, phases):
            return
        choices = _engine_choices()
        rated = choices["rated"]
        if (construction, method, phases) in rated:
            return
        if (construction, method) not in choices["rated_method"]:
            have = sorted({mt for c, mt, _ in rated if c == construction})
            self.add(f"no current ratings for {construction} cable in installation method "
                     f"{method}; expected one of {', '.join(have)}", f"{path}.method",
                     m.get("method"))
        else:
            have = sorted({ph for c, mt, ph in rated if c == construction and mt == method})
            self.add(f"no current ratings for {construction} cable carrying {phases} "
                     f"phases (method {method}); expected phases: "
                     f"{' or '.join(map(str, have))}", f"{path}.phases", m.get("phases"))

    def point(self, node, path: str, what: str = "a point [x, y] in plan metres"):
        """``[x, y]`` of numbers (metres) or length strings -> (x, y).

        Each coordinate within :data:`MAX_COORDINATE_M` of the origin.
        """
        if node.__class__ is SequenceNode and len(node.value) == 2:
            a, b = node.value
            x = y = None
            if (a.tag == _FLOAT or a.tag == _INT) and (b.tag == _FLOAT or b.tag == _INT):
                x, y = self._number(a), self._number(b)       # the common case, quickly
                if x is not None and y is not None and abs(x) <= MAX_COORDINATE_M \
                        and abs(y) <= MAX_COORDINATE_M:
                    return (x, y)
            if x is None or y is None or not math.isfinite(x + y):
                x = self.quantity(a, f"{path}[0]", "length", limit=math.inf)
                y = self.quantity(b, f"{path}[1]", "length", limit=math.inf)
                if x is None or y is None:
                    return None
            if abs(x) <= MAX_COORDINATE_M and abs(y) <= MAX_COORDINATE_M:
                return (x, y)
            self.add(f"the point [{x:g}, {y:g}] lies beyond {MAX_COORDINATE_M:g} m from the "
                     "origin; expected plan coordinates in metres of a real site", path, node)
            return None
        self.add(f"expected {what}, got {_describe(node)}", path, node)
        return None

    # -- the plan
    def plan(self, root) -> Plan:
        if root.__class__ is not MappingNode:
            raise PlanError(Problem(
                self.file, f"the top level of a plan must be a mapping starting with "
                f"'zsplan: {FORMAT_VERSION}', got {_describe(root)}", "", _line(root)))
        top = self.mapping(root, "", _TOP_KEYS, "a plan")

        ver = top.get("zsplan")
        if ver is None:
            self.missing(root, "", "zsplan", f"the plan format version, "
                         f"'zsplan: {FORMAT_VERSION}'")
        elif not (ver.__class__ is ScalarNode and ver.value.strip() == str(FORMAT_VERSION)):
            # another version's keys may mean other things: stop here
            raise PlanError(Problem(
                self.file, f"plan format version {_describe(ver)} is not supported; "
                f"this zsplan reads version {FORMAT_VERSION} ('zsplan: {FORMAT_VERSION}')",
                "zsplan", _line(ver)))

        title = ""
        if "title" in top and top["title"].tag != _NULL:
            title = self.text(top["title"], "title", "a title") or ""

        stream = self._stream
        if stream is not None and (top.get("defaults") is not stream["defaults_node"]
                                   or top.get("circuits") is not stream["node"]):
            raise _Restart()
        supply = self.supply(top.get("supply"), root)
        if stream is not None:        # read already, with the circuits
            defaults = stream["defaults"]
            self.c.problems.extend(stream["defaults_problems"])
        else:
            defaults = self.defaults(top.get("defaults"))
        settings = self.settings(top.get("settings"))
        if supply is not None and supply.private:
            # a private supply: its own limits, unless the settings give them
            lim = _private_limits()
            settings = replace(settings, **{
                f"{key}_pct": lim[use] for key, use in (("vdrop_lighting", "lighting"),
                                                         ("vdrop_other", "other"))
                if key not in self._vdrop_limits_given})
        drawing, drawing_ok = self.drawing(top.get("drawing"))

        boards_node = top.get("boards")
        if boards_node is None:
            self.missing(root, "", "boards", "a list of distribution boards, each "
                         "with a ref")
            boards = []
        else:
            boards = self.boards(boards_node, defaults)
        circuits_node = top.get("circuits")
        if circuits_node is None:
            self.missing(root, "", "circuits", "a list of circuits")
            circuits = []
        elif stream is not None:
            if not stream["items"]:
                self.add("expected at least one circuit", "circuits", circuits_node)
            circuits = self._streamed_circuits()
            self._stream = None
        else:
            circuits = self.circuits(circuits_node, defaults)

        board_refs = {b["kw"]["ref"]: b for b in boards if b["kw"]["ref"] is not None}
        self.check_feeds(boards, board_refs)
        self.check_circuit_boards(circuits, board_refs)

        if drawing.routes_layer:
            if drawing_ok:
                self.apply_drawing(drawing, boards, board_refs, circuits)
            else:
                self._drawing_failed = True

        # what neither the plan file nor the drawing gave (unless the drawing
        # that should have given it could not be read: that is reported already)
        if not self._drawing_failed:
            for b in boards:
                if b["at"] is None and "at" not in b["m"]:
                    self.missing(b["node"], b["kw"]["where"].path, "at",
                                 "plan position [x, y] in metres; give it here or "
                                 "draw the board on the floor plan")
            for c in circuits:
                if c["kw"]["route"] is None and "route" not in c["m"]:
                    self.add("this circuit has no route; expected 'route: [[x, y], "
                             "...]' in plan metres, or the route drawn on the floor "
                             "plan's routes layer", _join(c["kw"]["where"].path, "route"),
                             c["node"])

        extra = {}
        for knode, vnode in root.value:
            if knode.__class__ is ScalarNode and knode.value.startswith("x-"):
                try:
                    extra[knode.value] = self._yaml.construct_document(vnode)
                except (yaml.YAMLError, ValueError, TypeError, IndexError, KeyError,
                        OverflowError, RecursionError) as exc:
                    # the user's own key: YAML's constructors refuse its value
                    # ('!!timestamp 2001-13-45', '!!int ""', an unhashable key)
                    why = getattr(exc, "problem", None) or str(exc).split("\n")[0]
                    self.add(f"cannot read this value ({_one_line(why)}); expected plain "
                             "YAML values under a user's own x- key",
                             _one_line(knode.value[:_SHOW_CHARS]), vnode)
                finally:
                    # the constructor keeps what it built; start afresh for the next key
                    self._yaml.constructed_objects.clear()
                    self._yaml.recursive_objects.clear()
                    self._yaml.state_generators = []
                    self._yaml.deep_construct = False
        if self._drawing_warnings:
            extra["warnings"] = tuple(self._drawing_warnings)
        self.c.raise_if_any()
        return Plan(
            path=self.file, supply=supply, title=title, drawing=drawing,
            settings=settings, version=FORMAT_VERSION, extra=extra,
            boards=tuple(Board(at=b["at"], **b["kw"]) for b in boards),
            circuits=tuple(Circuit(**c["kw"]) for c in circuits),
        )

    def supply(self, node, root):
        path = "supply"
        if node is None:
            self.missing(root, "", "supply", "the supply: earthing and ze at least")
            return None
        m = self.mapping(node, path, _SUPPLY_KEYS, "the supply")
        if m is None:
            return None
        kw = {}
        if "ze" in m:
            kw["ze_ohm"] = self.quantity(m["ze"], "supply.ze", "impedance", "pos")
        else:
            self.missing(node, path, "ze", "external earth fault loop impedance, "
                         "such as '0.35 ohm'")
        if "earthing" in m:
            kw["earthing"] = self.choice(m["earthing"], "supply.earthing", EARTHING,
                                         "earthing")
        else:
            self.missing(node, path, "earthing", "one of " + ", ".join(EARTHING))
        kw["u0_v"] = (self.quantity(m["u0"], "supply.u0", "voltage", "pos")
                      if "u0" in m else DEFAULT_U0_V)
        if kw["u0_v"] is not None and kw["u0_v"] <= MIN_U0_V:
            self.add(f"expected U0 above {MIN_U0_V:g} V: BS 7671 Table 41.1 sets disconnection "
                     f"times for a.c. systems above extra-low voltage only; got "
                     f"{_shown(m['u0'].value)}", "supply.u0", m["u0"])
            kw["u0_v"] = None
        kw["cmin"] = (self.plain(m["cmin"], "supply.cmin", "the minimum voltage "
                                 "factor", 0.0, 1.0) if "cmin" in m else DEFAULT_CMIN)
        if "electrode" in m:
            kw["electrode_ohm"] = self.quantity(m["electrode"], "supply.electrode",
                                                "impedance", "pos")
            if kw.get("earthing") not in (None, "TT"):
                self.add(f"an earth electrode (RA) applies to TT earthing only; "
                         f"earthing here is {kw['earthing']}", "supply.electrode",
                         m["electrode"])
        if "private" in m:
            kw["private"] = self.boolean(m["private"], "supply.private", "whether the "
                                         "installation has a private supply (its own "
                                         "transformer or generator)")
        if "ze_ohm" not in kw or "earthing" not in kw or None in kw.values():
            return None
        return Supply(**kw)

    def defaults(self, node) -> dict:
        """Circuit values inherited unless a circuit gives its own."""
        d = {"ceiling_m": DEFAULT_CEILING_M, "allowance": 0.0, "extra_m": 0.0,
             "ambient_c": DEFAULT_AMBIENT_C,
             "test_temperature_c": DEFAULT_TEST_TEMPERATURE_C, "run": "ceiling"}
        if node is None or node.tag == _NULL:
            return d
        m = self.mapping(node, "defaults", _DEFAULT_KEYS, "circuit defaults")
        if not m:
            return d
        self._default_nodes = m
        self._circuit_values(m, "defaults", d)
        cable = {}
        if "cable" in m:
            cable = dict(self.cable_fields(m["cable"], "defaults.cable") or {})
        if "cpc_with_line" in m:
            v = self.boolean(m["cpc_with_line"], "defaults.cpc_with_line",
                             "whether the cpc runs with the line conductors")
            if "cpc_with_line" in cable:
                self.add("cpc_with_line is given both here and in defaults.cable; "
                         "keep one", "defaults.cpc_with_line", m["cpc_with_line"])
            elif v is not None:
                cable["cpc_with_line"] = v
        self._default_cable = cable
        return d

    def _circuit_values(self, m: dict, path: str, out: dict) -> None:
        """The keys shared by ``defaults`` and a circuit, into ``out``."""
        n = m.get("ceiling")
        if n is not None:
            out["ceiling_m"] = self.quantity(n, f"{path}.ceiling", "length", "pos")
        n = m.get("allowance")
        if n is not None:
            v = self.quantity(n, f"{path}.allowance", "percent", "nonneg")
            out["allowance"] = None if v is None else v / 100.0
        n = m.get("extra")
        if n is not None:
            out["extra_m"] = self.quantity(n, f"{path}.extra", "length", "nonneg")
        n = m.get("ambient")
        if n is not None:
            out["ambient_c"] = self.quantity(n, f"{path}.ambient", "temperature", "abs")
        n = m.get("test_temperature")
        if n is not None:
            out["test_temperature_c"] = self.quantity(n, f"{path}.test_temperature",
                                                      "temperature", "abs")
        n = m.get("run")
        if n is not None:
            out["run"] = self.choice(n, f"{path}.run", RUNS, "run")

    def settings(self, node) -> Settings:
        if node is None or node.tag == _NULL:
            return Settings()
        m = self.mapping(node, "settings", _SETTINGS_KEYS, "method settings")
        if not m:
            return Settings()
        kw = {}
        if "tight" in m:
            v = self.quantity(m["tight"], "settings.tight", "percent", "nonneg")
            if v is not None and v >= 100:
                self.add(f"expected a margin below 100 %, got {m['tight'].value!r}",
                         "settings.tight", m["tight"])
            elif v is not None:
                kw["tight"] = v / 100.0
        if "alpha" in m:
            kw["alpha"] = self.choice(m["alpha"], "settings.alpha", ALPHA_METHODS,
                                      "temperature coefficient method")
        if "test_limit" in m:
            kw["test_limit"] = self.choice(m["test_limit"], "settings.test_limit",
                                           TEST_LIMIT_METHODS, "test limit method")
        for key in ("vdrop_lighting", "vdrop_other"):
            if key in m:
                kw[f"{key}_pct"] = self.quantity(m[key], f"settings.{key}", "percent",
                                                 "pos")
                self._vdrop_limits_given.add(key)
        if "vdrop_load" in m:
            kw["vdrop_load"] = self.engine_choice(m["vdrop_load"], "settings.vdrop_load",
                                                  "vdrop_load", "voltage-drop load model")
        if "group_distance" in m:
            kw["group_distance_m"] = self.quantity(m["group_distance"],
                                                   "settings.group_distance", "length", "pos")
        if "group_min_length" in m:
            kw["group_min_length_m"] = self.quantity(m["group_min_length"],
                                                     "settings.group_min_length", "length",
                                                     "nonneg")
        if "grouping" in m:
            kw["grouping_arrangement"] = self.engine_choice(m["grouping"], "settings.grouping",
                                                            "grouping", "grouping arrangement")
        return Settings(**{k: v for k, v in kw.items() if v is not None})

    def drawing(self, node) -> tuple[Drawing, bool]:
        """The floor plan settings; the flag says whether they are all valid."""
        if node is None or node.tag == _NULL:
            return Drawing(), True
        n0 = len(self.c.problems)
        m = self.mapping(node, "drawing", _DRAWING_KEYS, "the drawing settings")
        if m is None:
            return Drawing(), False
        kw = {}
        if "floorplan" in m:
            kw["floorplan"] = self.floorplan(m["floorplan"])
        if "scale" in m:
            kw["scale"] = self.scale(m["scale"])
        if "units_per_metre" in m:
            kw["units_per_metre"] = self.plain(m["units_per_metre"],
                                               "drawing.units_per_metre",
                                               "drawing units per metre", 0.0)
        if "calibrate" in m:
            kw["calibrate"] = self.calibrate(m["calibrate"])
        given = [k for k in ("scale", "units_per_metre", "calibrate") if k in m]
        if len(given) > 1:
            self.add(f"give only one of scale, units_per_metre and calibrate; "
                     f"got {', '.join(given)}", "drawing", node)
        if "routes_layer" in m:
            kw["routes_layer"] = self.text(m["routes_layer"], "drawing.routes_layer",
                                           "the name or id of the routes layer")
            if "floorplan" not in m:
                self.add("routes_layer needs a floorplan to read it from",
                         "drawing.routes_layer", m["routes_layer"])
        ok = len(self.c.problems) == n0
        return Drawing(**{k: v for k, v in kw.items() if v is not None}), ok

    def floorplan(self, node) -> str | None:
        text = self.text(node, "drawing.floorplan", "the floor plan's file name")
        if text is None:
            return None
        where = "drawing.floorplan"
        if "\0" in text or len(text) > 4096 or not text.isprintable():
            self.add(f"expected the floor plan's file name, got {_shown(text)} (a name with "
                     "control characters, or too long)", where, node)
            return None
        if re.match(r"^[A-Za-z][A-Za-z0-9+.-]*://", text):
            self.add(f"the floor plan {_shown(text)} is a web address; expected a file in the "
                     "plan file's folder (nothing is fetched)", where, node)
            return None
        try:
            base = self.base_dir.resolve()
            full = (base / text).resolve()
            inside = full.is_relative_to(base)
            is_file = inside and full.is_file()
        except (OSError, ValueError, RuntimeError) as exc:   # too long, a symlink loop
            self.add(f"the floor plan {_shown(text)} cannot be looked up "
                     f"({_one_line(getattr(exc, 'strerror', None) or exc)}); expected an SVG "
                     "file beside the plan file", where, node)
            return None
        if not inside:
            self.add(f"the floor plan {_shown(text)} lies outside the plan file's folder "
                     f"({base}); expected a file in that folder or below it", where, node)
            return None
        if not is_file:
            what = "is a folder" if full.is_dir() else "not found"
            self.add(f"floor plan {_shown(text)} {what} (looked for {full}); expected an "
                     "SVG file beside the plan file", where, node)
            return None
        if full.suffix.lower() != ".svg":
            self.add(f"expected an SVG file (.svg), got {_shown(text)}", where, node)
            return None
        return str(full)

    def scale(self, node) -> float | None:
        m = _SCALE.match(node.value) if node.__class__ is ScalarNode else None
        if m:
            a, b = float(m.group(1)), float(m.group(2))
            if a > 0 and b > 0:
                return b / a
        self.add(f"expected a drawing scale such as '1:50', got {_describe(node)}",
                 "drawing.scale", node)
        return None

    def calibrate(self, node):
        path = "drawing.calibrate"
        m = self.mapping(node, path, _CALIBRATE_KEYS, "two drawing points a known "
                         "length apart")
        if m is None:
            return None
        out = []
        for key, what in (("from", "drawing point [x, y]"), ("to", "drawing point [x, y]"),
                          ("length", "the real length between them, such as '3.6 m'")):
            if key not in m:
                self.missing(node, path, key, what)
                out.append(None)
            elif key == "length":
                out.append(self.quantity(m[key], f"{path}.length", "length", "pos"))
            else:
                out.append(self._drawing_point(m[key], f"{path}.{key}"))
        if None in out:
            return None
        if out[0] == out[1]:
            self.add("calibration points 'from' and 'to' are the same point; expected "
                     "two different points", path, node)
            return None
        return (out[0], out[1], out[2])

    def _drawing_point(self, node, path):
        """[x, y] in drawing units: plain numbers."""
        if node.__class__ is SequenceNode and len(node.value) == 2:
            xy = [self.plain(v, f"{path}[{i}]", "a drawing coordinate")
                  for i, v in enumerate(node.value)]
            return None if None in xy else tuple(xy)
        self.add(f"expected a drawing point [x, y] in drawing units, got "
                 f"{_describe(node)}", path, node)
        return None

    # -- boards
    def boards(self, node, defaults: dict) -> list[dict]:
        """Boards as {"kw": Board fields but ``at``, "at", "m", "node"}."""
        items = self.sequence(node, "boards", "boards")
        if items is None:
            return []
        if not items:
            self.add("expected at least one board", "boards", node)
        out = []
        seen: dict[str, str] = {}
        for i, item in enumerate(items):
            path = f"boards[{i}]"
            m = self.mapping(item, path, _BOARD_KEYS, "a board")
            if m is None:
                continue
            kw = {"ref": None, "height_m": DEFAULT_BOARD_HEIGHT_M, "fed_from": None,
                  "where": Where(self.file, path, _line(item))}
            b = {"kw": kw, "at": None, "m": m, "node": item}
            if "ref" in m:
                ref = kw["ref"] = self.text(m["ref"], f"{path}.ref", "the board's ref", _MAX_REF)
                if ref in seen:
                    self.add(f"board ref {_shown(ref)} is used twice (also {seen[ref]}); "
                             "expected each board's ref to be unique", f"{path}.ref",
                             m["ref"])
                elif ref is not None:
                    seen[ref] = f"{path}, line {_line(item)}"
            else:
                self.missing(item, path, "ref", "the board's name, such as CU1")
            if "at" in m:
                b["at"] = self.point(m["at"], f"{path}.at")
            if "height" in m:
                kw["height_m"] = self.quantity(m["height"], f"{path}.height", "length",
                                               "nonneg")
            if "fed_from" in m:
                kw["fed_from"], b["fed_board"] = self.fed_from(m["fed_from"],
                                                               f"{path}.fed_from", defaults)
            out.append(b)
        return out

    def fed_from(self, node, path: str, defaults: dict):
        """-> (SubMain or None, the node naming the upstream board or None)."""
        m = self.mapping(node, path, _FED_KEYS, "the sub-main feeding this board")
        if m is None:
            return None, None
        kw = {}
        for key, what in (("board", "the upstream board's ref"),
                          ("cable", "the sub-main cable: line and cpc"),
                          ("length", "the sub-main's length, such as '18 m'"),
                          ("device", "the upstream protective device")):
            if key not in m:
                self.missing(node, path, key, what)
        if "board" in m:
            kw["board"] = self.text(m["board"], f"{path}.board", "the upstream "
                                    "board's ref", _MAX_REF)
        if "cable" in m:
            fields = self.cable_fields(m["cable"], f"{path}.cable")
            if fields is not None:
                kw["cable"] = self.make_cable(fields, f"{path}.cable", m["cable"], fields)
        if "length" in m:
            kw["length_m"] = self.quantity(m["length"], f"{path}.length", "length",
                                           "nonneg")
        if "device" in m:
            kw["device"] = self.device(m["device"], f"{path}.device")
        if "load" in m and m["load"].tag != _NULL:
            kw["load_a"] = self.quantity(m["load"], f"{path}.load", "current",
                                         "nonneg")
        n0 = len(self.c.problems)
        opt = {}
        if "method" in m:
            opt["method"] = self.engine_choice(m["method"], f"{path}.method", "method",
                                               "installation method")
        if "phases" in m:
            opt["phases"] = self.phases(m["phases"], f"{path}.phases")
        if "ambient" in m:
            opt["ambient_c"] = self.quantity(m["ambient"], f"{path}.ambient", "temperature",
                                             "abs")
        elif defaults.get("ambient_c") is not None:
            opt["ambient_c"] = defaults["ambient_c"]
        if "rcd" in m and m["rcd"].tag != _NULL:
            opt["rcd_a"] = self.quantity(m["rcd"], f"{path}.rcd", "current", "pos")
        if "rcd_type" in m:
            opt["rcd_kind"] = self.engine_choice(m["rcd_type"], f"{path}.rcd_type",
                                                 "rcd_type", "RCD type")
            if "rcd_a" not in opt and len(self.c.problems) == n0:
                self.add("rcd_type is given but the sub-main has no 'rcd'; expected its "
                         "rated residual current too, such as 'rcd: 100 mA'",
                         f"{path}.rcd_type", m["rcd_type"])
        cable = kw.get("cable")
        if cable is not None:
            self.rated(opt, cable.construction, path, m)
            amb = opt.get("ambient_c")
            if amb is not None and amb >= cable.temp_rating_c:
                src, where = m.get("ambient"), f"{path}.ambient"
                if src is None:   # inherited: report it once, at defaults.ambient
                    src, where = self._default_nodes.get("ambient", node), "defaults.ambient"
                if (where, cable.temp_rating_c) not in self._reported:
                    self._reported.add((where, cable.temp_rating_c))
                    self.add(f"ambient {amb:g} °C is not below the cable's maximum "
                             f"operating temperature {cable.temp_rating_c:g} °C; expected a "
                             "lower ambient or a cable rated hotter", where, src)
        if len(kw) < 4 or None in kw.values() or len(self.c.problems) != n0:
            return None, None
        return SubMain(**kw, **opt), m["board"]

    def check_feeds(self, boards, refs) -> None:
        """Every ``fed_from`` names a known board, and no chain of feeds loops."""
        up: dict[str, str] = {}
        for b in boards:
            ref, sub = b["kw"]["ref"], b["kw"]["fed_from"]
            if sub is None or ref is None:
                continue
            path = b["kw"]["where"].path + ".fed_from.board"
            node = b["fed_board"]
            if sub.board == ref:
                self.add(f"board {_shown(ref)} cannot be fed from itself; expected the "
                         "ref of the upstream board", path, node)
            elif sub.board not in refs:
                self.add(f"fed_from names unknown board '{sub.board}'; "
                         f"{_did_you_mean(sub.board, list(refs))}", path, node)
            else:
                up[ref] = sub.board
        in_loop: set[str] = set()
        for start in up:
            chain, ref = [], start
            while ref in up and ref not in chain and ref not in in_loop:
                chain.append(ref)
                ref = up[ref]
            if ref in chain:
                loop = chain[chain.index(ref):]
                in_loop.update(loop)
                b = refs[loop[0]]
                names = " <- ".join(loop + [loop[0]])
                self.add(f"fed_from makes a loop ({names}); expected every board to "
                         "be fed, in the end, from the supply",
                         b["kw"]["where"].path + ".fed_from.board", b["fed_board"])

    # -- circuits
    def circuits(self, node, defaults: dict) -> list[dict]:
        """Circuits as {"kw": Circuit fields, "m": key -> node, "node"}."""
        items = self.sequence(node, "circuits", "circuits")
        if items is None:
            return []
        if not items:
            self.add("expected at least one circuit", "circuits", node)
        out = []
        for i, item in enumerate(items):
            c = self.circuit(item, f"circuits[{i}]", defaults)
            if c is not None:
                out.append(c)
        return out

    def circuit(self, node, path: str, defaults: dict):
        m = self.mapping(node, path, _CIRCUIT_KEYS, "a circuit")
        if m is None:
            return None
        kw = {"ref": None, "board": None, "device": None, "cable": None,
              "route": None, "outlets": (), **defaults}
        for key, what in (("ref", "the circuit's ref, unique within its board"),
                          ("board", "the ref of the board it leaves from"),
                          ("device", "its protective device, such as "
                           "{type: mcb, curve: B, rating: 32 A}")):
            n = m.get(key)
            if n is None:
                self.missing(node, path, key, what)
            elif key == "device":
                kw["device"] = self.device(n, f"{path}.device")
            else:
                kw[key] = self.text(n, f"{path}.{key}", what, _MAX_REF)
        n = m.get("name")
        if n is not None and n.tag != _NULL:
            kw["name"] = self.text(n, f"{path}.name", "a name", _MAX_NAME) or ""
        n = m.get("use")
        if n is not None:
            kw["use"] = self.choice(n, f"{path}.use", USES, "use")
        n = m.get("topology")
        if n is not None:
            kw["topology"] = self.choice(n, f"{path}.topology", TOPOLOGIES, "topology")
        n = m.get("rcd")
        if n is not None and n.tag != _NULL:
            kw["rcd_a"] = self.quantity(n, f"{path}.rcd", "current", "pos")
        n = m.get("load")
        if n is not None and n.tag != _NULL:
            kw["load_a"] = self.quantity(n, f"{path}.load", "current", "nonneg")
        self._circuit_values(m, path, kw)

        # the cable: defaults.cable, overridden key by key by the circuit's own
        n = m.get("cable")
        if n is None:
            if self._default_cable:
                kw["cable"] = self.make_cable(self._default_cable, f"{path}.cable", node, {})
            else:
                self.missing(node, path, "cable", "its cable: line and cpc csa, such "
                             "as {line: 2.5 mm2, cpc: 1.5 mm2}")
        else:
            own = self.cable_fields(n, f"{path}.cable")
            if own is not None:
                kw["cable"] = self.make_cable({**self._default_cable, **own},
                                              f"{path}.cable", n, own)
        cable, ambient = kw["cable"], kw["ambient_c"]
        if cable is not None and ambient is not None and ambient >= cable.temp_rating_c:
            src, where = m.get("ambient"), f"{path}.ambient"
            if src is None:   # inherited: report it once, at defaults.ambient
                src, where = self._default_nodes.get("ambient", node), "defaults.ambient"
            if (where, cable.temp_rating_c) not in self._reported:
                self._reported.add((where, cable.temp_rating_c))
                self.add(f"ambient {ambient:g} °C is not below the cable's maximum "
                         f"operating temperature {cable.temp_rating_c:g} °C; expected a "
                         "lower ambient or a cable rated hotter", where, src)

        self.circuit_checks(m, path, kw)

        n = m.get("route")
        if n is not None:
            kw["route"] = self.route(n, f"{path}.route")
        n = m.get("outlets")
        if n is not None:
            kw["outlets"] = self.outlets(n, f"{path}.outlets",
                                         _KIND_OF_USE.get(kw.get("use") or "sockets"))
        kw["where"] = Where(self.file, path, _line(node))
        # what later checks need, not the circuit's nodes: its keys, the
        # nodes of board and ref (their lines) and its own line
        kept = dict.fromkeys(m)
        for key in ("board", "ref"):
            if key in m:
                kept[key] = m[key]
        return {"kw": kw, "m": kept, "node": _Place(node.start_mark)}

    def circuit_checks(self, m: dict, path: str, kw: dict) -> None:
        """Installation method, phases, insulation and RCD options, into ``kw``."""
        n0 = len(self.c.problems)
        n = m.get("method")
        if n is not None:
            kw["method"] = self.engine_choice(n, f"{path}.method", "method",
                                              "installation method")
        n = m.get("phases")
        if n is not None:
            kw["phases"] = self.phases(n, f"{path}.phases")
        n = m.get("insulation_length")
        if n is not None:
            kw["insulation_m"] = self.quantity(n, f"{path}.insulation_length", "length",
                                               "nonneg")
        has_rcd = m.get("rcd") is not None and m["rcd"].tag != _NULL
        n = m.get("rcd_fault_protection")
        if n is not None and n.tag != _NULL:
            v = kw["rcd_fault_protection"] = self.boolean(
                n, f"{path}.rcd_fault_protection", "whether the circuit's RCD gives fault "
                "protection (disconnection)")
            if v and not has_rcd:
                self.add("rcd_fault_protection is true but the circuit has no 'rcd'; "
                         "expected its rated residual current too, such as 'rcd: 30 mA'",
                         f"{path}.rcd_fault_protection", n)
        n = m.get("rcd_type")
        if n is not None:
            kw["rcd_kind"] = self.engine_choice(n, f"{path}.rcd_type", "rcd_type", "RCD type")
            if kw["rcd_kind"] is not None and not has_rcd:
                self.add("rcd_type is given but the circuit has no 'rcd'; expected its "
                         "rated residual current too, such as 'rcd: 30 mA'",
                         f"{path}.rcd_type", n)
        if kw["cable"] is not None and len(self.c.problems) == n0:
            self.rated(kw, kw["cable"].construction, path, m)

    def route(self, node, path: str):
        items = self.sequence(node, path, "points [x, y] in plan metres")
        if items is None:
            return None
        if len(items) < 2:
            self.add(f"expected a route of at least 2 points [x, y], got {len(items)}",
                     path, node)
            return None
        pts = [self.point(p, f"{path}[{j}]") for j, p in enumerate(items)]
        return None if None in pts else tuple(pts)

    def outlets(self, node, path: str, default_kind: str | None):
        items = self.sequence(node, path, "outlets")
        if items is None:
            return None
        out = []
        for j, item in enumerate(items):
            p = f"{path}[{j}]"
            m = self.mapping(item, p, _OUTLET_KEYS, "an outlet")
            if m is None:
                out.append(None)
                continue
            at = height = None
            if "at" in m:
                at = self.point(m["at"], f"{p}.at")
            else:
                self.missing(item, p, "at", "its plan position [x, y] in metres")
            if "height" in m:
                height = self.quantity(m["height"], f"{p}.height", "length", "nonneg")
            else:
                self.missing(item, p, "height", "its height above the floor, such "
                             "as '0.45 m'")
            name = ""
            if "name" in m and m["name"].tag != _NULL:
                name = self.text(m["name"], f"{p}.name", "a name", _MAX_NAME) or ""
            kind = default_kind or "socket"
            if "kind" in m:
                kind = self.choice(m["kind"], f"{p}.kind", OUTLET_KINDS, "outlet kind")
            if at is None or height is None or kind is None:
                out.append(None)
            else:
                out.append(Outlet(at, height, name, kind))
        return None if None in out else tuple(out)

    def check_circuit_boards(self, circuits, refs) -> None:
        """Each circuit's board exists; (board, ref) pairs are unique."""
        seen: dict[tuple[str, str], str] = {}
        known = list(refs)
        for c in circuits:
            kw, m = c["kw"], c["m"]
            board, ref = kw["board"], kw["ref"]
            if board is not None and refs and board not in refs:
                self.add(f"unknown board {_shown(board)}; {_did_you_mean(board, known)}",
                         _join(kw["where"].path, "board"), m["board"])
            if board is None or ref is None:
                continue
            first = seen.get((board, ref))
            if first is not None:
                self.add(f"circuit ref {_shown(ref)} is used twice on board {board} (also "
                         f"{first}); expected refs unique within a board",
                         _join(kw["where"].path, "ref"), m["ref"])
            else:
                seen[(board, ref)] = f"{kw['where'].path}, line {kw['where'].line}"

    # -- devices and cables
    def device(self, node, path: str):
        key = _flat_key(node)
        if key is not None:
            dev = self._device_cache.get(key)
            if dev is not None:
                return dev
        n0 = len(self.c.problems)
        m = self.mapping(node, path, _DEVICE_KEYS, "a protective device")
        if m is None:
            return None
        dtype = curve = rating = None
        if "type" in m:
            dtype = self.choice(m["type"], f"{path}.type", DEVICE_TYPES, "device type")
        else:
            self.missing(node, path, "type", "one of " + ", ".join(DEVICE_TYPES))
        if "rating" in m:
            rating = self.quantity(m["rating"], f"{path}.rating", "current", "pos")
        else:
            self.missing(node, path, "rating", "the rated current In, such as '32 A'")
        family = None
        if "family" in m:
            family = self.text(m["family"], f"{path}.family", "a device family name", _MAX_REF)
        if dtype == "fuse":
            if "curve" in m:
                self.add("'curve' applies to circuit-breakers (mcb, rcbo), not fuses; "
                         "expected 'standard' instead", f"{path}.curve", m["curve"])
            if "standard" in m:
                if "family" in m:
                    self.add("give either 'standard' or 'family' for a fuse, not both",
                             f"{path}.family", m["family"])
                family = self.choice(m["standard"], f"{path}.standard", FUSE_STANDARDS,
                                     "fuse standard")
            elif "family" not in m:
                self.missing(node, path, "standard", "one of " + ", ".join(FUSE_STANDARDS))
        elif dtype is not None:
            if "standard" in m:
                self.add(f"'standard' applies to fuses, not {dtype}; expected 'curve' "
                         f"({', '.join(CURVES)})", f"{path}.standard", m["standard"])
            if "curve" in m:
                curve = self.choice(m["curve"], f"{path}.curve", CURVES,
                                    "circuit-breaker type")
            else:
                self.missing(node, path, "curve", "the circuit-breaker type: " +
                             ", ".join(CURVES))
            if "family" not in m:
                family = dtype
        if len(self.c.problems) != n0 or None in (dtype, family, rating):
            return None
        dev = Device(dtype, family, rating, curve)
        if self._check_device is not None:
            if dev not in self._checked:
                self._checked[dev] = self._check_device(dev)
            msg = self._checked[dev]
            if msg:
                self.add(msg, path, node)
                return None
        if key is not None:
            self._device_cache[key] = dev
        return dev

    def cable_fields(self, node, path: str):
        """A cable mapping -> dict of the fields given (not yet defaulted)."""
        key = _flat_key(node)
        if key is not None:
            got = self._cable_cache.get(key)
            if got is not None:
                return got
        n0 = len(self.c.problems)
        m = self.mapping(node, path, _CABLE_KEYS, "a cable")
        if m is None:
            return None
        f = {}
        if "line" in m:
            f["line_mm2"] = self.quantity(m["line"], f"{path}.line", "area", "pos")
        if "cpc" in m:
            f["cpc_mm2"] = self.quantity(m["cpc"], f"{path}.cpc", "area", "pos")
        if "material" in m:
            f["material"] = self.choice(m["material"], f"{path}.material", MATERIALS,
                                        "conductor material")
        if "temp_rating" in m:
            t = self.quantity(m["temp_rating"], f"{path}.temp_rating", "temperature")
            for rated in TEMP_RATINGS_C:
                if t is not None and abs(t - rated) < 1e-6:
                    f["temp_rating_c"] = rated
                    break
            else:
                if t is not None:
                    self.add(f"expected a maximum operating temperature of 70 degC "
                             f"or 90 degC, got {m['temp_rating'].value!r}",
                             f"{path}.temp_rating", m["temp_rating"])
        if "cpc_with_line" in m:
            f["cpc_with_line"] = self.boolean(m["cpc_with_line"], f"{path}.cpc_with_line",
                                              "whether the cpc runs with the line "
                                              "conductors")
        if "insulation" in m:
            f["insulation"] = self.choice(m["insulation"], f"{path}.insulation",
                                          INSULATIONS, "insulation")
        if "construction" in m:
            f["construction"] = self.engine_choice(m["construction"], f"{path}.construction",
                                                   "construction", "cable construction")
        if len(self.c.problems) != n0:
            return None
        if key is not None:
            self._cable_cache[key] = f
        return f

    def make_cable(self, fields: dict, path: str, node, own: dict | None = None):
        """Merged cable fields -> Cable, with the contract's defaults.

        Each conductor must be a size IEC 60228 lists for its material; a size
        taken from ``defaults.cable`` (not in ``own``) is reported there, once.
        """
        ok = True
        for k, key, what in (("line_mm2", "line", "line conductor csa, such as '2.5 mm2'"),
                             ("cpc_mm2", "cpc", "protective conductor csa, such as "
                              "'1.5 mm2'")):
            if k not in fields:
                ok = False
                self.missing(node, path, key, f"{what}; not given here nor in "
                             "defaults.cable")
        if not ok:
            return None
        key = tuple(fields.items())
        cable = self._cables.get(key)
        if cable is None and not self._conductors_known(fields, path, node, own):
            return None
        if cable is None:
            temp = fields.get("temp_rating_c", 70.0)
            insulation = fields.get("insulation") or (
                "thermosetting" if temp == 90.0 else "thermoplastic")
            cable = self._cables[key] = Cable(
                fields["line_mm2"], fields["cpc_mm2"], fields.get("material", "copper"),
                temp, fields.get("cpc_with_line", True), insulation,
                fields.get("construction", "twin-and-cpc"))
        return cable

    def _conductors_known(self, fields: dict, path: str, node, own) -> bool:
        """Line and cpc sizes are tabulated (IEC 60228) for the material."""
        checker = self._check_conductor
        if checker is None:
            return True
        material = fields.get("material", "copper")
        ok = True
        for k, key in (("line_mm2", "line"), ("cpc_mm2", "cpc")):
            msg = checker(fields[k], material)
            if not msg:
                continue
            ok = False
            if own is None or k in own or "material" in own:
                self.add(f"{msg}; expected one of those sizes", f"{path}.{key}", node)
            else:                        # inherited from defaults.cable: report it there once
                where = f"defaults.cable.{key}"
                if (where, material) not in self._reported:
                    self._reported.add((where, material))
                    self.add(f"{msg}; expected one of those sizes", where,
                             self._default_nodes.get("cable", node))
        return ok

    # -- the drawing
    def apply_drawing(self, drawing, boards, board_refs, circuits) -> None:
        """Fill boards' positions and circuits' routes and outlets from the SVG."""
        svg = drawing.floorplan
        try:
            drawn = _read_drawing(svg, scale=drawing.scale,
                                  units_per_metre=drawing.units_per_metre,
                                  calibrate=drawing.calibrate,
                                  routes_layer=drawing.routes_layer,
                                  plan_file=self.file)
        except PlanError as exc:
            self.c.problems.extend(exc.problems)
            self._drawing_failed = True
            return
        self._drawing_warnings = list(getattr(drawn, "warnings", ()) or ())
        layer = drawing.routes_layer

        def problem(msg, where):
            self.c.problems.append(Problem(svg, _one_line(msg), _one_line(where)))

        by_full = {}
        by_ref: dict[str, list] = {}
        for c in circuits:
            kw = c["kw"]
            if kw["board"] is None or kw["ref"] is None:
                continue
            by_full[f"{kw['board']}/{kw['ref']}"] = c
            by_ref.setdefault(kw["ref"], []).append(c)

        def match(name, what):
            c = by_full.get(name)
            if c is not None:
                return c
            same = by_ref.get(name, [])
            if len(same) == 1:
                return same[0]
            if same:
                problem(f"{what} {_shown(name)} could be any of " +
                        ", ".join(f"{s['kw']['board']}/{name}" for s in same) +
                        "; expected its label as BOARD/REF", f"{what} {_shown(name)}")
            else:
                problem(f"{what} {_shown(name)} on layer '{layer}' matches no circuit; "
                        "expected a label BOARD/REF or REF of a circuit in the plan",
                        f"{what} {_shown(name)}")
            return None

        drawn_route = set()
        for name, pts in drawn.routes.items():
            c = match(name, "drawn route")
            if c is None:
                continue
            kw = c["kw"]
            label = f"{kw['board']}/{kw['ref']}"
            if id(c) in drawn_route:
                problem(f"circuit {label} is drawn twice; expected one route per "
                        "circuit", f"drawn route {_shown(name)}")
            elif "route" in c["m"]:
                problem(f"circuit {label} has a route in the plan file "
                        f"({kw['where'].path}.route) and one drawn here; keep one",
                        f"drawn route {_shown(name)}")
            else:
                kw["route"] = tuple((float(x), float(y)) for x, y in pts)
                drawn_route.add(id(c))

        drawn_outlets: dict[int, list] = {}
        for o in drawn.outlets:
            c = match(o.circuit, "drawn outlet")
            if c is None:
                continue
            kw = c["kw"]
            label = f"{kw['board']}/{kw['ref']}"
            oname = o.name or "(unnamed)"
            if "outlets" in c["m"]:
                problem(f"circuit {label} lists outlets in the plan file "
                        f"({kw['where'].path}.outlets) and has outlet {_shown(oname)} drawn "
                        "here; keep one", f"drawn outlet {_shown(oname)}")
                continue
            if o.height_m is None:
                problem(f"drawn outlet {_shown(oname)} of circuit {label} has no height; "
                        "expected its height above the floor in the drawing",
                        f"drawn outlet {_shown(oname)}")
                continue
            kind = o.kind or _KIND_OF_USE.get(kw.get("use") or "sockets", "socket")
            if kind not in OUTLET_KINDS:
                problem(f"unknown outlet kind {_shown(kind)} for drawn outlet {_shown(oname)}; "
                        f"expected one of {', '.join(OUTLET_KINDS)}",
                        f"drawn outlet {_shown(oname)}")
                continue
            drawn_outlets.setdefault(id(c), []).append(
                Outlet((float(o.at[0]), float(o.at[1])), float(o.height_m),
                       o.name or "", kind))
        for c in circuits:
            if id(c) in drawn_outlets:
                c["kw"]["outlets"] = tuple(drawn_outlets[id(c)])

        for ref, at in drawn.boards.items():
            b = board_refs.get(ref)
            if b is None:
                problem(f"drawn board {_shown(ref)} is not among the plan's boards; "
                        f"{_did_you_mean(ref, list(board_refs))}", f"drawn board {_shown(ref)}")
            elif "at" in b["m"]:
                problem(f"board {ref} has a position in the plan file "
                        f"({b['kw']['where'].path}.at) and one drawn here; keep one",
                        f"drawn board {_shown(ref)}")
            else:
                b["at"] = (float(at[0]), float(at[1]))


def _conductor_checker():
    """``zsplan.conductors.check_conductor``, or None while it does not exist."""
    try:
        from zsplan import conductors
    except ModuleNotFoundError as exc:
        if exc.name == "zsplan.conductors":
            return None
        raise
    return getattr(conductors, "check_conductor", None)


def _flat_key(node):
    """A hashable key for a flat mapping of scalars (to reuse its result), else None."""
    if node.__class__ is not MappingNode:
        return None
    key = []
    for k, v in node.value:
        if v.__class__ is not ScalarNode or k.__class__ is not ScalarNode or k.tag == _MERGE:
            return None
        key.append((k.value, v.tag, v.value))
    return tuple(key)
