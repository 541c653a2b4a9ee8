"""The installers' schedule: what to expect when testing each circuit, and what cable to order.

For each circuit the schedule gives the figures an installer needs on site:
where to measure (the circuit's worst point), the cable length, the R1+R2
to expect at the test temperature, the highest measured Zs to accept, the
required disconnection time and the minimum prospective fault current.
Then the cable take-off: metres of each cable type, routing allowance and
extra lengths included, rounded up to whole metres
(:func:`zsplan.takeoff.cable_takeoff`).

Every figure is rounded toward the safe side by
:func:`zsplan.results.safe_round`: expected R1+R2 and lengths up, the
highest acceptable Zs, the fault current and times down, so a printed figure
never makes a circuit look better than the unrounded numbers.

Three formats share the same rows: CSV for spreadsheets, Markdown and a
self-contained, printable HTML page for reading.  User text is escaped in
each (``html.escape`` in HTML; Markdown's table and inline markup; in CSV a
leading ``= + - @`` is neutralised so that a spreadsheet does not run it as a
formula).  Each format carries the safety caution :data:`zsplan.CAUTION`.

References
----------
.. [1] BS 7671:2018+A2:2022, Regulation 411.4.4, Table 41.1 and Appendix 3
   (maximum measured earth fault loop impedance).
.. [2] zsplan plan-file contract, version 1 (results fields).
"""
from __future__ import annotations

import csv
import html
import io
import os
import re
from dataclasses import dataclass
from pathlib import Path

from . import CAUTION
from .errors import PlanError, Problem
from .outputs import write_atomic
from .results import Results, safe_round
from .takeoff import Takeoff, cable_takeoff

__all__ = ["ScheduleRow", "SubmainRow", "FORMATS", "schedule_rows", "submain_rows", "to_csv",
           "to_markdown", "to_html", "format_schedule", "write_schedule"]


@dataclass(frozen=True)
class ScheduleRow:
    """One circuit's line of the schedule, numbers safely rounded (``None``: no value)."""

    board: str
    ref: str
    name: str
    device: str
    cable: str
    test_at: str
    length_m: float | None              # rounded up, 0.1 m
    r1r2_test_ohm: float | None         # rounded up, 0.01 ohm
    zs_test_max_ohm: float | None       # rounded down, 0.01 ohm
    disconnect_limit_s: float | None    # rounded down
    fault_current_a: float | None       # rounded down, 1 A
    status: str
    test_temperature_c: float


def schedule_rows(results: Results) -> list[ScheduleRow]:
    """The schedule's circuit rows, in the plan's board order then circuit order."""
    a = results.circuits
    order = _board_order(results)
    rows = []
    for i in order:
        c = results.plan.circuits[i]
        rows.append(ScheduleRow(
            board=c.board, ref=c.ref, name=c.name, device=c.device.label, cable=c.cable.label,
            test_at=results.lengths[i].worst_point or "",
            length_m=safe_round("length_m", float(a["length_m"][i]), 1),
            r1r2_test_ohm=safe_round("r1r2_test_ohm", float(a["r1r2_test_ohm"][i]), 2),
            zs_test_max_ohm=_positive(safe_round("zs_test_max_ohm", float(a["zs_test_max_ohm"][i]), 2)),
            disconnect_limit_s=safe_round("disconnect_limit_s", float(a["disconnect_limit_s"][i]), 3),
            fault_current_a=safe_round("fault_current_a", float(a["fault_current_a"][i]), 0),
            status=str(a["status"][i]),
            test_temperature_c=float(c.test_temperature_c)))
    return rows


@dataclass(frozen=True)
class SubmainRow:
    """One sub-main's line of the schedule (checked as a distribution circuit)."""

    fed_from: str
    board: str
    device: str
    cable: str
    length_m: float | None
    r1r2_test_ohm: float | None
    zs_test_max_ohm: float | None
    disconnect_limit_s: float | None
    fault_current_a: float | None
    status: str


def submain_rows(results: Results) -> list[SubmainRow]:
    """The sub-mains' rows, from the origin outwards (none when the plan has no sub-boards)."""
    s = getattr(results, "submains", None) or {}
    rows = []
    for i, board in enumerate(s.get("boards", ())):
        def val(name, d):
            return safe_round(name, float(s[name][i]), d) if name in s else None
        rows.append(SubmainRow(
            fed_from=str(s["fed_from"][i]), board=str(board), device=str(s["devices"][i]),
            cable=str(s["cables"][i]), length_m=val("length_m", 1),
            r1r2_test_ohm=val("r1r2_test_ohm", 2),
            zs_test_max_ohm=_positive(val("zs_test_max_ohm", 2)),
            disconnect_limit_s=val("disconnect_limit_s", 3),
            fault_current_a=val("fault_current_a", 0), status=str(s["status"][i])))
    return rows


