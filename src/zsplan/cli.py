"""The ``zsplan`` command line.

Commands::

    zsplan check PLAN [--json] [--order board|worst]
    zsplan render PLAN [-o OUT.svg|.pdf|.png] [--sheet A4|A3|A1] [--orientation ...] [--scale 1:50|fit]
    zsplan schedule PLAN [-o FILE.csv|.md|.html]
    zsplan limits FAMILY [--type B] [--rating 32] [--u0 230 V] [--cmin 0.95]
                  [--time 0.4 s] [--fault 250 A] [-o plot.svg]
    zsplan demo [DIR] [--plan flat|workshop] [--force]

Exit codes (the plan-file contract): 0 when no circuit fails, 1 when any
circuit fails (``check``), 2 for unusable input — a plan with mistakes, a
missing file, a bad option — reported as one clean message on standard
error, never a traceback.  ``render``, ``schedule`` and ``demo`` exit 0 once
their files are written, whatever the circuits' verdicts; ``check`` is the
command for scripts that gate on the verdict.

Every file is written atomically by :func:`zsplan.outputs.write_atomic`,
which refuses to write over the plan or its floor plan.
"""
from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path

from . import CAUTION, __version__
from .errors import PlanError, Problem

__all__ = ["main", "build_parser", "EXIT_OK", "EXIT_FAIL", "EXIT_INPUT"]

EXIT_OK, EXIT_FAIL, EXIT_INPUT = 0, 1, 2

#: ISO 216 sheets the renderer draws on (zsplan.sheets.SHEET_SIZES_MM)
SHEETS = ("A4", "A3", "A2", "A1", "A0")
ORIENTATIONS = ("portrait", "landscape")


class CommandError(Exception):
    """A mistake in the command's own arguments (not in a plan file): one clean message."""


class _Parser(argparse.ArgumentParser):
    """argparse, but option errors go through the same clean path as plan errors."""

    def error(self, message):  # pragma: no cover - exercised through main()
        self.print_usage(sys.stderr)
        self.exit(EXIT_INPUT, f"{self.prog}: error: {message}\n")


def _quantity(kind: str, what: str):
    def parse(text: str) -> float:
        from .units import UnitProblem, parse as parse_unit
        try:
            v = parse_unit(text, kind)
        except UnitProblem as exc:
            raise argparse.ArgumentTypeError(f"{what}: {exc}") from None
        if not v > 0:
            raise argparse.ArgumentTypeError(f"{what}: expected a positive value, got {text!r}")
        return v
    return parse


def _cmin(text: str) -> float:
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a number such as 0.95, got {text!r}") from None
    if not 0 < v <= 1:
        raise argparse.ArgumentTypeError(f"expected a factor above 0 and at most 1, got {text!r}")
    return v


def _sheet(text: str) -> str:
    t = text.strip().upper()
    if t not in SHEETS:
        raise argparse.ArgumentTypeError(f"expected one of {', '.join(SHEETS)}, got {text!r}")
    return t


