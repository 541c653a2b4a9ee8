"""Read a results file: the readings taken on site, one row per circuit.

A results file is CSV text with a header row.  Columns (names are
case-insensitive; the order is free):

=============== ========== ===============================================
column          default    meaning
=============== ========== ===============================================
``board``       (text)     the board's ref, as in the plan (required)
``ref``         (text)     the circuit's ref on that board (required)
``r1r2``        ohm        R1+R2 measured at the circuit's far end; for a
                           ring the highest reading round the ring
                           (required column)
``zs``          ohm        the highest Zs measured on the circuit
                           (required column)
``temperature`` °C         conductor temperature when tested (about the
                           ambient temperature of an unloaded circuit)
``ze``          ohm        Ze measured at the origin of the installation
``r1``          ohm        ring: end-to-end resistance of the line conductor
``rn``          ohm        ring: end-to-end resistance of the neutral
``r2``          ohm        ring: end-to-end resistance of the cpc
``rcd_ms``      ms         RCD operating time at its rated IΔn
=============== ========== ===============================================

A header may carry a unit in brackets or parentheses (``zs [ohm]``,
``r1r2 (mohm)``, ``temperature [degF]``); the unit is read by
:func:`zsplan.units.parse`, so every unit it knows is accepted.  A cell may
also carry its own unit (``450 mohm``).  Also accepted: ``r1+r2`` for
``r1r2``, ``temp`` for ``temperature`` and ``rcd`` for ``rcd_ms``.  Other
columns (notes, the tester's name) are kept out of the check and listed in
:attr:`ReadingList.ignored_columns`, so nothing is dropped silently.

Text encoding and separators:

* UTF-8, with or without a byte-order mark (as spreadsheet programs save
  "CSV UTF-8"), or UTF-16 with a byte-order mark;
* the separator is found from the header row: ``,``, ``;`` or a tab,
  whichever gives the most known column names;
* decimal commas (``0,45``) are read where the separator is ``;`` or a tab,
  as spreadsheets in decimal-comma locales write them; in a comma-separated
  file a comma inside a number is refused (it could be a thousands
  separator), and a row with more cells than the header is refused with a
  hint that a decimal comma needs ``;`` as the separator;
* an empty cell, ``-`` or ``n/a`` means "not measured";
* blank lines and lines starting with ``#`` are skipped.

Every problem is reported at once as a :class:`zsplan.errors.PlanError`
naming the file, the line (1-based, as an editor counts) and the column.
"""
from __future__ import annotations

import codecs
import csv
import os
import re
from dataclasses import dataclass

from .errors import Collector, PlanError, Problem
from .units import UnitProblem, parse

__all__ = ["Reading", "ReadingList", "COLUMNS", "REQUIRED", "read_results", "read_results_text"]

#: column -> (units.parse kind, default unit, unit the Reading stores)
COLUMNS: dict[str, tuple[str, str, str]] = {
    "r1r2": ("impedance", "ohm", "ohm"),
    "zs": ("impedance", "ohm", "ohm"),
    "temperature": ("temperature", "degC", "degC"),
    "ze": ("impedance", "ohm", "ohm"),
    "r1": ("impedance", "ohm", "ohm"),
    "rn": ("impedance", "ohm", "ohm"),
    "r2": ("impedance", "ohm", "ohm"),
    "rcd_ms": ("time", "ms", "ms"),
}
TEXT_COLUMNS = ("board", "ref")
REQUIRED = ("board", "ref", "r1r2", "zs")
ALIASES = {"r1+r2": "r1r2", "temp": "temperature", "rcd": "rcd_ms"}
NOT_MEASURED = {"", "-", "n/a", "na"}
#: temperatures accepted as a conductor temperature at a test [°C]: zsplan's choice (no published
#: source), from below any working ambient to the highest insulation rating (90 °C, BS 7671 Table 52.1)
TEMPERATURE_RANGE_C = (-40.0, 90.0)

_HEADER = re.compile(r"^(?P<name>[^\[\]()]*?)\s*(?:[\[(]\s*(?P<unit>[^\[\]()]*?)\s*[\])])?$")
_DECIMAL_COMMA = re.compile(r"^([-+]?\d*),(\d+)(\s*\D.*)?$")


@dataclass(frozen=True)
class Reading:
    """One row of a results file.  ``None``: not measured.

    Attributes
    ----------
    board, ref : str
        The circuit, as named in the plan.
    line : int
        1-based line of the row in the file.
    file : str
        The results file, for messages.
    r1r2_ohm, zs_ohm, ze_ohm, r1_ohm, rn_ohm, r2_ohm : float or None
        Readings. [Ω]
    temperature_c : float or None
        Conductor temperature at the test. [°C]
    rcd_ms : float or None
        RCD operating time at IΔn. [ms]
    """

    board: str
    ref: str
    line: int
    file: str = ""
    r1r2_ohm: float | None = None
    zs_ohm: float | None = None
    temperature_c: float | None = None
    ze_ohm: float | None = None
    r1_ohm: float | None = None
    rn_ohm: float | None = None
    r2_ohm: float | None = None
    rcd_ms: float | None = None

    @property
    def key(self) -> tuple[str, str]:
        return (self.board, self.ref)


