"""Validated design model: frozen dataclasses in SI units.

The workbook reader produces a :class:`Design`; every later stage reads it and
never changes it. Lengths are metres, depth is positive downward below grade,
resistivities ohm*m, currents amperes, times seconds.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, fields

import numpy as np

__all__ = [
    "FaultOverride",
    "SoilOverride",
    "SurfaceLayerOverride",
    "DEFAULT_FENCE_REACH_M",
    "DEFAULT_WIRE_DIAMETER_M",
    "CheckArea",
    "CheckPoint",
    "FenceRun",
    "MetalGroup",
    "MetalLayout",
    "Profile",
    "Conductor",
    "Design",
    "Fault",
    "GridSpec",
    "Notice",
    "Project",
    "Rod",
    "Settings",
    "Soil",
    "SurfaceLayer",
    "WennerReadings",
]


@dataclass(frozen=True)
class Notice:
    """A warning or note that travels with the results.

    Parameters
    ----------
    code : str
        Short machine-readable tag, for example ``"default-used"``.
    message : str
        Plain-language text for the designer.
    level : str
        ``"warning"`` (may affect safety or accuracy) or ``"note"``.
    """

    code: str
    message: str
    level: str = "warning"


@dataclass(frozen=True)
class Project:
    """Title-block information."""

    project: str = ""
    site: str = ""
    prepared_by: str = ""
    revision: str = ""


@dataclass(frozen=True)
class Soil:
    """Horizontally layered soil model.

    Parameters
    ----------
    model : str
        ``"uniform"`` (default), ``"two-layer"``, ``"multilayer"`` (the
        ``layers`` below), or ``"fitted"`` (a model of 1, 2 or 3 layers still to
        be fitted to the design's Wenner readings, whichever the BIC prefers; it
        has no resistivities yet: ``rho1_ohm_m`` is ``None``).
    rho1_ohm_m : float or None
        Upper (or only) layer resistivity; ``None`` only for a fitted model. [ohm*m]
    thickness_m : float or None
        Upper layer thickness H (two-layer, and the top layer of multilayer). [m]
    rho2_ohm_m : float or None
        Lower layer resistivity (two-layer), or the second layer's (multilayer). [ohm*m]
    layers : tuple of (float, float or None)
        ``"multilayer"`` only: (resistivity [ohm*m], thickness [m]) of every
        layer from the top, the last thickness ``None``; ``rho1_ohm_m``,
        ``thickness_m`` and ``rho2_ohm_m`` then describe the top two layers.
    """

    model: str = "uniform"
    rho1_ohm_m: float | None = None
    thickness_m: float | None = None
    rho2_ohm_m: float | None = None
    layers: tuple[tuple[float, float | None], ...] = ()

    @property
    def interfaces_m(self) -> tuple[float, ...]:
        """Depths of the layer interfaces from the top. [m]"""
        if self.model == "multilayer" and self.layers:
            out, z = [], 0.0
            for _, t in self.layers[:-1]:
                z += float(t)
                out.append(z)
            return tuple(out)
        if self.model == "two-layer" and self.thickness_m is not None:
            return (float(self.thickness_m),)
        return ()

    @property
    def is_fitted(self) -> bool:
        """True for a model still to be fitted to Wenner readings (no resistivities yet)."""
        return self.model == "fitted"

    @property
    def is_uniform(self) -> bool:
        """True when the soil behaves as one uniform half-space."""
        if self.model == "multilayer":
            return len({r for r, _ in self.layers}) <= 1
        return self.model == "uniform" or self.rho2_ohm_m == self.rho1_ohm_m

    @property
    def reflection_k(self) -> float:
        """Reflection coefficient K = (rho2 - rho1) / (rho2 + rho1)."""
        if self.model == "uniform" or self.rho2_ohm_m is None or self.rho1_ohm_m is None:
            return 0.0
        return (self.rho2_ohm_m - self.rho1_ohm_m) / (self.rho2_ohm_m + self.rho1_ohm_m)


@dataclass(frozen=True)
class WennerReadings:
    """Wenner four-pin readings converted to apparent resistivity.

    Attributes
    ----------
    spacing_m : tuple of float
        Pin spacing a. [m]
    apparent_ohm_m : tuple of float
        Apparent resistivity. [ohm*m]
    rows : tuple of int
        Spreadsheet rows the readings came from.
    sheet : str
        Sheet name.
    """

    spacing_m: tuple[float, ...]
    apparent_ohm_m: tuple[float, ...]
    rows: tuple[int, ...] = ()
    sheet: str = "Wenner"


@dataclass(frozen=True)
class SurfaceLayer:
    """High-resistivity surface layer (crushed rock, asphalt)."""

    rho_ohm_m: float
    thickness_m: float


@dataclass(frozen=True)
class Fault:
    """Fault and exposure data.

    Parameters
    ----------
    fault_current_a : float
        Symmetrical rms ground-fault current 3I0. [A]
    split_factor : float
        Fraction of 3I0 that flows between the grid and remote earth (Sf).
        Default 1.0: all of 3I0 into the grid, the conservative choice
        (common practice when the current division is not studied).
    x_over_r : float
        System X/R ratio at the fault location. Required (keyword or third
        positional argument): no default is conservative for every system.
    fault_duration_s : float
        Fault duration tf, used for the decrement factor. Required. [s]
    shock_duration_s : float or None
        Shock duration ts, used for the tolerable voltages. Default: equal
        to the fault duration (common practice for a single clearing without
        reclosing; the IEEE Std 80 Annex B examples take ts = tf = 0.5 s). [s]
    body_weight_kg : float
        50 or 70. Default 50 kg, the lower and so more conservative limit of
        IEEE Std 80-2000, Eqs. (29) and (32). [kg]
    frequency_hz : float
        System frequency. Default 60 Hz (common practice: the frequency of
        the IEEE Std 80 examples and Table 10). [Hz]
    ambient_c : float
        Ambient (soil) temperature for conductor sizing. Default 40 degC,
        the ambient of IEEE Std 80-2000 Table 2. [degC]
    max_conductor_c : float or None
        Largest allowed conductor temperature; ``None`` = the fusing
        temperature of each material. [degC]
    touch_limit_v, step_limit_v : float or None
        User-defined tolerable voltages replacing those of IEEE Std 80 (for
        jurisdictions that use another standard). [V]
    """

    fault_current_a: float
    split_factor: float = 1.0
    x_over_r: float | None = None
    fault_duration_s: float | None = None
    shock_duration_s: float | None = None
    body_weight_kg: float = 50.0
    frequency_hz: float = 60.0
    ambient_c: float = 40.0
    max_conductor_c: float | None = None
    touch_limit_v: float | None = None
    step_limit_v: float | None = None

    def __post_init__(self) -> None:
        missing = [n for n in ("x_over_r", "fault_duration_s") if getattr(self, n) is None]
        if missing:
            raise TypeError(f"Fault needs {' and '.join(missing)} (no default is safe for every system)")
        if self.shock_duration_s is None:
            object.__setattr__(self, "shock_duration_s", self.fault_duration_s)


@dataclass(frozen=True)
class Conductor:
    """A straight bare conductor (horizontal, inclined or a vertical rod).

    Parameters
    ----------
    label : str
        Name shown in outputs.
    start, end : tuple of float
        (x, y, depth) of the two ends. [m]
    diameter_m : float
        Conductor diameter. [m]
    kind : str
        ``"conductor"`` or ``"rod"``.
    source : str
        Where it came from, e.g. ``"Conductors row 4"``.
    material : str
        Material name (:data:`groundcalc.safety.materials.MATERIALS`).
    """

    label: str
    start: tuple[float, float, float]
    end: tuple[float, float, float]
    diameter_m: float
    kind: str = "conductor"
    source: str = ""
    material: str = "hard-drawn copper"

    @property
    def length_m(self) -> float:
        """Length of the conductor. [m]"""
        return float(math.dist(self.start, self.end))  # no overflow for huge coordinates


@dataclass(frozen=True)
class Rod:
    """A driven vertical rod."""

    label: str
    x_m: float
    y_m: float
    top_depth_m: float
    length_m: float
    diameter_m: float
    source: str = ""
    material: str = "hard-drawn copper"

    def as_conductor(self) -> Conductor:
        """The rod as a vertical :class:`Conductor`."""
        return Conductor(
            label=self.label,
            start=(self.x_m, self.y_m, self.top_depth_m),
            end=(self.x_m, self.y_m, self.top_depth_m + self.length_m),
            diameter_m=self.diameter_m,
            kind="rod",
            source=self.source,
            material=self.material,
        )


@dataclass(frozen=True)
class GridSpec:
    """A rectangular mesh generator row (Grids sheet).

    ``n_along_x`` counts the parallel conductors that run in the x direction
    (they are spread over ``length_y_m``), and ``n_along_y`` those that run in
    the y direction.
    """

    label: str
    x0_m: float
    y0_m: float
    length_x_m: float
    length_y_m: float
    n_along_x: int
    n_along_y: int
    depth_m: float
    diameter_m: float
    source: str = ""
    material: str = "hard-drawn copper"

    def conductors(self) -> list[Conductor]:
        """Expand into straight conductors, one per grid line."""
        out: list[Conductor] = []
        for k in range(self.n_along_x):
            y = self.y0_m + self.length_y_m * k / (self.n_along_x - 1)
            out.append(
                Conductor(
                    label=f"{self.label}-X{k + 1}",
                    start=(self.x0_m, y, self.depth_m),
                    end=(self.x0_m + self.length_x_m, y, self.depth_m),
                    diameter_m=self.diameter_m,
                    source=self.source,
                    material=self.material,
                )
            )
        for k in range(self.n_along_y):
            x = self.x0_m + self.length_x_m * k / (self.n_along_y - 1)
            out.append(
                Conductor(
                    label=f"{self.label}-Y{k + 1}",
                    start=(x, self.y0_m, self.depth_m),
                    end=(x, self.y0_m + self.length_y_m, self.depth_m),
                    diameter_m=self.diameter_m,
                    source=self.source,
                    material=self.material,
                )
            )
        return out


@dataclass(frozen=True)
class Settings:
    """Numerical settings.

    Parameters
    ----------
    segment_length_m : float
        Target (maximum) segment length. Default 1 m (common practice for
        substation grids: meshes of 3 to 20 m get several segments per side). [m]
    raster_spacing_m : float or None
        Surface raster spacing; ``None`` (default) picks one from the grid size. [m]
    margin_m : float
        Distance the surface raster extends beyond the grid. Default 5 m
        (common practice: step voltages peak within a few metres of the edge). [m]
    snap_tolerance_m : float
        Loose ends within this distance of another conductor are joined to
        it. Default 0 (only ends within 1 mm count as joined). [m]
    """

    segment_length_m: float = 1.0
    raster_spacing_m: float | None = None
    margin_m: float = 5.0
    snap_tolerance_m: float = 0.0


# --- Variants: typed overrides of soil, surface layer and fault ---


@dataclass(frozen=True)
class SoilOverride:
    """Soil quantities a variant replaces; ``None`` keeps the base value.

    Parameters
    ----------
    rho1_ohm_m : float or None
        Soil (or upper-layer) resistivity. [ohm*m]
    thickness_m : float or None
        Upper-layer thickness H; with ``rho2_ohm_m`` it makes uniform soil two-layer. [m]
    rho2_ohm_m : float or None
        Lower-layer resistivity. [ohm*m]
    """

    rho1_ohm_m: float | None = None
    thickness_m: float | None = None
    rho2_ohm_m: float | None = None


@dataclass(frozen=True)
class SurfaceLayerOverride:
    """Surface-layer quantities a variant replaces; ``None`` keeps the base value.

    Parameters
    ----------
    rho_ohm_m : float or None
        Surface layer resistivity rho_s. [ohm*m]
    thickness_m : float or None
        Surface layer thickness h_s. [m]
    """

    rho_ohm_m: float | None = None
    thickness_m: float | None = None


@dataclass(frozen=True)
class FaultOverride:
    """Fault quantities a variant replaces; ``None`` keeps the base value.

    Parameters
    ----------
    fault_current_a : float or None
        Fault current 3I0. [A]
    split_factor : float or None
        Split factor Sf.
    fault_duration_s : float or None
        Fault duration tf; the shock duration follows it where the two are equal in the base. [s]
    body_weight_kg : float or None
        Body weight, 50 or 70. [kg]
    """

    fault_current_a: float | None = None
    split_factor: float | None = None
    fault_duration_s: float | None = None
    body_weight_kg: float | None = None


#: Plain name and unit of every override field, for tables and reports.
LABELS = {
    ("soil", "rho1_ohm_m"): ("upper resistivity", "ohm*m"),
    ("soil", "thickness_m"): ("upper thickness", "m"),
    ("soil", "rho2_ohm_m"): ("lower resistivity", "ohm*m"),
    ("surface_layer", "rho_ohm_m"): ("surface layer resistivity", "ohm*m"),
    ("surface_layer", "thickness_m"): ("surface layer thickness", "m"),
    ("fault", "fault_current_a"): ("fault current", "A"),
    ("fault", "split_factor"): ("split factor", ""),
    ("fault", "fault_duration_s"): ("fault duration", "s"),
    ("fault", "body_weight_kg"): ("body weight", "kg"),
}


@dataclass(frozen=True)
class Variant:
    """A named variant of the base case: typed overrides of soil, surface layer and fault.

    Parameters
    ----------
    name : str
        Variant name.
    soil, surface_layer, fault : SoilOverride, SurfaceLayerOverride, FaultOverride
        What the variant replaces (``None`` fields keep the base values).
    """

    name: str
    soil: SoilOverride = field(default_factory=SoilOverride)
    surface_layer: SurfaceLayerOverride = field(default_factory=SurfaceLayerOverride)
    fault: FaultOverride = field(default_factory=FaultOverride)

    def items(self) -> list[tuple[str, str, float]]:
        """The changed quantities as ``(group, field, value)``, in a fixed order."""
        out = []
        for group in ("soil", "surface_layer", "fault"):
            part = getattr(self, group)
            for f in fields(part):
                v = getattr(part, f.name)
                if v is not None:
                    out.append((group, f.name, float(v)))
        return out

    def changes(self) -> dict[str, dict[str, float]]:
        """The changed quantities by group, e.g. ``{"fault": {"fault_current_a": 6360.0}}`` (for JSON)."""
        out: dict[str, dict[str, float]] = {}
        for group, name, v in self.items():
            out.setdefault(group, {})[name] = v
        return out

    def describe(self) -> str:
        """The changes in words, e.g. ``"fault current 6360 A, split factor 0.5"``."""
        parts = []
        for group, name, v in self.items():
            label, unit = LABELS[(group, name)]
            parts.append(f"{label} {v:g}" + (f" {unit}" if unit else ""))
        return ", ".join(parts)


@dataclass(frozen=True)
class Design:
    """Everything needed to analyse one grounding design.

    Every field has a keyword default so that a design can be built in code
    from the parts it needs, e.g. ``Design(soil=Soil(rho1_ohm_m=100),
    fault=Fault(5000, x_over_r=10, fault_duration_s=0.5), grids=[...])``.
    :func:`groundcalc.validation.validate` refuses a design without soil or
    fault data; the analysis validates and repairs every design it is given.
    Lists are stored as tuples. ``variants`` holds
    :class:`Variant` objects: typed overrides of soil, surface layer and fault
    run beside the base case (applied by :mod:`groundcalc.studies.variants`).
    """

    project: Project = field(default_factory=Project)
    soil: Soil | None = None
    surface_layer: SurfaceLayer | None = None
    fault: Fault | None = None
    conductors: tuple[Conductor, ...] = ()
    rods: tuple[Rod, ...] = ()
    grids: tuple[GridSpec, ...] = ()
    settings: Settings = field(default_factory=Settings)
    notices: tuple[Notice, ...] = ()
    source_name: str = ""
    wenner: WennerReadings | None = None
    variants: tuple[Variant, ...] = ()
    metal: MetalLayout | None = None  # metal besides the grid (groups, fences, check points)

    def __post_init__(self) -> None:
        for name in ("conductors", "rods", "grids", "notices", "variants"):
            value = getattr(self, name)
            if not isinstance(value, tuple):
                object.__setattr__(self, name, tuple(value))

    def all_conductors(self) -> list[Conductor]:
        """Conductors, generated grid lines and rods as one list."""
        out = list(self.conductors)
        for g in self.grids:
            out.extend(g.conductors())
        out.extend(r.as_conductor() for r in self.rods)
        return out


# --- Metal besides the grid: groups at their own potentials, fences, check points ---

#: Reach distance from a fence to a person touching it (common practice: 1 m). [m]
DEFAULT_FENCE_REACH_M = 1.0
#: Bottom-wire diameter when none is given (our default, a 10 mm round wire). [m]
DEFAULT_WIRE_DIAMETER_M = 0.010


@dataclass(frozen=True)
class FenceRun:
    """One straight run of fence.

    Parameters
    ----------
    label : str
        Fence name; runs with the same label form one fence (one group,
        connected through the fabric above grade).
    start, end : tuple of float
        Plan (x, y) of the two ends. [m]
    post_spacing_m : float
        Largest distance between posts; posts are spread evenly from end to end. [m]
    post_length_m : float
        Buried length of each post (top at grade). [m]
    post_diameter_m : float
        Post diameter. [m]
    bonded : bool
        Whether the fence is bonded to the grid.
    bottom_wire_depth_m : float or None
        Depth of a buried bottom wire along the run. [m]
    bottom_wire_diameter_m : float
        Its diameter. [m]
    gate_swing_m : float or None
        The run carries a gate hinged at ``start`` whose leaf sweeps a disc of
        this radius (either way). [m]
    source : str
        Where it came from, e.g. ``"Fences row 3"``.
    """

    label: str
    start: tuple[float, float]
    end: tuple[float, float]
    post_spacing_m: float
    post_length_m: float
    post_diameter_m: float
    bonded: bool
    bottom_wire_depth_m: float | None = None
    bottom_wire_diameter_m: float = DEFAULT_WIRE_DIAMETER_M
    gate_swing_m: float | None = None
    source: str = ""

    @property
    def length_m(self) -> float:
        """Plan length of the run. [m]"""
        return math.hypot(self.end[0] - self.start[0], self.end[1] - self.start[1])

    def post_positions(self) -> np.ndarray:
        """Plan positions of the posts, ends included, shape (k, 2). [m]"""
        n = max(1, math.ceil(self.length_m / self.post_spacing_m - 1e-9))
        t = np.arange(n + 1) / n
        a, b = np.array(self.start, float), np.array(self.end, float)
        return a[None, :] + t[:, None] * (b - a)[None, :]

    def bottom_wire(self) -> Conductor | None:
        """The buried bottom wire as a conductor, if there is one."""
        if self.bottom_wire_depth_m is None:
            return None
        z = self.bottom_wire_depth_m
        return Conductor(
            f"{self.label} wire ({self.source})",
            (self.start[0], self.start[1], z),
            (self.end[0], self.end[1], z),
            self.bottom_wire_diameter_m,
            "conductor",
            self.source,
            "steel 1020",
        )


@dataclass(frozen=True)
class MetalGroup:
    """Conductors at one potential other than the grid.

    Attributes
    ----------
    name : str
        Group name (Metal sheet) or fence label.
    bonded : bool
        Bonded to the grid (at the GPR) or floating (zero net current).
    conductors : tuple of Conductor
        Buried conductors and rods of the group.
    kind : str
        ``"metal"`` (Metal sheet) or ``"fence"``.
    source : str
        Sheet and row.
    """

    name: str
    bonded: bool
    conductors: tuple[Conductor, ...]
    kind: str = "metal"
    source: str = ""


@dataclass(frozen=True)
class CheckPoint:
    """Where a person stands while touching the metal of a group.

    ``group`` is ``""`` for the grid (and metal bonded to it).
    """

    label: str
    x_m: float
    y_m: float
    group: str = ""
    source: str = ""


@dataclass(frozen=True)
class CheckArea:
    """A plan polygon where people walk and touch grid-connected metal."""

    name: str
    polygon: tuple[tuple[float, float], ...]
    source: str = ""


@dataclass(frozen=True)
class Profile:
    """A named straight line along which the surface potential is reported."""

    label: str
    start: tuple[float, float]
    end: tuple[float, float]
    source: str = ""


@dataclass(frozen=True)
class MetalLayout:
    """All metal besides the grid and where touch and step are checked."""

    groups: tuple[MetalGroup, ...] = ()
    fences: tuple[FenceRun, ...] = ()
    check_points: tuple[CheckPoint, ...] = ()
    check_areas: tuple[CheckArea, ...] = ()
    profiles: tuple[Profile, ...] = ()
    fence_reach_m: float = DEFAULT_FENCE_REACH_M
    areas_replace_footprint: bool = False

    @property
    def empty(self) -> bool:
        """True when nothing here changes the analysis."""
        return not (self.groups or self.check_points or self.check_areas or self.profiles)

    def group(self, name: str) -> MetalGroup | None:
        """Group called ``name`` (case-insensitive), or None."""
        key = name.strip().lower()
        for g in self.groups:
            if g.name.strip().lower() == key:
                return g
        return None
