"""Small process-level helpers shared by the loaders and the geometry."""
from __future__ import annotations

import contextlib
import gc


@contextlib.contextmanager
def gc_paused():
    """Pause the cyclic garbage collector while many small objects are made.

    Loading a large plan (millions of YAML nodes) or measuring its routes
    (one geometry and one result object per outlet) allocates in bursts that
    would otherwise start collections walking the whole model: about three
    quarters of the load time of a 10 000-circuit plan and half the geometry
    time at 50 000 circuits.  The callers build no reference cycles.
    """
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            gc.enable()


def read_bounded(name: str, size: int, max_bytes: int) -> bytes:
    """The file's bytes, at most ``max_bytes + 1`` of them.

    Reads what ``stat`` reported, then on in 1 MB pieces only if the file
    turns out longer (it grew, or it is a device), so memory follows the
    file's size, not the limit.
    """
    with open(name, "rb") as fh:
        parts = [fh.read(min(size, max_bytes) + 1)]
        got = len(parts[0])
        while got > size and got <= max_bytes:
            piece = fh.read(min(1 << 20, max_bytes + 1 - got))
            if not piece:
                break
            parts.append(piece)
            got += len(piece)
    return b"".join(parts)
