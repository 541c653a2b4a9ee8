"""Text for people at a terminal: tables, colour and a progress line.

Colour and the progress line appear only where a person is watching:

* colour when the stream is a terminal (``isatty()``), ``NO_COLOR`` is not
  set (https://no-color.org: any non-empty value turns colour off) and
  ``TERM`` is not ``dumb``; piped or redirected output is plain text;
* the progress line (on standard error) under the same conditions and when
  no ``CI`` variable is set, so logs of pipes and CI runs stay clean.

The band colours take the hues of the plan's palette (:mod:`zsplan.palette`)
from the 256-colour set that nearly every terminal supports.  Colour is never
the only cue: the status is also written as a word (``FAIL`` in capitals).
"""
from __future__ import annotations

import contextlib
import itertools
import os
import shutil
import sys
import threading
import time
import unicodedata
from dataclasses import dataclass
from typing import Iterable, Sequence, TextIO

__all__ = [
    "Cell", "Glyphs", "Progress", "colour_wanted", "glyphs_for", "paint",
    "progress_wanted", "render_table", "terminal_width", "visible_width",
]

RESET = "\x1b[0m"
BOLD = "1"
DIM = "2"


def colour_wanted(stream: TextIO, environ=None) -> bool:
    """True when ``stream`` is a terminal and the user has not asked for no colour."""
    env = os.environ if environ is None else environ
    if env.get("NO_COLOR"):
        return False
    if env.get("TERM", "") == "dumb":
        return False
    try:
        return bool(stream.isatty())
    except (AttributeError, ValueError):
        return False


def progress_wanted(stream: TextIO, environ=None) -> bool:
    """True when a progress line may be drawn on ``stream`` (a terminal, not CI)."""
    env = os.environ if environ is None else environ
    if env.get("CI") or env.get("TERM", "") == "dumb":
        return False
    try:
        return bool(stream.isatty())
    except (AttributeError, ValueError):
        return False


def terminal_width(stream: TextIO, default: int = 100) -> int | None:
    """Columns of the terminal behind ``stream``; ``None`` when it is not a terminal."""
    try:
        if not stream.isatty():
            return None
    except (AttributeError, ValueError):
        return None
    return shutil.get_terminal_size((default, 24)).columns


# ---------------------------------------------------------------------------
# Symbols the output stream can encode
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class Glyphs:
    """Characters used in tables, with ASCII stand-ins for narrow encodings."""

    ohm: str = "Ω"
    ellipsis: str = "…"
    none: str = "–"
    le: str = "≤"
    rule: str = "─"


ASCII_GLYPHS = Glyphs(ohm="ohm", ellipsis="...", none="-", le="<=", rule="-")


def glyphs_for(stream: TextIO) -> Glyphs:
    """Unicode glyphs when ``stream`` can encode them, else ASCII."""
    enc = getattr(stream, "encoding", None) or "ascii"
    try:
        "Ω…–≤─²°".encode(enc)
    except (UnicodeEncodeError, LookupError):
        return ASCII_GLYPHS
    return Glyphs()


# ---------------------------------------------------------------------------
# Colour
# ---------------------------------------------------------------------------

#: Terminal colours of the bands: the hues of the plan's palette (magenta for fail, amber
#: for tight, teal for pass; :mod:`zsplan.palette`) at a middle lightness, so that they
#: read on dark and on light terminal backgrounds; xterm 256-colour indices, our choice
#: (no published source).
BAND_SGR = {"fail": "38;5;170", "tight": "38;5;214", "pass": "38;5;37"}


def band_sgr(band: str) -> str:
    """SGR parameters of a band's colour (``"fail"``, ``"tight"``, ``"pass"``); ``""`` otherwise."""
    return BAND_SGR.get(str(band), "")


def paint(text: str, sgr: str, enabled: bool) -> str:
    """Wrap ``text`` in the SGR escape ``sgr`` when ``enabled``."""
    if not enabled or not sgr or not text:
        return text
    return f"\x1b[{sgr}m{text}{RESET}"


# ---------------------------------------------------------------------------
# Tables
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class Cell:
    """A table cell: its text and an optional SGR style applied after padding."""

    text: str
    sgr: str = ""


def visible_width(text: str) -> int:
    """Columns ``text`` takes in a terminal (wide East Asian characters count 2)."""
    return sum(2 if unicodedata.east_asian_width(ch) in "WF" else
               0 if unicodedata.combining(ch) else 1 for ch in text)


