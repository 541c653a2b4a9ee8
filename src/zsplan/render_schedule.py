"""The schedule of expected test values, as paginated SVG sheets.

One row per circuit with what the tester needs on site: the expected
R1+R2 at the test temperature, the highest acceptable measured Zs (the
limit converted to the test temperature by the plan's ``settings.test_limit``
rule), Zs max at the conductor's operating temperature, the calculated Zs,
the prospective fault current If and the required disconnection time.
Figures are rounded toward the safe side (:func:`zsplan.results.safe_round`):
impedances and lengths up, limits and currents down.

References
----------
.. [1] BS 7671:2018+A2:2022, Regulation 411.4.4 and Appendix 3 (maximum
   measured Zs at test temperature; from memory).
"""
from __future__ import annotations

from pathlib import Path


from . import CAUTION, __version__
from . import palette
from .labels import text_width
from .render import (CHECK_NAMES, FONT, INK, MUTED, RULE, _COLOUR_CHECKS, _f, _fit_text, _num,
                     _serialise, _sheet_drawing, _text, _warning_glyph, _wrap)
from .sheets import sheet as make_sheet

__all__ = ["schedule_pages", "COLUMNS"]

MARGIN = 10.0          # mm; zsplan layout choice
ROW_H = 5.0            # mm
HEAD_H = 8.0           # table header (two lines)
FONT_MM = 1.9
TWO_LINE_FONT_MM = 1.7
HEADER_BLOCK_MM = 24.0
FOOTER_MM = 11.0
NOTE_STEP = 2.6

#: (key, header line 1, header line 2, width on a 190 mm table, alignment)
COLUMNS = (
    ("board", "Board", "", 11.0, "start"),
    ("ref", "Ref", "", 8.0, "start"),
    ("name", "Circuit", "", 35.0, "start"),
    ("device", "Device", "", 16.0, "start"),
    ("cable", "Cable mm²", "line/cpc", 15.0, "start"),
    ("length", "Length", "m", 11.0, "end"),
    ("r1r2", "R1+R2", "{temp}, Ω", 14.0, "end"),
    ("zs_test", "Max meas.", "Zs, Ω", 14.0, "end"),
    ("zs_max", "Zs max", "Ω", 12.0, "end"),
    ("zs", "Zs calc.", "Ω", 12.0, "end"),
    ("if", "If", "A", 12.0, "end"),
    ("t", "Time", "limit, s", 11.0, "end"),
    ("status", "Status", "", 19.0, "start"),
)


def _cable(c) -> str:
    s = f"{c.cable.line_mm2:g}/{c.cable.cpc_mm2:g}"
    return s + (" Al" if c.cable.material != "copper" else "")


def _rows(results):
    a = results.circuits
    plan = results.plan
    rows = []
    for i, c in enumerate(plan.circuits):
        checks = results.checks[i] if i < len(results.checks) else {}
        other = [CHECK_NAMES.get(k, k.replace("_", " ")) for k, v in checks.items()
                 if v == "fail" and k not in _COLOUR_CHECKS]
        m = float(a["margin"][i])
        status = str(a["status"][i])
        b = str(palette.band(m, plan.settings.tight))
        col = palette.colour(m, plan.settings.tight)
        if b == "none" and checks.get("disconnection") == "fail":
            col = palette.colour(palette.FAIL_FULL, plan.settings.tight)
        rows.append({
            "board": c.board, "ref": c.ref, "name": c.name or "", "device": c.device.label,
            "cable": _cable(c),
            "length": _num("length_m", a["length_m"][i], 1),
            "r1r2": _num("r1r2_test_ohm", a["r1r2_test_ohm"][i], 2),
            "zs_test": _num("zs_test_max_ohm", a["zs_test_max_ohm"][i], 2),
            "zs_max": _num("zs_max_ohm", a["zs_max_ohm"][i], 2),
            "zs": _num("zs_ohm", a["zs_ohm"][i], 2),
            "if": _num("fault_current_a", a["fault_current_a"][i], 0),
            "t": _num("disconnect_limit_s", a["disconnect_limit_s"][i], 1),
            "status": status, "_colour": col, "_other": other, "_key": f"{c.board}/{c.ref}",
            "_temp": c.test_temperature_c,
        })
    return rows


def _notes(results, rows):
    notes = []
    for i, r in enumerate(rows):
        for msg in (results.messages[i] if i < len(results.messages) else []):
            notes.append(f"{r['_key']}: {msg}")
    for w in getattr(results, "warnings", []) or []:
        notes.append(str(w))
    return notes


