"""YAML node helpers: edit a composed plan without constructing it.

The plan file is *composed* (parsed to nodes) and never *constructed* into
Python values, so that scalars keep their source text (``ref: 03`` stays
``03``; ``scale: 1:50`` is not YAML 1.1's sexagesimal 110), anchors and merge
keys keep working, and :func:`yaml.serialize` writes back what was read.
Nodes are never changed in place: :func:`with_key` returns a copy, so that a
node shared through an alias stays as it was for its other users.
"""
from __future__ import annotations

import math
import re

import yaml
from yaml.nodes import MappingNode, ScalarNode, SequenceNode

__all__ = ["STR", "MAP", "SEQ", "MERGE", "LOADER", "node", "own", "get", "text", "with_key",
           "without_key", "line_at"]

STR = "tag:yaml.org,2002:str"
INT = "tag:yaml.org,2002:int"
FLOAT = "tag:yaml.org,2002:float"
BOOL = "tag:yaml.org,2002:bool"
NULL = "tag:yaml.org,2002:null"
SEQ = "tag:yaml.org,2002:seq"
MAP = "tag:yaml.org,2002:map"
MERGE = "tag:yaml.org,2002:merge"
LOADER = getattr(yaml, "CSafeLoader", yaml.SafeLoader)

_STEP = re.compile(r"\.?([^.\[\]]+)|\[(\d+)\]")


def _float_text(v: float) -> str:
    if math.isnan(v):
        return ".nan"
    if math.isinf(v):
        return ".inf" if v > 0 else "-.inf"
    t = repr(float(v))
    if "e" in t or "E" in t:
        import numpy as np
        t = np.format_float_positional(v, trim="-")
    if "." not in t:
        t += ".0"                       # YAML 1.1 floats need a dot
    return t


def node(v, flow: bool | None = None):
    """A Python value -> a YAML node (the representer, minus its surprises)."""
    if isinstance(v, (ScalarNode, MappingNode, SequenceNode)):
        return v
    if v is None:
        return ScalarNode(NULL, "null")
    if isinstance(v, bool):
        return ScalarNode(BOOL, "true" if v else "false")
    if isinstance(v, int):
        return ScalarNode(INT, str(v))
    if isinstance(v, float):
        return ScalarNode(FLOAT, _float_text(v))
    if isinstance(v, str):
        return ScalarNode(STR, v)
    if isinstance(v, (list, tuple)):
        items = [node(x, flow) for x in v]
        leaf = all(isinstance(x, ScalarNode) for x in items)
        return SequenceNode(SEQ, items, flow_style=leaf if flow is None else flow)
    if isinstance(v, dict):
        items = [(node(k), node(x, flow)) for k, x in v.items()]
        leaf = all(isinstance(x, ScalarNode) for _, x in items)
        return MappingNode(MAP, items, flow_style=leaf if flow is None else flow)
    return ScalarNode(STR, str(v))


def own(mapping: MappingNode, key: str):
    for k, v in mapping.value:
        if isinstance(k, ScalarNode) and k.tag != MERGE and k.value == key:
            return v
    return None


def get(mapping, key: str, depth: int = 0):
    """A key's value node, own keys first, then YAML merge sources."""
    if not isinstance(mapping, MappingNode) or depth > 16:
        return None
    v = own(mapping, key)
    if v is not None:
        return v
    for k, src in mapping.value:
        if isinstance(k, ScalarNode) and k.tag == MERGE:
            for s in (src.value if isinstance(src, SequenceNode) else [src]):
                got = get(s, key, depth + 1)
                if got is not None:
                    return got
    return None


def text(node) -> str | None:
    if isinstance(node, ScalarNode) and node.tag != NULL and node.value.strip():
        return node.value
    return None


def with_key(mapping: MappingNode, key: str, value) -> MappingNode:
    """A copy of ``mapping`` with ``key`` set (replaced in place, else appended)."""
    items = list(mapping.value)
    new = node(value)
    for i, (k, _) in enumerate(items):
        if isinstance(k, ScalarNode) and k.tag != MERGE and k.value == key:
            items[i] = (k, new)
            break
    else:
        items.append((ScalarNode(STR, key), new))
    return MappingNode(mapping.tag, items, mapping.start_mark, mapping.end_mark,
                       flow_style=mapping.flow_style)


def without_key(mapping: MappingNode, key: str) -> MappingNode:
    items = [(k, v) for k, v in mapping.value
             if not (isinstance(k, ScalarNode) and k.tag != MERGE and k.value == key)]
    return MappingNode(mapping.tag, items, mapping.start_mark, mapping.end_mark,
                       flow_style=mapping.flow_style)


def line_at(root, path: str) -> int | None:
    """1-based line of the deepest node found along ``path`` in the plan file."""
    node = root
    line = None if root is None else root.start_mark.line + 1
    for m in _STEP.finditer(path):
        key, idx = m.group(1), m.group(2)
        nxt = None
        if key is not None and isinstance(node, MappingNode):
            nxt = get(node, key)
        elif idx is not None and isinstance(node, SequenceNode) and int(idx) < len(node.value):
            nxt = node.value[int(idx)]
        if nxt is None:
            break
        node = nxt
        if node.start_mark is not None:
            line = node.start_mark.line + 1
    return line