def _positive(v):
    # a limit of 0 means the device's data never show operation in time: no figure to test against
    return v if v is not None and v > 0 else None


def _board_order(results: Results) -> list[int]:
    rank = {b.ref: k for k, b in enumerate(results.plan.boards)}
    n = len(results.plan.circuits)
    return sorted(range(n), key=lambda i: (rank.get(results.plan.circuits[i].board, len(rank)), i))


# ---------------------------------------------------------------------------
# Columns
# ---------------------------------------------------------------------------

def _num(v, decimals: int) -> str:
    return "" if v is None else f"{v:.{decimals}f}"


def _time(v) -> str:
    return "" if v is None else f"{v:g}"


def _temperatures(rows: list[ScheduleRow]) -> set[float]:
    return {r.test_temperature_c for r in rows}


def _columns(rows: list[ScheduleRow], ohm: str = "Ω"):
    """(header, getter, numeric) per column; a test-temperature column only when circuits differ."""
    temps = _temperatures(rows)
    at = f" at {next(iter(temps)):g} °C" if len(temps) == 1 else ""
    cols = [
        ("Board", lambda r: r.board, False),
        ("Ref", lambda r: r.ref, False),
        ("Name", lambda r: r.name, False),
        ("Device", lambda r: r.device, False),
        ("Cable", lambda r: r.cable, False),
        ("Length (m)", lambda r: _num(r.length_m, 1), True),
        ("Test at", lambda r: r.test_at, False),
        (f"Expected R1+R2{at} ({ohm})", lambda r: _num(r.r1r2_test_ohm, 2), True),
        (f"Highest measured Zs{at} ({ohm})", lambda r: _num(r.zs_test_max_ohm, 2), True),
        ("Disconnect within (s)", lambda r: _time(r.disconnect_limit_s), True),
        ("If (A)", lambda r: _num(r.fault_current_a, 0), True),
        ("Design status", lambda r: r.status, False),
    ]
    if len(temps) > 1:
        cols.insert(7, ("Test temperature (°C)", lambda r: f"{r.test_temperature_c:g}", True))
    return cols


def _submain_columns(ohm: str = "Ω"):
    return [
        ("From", lambda r: r.fed_from, False),
        ("To board", lambda r: r.board, False),
        ("Device", lambda r: r.device, False),
        ("Cable", lambda r: r.cable, False),
        ("Length (m)", lambda r: _num(r.length_m, 1), True),
        (f"Expected R1+R2 at 20 °C ({ohm})", lambda r: _num(r.r1r2_test_ohm, 2), True),
        (f"Highest measured Zs at 20 °C ({ohm})", lambda r: _num(r.zs_test_max_ohm, 2), True),
        ("Disconnect within (s)", lambda r: _time(r.disconnect_limit_s), True),
        ("If (A)", lambda r: _num(r.fault_current_a, 0), True),
        ("Design status", lambda r: r.status, False),
    ]


SUBMAIN_NOTE = ("Each sub-main is checked as a distribution circuit; measure its Zs at the "
                "board it feeds.")


def _takeoff_columns():
    return [
        ("Cable", lambda t: t.cable_label, False),
        ("Runs", lambda t: str(t.runs), True),
        ("Measured (m)", lambda t: _num(safe_round("length_m", t.metres_exact, 1), 1), True),
        ("To order (m)", lambda t: str(t.metres_order), True),
    ]


def _takeoff_sections(takeoff: Takeoff, boards: int):
    """(heading, rows): the totals, then each board's share when there are several boards."""
    sections = [("All boards" if boards > 1 else "", list(takeoff.totals))]
    if boards > 1:
        per: dict[str, list] = {}
        for row in takeoff.per_board:
            per.setdefault(row.board, []).append(row)
        sections += [(f"Board {b}", rs) for b, rs in per.items()]
    return sections


TAKEOFF_NOTE = ("Cable lengths include each circuit's routing allowance and extra length "
                "(sub-mains at their given length); each sum is rounded up to whole metres.")


def _header_lines(results: Results, ohm: str = "Ω") -> tuple[str, str]:
    p = results.plan
    s = p.supply
    title = p.title or Path(p.path).stem
    sub = (f"Plan {p.path} - {s.earthing} supply, U0 {s.u0_v:g} V, "
           f"Ze {safe_round('zs_ohm', s.ze_ohm, 2):g} {ohm}, Cmin {s.cmin:g}")
    return title, sub


def _summary_line(results: Results) -> str:
    s = results.summary()
    n = len(results.plan.circuits)
    return (f"{n} circuit{'s' if n != 1 else ''}: {s['pass']} pass, {s['tight']} tight, "
            f"{s['fail']} fail")


# ---------------------------------------------------------------------------
# CSV
# ---------------------------------------------------------------------------

_FORMULA = re.compile(r"^[=+\-@\t\r]")