def build_parser() -> argparse.ArgumentParser:
    p = _Parser(prog="zsplan", description=(
        "Take cable lengths off a floor plan and check each final circuit's earth fault loop "
        "impedance and disconnection time (BS 7671 / IEC 60364). " + CAUTION),
        epilog="Exit codes: 0 no circuit fails, 1 a circuit fails (check), 2 unusable input.")
    p.add_argument("--version", action="version", version=f"zsplan {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    sub.required = True

    c = sub.add_parser("check", help="check every circuit of a plan and print the results",
                       description="Check every circuit of a plan. Exit code 0: no circuit "
                       "fails; 1: a circuit fails; 2: unusable input.")
    c.add_argument("plan", metavar="PLAN", help="plan file (YAML)")
    c.add_argument("--json", action="store_true",
                   help="print the results document (JSON, the version-1 contract) instead of the table")
    c.add_argument("--order", choices=("board", "worst"), default="board",
                   help="table order: by board as in the plan (default) or worst margin first")

    r = sub.add_parser("render", help="draw the plan with every route coloured by its margin",
                       description="Draw the marked-up plan: SVG, PDF or PNG by the output's suffix.")
    r.add_argument("plan", metavar="PLAN", help="plan file (YAML)")
    r.add_argument("-o", "--output", metavar="OUT",
                   help="output file, .svg, .pdf or .png (default: PLAN's name with -plan.pdf, "
                        "in the current folder)")
    r.add_argument("--sheet", type=_sheet, default="A3", help="paper size: A4, A3 (default), A2, A1 or A0")
    r.add_argument("--orientation", choices=ORIENTATIONS, default=None,
                   help="portrait or landscape (default: the one that suits the drawing)")
    r.add_argument("--scale", default="fit", help="drawing scale such as 1:50, or fit (default)")

    r.add_argument("--results", metavar="RESULTS.csv", default=None,
                   help="colour routes by measured test results (see 'zsplan verify')")

    v = sub.add_parser("verify", help="compare measured test results with the design",
                       description="Compare measured R1+R2, Zs, Ze, ring and RCD readings with the "
                                   "values the design expects. Exit code 1 when any circuit fails.")
    v.add_argument("plan", metavar="PLAN", help="plan file (YAML)")
    v.add_argument("results", metavar="RESULTS.csv",
                   help="measured results: columns board, ref, r1r2, zs (ohm); optional temperature, "
                        "ze, r1, rn, r2, rcd_ms")
    v.add_argument("--json", action="store_true", help="print the verification as JSON")
    v.add_argument("-o", "--output", metavar="SHEET.csv", default=None,
                   help="also write the verification sheet (CSV)")

    s = sub.add_parser("schedule", help="the installers' schedule: expected test values and cable take-off",
                       description="Per circuit: expected R1+R2 at the test temperature, the "
                       "highest measured Zs to accept, the required disconnection time and If; then "
                       "the cable take-off. Without -o, Markdown on standard output.")
    s.add_argument("plan", metavar="PLAN", help="plan file (YAML)")
    s.add_argument("-o", "--output", metavar="FILE", help="output file: .csv, .md or .html")

    lim = sub.add_parser("limits", help="Zs max of a device family's ratings, and a time-current plot",
                         description="Print the largest Zs for each rating of a device family at "
                         "0.4 s and 5 s (and at --time), and with -o draw its time-current "
                         "characteristics.")
    lim.add_argument("family", metavar="FAMILY",
                     help="device family, e.g. mcb, rcbo, bs88-2, bs88-3, bs3036, bs1362")
    lim.add_argument("--type", dest="curve", metavar="B|C|D", default=None,
                     help="circuit-breaker type (default: every type in the table, B in the plot)")
    lim.add_argument("--rating", type=_quantity("current", "--rating"), default=None,
                     help="one rating only, e.g. 32 A")
    lim.add_argument("--u0", type=_quantity("voltage", "--u0"), default=230.0,
                     help="nominal voltage to earth (default 230 V)")
    lim.add_argument("--cmin", type=_cmin, default=0.95, help="minimum voltage factor (default 0.95)")
    lim.add_argument("--time", type=_quantity("time", "--time"), default=None,
                     help="a required disconnection time to add to the table and mark on the plot, e.g. 0.2 s")
    lim.add_argument("--fault", type=_quantity("current", "--fault"), default=None,
                     help="a fault current to mark on the plot, e.g. 250 A")
    lim.add_argument("-o", "--output", metavar="PLOT.svg", help="write the time-current plot (SVG)")

    d = sub.add_parser("demo", help="copy a bundled demo plan into a folder and write all its outputs",
                       description="Copy a bundled demo plan and its floor plan into DIR and write "
                       "its check (text and JSON), plan drawing (PDF and PNG) and schedule "
                       "(HTML and CSV) beside them. Refuses to replace files already there "
                       "unless --force.")
    d.add_argument("dir", metavar="DIR", nargs="?", default="zsplan-demo",
                   help="folder to write into (default ./zsplan-demo; created when missing)")
    d.add_argument("--plan", default="flat", metavar="NAME",
                   help="which demo: flat (default) or workshop")
    d.add_argument("--force", action="store_true", help="replace the demo's files if DIR holds them")
    return p


# ---------------------------------------------------------------------------
# helpers
# ---------------------------------------------------------------------------

def _warn(results) -> None:
    seen = []
    for w in list(results.plan.extra.get("warnings", ())) + list(getattr(results, "warnings", [])):
        if w not in seen:
            seen.append(w)
            print(f"warning: {w}", file=sys.stderr)


def _check(path: str, progress):
    from .check import check
    from .loader import load_plan

    with progress.busy(f"reading {path}"):
        plan = load_plan(path)
    n = len(plan.circuits)
    with progress.busy(f"checking {n} circuit{'s' if n != 1 else ''}"):
        return check(plan)


def _out_text(text: str) -> None:
    sys.stdout.write(text)
    sys.stdout.flush()


# ---------------------------------------------------------------------------
# commands
# ---------------------------------------------------------------------------

def cmd_check(args, progress) -> int:
    from .terminal import check_lines, colour_wanted, glyphs_for, terminal_width

    results = _check(args.plan, progress)
    progress.clear()
    _warn(results)
    if args.json:
        out = getattr(sys.stdout, "buffer", None)
        sys.stdout.flush()
        if out is not None:            # JSON is UTF-8 whatever the locale
            def write(text):
                out.write(text.encode("utf-8"))
        else:
            write, out = sys.stdout.write, sys.stdout
        for piece in results.json_pieces():
            write(piece)
        write("\n")
        out.flush()
    else:
        lines = check_lines(results, order=args.order, colour=colour_wanted(sys.stdout),
                            width=terminal_width(sys.stdout), glyphs=glyphs_for(sys.stdout))
        _out_text("\n".join(lines) + "\n")
    return EXIT_FAIL if results.any_fail else EXIT_OK


def _render_module():
    import importlib

    try:
        # the module, not the package attribute of the same name (a function)
        render = importlib.import_module("zsplan.render")
    except ModuleNotFoundError as exc:
        if exc.name == "zsplan.render":
            raise CommandError("this installation of zsplan has no plan renderer "
                               "(zsplan.render); expected it in the package") from None
        raise
    return render


def cmd_render(args, progress) -> int:
    out = args.output or f"{Path(args.plan).stem}-plan.pdf"      # in the current folder
    suffix = Path(out).suffix.lower()
    if suffix not in (".svg", ".pdf", ".png"):
        raise PlanError(Problem(out, f"unknown drawing format {suffix or '(none)'!r}; expected "
                                     "a file name ending .svg, .pdf or .png"))
    render = _render_module()
    results = _check(args.plan, progress)
    inputs = [results.plan.path, results.plan.drawing.floorplan, args.results]
    measured = None
    if args.results:
        from .readings import read_results
        from .verify import measured_margins, verify
        with progress.busy(f"reading {args.results}"):
            measured = measured_margins(verify(results, read_results(args.results)))
    with progress.busy(f"drawing {out}"):
        render.write_drawing(results, out, sheet=args.sheet, orientation=args.orientation,
                             scale=args.scale, measured=measured, inputs=tuple(i for i in inputs if i))
    progress.clear()
    _warn(results)
    s = results.summary()
    print(f"wrote {out}: {len(results.plan.circuits)} circuits, {s['pass']} pass, "
          f"{s['tight']} tight, {s['fail']} fail")
    print(f"Caution: {CAUTION}")
    return EXIT_OK


def cmd_schedule(args, progress) -> int:
    from .schedule import FORMATS, to_markdown, write_schedule

    if args.output and Path(args.output).suffix.lower() not in FORMATS:
        suffix = Path(args.output).suffix
        raise PlanError(Problem(args.output, f"unknown schedule format {suffix or '(none)'!r}; "
                                             "expected a file name ending .csv, .md or .html"))
    results = _check(args.plan, progress)
    progress.clear()
    _warn(results)
    if args.output:
        inputs = [results.plan.path, results.plan.drawing.floorplan]
        write_schedule(results, args.output, inputs=tuple(i for i in inputs if i))
        print(f"wrote {args.output}", file=sys.stderr)
    else:
        _out_text(to_markdown(results))
    return EXIT_OK


def cmd_limits(args, progress) -> int:
    from .curveplot import DEFAULT_TIMES, curve_svg, limits_table, select
    from .outputs import write_atomic
    from .protection import family
    from .terminal import colour_wanted, glyphs_for, paint, render_table, BOLD

    try:
        fam = family(args.family)
        curves = ([args.curve.upper()] if args.curve else
                  [t for t in fam.types() if t is not None] or [None])
        for curve in curves:
            select(args.family, curve, args.rating)
    except KeyError as exc:
        raise CommandError(str(exc.args[0]) if exc.args else str(exc)) from None
    times = list(DEFAULT_TIMES)
    if args.time is not None and all(abs(args.time - t) > 1e-12 for t in times):
        times.append(args.time)
    colour = colour_wanted(sys.stdout)
    g = glyphs_for(sys.stdout)
    lines = []
    for curve in curves:
        rows = limits_table(args.family, curve, times=times, u0_v=args.u0, cmin=args.cmin,
                            rating=args.rating)
        kind = f", type {curve}" if curve else ""
        lines.append(paint(f"{fam.title}{kind}: largest Zs for disconnection in time "
                           f"(U0 {args.u0:g} V, Cmin {args.cmin:g})", BOLD, colour))
        headers = ["In A"]
        for t in times:
            headers += [f"Ia {t:g} s A", f"Zs max {t:g} s {g.ohm}", f"measured {t:g} s {g.ohm}"]

        def cell(v, d):
            return g.none if v is None else f"{v:.{d}f}"

        body = []
        for row in rows:
            cells = [f"{row.rating_a:g}"]
            for k in range(len(times)):
                cells += [cell(row.ia_a[k], 0), cell(row.zs_max_ohm[k], 2),
                          cell(row.zs_test_max_ohm[k], 2)]
            body.append(cells)
        lines += render_table(headers, body, align="r" * len(headers), colour=colour, glyphs=g)
        lines.append("")
    lines += [f"Zs max = Cmin x U0 / Ia, Ia the current that operates the device within the time "
              f"(BS 7671 Regulation 411.4.4); 'measured' is 0.8 x Zs max, the largest reading to "
              f"accept at about 20 {'°' if g.ohm == 'Ω' else 'deg '}C (BS 7671 Appendix 3). "
              f"Limits rounded down, currents up; {g.none} where the device's data do not reach "
              "that time.",
              f"Caution: {CAUTION}"]
    _out_text("\n".join(lines) + "\n")
    if args.output:
        if Path(args.output).suffix.lower() != ".svg":
            raise PlanError(Problem(args.output, "expected a plot file name ending .svg"))
        svg = curve_svg(args.family, curves[0], rating=args.rating, fault_a=args.fault,
                        time_s=args.time, u0_v=args.u0, cmin=args.cmin)
        write_atomic(args.output, svg)
        print(f"wrote {args.output}", file=sys.stderr)
    return EXIT_OK


def cmd_verify(args, progress) -> int:
    from .verify import main as verify_main

    progress.clear()
    return verify_main(args.plan, args.results, json_out=args.json, out=args.output)


def cmd_demo(args, progress) -> int:
    from .demo import run_demo

    return run_demo(args.dir, plan=args.plan, force=args.force, progress=progress)


COMMANDS = {"check": cmd_check, "render": cmd_render, "schedule": cmd_schedule,
            "limits": cmd_limits, "verify": cmd_verify, "demo": cmd_demo}


def _tolerant_streams() -> None:
    """Never crash on a character the console cannot show; replace it instead."""
    for stream in (sys.stdout, sys.stderr):
        try:
            stream.reconfigure(errors="replace")
        except (AttributeError, ValueError):
            pass


def main(argv=None) -> int:
    """Run the command line; returns the exit code."""
    from .terminal import Progress

    _tolerant_streams()
    args = build_parser().parse_args(argv)
    progress = Progress(sys.stderr)
    try:
        return COMMANDS[args.command](args, progress)
    except (PlanError, CommandError) as exc:
        progress.clear()
        print(f"zsplan: error: {exc}", file=sys.stderr)
        return EXIT_INPUT
    except BrokenPipeError:
        # the reader went away (``zsplan check plan.yaml | head``): stop quietly
        try:
            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, sys.stdout.fileno())
        except (OSError, ValueError):
            pass
        return EXIT_FAIL
    except OSError as exc:
        progress.clear()
        where = f" {exc.filename}" if exc.filename else ""
        print(f"zsplan: error: cannot write or read{where}: {exc.strerror or exc}", file=sys.stderr)
        return EXIT_INPUT
    except KeyboardInterrupt:
        progress.clear()
        print("zsplan: interrupted", file=sys.stderr)
        return 130
    finally:
        progress.clear()


if __name__ == "__main__":
    sys.exit(main())