def _fit(text: str, width: int, ellipsis: str) -> str:
    if visible_width(text) <= width:
        return text
    out = ""
    for ch in text:
        if visible_width(out + ch) > width - visible_width(ellipsis):
            break
        out += ch
    return out + ellipsis


def render_table(headers: Sequence[str], rows: Iterable[Sequence], *, align: str = "",
                 colour: bool = False, max_width: int | None = None, shrink: int | None = None,
                 glyphs: Glyphs = Glyphs(), gap: int = 2) -> list[str]:
    """Lay out a table as lines of text.

    Parameters
    ----------
    headers : sequence of str
    rows : iterable of sequences of (str or Cell)
    align : str
        One letter per column, ``l`` or ``r`` (default ``l``).
    colour : bool
        Apply each :class:`Cell`'s style.
    max_width : int, optional
        Total width to fit in (a terminal's columns); column ``shrink`` is
        cut down (with an ellipsis) to fit, never below 8 columns.
    shrink : int, optional
        Index of the column that gives way to ``max_width``.
    """
    cells = [[c if isinstance(c, Cell) else Cell("" if c is None else str(c)) for c in r]
             for r in rows]
    n = len(headers)
    align = (align + "l" * n)[:n]
    widths = [visible_width(h) for h in headers]
    for r in cells:
        for j, c in enumerate(r):
            widths[j] = max(widths[j], visible_width(c.text))
    if max_width is not None and shrink is not None:
        total = sum(widths) + gap * (n - 1)
        if total > max_width:
            widths[shrink] = max(8, widths[shrink] - (total - max_width))

    def line(texts, styles=None):
        parts = []
        for j, t in enumerate(texts):
            t = _fit(t, widths[j], glyphs.ellipsis)
            pad = " " * (widths[j] - visible_width(t))
            padded = pad + t if align[j] == "r" else t + pad
            if styles and styles[j]:
                padded = (pad + paint(t, styles[j], colour) if align[j] == "r"
                          else paint(t, styles[j], colour) + pad)
            parts.append(padded)
        return (" " * gap).join(parts).rstrip()

    out = [paint(line(headers), BOLD, colour) if colour else line(headers)]
    out.append((" " * gap).join(glyphs.rule * w for w in widths))
    for r in cells:
        out.append(line([c.text for c in r], [c.sgr for c in r]))
    return out


# ---------------------------------------------------------------------------
# Progress
# ---------------------------------------------------------------------------

class Progress:
    """A one-line status on standard error while long work runs.

    Drawn only when :func:`progress_wanted` says a person is watching; a
    no-op otherwise.  :meth:`step` shows numbered steps at once;
    :meth:`busy` shows a spinner with the elapsed time for one long call,
    but only once the call has taken longer than ``delay`` seconds, so quick
    work does not flicker.

    Examples
    --------
    >>> import io
    >>> with Progress(io.StringIO()) as p:      # not a terminal: silent
    ...     with p.busy("checking"):
    ...         pass
    >>> p.enabled
    False
    """

    SPINNER = "|/-\\"

    def __init__(self, stream: TextIO | None = None, *, enabled: bool | None = None,
                 delay: float = 0.4, interval: float = 0.1):
        self.stream = sys.stderr if stream is None else stream
        self.enabled = progress_wanted(self.stream) if enabled is None else bool(enabled)
        self.delay = delay
        self.interval = interval
        self._lock = threading.Lock()
        self._shown = False

    def __enter__(self) -> "Progress":
        return self

    def __exit__(self, *exc) -> None:
        self.clear()

    def _write(self, text: str) -> None:
        with self._lock:
            try:
                self.stream.write("\r\x1b[2K" + text)
                self.stream.flush()
            except (OSError, ValueError):
                self.enabled = False
                return
            self._shown = bool(text)

    def clear(self) -> None:
        """Remove the status line."""
        if self.enabled and self._shown:
            self._write("")

    def step(self, label: str, index: int | None = None, total: int | None = None) -> None:
        """Show step ``index`` of ``total`` (1-based) with its label."""
        if not self.enabled:
            return
        head = f"[{index}/{total}] " if index is not None and total else ""
        self._write(self._fit(f"{head}{label}"))

    def _fit(self, text: str) -> str:
        cols = shutil.get_terminal_size((80, 24)).columns
        return _fit(text, max(10, cols - 1), "...")

    @contextlib.contextmanager
    def busy(self, label: str):
        """Show a spinner and the elapsed seconds while the ``with`` body runs."""
        if not self.enabled:
            yield
            return
        stop = threading.Event()
        start = time.monotonic()

        def spin():
            if stop.wait(self.delay):
                return
            for ch in itertools.cycle(self.SPINNER):
                self._write(self._fit(f"{ch} {label} ({time.monotonic() - start:.0f} s)"))
                if stop.wait(self.interval):
                    return

        worker = threading.Thread(target=spin, name="zsplan-progress", daemon=True)
        worker.start()
        try:
            yield
        finally:
            stop.set()
            worker.join()
            self.clear()


