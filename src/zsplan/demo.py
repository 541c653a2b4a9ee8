"""The bundled demo plans and ``zsplan demo``.

Two invented scenarios ship inside the package (``zsplan/demo/``; the
repository's ``plans/`` folder points there):

``flat``
    Flat 4, 27 Amberlowe Street: a two-bedroom flat on a TN-C-S supply with
    a ring final, radials and lighting on circuit-breakers; the balcony
    air-conditioning circuit is deliberately tight.
``workshop``
    Unit 6, Tanner's Yard: a small workshop on a TT supply with an older fuse
    board (BS 3036 and BS 88-3 fuses) and a sub-main to a garage board; the
    compressor circuit, left off the RCD, fails.

Each is a plan file and an SVG floor plan with the routes, boards and
outlets drawn on layers.  :func:`run_demo` copies one into a folder and
writes everything zsplan makes from it, so a new user sees every output
after one command.  It refuses to replace files of the same names unless
``force`` is given; other files in the folder are never touched.
"""
from __future__ import annotations

import os
import sys
from dataclasses import dataclass
from importlib import resources
from pathlib import Path

from .errors import PlanError, Problem

__all__ = ["DEMOS", "Demo", "demo", "demo_path", "run_demo"]


@dataclass(frozen=True)
class Demo:
    """A bundled demo: its name, plan file and floor plan (file names in ``zsplan/demo``)."""

    name: str
    plan: str
    floorplan: str
    description: str

    @property
    def results_file(self) -> str:
        """The invented measured-results file shipped beside the plan."""
        return self.plan.rsplit(".", 1)[0] + ".results.csv"

    @property
    def inputs(self) -> tuple[str, ...]:
        return (self.plan, self.floorplan, self.results_file)

    @property
    def outputs(self) -> dict[str, str]:
        """What :func:`run_demo` writes besides the copied inputs: key -> file name."""
        n = self.name
        return {"check_text": f"{n}-check.txt", "check_json": f"{n}-check.json",
                "pdf": f"{n}-plan.pdf", "png": f"{n}-plan.png",
                "schedule_html": f"{n}-schedule.html", "schedule_csv": f"{n}-schedule.csv"}

    @property
    def files(self) -> tuple[str, ...]:
        """Every file name :func:`run_demo` writes, inputs first."""
        return self.inputs + tuple(self.outputs.values())


DEMOS: dict[str, Demo] = {
    "flat": Demo("flat", "flat.yaml", "flat-floorplan.svg",
                 "two-bedroom flat, TN-C-S, circuit-breakers; one circuit tight"),
    "workshop": Demo("workshop", "workshop.yaml", "workshop-floorplan.svg",
                     "workshop on TT with an older fuse board and a garage sub-board; one circuit fails"),
}


def demo(name: str) -> Demo:
    """The demo called ``name``; :class:`PlanError` naming the choices otherwise."""
    try:
        return DEMOS[name]
    except KeyError:
        raise PlanError(Problem("", f"there is no demo {name!r}; expected one of "
                                    f"{', '.join(DEMOS)}", "--plan")) from None


def demo_path(file_name: str):
    """A bundled demo file as an importlib resource (works from an installed wheel)."""
    return resources.files("zsplan").joinpath("demo", file_name)


def _render_module():
    import importlib

    try:
        # the module, not the package attribute of the same name (a function)
        render = importlib.import_module("zsplan.render")
    except ModuleNotFoundError as exc:
        if exc.name == "zsplan.render":
            raise PlanError(Problem("", "this installation of zsplan has no plan renderer "
                                        "(zsplan.render), so the demo cannot draw its plan")) from None
        raise
    return render


def run_demo(folder: str | os.PathLike = "zsplan-demo", *, plan: str = "flat",
             force: bool = False, progress=None, stdout=None) -> int:
    """Copy a demo plan into ``folder`` and write its check, drawings and schedule there.

    Parameters
    ----------
    folder : path
        Created when missing (with its parents).
    plan : str
        A key of :data:`DEMOS`.
    force : bool
        Replace files of the same names; without it, such files stop the demo
        before anything is written.
    progress : zsplan.terminal.Progress, optional
    stdout : text stream, optional
        Where the check table and the list of files go (default ``sys.stdout``).

    Returns
    -------
    int
        0 once every file is written (whatever the circuits' verdicts).
    """
    from .check import check
    from .loader import load_plan
    from .outputs import write_atomic
    from .schedule import to_csv, to_html
    from .terminal import (Glyphs, Progress, check_lines, colour_wanted, glyphs_for,
                           terminal_width)

    out = sys.stdout if stdout is None else stdout
    progress = progress or Progress(enabled=False)
    d = demo(plan)
    render = _render_module()          # before anything is written: no partial demo
    folder = Path(folder)
    if folder.exists() and not folder.is_dir():
        raise PlanError(Problem(str(folder), "is a file; expected a folder for the demo"))
    clash = [f for f in d.files if (folder / f).exists()]
    if clash and not force:
        raise PlanError(Problem(str(folder), f"already holds {', '.join(clash)}; choose another "
                                             "folder, or add --force to replace these files"))
    folder.mkdir(parents=True, exist_ok=True)

    steps = 6
    progress.step("copying the demo plan and its floor plan", 1, steps)
    for name in d.inputs:
        write_atomic(folder / name, demo_path(name).read_bytes())
    plan_file = folder / d.plan
    floorplan = folder / d.floorplan
    inputs = (plan_file, floorplan, folder / d.results_file)

    progress.step("checking the circuits", 2, steps)
    results = check(load_plan(plan_file))
    files = {k: folder / v for k, v in d.outputs.items()}
    text = "\n".join(check_lines(results, glyphs=Glyphs())) + "\n"
    write_atomic(files["check_text"], text, inputs=inputs)
    write_atomic(files["check_json"], "".join(results.json_pieces()) + "\n", inputs=inputs)

    progress.step("drawing the plan (PDF)", 3, steps)
    render.write_drawing(results, files["pdf"], sheet="A3", inputs=inputs)
    progress.step("drawing the plan (PNG)", 4, steps)
    render.write_drawing(results, files["png"], sheet="A3", inputs=inputs)
    progress.step("writing the schedule", 5, steps)
    write_atomic(files["schedule_html"], to_html(results), inputs=inputs)
    write_atomic(files["schedule_csv"], to_csv(results), inputs=inputs)
    progress.step("done", 6, steps)
    progress.clear()

    lines = check_lines(results, colour=colour_wanted(out), width=terminal_width(out),
                        glyphs=glyphs_for(out))
    lines += ["", f"Demo '{d.name}' ({d.description}) written to {folder}{os.sep}:"]
    lines += [f"  {f}" for f in d.files]
    lines += ["", f"Try: zsplan check {plan_file} --order worst",
              f"     zsplan schedule {plan_file}",
              f"     zsplan verify {plan_file} {folder / d.results_file}",
              f"     zsplan limits mcb --type B --rating 32 --fault 250A --time 0.4s "
              f"-o {folder / 'b32.svg'}"]
    out.write("\n".join(lines) + "\n")
    out.flush()
    return 0