def schedule_pages(results, *, sheet="A4", orientation="portrait") -> list[str]:
    """The schedule sheets as SVG documents (see :func:`zsplan.render.schedule_svg`)."""
    sh = make_sheet(sheet, orientation, path="sheet")
    plan = results.plan
    rows = _rows(results)
    notes = _notes(results, rows)
    frame_w = sh.width_mm - 2 * MARGIN
    base = sum(c[3] for c in COLUMNS)
    widths = {c[0]: c[3] for c in COLUMNS}
    if frame_w > base:
        widths["name"] += frame_w - base
    else:
        k = frame_w / base
        widths = {key: w * k for key, w in widths.items()}
    temps = sorted({r["_temp"] for r in rows})
    temp = f"at {temps[0]:g} °C" if len(temps) == 1 else "at test temp."

    top = MARGIN + HEADER_BLOCK_MM
    bottom = sh.height_mm - MARGIN - FOOTER_MM
    # page contents: rows first, then notes
    pages, cur, y = [], [], top + HEAD_H
    for r in rows:
        if y + ROW_H > bottom and cur:
            pages.append(cur)
            cur, y = [], top + HEAD_H
        cur.append(("row", r))
        y += ROW_H
    explain = _explanations(plan)
    note_lines = []
    for text in explain + notes:
        wrapped = _wrap(text, frame_w - 4.0, 1.8)
        note_lines.extend([(j == 0, ln) for j, ln in enumerate(wrapped)])
    if note_lines:
        heading = [("head", "Notes")]
        y += 4.0
        for item in heading + [("note", nl) for nl in note_lines]:
            if y + NOTE_STEP > bottom:
                pages.append(cur)
                cur, y = [], top
            cur.append(item)
            y += NOTE_STEP + (1.2 if item[0] == "head" else 0.0)
    if cur or not pages:
        pages.append(cur)
    n = len(pages)
    return [_page(sh, plan, results, content, widths, temp, p + 1, n) for p, content in enumerate(pages)]


def _explanations(plan) -> list[str]:
    rule = plan.settings.test_limit
    how = ("the 0.8 rule of thumb (common practice)" if rule == "rule-of-0.8"
           else "the ratio of conductor resistances at the test and operating temperatures")
    return [
        "R1+R2: expected continuity reading of line and cpc end to end, at the test "
        "temperature shown. Max meas. Zs: highest Zs reading acceptable at the test "
        f"temperature, from Zs max by {how}. Zs max: limit at the conductors' operating "
        "temperature for the required disconnection time (Time limit). Zs calc.: Ze + R1+R2 "
        "at operating temperature. If: prospective earth-fault current at Zs calc. with Cmin.",
        "Rounding: impedances and lengths are rounded up, limits and currents down.",
    ]