def csv_text(text: str) -> str:
    """Neutralise text a spreadsheet would run as a formula (OWASP CSV injection advice)."""
    return "'" + text if _FORMULA.match(text) else text


def to_csv(results: Results) -> str:
    """The schedule as CSV: a title row, the circuit table, the take-off, the caution.

    Sections are separated by an empty row; each table starts with its own
    header row.  Numbers are plain (no units in the cells; units in headers).
    """
    rows = schedule_rows(results)
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    title, sub = _header_lines(results, ohm="ohm")
    w.writerow([csv_text(title)])
    w.writerow([csv_text(sub)])
    w.writerow([])
    cols = _columns(rows, ohm="ohm")
    w.writerow([h for h, _, _ in cols])
    for r in rows:
        w.writerow([g(r) if num else csv_text(g(r)) for _, g, num in cols])
    w.writerow([])
    subs = submain_rows(results)
    if subs:
        w.writerow(["Sub-mains"])
        scols = _submain_columns(ohm="ohm")
        w.writerow([h for h, _, _ in scols])
        for r in subs:
            w.writerow([g(r) if num else csv_text(g(r)) for _, g, num in scols])
        w.writerow([SUBMAIN_NOTE])
        w.writerow([])
    takeoff = cable_takeoff(results.plan, results.lengths)
    tcols = _takeoff_columns()
    for heading, trows in _takeoff_sections(takeoff, len(results.plan.boards)):
        w.writerow(["Cable take-off" + (f": {heading}" if heading else "")])
        w.writerow([h for h, _, _ in tcols])
        for t in trows:
            w.writerow([g(t) for _, g, _ in tcols])
        w.writerow([])
    w.writerow([TAKEOFF_NOTE])
    w.writerow([f"Caution: {CAUTION}"])
    # a byte-order mark tells spreadsheet programs the file is UTF-8 (mm², °C)
    return "\ufeff" + buf.getvalue()


# ---------------------------------------------------------------------------
# Markdown
# ---------------------------------------------------------------------------

_MD_SPECIAL = re.compile(r"([\\`*_\[\]|#])")


def md_escape(text: str) -> str:
    """Escape text for a Markdown table cell (inline markup, pipes, raw HTML, line breaks)."""
    text = " ".join(str(text).split())
    text = text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
    return _MD_SPECIAL.sub(r"\\\1", text)


def _md_table(cols, items) -> list[str]:
    out = ["| " + " | ".join(md_escape(h) for h, _, _ in cols) + " |",
           "|" + "|".join("---:" if num else "---" for _, _, num in cols) + "|"]
    for it in items:
        out.append("| " + " | ".join(md_escape(g(it)) for _, g, _ in cols) + " |")
    return out


def to_markdown(results: Results) -> str:
    """The schedule as Markdown (GitHub-flavoured tables)."""
    rows = schedule_rows(results)
    title, sub = _header_lines(results)
    out = [f"# Installation schedule: {md_escape(title)}", "", md_escape(sub), "",
           f"> **Caution:** {md_escape(CAUTION)}", "", "## Circuits", ""]
    out += _md_table(_columns(rows), rows)
    out += ["", md_escape(_summary_line(results)) + ".", "",
            "Measure Zs at the point named under *Test at* (the circuit's worst point). "
            "*Highest measured Zs* is the largest reading to accept at the test temperature; "
            "a blank means the device's data show no disconnection in time at any current.",
            ""]
    subs = submain_rows(results)
    if subs:
        out += ["## Sub-mains", ""] + _md_table(_submain_columns(), subs)
        out += ["", md_escape(SUBMAIN_NOTE), ""]
    out += ["## Cable take-off", ""]
    takeoff = cable_takeoff(results.plan, results.lengths)
    for heading, trows in _takeoff_sections(takeoff, len(results.plan.boards)):
        if heading:
            out += [f"### {md_escape(heading)}", ""]
        out += _md_table(_takeoff_columns(), trows) + [""]
    out += [md_escape(TAKEOFF_NOTE), ""]
    return "\n".join(out)


# ---------------------------------------------------------------------------
# HTML
# ---------------------------------------------------------------------------

