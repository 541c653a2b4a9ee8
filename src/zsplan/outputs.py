"""Writing output files safely.

Every file zsplan writes goes through :func:`write_atomic`: the content is
written to a temporary file in the target folder and then renamed over the
target, so a reader never sees a half-written file and an existing output is
only ever replaced whole.  An output path that is one of the inputs is
refused, so inputs are never overwritten.
"""
from __future__ import annotations

import os
import stat
import tempfile
from pathlib import Path
from typing import Iterable

from .errors import PlanError, Problem

__all__ = ["write_atomic", "check_output_path"]

#: characters the temporary file's name adds to the target's (".NAME.xxxxxxxx.tmp")
_TMP_EXTRA = 14


def check_output_path(out: str | os.PathLike, inputs: Iterable[str | os.PathLike] = ()) -> Path:
    """Resolve ``out`` and refuse it when it cannot or must not be written.

    Refused, each with a :class:`~zsplan.errors.PlanError` naming the path:
    an input file (the same path, or the same file through a link), a name
    the system cannot use (a NUL character, too long), a missing folder, a
    folder, and anything that exists but is not a regular file (a device
    such as ``/dev/null``, a pipe): replacing it would destroy it.
    """
    shown = str(out) if str(out).isprintable() else repr(str(out))
    try:
        target = Path(out).expanduser()
        resolved = target.resolve()
        exists = os.path.lexists(resolved)
        info = os.stat(resolved) if exists else None
    except (OSError, ValueError, RuntimeError) as exc:   # NUL, too long, a symlink loop
        why = getattr(exc, "strerror", None) or str(exc)
        raise PlanError(Problem(shown, f"cannot be used as an output file name ({why}); "
                                       "choose another output path")) from None
    for inp in inputs:
        if inp is None:
            continue
        try:
            same = resolved == Path(inp).expanduser().resolve() or (
                exists and Path(inp).exists() and os.path.samefile(resolved, inp))
        except (OSError, ValueError):
            same = False
        if same:
            raise PlanError(Problem(shown, f"refusing to write over the input file {inp}; "
                                           "choose another output path"))
    if not resolved.parent.is_dir():
        raise PlanError(Problem(shown, f"the folder {resolved.parent} does not exist"))
    try:
        name_max = os.pathconf(resolved.parent, "PC_NAME_MAX")
    except (OSError, ValueError, AttributeError):
        name_max = 255
    if len(os.fsencode(target.name)) + _TMP_EXTRA > name_max:
        raise PlanError(Problem(shown[:80] + "...", f"the file name is too long for the folder "
                                f"{resolved.parent} (at most {name_max - _TMP_EXTRA} bytes here); "
                                "choose a shorter output name"))
    if info is not None and stat.S_ISDIR(info.st_mode):
        raise PlanError(Problem(shown, "is a folder; expected a file name"))
    if info is not None and not stat.S_ISREG(info.st_mode):
        raise PlanError(Problem(shown, "exists and is not a regular file (a device, pipe or "
                                       "socket); refusing to replace it; choose another output "
                                       "path"))
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