def _page(sh, plan, results, content, widths, temp, page, pages) -> str:
    dwg = _sheet_drawing(sh)
    title = plan.title or (Path(plan.path).stem if plan.path else "Plan")
    dwg.set_desc(title=f"{title}: schedule of expected test values, page {page} of {pages}",
                 desc=CAUTION)
    bg = dwg.rect((0, 0), (_f(sh.width_mm), _f(sh.height_mm)), fill="#ffffff")
    dwg.add(bg)
    g = dwg.g(id="zs-schedule", font_family=FONT)
    x0, fw = MARGIN, sh.width_mm - 2 * MARGIN

    # header block
    g.add(_text(dwg, x0, MARGIN + 5.0, "Schedule of expected test values", 4.0, weight="bold"))
    t, fs = _fit_text(title, fw - 40, 2.8, bold=True)
    g.add(_text(dwg, x0, MARGIN + 10.5, t, fs, weight="bold"))
    g.add(_text(dwg, x0 + fw, MARGIN + 5.0, f"Sheet {page} of {pages}", 2.2, anchor="end",
                fill=MUTED, **{"class": "page-number"}))
    s = plan.supply
    supply = (f"Supply {s.earthing}, U0 {s.u0_v:g} V, Ze {_num('zs_ohm', s.ze_ohm, 2)} Ω, "
              f"Cmin {s.cmin:g}")
    info = [supply]
    if plan.path:
        info.append(f"plan {Path(plan.path).name}")
    summ = results.summary()
    info.append(f"{summ['pass']} pass, {summ['tight']} tight, {summ['fail']} fail")
    t, fs = _fit_text(" · ".join(info), fw, 2.0)
    g.add(_text(dwg, x0, MARGIN + 15.0, t, fs, fill=MUTED))
    rule = dwg.line((_f(x0), _f(MARGIN + 18.0)), (_f(x0 + fw), _f(MARGIN + 18.0)), stroke=INK)
    rule["stroke-width"] = "0.35"
    g.add(rule)

    y = MARGIN + HEADER_BLOCK_MM
    rows = [item[1] for item in content if item[0] == "row"]
    if rows:
        table = dwg.g(id="zs-table")
        head = dwg.rect((_f(x0), _f(y)), (_f(fw), _f(HEAD_H)), fill="#e6e6e6")
        table.add(head)
        x = x0
        for key, h1, h2, _, align in COLUMNS:
            w = widths[key]
            tx = x + 1.0 if align == "start" else x + w - 1.0
            table.add(_text(dwg, tx, y + 3.3, h1, 1.9, weight="bold", anchor=align))
            if h2:
                table.add(_text(dwg, tx, y + 6.4, h2.format(temp=temp), 1.7, anchor=align,
                                fill=MUTED))
            x += w
        y += HEAD_H
        for n, r in enumerate(rows):
            rg = dwg.g(**{"class": "row"})
            rg["data-circuit"] = r["_key"]
            if n % 2 == 1:
                rg.add(dwg.rect((_f(x0), _f(y)), (_f(fw), _f(ROW_H)), fill="#f3f3f3"))
            x = x0
            for key, _, _, _, align in COLUMNS:
                w = widths[key]
                if key == "status":
                    rg.add(dwg.rect((_f(x + 1.0), _f(y + 1.4)), ("2.2", "2.2"),
                                    fill=r["_colour"]))
                    rg.add(_text(dwg, x + 4.0, y + 3.3, r["status"], FONT_MM,
                                 weight="bold" if r["status"] == "fail" else None,
                                 **{"data-status": r["status"]}))
                    if r["_other"]:
                        gx = x + 4.0 + text_width(r["status"], FONT_MM, True) + 2.2
                        rg.add(_warning_glyph(dwg, gx, y + 2.5, 2.3))
                else:
                    tx = x + 1.0 if align == "start" else x + w - 1.0
                    text = str(r[key])
                    two = _wrap(text, w - 2.0, TWO_LINE_FONT_MM)
                    if (key == "name" and text_width(text, FONT_MM) > w - 2.0
                            and len(two) == 2):
                        # a long circuit name on two lines
                        el = _text(dwg, tx, y + 2.2, two[0], TWO_LINE_FONT_MM, **{"class": key})
                        el.add(dwg.tspan(two[1], x=[_f(tx)], dy=["1.9"]))
                        rg.add(el)
                    else:
                        t, fs = _fit_text(text, w - 2.0, FONT_MM)
                        rg.add(_text(dwg, tx, y + 3.3, t, fs, anchor=align, **{"class": key}))
                x += w
            table.add(rg)
            y += ROW_H
        end = dwg.line((_f(x0), _f(y)), (_f(x0 + fw), _f(y)), stroke=RULE)
        end["stroke-width"] = "0.25"
        table.add(end)
        g.add(table)
        y += 4.0

    notes = dwg.g(id="zs-notes")
    for kind, value in content:
        if kind == "head":
            y += 1.2
            notes.add(_text(dwg, x0, y + 1.2, value, 2.3, weight="bold"))
            y += NOTE_STEP + 1.2
        elif kind == "note":
            first, ln = value
            notes.add(_text(dwg, x0 + (0 if first else 2.0), y, ln, 1.8))
            y += NOTE_STEP
    g.add(notes)

    # footer with the caution
    fy = sh.height_mm - MARGIN - FOOTER_MM + 2.0
    fl = dwg.line((_f(x0), _f(fy)), (_f(x0 + fw), _f(fy)), stroke=INK)
    fl["stroke-width"] = "0.25"
    g.add(fl)
    foot = dwg.g(id="zs-caution")
    lines = _wrap("Caution: " + CAUTION, fw - 30.0, 1.9)
    for j, ln in enumerate(lines[:3]):
        foot.add(_text(dwg, x0, fy + 3.4 + 2.4 * j, ln, 1.9))
    g.add(foot)
    g.add(_text(dwg, x0 + fw, fy + 3.4, f"zsplan {__version__}", 1.7, anchor="end", fill=MUTED))
    dwg.add(g)
    return _serialise(dwg)
