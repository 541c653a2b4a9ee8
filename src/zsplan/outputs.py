"""Writing output files safely.

Every file zsplan writes goes through :func:`write_atomic`: the content is
written to a temporary file in the target folder and then renamed over the
target, so a reader never sees a half-written file and an existing output is
only ever replaced whole.  An output path that is one of the inputs is
refused, so inputs are never overwritten.
"""
from __future__ import annotations

import os
import tempfile
from pathlib import Path
from typing import Iterable

from .errors import PlanError, Problem

__all__ = ["write_atomic", "check_output_path"]


def check_output_path(out: str | os.PathLike, inputs: Iterable[str | os.PathLike] = ()) -> Path:
    """Resolve ``out`` and refuse it when it is an input or its folder is missing."""
    target = Path(out).expanduser()
    resolved = target.resolve()
    for inp in inputs:
        if inp is None:
            continue
        try:
            same = resolved == Path(inp).expanduser().resolve() or (
                target.exists() and Path(inp).exists() and os.path.samefile(target, inp))
        except OSError:
            same = False
        if same:
            raise PlanError(Problem(str(out), f"refusing to write over the input file {inp}; "
                                              "choose another output path"))
    if not resolved.parent.is_dir():
        raise PlanError(Problem(str(out), f"the folder {resolved.parent} does not exist"))
    if resolved.is_dir():
        raise PlanError(Problem(str(out), "is a folder; expected a file name"))
    return target


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def write_atomic(out: str | os.PathLike, data: bytes | str,
                 inputs: Iterable[str | os.PathLike] = ()) -> Path:
    """Write ``data`` to ``out`` atomically (temporary file, then rename).

    Parameters
    ----------
    out : path
        The target file.
    data : bytes or str
        Content; ``str`` is written as UTF-8 with ``\\n`` line ends.
    inputs : iterable of path
        Input files that must not be overwritten.
    """
    target = check_output_path(out, inputs)
    payload = data.encode("utf-8") if isinstance(data, str) else bytes(data)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=str(target.resolve().parent))
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(payload)
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, 0o666 & ~_umask())   # mkstemp makes 0600; outputs are ordinary files
        os.replace(tmp, target)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
    return target
