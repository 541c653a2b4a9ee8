"""The validated, immutable plan model.

The loader (:mod:`zsplan.loader`) turns a plan file into these frozen
dataclasses; nothing downstream reads YAML.  All quantities are plain floats
in fixed units, named in the field (``_m``, ``_mm2``, ``_ohm``, ``_a``,
``_c`` for °C, ``_v``, ``_s``).  Fractions (allowance, tight threshold) are
stored as fractions, not percent.

Coordinates are plan metres with the origin at the drawing's top-left, x to
the right and y downwards (as in SVG).
"""
from __future__ import annotations

from dataclasses import dataclass, field

Point = tuple[float, float]

EARTHING = ("TN-S", "TN-C-S", "TT")
USES = ("sockets", "fixed", "lighting", "distribution")
TOPOLOGIES = ("radial", "ring")
RUNS = ("ceiling", "floor", "direct")
DEVICE_TYPES = ("mcb", "rcbo", "fuse")
MATERIALS = ("copper", "aluminium")


@dataclass(frozen=True, slots=True)
class Where:
    """Where a value came from, for error messages."""

    file: str = ""
    path: str = ""
    line: int | None = None


@dataclass(frozen=True)
class Supply:
    ze_ohm: float
    earthing: str = "TN-C-S"
    u0_v: float = 230.0
    cmin: float = 0.95
    electrode_ohm: float | None = None   # RA, TT only
    # a private LV supply (the installation's own transformer or generator): the
    # voltage-drop limits default to zsplan.vdrop.LIMITS_PCT["private"]
    private: bool = False


@dataclass(frozen=True)
class Device:
    """A protective device.

    ``family`` is the key of a device data file (``mcb``, ``rcbo``,
    ``bs88-2``, ``bs88-3``, ``bs3036``, ``bs1362`` or a user's own family);
    ``curve`` is the circuit-breaker type (``B``, ``C``, ``D``) or ``None``.
    """

    type: str            # mcb | rcbo | fuse
    family: str
    rating_a: float
    curve: str | None = None

    @property
    def label(self) -> str:
        r = f"{self.rating_a:g}"
        if self.type == "fuse":
            return f"{self.family.upper().replace('BS', 'BS ')} {r} A"
        return f"{self.type.upper()} {self.curve}{r}"


@dataclass(frozen=True)
class Cable:
    line_mm2: float
    cpc_mm2: float
    material: str = "copper"
    temp_rating_c: float = 70.0
    cpc_with_line: bool = True
    insulation: str = "thermoplastic"   # thermoplastic | thermosetting
    # cable construction for current ratings (zsplan.capacity):
    # "twin-and-cpc" (flat twin and cpc, BS 7671 Table 4D5) | "single-core" (Table 4D1A)
    construction: str = "twin-and-cpc"

    @property
    def label(self) -> str:
        mat = "" if self.material == "copper" else " Al"
        return f"{self.line_mm2:g}/{self.cpc_mm2:g} mm²{mat} {self.temp_rating_c:g}°C"


@dataclass(frozen=True, slots=True)
class Outlet:
    at: Point
    height_m: float
    name: str = ""
    kind: str = "socket"    # socket | light | switch | spur | fixed


@dataclass(frozen=True)
class SubMain:
    """The cable and device that feed a sub-board from an upstream board."""

    board: str
    cable: Cable
    length_m: float
    device: Device
    load_a: float | None = None
    # additions for issue 6 (voltage drop, current rating); defaults as for circuits
    method: str = "C"                   # reference installation method (BS 7671 Appendix 4)
    phases: int = 1                     # 1 or 3 (balanced)
    ambient_c: float = 30.0
    rcd_a: float | None = None          # IΔn of an RCD ahead of the sub-main (TT: it gives fault protection)
    rcd_kind: str = "selective"         # "general" | "selective" (time-delayed, type S)


@dataclass(frozen=True)
class Board:
    ref: str
    at: Point
    height_m: float = 1.6
    fed_from: SubMain | None = None
    where: Where = Where()


@dataclass(frozen=True, slots=True)
class Circuit:
    ref: str
    board: str
    device: Device
    cable: Cable
    name: str = ""
    use: str = "sockets"
    topology: str = "radial"
    rcd_a: float | None = None          # IΔn in amperes (30 mA -> 0.03)
    load_a: float | None = None         # design current Ib
    ambient_c: float = 30.0
    run: str = "ceiling"
    route: tuple[Point, ...] | None = None
    outlets: tuple[Outlet, ...] = ()
    allowance: float = 0.0              # fraction, 0.10 for 10 %
    extra_m: float = 0.0
    ceiling_m: float = 2.4
    test_temperature_c: float = 20.0
    where: Where = Where()
    # additions for issue 6 (voltage drop, RCDs, current rating)
    method: str = "C"                   # reference installation method (BS 7671 Appendix 4)
    insulation_m: float = 0.0           # length totally surrounded by thermal insulation [m]
    phases: int = 1                     # 1 or 3 (balanced three-phase load)
    rcd_fault_protection: bool | None = None   # None: the RCD gives fault protection in TT only
    rcd_kind: str = "general"           # "general" (non-delayed) | "selective" (time-delayed, type S)

    @property
    def key(self) -> tuple[str, str]:
        return (self.board, self.ref)


@dataclass(frozen=True)
class Drawing:
    floorplan: str | None = None        # absolute path of the SVG, resolved by the loader
    scale: float | None = None          # 50.0 for 1:50 (drawing in paper millimetres)
    units_per_metre: float | None = None
    calibrate: tuple[Point, Point, float] | None = None   # (from, to, length_m)
    routes_layer: str | None = None


@dataclass(frozen=True)
class Settings:
    """Method choices, each a named option with a sourced default."""

    tight: float = 0.2                  # margin below which a pass is "tight"
    alpha: str = "bs7671"               # "bs7671" (0.004 /K) | "iec60228" (0.00393 Cu, 0.00403 Al)
    test_limit: str = "rule-of-0.8"     # "rule-of-0.8" | "temperature-ratio"
    vdrop_lighting_pct: float = 3.0
    vdrop_other_pct: float = 5.0
    # additions for issue 6 (zsplan.vdrop, zsplan.grouping)
    vdrop_load: str = "concentrated"    # "concentrated" | "uniform" | "outlets"
    group_distance_m: float = 0.1       # routes closer than this run together
    group_min_length_m: float = 0.5     # ... for at least this length
    grouping_arrangement: str = "bunched"   # BS 7671 Table 4C1 row: "bunched" | "single-layer"


@dataclass(frozen=True)
class Plan:
    path: str
    supply: Supply
    boards: tuple[Board, ...]
    circuits: tuple[Circuit, ...]
    title: str = ""
    drawing: Drawing = Drawing()
    settings: Settings = Settings()
    version: int = 1
    extra: dict = field(default_factory=dict, compare=False, hash=False)

    def board(self, ref: str) -> Board:
        index = self.__dict__.get("_board_index")
        if index is None:      # built once (a frozen dataclass: set through __dict__)
            index = {}
            for b in self.boards:
                index.setdefault(b.ref, b)
            self.__dict__["_board_index"] = index
        try:
            return index[ref]
        except KeyError:
            raise KeyError(ref) from None