_CSS = """
:root { --ink: #1d1d1d; --rule: #b9b9b9; --shade: #f2f2f2; }
* { box-sizing: border-box; }
body { font: 10.5pt/1.35 system-ui, -apple-system, "Segoe UI", Roboto, sans-serif;
       color: var(--ink); margin: 2em auto; max-width: 70em; padding: 0 1em; }
h1 { font-size: 1.45em; margin: 0 0 .2em; }
h2 { font-size: 1.15em; margin: 1.6em 0 .5em; }
h3 { font-size: 1em; margin: 1.2em 0 .4em; }
p.sub { margin: 0 0 1em; color: #4a4a4a; }
.caution { border: 1.5pt solid var(--ink); padding: .5em .8em; margin: 1em 0; font-weight: 600; }
table { border-collapse: collapse; width: 100%; }
th, td { border-bottom: .75pt solid var(--rule); padding: .3em .45em; vertical-align: top; }
th { text-align: left; background: var(--shade); font-weight: 600; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
tr { page-break-inside: avoid; }
.status { font-weight: 600; padding-left: .5em; border-left: .5em solid var(--rule); }
.note { color: #4a4a4a; font-size: .92em; }
@page { size: A4 landscape; margin: 12mm; }
@media print { body { margin: 0; max-width: none; font-size: 9pt; } h2 { page-break-after: avoid; } }
"""


def _html_table(cols, items, status_col: str | None = None) -> list[str]:
    from .palette import BANDS

    num_cls = ' class="num"'
    out = ["<table>", "<thead><tr>" + "".join(
        f'<th{num_cls if num else ""} scope="col">{html.escape(h)}</th>'
        for h, _, num in cols) + "</tr></thead>", "<tbody>"]
    for it in items:
        tds = []
        for h, g, num in cols:
            text = html.escape(g(it))
            if h == status_col:
                band = BANDS.get(g(it))
                colour = band.sample if band else "#b9b9b9"
                tds.append(f'<td class="status" style="border-left-color:{colour}">{text}</td>')
            else:
                tds.append(f'<td{num_cls if num else ""}>{text}</td>')
        out.append("<tr>" + "".join(tds) + "</tr>")
    out += ["</tbody>", "</table>"]
    return out


def to_html(results: Results) -> str:
    """The schedule as one self-contained, printable HTML page (no scripts, no external files)."""
    rows = schedule_rows(results)
    title, sub = _header_lines(results)
    e = html.escape
    out = ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
           '<meta name="viewport" content="width=device-width, initial-scale=1">',
           f"<title>Installation schedule: {e(title)}</title>",
           f"<style>{_CSS}</style>", "</head>", "<body>",
           f"<h1>Installation schedule: {e(title)}</h1>",
           f'<p class="sub">{e(sub)}</p>',
           f'<p class="caution">Caution: {e(CAUTION)}</p>',
           "<h2>Circuits</h2>"]
    out += _html_table(_columns(rows), rows, status_col="Design status")
    out += [f"<p>{e(_summary_line(results))}.</p>",
            '<p class="note">Measure Zs at the point named under <em>Test at</em> (the '
            "circuit's worst point). <em>Highest measured Zs</em> is the largest reading to "
            "accept at the test temperature; a blank means the device's data show no "
            "disconnection in time at any current. Figures are rounded toward the safe side.</p>"]
    subs = submain_rows(results)
    if subs:
        out += ["<h2>Sub-mains</h2>"]
        out += _html_table(_submain_columns(), subs, status_col="Design status")
        out += [f'<p class="note">{e(SUBMAIN_NOTE)}</p>']
    out += ["<h2>Cable take-off</h2>"]
    takeoff = cable_takeoff(results.plan, results.lengths)
    for heading, trows in _takeoff_sections(takeoff, len(results.plan.boards)):
        if heading:
            out.append(f"<h3>{e(heading)}</h3>")
        out += _html_table(_takeoff_columns(), trows)
    out += [f'<p class="note">{e(TAKEOFF_NOTE)}</p>',
            f'<p class="caution">Caution: {e(CAUTION)}</p>', "</body>", "</html>", ""]
    return "\n".join(out)


# ---------------------------------------------------------------------------
# Files
# ---------------------------------------------------------------------------

#: file suffix -> formatter
FORMATS = {".csv": to_csv, ".md": to_markdown, ".markdown": to_markdown,
           ".html": to_html, ".htm": to_html}


def format_schedule(results: Results, suffix: str) -> str:
    """The schedule in the format named by a file suffix (``.csv``, ``.md``, ``.html``)."""
    try:
        return FORMATS[suffix.lower()](results)
    except KeyError:
        raise ValueError(f"unknown schedule format {suffix!r}; expected one of "
                         f"{', '.join(sorted(set(FORMATS)))}") from None


def write_schedule(results: Results, out: str | os.PathLike, inputs=()) -> Path:
    """Write the schedule to ``out`` in the format its suffix names (atomically).

    Raises
    ------
    zsplan.errors.PlanError
        For an unknown suffix, a missing folder or an output that is an input.
    """
    suffix = Path(out).suffix.lower()
    if suffix not in FORMATS:
        raise PlanError(Problem(str(out), f"unknown schedule format {suffix or '(none)'!r}; "
                                          "expected a file name ending .csv, .md or .html"))
    inputs = [results.plan.path, results.plan.drawing.floorplan, *inputs]
    return write_atomic(out, format_schedule(results, suffix), inputs=inputs)