class ReadingList(list):
    """The readings of one file, with the file's name and the columns not used."""

    def __init__(self, items=(), *, file: str = "", ignored_columns: tuple[str, ...] = (),
                 separator: str = ","):
        super().__init__(items)
        self.file = file
        self.ignored_columns = tuple(ignored_columns)
        self.separator = separator


_FIELD = {"r1r2": "r1r2_ohm", "zs": "zs_ohm", "temperature": "temperature_c", "ze": "ze_ohm",
          "r1": "r1_ohm", "rn": "rn_ohm", "r2": "r2_ohm", "rcd_ms": "rcd_ms"}
_SEP_NAMES = {",": "comma", ";": "semicolon", "\t": "tab"}


def read_results(path: str | os.PathLike) -> ReadingList:
    """Read the results file at ``path``.

    Parameters
    ----------
    path : str or os.PathLike
        A CSV file (see the module docstring for the columns).

    Returns
    -------
    ReadingList
        A list of :class:`Reading`, in file order.

    Raises
    ------
    zsplan.errors.PlanError
        For a missing or unreadable file, a missing required column, a cell
        that is not a number of the column's kind (naming row and column), a
        negative reading, or two rows for the same circuit (naming both rows).
    """
    name = str(path)
    try:
        data = open(path, "rb").read()
    except FileNotFoundError:
        raise PlanError(Problem(name, "no such file; expected a results file (CSV)")) from None
    except IsADirectoryError:
        raise PlanError(Problem(name, "is a folder; expected a results file (CSV)")) from None
    except OSError as exc:
        raise PlanError(Problem(name, f"cannot be read ({exc.strerror or exc})")) from None
    return read_results_text(_decode(data, name), file=name)


def _decode(data: bytes, file: str) -> str:
    if data.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        try:
            return data.decode("utf-16")
        except UnicodeDecodeError:
            pass
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = data[:exc.start].count(b"\n") + 1
        raise PlanError(Problem(file, "is not UTF-8 text; save it as CSV UTF-8", line=line)) from None


def _header_name(cell: str) -> tuple[str, str | None]:
    text = cell.strip()
    m = _HEADER.match(text)
    if not m:
        return text.lower(), None
    name = re.sub(r"\s+", "", m.group("name").lower())
    name = name.replace("-", "_") if name not in ALIASES else name
    name = ALIASES.get(name, name)
    return name, (m.group("unit") or None)


def _split(line: str, sep: str) -> list[str]:
    """The cells of one line (csv.Error for text the csv module refuses, e.g. a NUL)."""
    return next(csv.reader([line], delimiter=sep), [])


def _choose_separator(header: str) -> str:
    best, best_score = ",", -1
    for sep in (",", ";", "\t"):
        try:
            cells = _split(header, sep)
        except csv.Error:
            continue
        score = sum(1 for c in cells if _header_name(c)[0] in COLUMNS or _header_name(c)[0] in TEXT_COLUMNS)
        if score > best_score:
            best, best_score = sep, score
    return best


def _logical_lines(text: str):
    """(1-based line number, line) for every line, keeping the numbering of the file."""
    # only CR, LF and CRLF end a line (str.splitlines also splits on form feeds
    # and other separators, which editors do not count)
    for n, line in enumerate(text.replace("\r\n", "\n").replace("\r", "\n").split("\n"), start=1):
        yield n, line


