"""YAML text -> node tree: lean, counted, and with one list read item by item.

PyYAML's own composer (``yaml.compose``) builds every node of a document
and keeps them all; for a plan of tens of thousands of circuits that tree
is by far the largest thing zsplan holds (about 40 times the file's size).
This composer reads the same libyaml event stream (PyYAML's C parser when it
was built with it, else its pure-Python parser) and builds the same node
classes (:class:`yaml.nodes.ScalarNode`, ``SequenceNode``, ``MappingNode``,
tags resolved by PyYAML's YAML 1.1 resolver), with two differences:

* **one list can be streamed**: when the top-level mapping's key
  ``stream_key`` opens a list, ``on_stream`` is asked for a handler; each
  item of the list is then handed to the handler as soon as it is complete
  and is not kept, so the tree never holds more than one item of that list;
* **the document's size is counted as it is read**: ``written`` is the number
  of nodes in the text, ``expanded`` the number of values the document stands
  for when every alias (``*name``) is written out.  The count is the measure
  of a YAML bomb (aliases of aliases) and is available before anything walks
  the aliased nodes.

Nodes keep their start mark (for the line of every value); the end mark is
not kept.  Errors are PyYAML's own (:class:`yaml.MarkedYAMLError` and its
subclasses) with the same messages as ``yaml.compose``.

References
----------
.. [1] YAML 1.1, chapter 3 (processing: the event and node models):
   https://yaml.org/spec/1.1/
"""
from __future__ import annotations

import yaml
from yaml.composer import ComposerError
from yaml.events import (AliasEvent, MappingEndEvent, MappingStartEvent, ScalarEvent,
                         SequenceEndEvent, SequenceStartEvent, StreamEndEvent)
from yaml.nodes import MappingNode, ScalarNode, SequenceNode

__all__ = ["Composer", "LOADER", "MAX_DEPTH"]

#: The loader whose parser gives the events: libyaml's C parser when PyYAML has it.
LOADER = getattr(yaml, "CSafeLoader", yaml.SafeLoader)

_STR = "tag:yaml.org,2002:str"
_SEQ = "tag:yaml.org,2002:seq"
_MAP = "tag:yaml.org,2002:map"
#: Deepest nesting of lists and mappings read: libyaml's own limit, kept when
#: PyYAML runs without it.
MAX_DEPTH = 1000
#: Plain scalars resolved to a tag are remembered, up to this many distinct texts.
_TAG_CACHE_MAX = 200_000