# ---------------------------------------------------------------------------
# The check table
# ---------------------------------------------------------------------------

ORDERS = ("board", "worst")

_STATUS_WORD = {"pass": "pass", "tight": "tight", "fail": "FAIL"}


def circuit_order(results, order: str = "board") -> list[int]:
    """Circuit indices in board order (the plan's boards, then circuits as listed) or worst first.

    ``worst`` sorts by margin, lowest first (a device that never operates in
    time, margin -inf, comes first), then in board order.
    """
    import math

    if order not in ORDERS:
        raise ValueError(f"unknown order {order!r}; expected one of {', '.join(ORDERS)}")
    plan = results.plan
    rank = {b.ref: k for k, b in enumerate(plan.boards)}
    idx = sorted(range(len(plan.circuits)),
                 key=lambda i: (rank.get(plan.circuits[i].board, len(rank)), i))
    if order == "worst":
        m = results.circuits["margin"]
        pos = {i: k for k, i in enumerate(idx)}

        def key(i):
            v = float(m[i])
            return (-math.inf if math.isnan(v) else v, pos[i])
        idx = sorted(idx, key=key)
    return idx


def check_lines(results, *, order: str = "board", colour: bool = False,
                width: int | None = None, glyphs: Glyphs = Glyphs()) -> list[str]:
    """The check as lines of text: heading, circuit table, reasons, summary and caution.

    Every number is rounded toward the safe side (:func:`zsplan.results.safe_round`).
    """
    from . import CAUTION
    from .results import safe_round

    plan = results.plan
    a = results.circuits
    s = plan.supply
    g = glyphs
    title = plan.title or plan.path
    head = (f"{title}  ({plan.path})" if plan.title else title)
    ze = safe_round("zs_ohm", s.ze_ohm, 2)
    supply = (f"{s.earthing} supply, U0 {s.u0_v:g} V, Ze {ze:g} {g.ohm}, Cmin {s.cmin:g}; "
              f"tight below a margin of {100 * plan.settings.tight:g} %")
    lines = [paint(head, BOLD, colour), supply, ""]

    def num(name, v, d):
        r = safe_round(name, float(v), d)
        return g.none if r is None else f"{r:.{d}f}"

    rows = []
    for i in circuit_order(results, order):
        c = plan.circuits[i]
        st = str(a["status"][i])
        zmax = float(a["zs_max_ohm"][i])
        t = safe_round("disconnect_s", float(a["disconnect_s"][i]), 2)
        lim = safe_round("disconnect_limit_s", float(a["disconnect_limit_s"][i]), 3)
        t_txt = f"{g.none if t is None else f'{t:g}'} / {g.none if lim is None else f'{lim:g}'}"
        m = safe_round("margin", float(a["margin"][i]), 3)
        m_txt = g.none if m is None else f"{100 * m:.1f} %"
        band = band_sgr(st)
        rows.append([
            f"{c.board}/{c.ref}", c.name, c.device.label,
            c.cable.label if g.ohm == "Ω" else c.cable.label.replace("²", "2").replace("°", " "),
            num("length_m", a["length_m"][i], 1),
            num("zs_ohm", a["zs_ohm"][i], 2),
            num("zs_max_ohm", zmax, 2) if zmax > 0 else g.none,
            num("fault_current_a", a["fault_current_a"][i], 0),
            t_txt,
            Cell(m_txt, band),
            Cell(_STATUS_WORD.get(st, st), band + ";1" if band else BOLD),
        ])
    headers = ["Circuit", "Name", "Device", "Cable", "Length m", f"Zs {g.ohm}",
               f"Zs max {g.ohm}", "If A", "t / limit s", "Margin", "Status"]
    align = "llllrrrrrrl"
    if width is not None:
        # too narrow for the names: leave out the cable (it is in the schedule)
        probe = render_table(headers, rows, align=align, glyphs=g)
        name_w = max([visible_width(r[1]) for r in rows] + [4])
        if visible_width(probe[1]) - name_w + 16 > width:
            headers = headers[:3] + headers[4:]
            rows = [r[:3] + r[4:] for r in rows]
            align = align[:3] + align[4:]
    lines += render_table(headers, rows, align=align, colour=colour, max_width=width,
                          shrink=1, glyphs=g)

    subs = getattr(results, "submains", None) or {}
    n_sub = len(subs.get("boards", ()))
    if n_sub:
        srows = []
        for i in range(n_sub):
            st = str(subs["status"][i])
            zmax = float(subs["zs_max_ohm"][i])
            t = safe_round("disconnect_s", float(subs["disconnect_s"][i]), 2)
            lim = safe_round("disconnect_limit_s", float(subs["disconnect_limit_s"][i]), 3)
            m = safe_round("margin", float(subs["margin"][i]), 3)
            band = band_sgr(st)
            srows.append([
                f"{subs['fed_from'][i]} > {subs['boards'][i]}", str(subs["devices"][i]),
                str(subs["cables"][i]) if g.ohm == "Ω" else
                str(subs["cables"][i]).replace("²", "2").replace("°", " "),
                num("length_m", subs["length_m"][i], 1), num("zs_ohm", subs["zs_ohm"][i], 2),
                num("zs_max_ohm", zmax, 2) if zmax > 0 else g.none,
                num("fault_current_a", subs["fault_current_a"][i], 0),
                f"{g.none if t is None else f'{t:g}'} / {g.none if lim is None else f'{lim:g}'}",
                Cell(g.none if m is None else f"{100 * m:.1f} %", band),
                Cell(_STATUS_WORD.get(st, st), band + ";1" if band else BOLD)])
        lines += ["", paint("Sub-mains", BOLD, colour)]
        lines += render_table(["Sub-main", "Device", "Cable", "Length m", f"Zs {g.ohm}",
                               f"Zs max {g.ohm}", "If A", "t / limit s", "Margin", "Status"],
                              srows, align="lllrrrrrrl", colour=colour, glyphs=g)

    notes = []
    for i in range(n_sub):
        what = f"{subs['fed_from'][i]} > {subs['boards'][i]}"
        failed = [k for k, v in subs["checks"][i].items() if v == "fail"]
        if failed:
            notes.append(paint(f"  sub-main {what}: fails the {', '.join(failed)} "
                               f"check{'s' if len(failed) > 1 else ''}", band_sgr("fail"), colour))
        for msg in subs["messages"][i]:
            notes.append(f"  sub-main {what}: {msg}")
    for i in circuit_order(results, order):
        c = plan.circuits[i]
        failed = [k for k, v in results.checks[i].items() if v == "fail"]
        if failed:
            notes.append(paint(f"  {c.board}/{c.ref}: fails the {', '.join(failed)} "
                               f"check{'s' if len(failed) > 1 else ''}", band_sgr("fail"), colour))
        for msg in results.messages[i]:
            notes.append(f"  {c.board}/{c.ref}: {msg}")
    if notes:
        lines += ["", "Notes:"] + notes

    summ = results.summary()
    n = len(plan.circuits)
    counts = [paint(f"{summ['pass']} pass", band_sgr("pass"), colour),
              paint(f"{summ['tight']} tight", band_sgr("tight"), colour),
              paint(f"{summ['fail']} fail", band_sgr("fail"), colour)]
    tally = f"{n} circuit{'s' if n != 1 else ''}: " + ", ".join(counts)
    if n_sub:
        st = [str(v) for v in subs["status"]]
        tally += (f"; {n_sub} sub-main{'s' if n_sub != 1 else ''}: " + ", ".join(
            paint(f"{st.count(k)} {k}", band_sgr(k), colour) for k in ("pass", "tight", "fail")))
    lines += ["", tally,
              paint(f"Caution: {CAUTION}", DIM, colour)]
    return lines