def read_results_text(text: str, *, file: str = "<string>") -> ReadingList:
    """Read results given as CSV text (see :func:`read_results`)."""
    if text.startswith("\ufeff"):
        text = text[1:]
    col = Collector(file)
    lines = [(n, s) for n, s in _logical_lines(text)
             if s.strip() and not s.lstrip().startswith("#")]
    if not lines:
        raise PlanError(Problem(file, "is empty; expected a header row with the columns "
                                      + ", ".join(REQUIRED)))
    head_line, head_text = lines[0]
    sep = _choose_separator(head_text)
    try:
        header = _split(head_text, sep)
    except csv.Error as exc:
        raise PlanError(Problem(file, f"the header row cannot be read as CSV ({exc})", "header", head_line)) from None
    names: list[str | None] = []
    units: list[str | None] = []
    ignored: list[str] = []
    seen_cols: dict[str, int] = {}
    for j, cell in enumerate(header):
        name, unit = _header_name(cell)
        if name in TEXT_COLUMNS or name in COLUMNS:
            if name in seen_cols:
                col.add(f"column {name!r} appears twice (columns {seen_cols[name] + 1} and {j + 1})",
                        path="header", line=head_line)
            seen_cols[name] = j
            if unit is not None:
                if name in TEXT_COLUMNS:
                    col.add(f"column {name!r} is text and takes no unit, got {cell.strip()!r}",
                            path="header", line=head_line)
                else:
                    kind = COLUMNS[name][0]
                    try:
                        parse(f"1 {unit}", kind)
                    except UnitProblem:
                        col.add(f"column {cell.strip()!r}: {unit!r} is not a unit of {kind}; "
                                f"expected e.g. {name} [{COLUMNS[name][1]}]", path="header", line=head_line)
            names.append(name)
            units.append(unit)
        else:
            names.append(None)
            units.append(None)
            if cell.strip():
                ignored.append(cell.strip())
    missing = [c for c in REQUIRED if c not in seen_cols]
    if missing:
        found = ", ".join(repr(h.strip()) for h in header if h.strip()) or "nothing"
        col.add(f"the header lacks the column{'s' if len(missing) > 1 else ''} "
                f"{', '.join(missing)}; expected at least {', '.join(REQUIRED)} "
                f"(separated by {_SEP_NAMES[sep]}s), found {found}", path="header", line=head_line)
    col.raise_if_any()

    out: list[Reading] = []
    first_row: dict[tuple[str, str], int] = {}
    # feed the records to the csv module one physical line at a time, so a
    # quoted cell may not run over lines and every row keeps its line number
    for n, line in lines[1:]:
        try:
            cells = _split(line, sep)
        except csv.Error as exc:
            col.add(f"the row cannot be read as CSV ({exc})", path=f"row {n}", line=n)
            continue
        if len(cells) > len(header) and any(c.strip() for c in cells[len(header):]):
            hint = (" (a decimal comma such as 0,45 needs ';' as the separator, or quote the value)"
                    if sep == "," else "")
            col.add(f"row has {len(cells)} cells but the header has {len(header)}{hint}",
                    path=f"row {n}", line=n)
            continue
        cells = cells + [""] * (len(header) - len(cells))
        values: dict[str, float | str | None] = {}
        ok = True
        for j, name in enumerate(names):
            if name is None:
                continue
            raw = cells[j].strip()
            if name in TEXT_COLUMNS:
                if not raw:
                    col.add(f"column {name!r} is empty; expected the {name} as in the plan",
                            path=f"row {n}, column {name}", line=n)
                    ok = False
                values[name] = raw
                continue
            if raw.lower() in NOT_MEASURED:
                values[name] = None
                continue
            v = _number(raw, name, units[j], sep, col, n)
            if v is _BAD:
                ok = False
            values[name] = None if v is _BAD else v
        if not ok:
            continue
        key = (values["board"], values["ref"])
        if key in first_row:
            col.add(f"a second row for circuit {key[0]}/{key[1]} (the first is on line {first_row[key]}); "
                    f"keep one row per circuit", path=f"rows {first_row[key]} and {n}", line=n)
            continue
        first_row[key] = n
        out.append(Reading(board=values["board"], ref=values["ref"], line=n, file=file,
                           **{_FIELD[k]: v for k, v in values.items() if k in _FIELD}))
    col.raise_if_any()
    return ReadingList(out, file=file, ignored_columns=tuple(ignored), separator=sep)


_BAD = object()


def _number(raw: str, name: str, unit: str | None, sep: str, col: Collector, line: int):
    kind, default, store = COLUMNS[name]
    where = f"row {line}, column {name}"
    text = raw
    if "," in text:
        m = _DECIMAL_COMMA.match(text)
        if sep == "," or "." in text or not m:
            col.add(f"column {name!r}: {raw!r} has a comma; write the number with a decimal point "
                    f"(0.45), or use ';' as the separator for decimal commas (0,45)", path=where, line=line)
            return _BAD
        text = f"{m.group(1) or '0'}.{m.group(2)}{m.group(3) or ''}"
    try:
        float(text)
    except ValueError:
        pass                      # the cell carries its own unit (or is not a number)
    else:
        text = f"{text} {unit or default}"
    try:
        value = parse(text, kind)
        if store != KIND_UNIT[kind]:
            value = _convert(value, KIND_UNIT[kind], store)
    except UnitProblem as exc:
        col.add(f"column {name!r}: {exc}", path=where, line=line)
        return _BAD
    if kind == "temperature" and not TEMPERATURE_RANGE_C[0] <= value <= TEMPERATURE_RANGE_C[1]:
        col.add(f"column {name!r}: {raw!r} is not a plausible conductor temperature at a test; expected "
                f"{TEMPERATURE_RANGE_C[0]:g} to {TEMPERATURE_RANGE_C[1]:g} °C", path=where, line=line)
        return _BAD
    if kind != "temperature" and value < 0:
        col.add(f"column {name!r}: {raw!r} is negative; expected a reading of 0 or more", path=where, line=line)
        return _BAD
    return value


#: the unit units.parse returns for each kind used here
KIND_UNIT = {"impedance": "ohm", "temperature": "degC", "time": "s"}


def _convert(value: float, frm: str, to: str) -> float:
    if (frm, to) == ("s", "ms"):
        return value * 1000.0
    raise ValueError((frm, to))  # pragma: no cover - no other pair is used