class Composer:
    """Compose one YAML document from ``text``.

    Parameters
    ----------
    text : str
        The YAML document.
    stream_key : str, optional
        A key of the top-level mapping whose list value is streamed.
    on_stream : callable, optional
        ``on_stream(composer, pairs, node)`` is called when ``stream_key`` (a
        plain key of the top-level mapping, its first occurrence) opens a
        list; ``pairs`` are the top-level (key node, value node) pairs before
        it and ``node`` the list's node.
        It returns a handler ``handler(item_node, index)`` that receives
        each item as it is completed, or None to keep the list in the tree
        as usual.  A streamed list's node is in the tree with no items and
        the attribute ``streamed`` (the number of items).

    Attributes
    ----------
    written : int
        Nodes written in the text so far (aliases not counted).
    expanded : int
        Values the document stands for so far, every alias written out: a
        node counts once, an alias counts as the whole node it names (1 when
        it names a node still open, a cycle).
    """

    def __init__(self, text: str, *, stream_key: str | None = None, on_stream=None):
        self.text = text
        self.stream_key = stream_key
        self.on_stream = on_stream
        self.written = 0
        self.expanded = 0

    def compose(self):
        """The document's root node, or None for an empty stream.

        Raises
        ------
        yaml.YAMLError
            As :func:`yaml.compose` does (syntax, undefined or duplicate
            anchors, more than one document).
        """
        loader = LOADER(self.text)
        try:
            get = loader.get_event
            get()                                   # stream start
            event = get()
            if event.__class__ is StreamEndEvent:
                return None
            root = self._document(loader)           # after it: the document end
            event = get()
            if event.__class__ is not StreamEndEvent:
                raise ComposerError("expected a single document in the stream",
                                    root.start_mark, "but found another document",
                                    event.start_mark)
            return root
        finally:
            loader.dispose()

    def _document(self, loader):
        """Compose the nodes of one document (iteratively: no recursion limit).

        libyaml refuses nesting deeper than its own limit (1000 levels) as a
        parser error; the pure-Python parser has none, so depth is also
        bounded here at the same figure.
        """
        get = loader.get_event
        resolve = loader.resolve
        tag_cache: dict[str, str] = {}
        anchors: dict[str, object] = {}
        sizes: dict[str, int] = {}                  # anchor -> expanded size, once complete
        # a frame per open collection: [node, items, size, anchor, is_mapping,
        #                                streaming handler, streamed count]
        stack: list[list] = []
        top_pairs = None                            # the root mapping's items list
        written = self.written
        expanded = self.expanded
        result = None
        while True:
            event = get()
            cls = event.__class__
            if cls is ScalarEvent:
                tag = event.tag
                value = event.value
                if tag is None or tag == "!":
                    if event.implicit[0]:
                        tag = tag_cache.get(value)
                        if tag is None:
                            tag = resolve(ScalarNode, value, (True, False))
                            if len(tag_cache) < _TAG_CACHE_MAX:
                                tag_cache[value] = tag
                    else:
                        tag = _STR
                style = event.style
                node = ScalarNode(tag, value, event.start_mark, None,
                                  "" if style is None else style)
                written += 1
                expanded += 1
                size = 1
                anchor = event.anchor
                if anchor is not None:
                    self._anchor(anchors, anchor, node, event)
                    sizes[anchor] = 1
            elif cls is MappingStartEvent or cls is SequenceStartEvent:
                tag = event.tag
                mapping = cls is MappingStartEvent
                if tag is None or tag == "!":
                    tag = _MAP if mapping else _SEQ
                items: list = []
                node = (MappingNode if mapping else SequenceNode)(
                    tag, items, event.start_mark, None, flow_style=event.flow_style)
                written += 1
                expanded += 1
                anchor = event.anchor
                if anchor is not None:
                    self._anchor(anchors, anchor, node, event)
                handler = None
                if (not mapping and self.on_stream is not None and len(stack) == 1
                        and stack[0][4] and len(top_pairs) % 2 == 1):
                    key = top_pairs[-1]
                    if (key.__class__ is ScalarNode and key.value == self.stream_key
                            and key.style == "" and not self._seen_key(top_pairs)):
                        self.written, self.expanded = written, expanded
                        pairs = list(zip(top_pairs[0:-1:2], top_pairs[1:-1:2]))
                        handler = self.on_stream(self, pairs, node)
                if len(stack) >= MAX_DEPTH:
                    raise ComposerError(None, None, "exceeded maximum nesting depth",
                                        event.start_mark)
                stack.append([node, items, 1, anchor, mapping, handler, 0])
                if len(stack) == 1:
                    top_pairs = items
                continue
            elif cls is MappingEndEvent or cls is SequenceEndEvent:
                frame = stack.pop()
                node, items, size, anchor, mapping = frame[:5]
                if mapping:
                    node.value = list(zip(items[0::2], items[1::2]))
                elif frame[5] is not None:
                    node.streamed = frame[6]
                if anchor is not None:
                    sizes[anchor] = size
            elif cls is AliasEvent:
                anchor = event.anchor
                node = anchors.get(anchor)
                if node is None:
                    raise ComposerError(None, None, "found undefined alias", event.start_mark)
                size = sizes.get(anchor, 1)
                expanded += size
            else:                                   # the document's end
                self.written, self.expanded = written, expanded
                return result
            # a complete node: into its parent
            if not stack:
                result = node
                continue
            parent = stack[-1]
            parent[2] += size
            if parent[5] is not None:               # an item of the streamed list
                self.written, self.expanded = written, expanded
                index = parent[6]
                parent[6] = index + 1
                parent[5](node, index)
                written, expanded = self.written, self.expanded
            else:
                parent[1].append(node)

    def _seen_key(self, top_pairs) -> bool:
        """Whether the top-level mapping had the stream key before its last key."""
        key = self.stream_key
        return any(k.__class__ is ScalarNode and k.value == key for k in top_pairs[0:-1:2])

    @staticmethod
    def _anchor(anchors, anchor, node, event) -> None:
        first = anchors.get(anchor)
        if first is not None:
            raise ComposerError("found duplicate anchor; first occurrence", first.start_mark,
                                "second occurrence", event.start_mark)
        anchors[anchor] = node
