"""Validated design model: frozen dataclasses in SI units.

The workbook reader produces a :class:`Design`; every later stage reads it and
never changes it. Lengths are metres, depth is positive downward below grade,
resistivities ohm*m, currents amperes, times seconds.
"""

from __future__ import annotations

from dataclasses import dataclass, field

__all__ = [
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
    "Variant",
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
        ``"uniform"``, ``"two-layer"``, or ``"fitted"`` (a two-layer model still
        to be fitted to the design's Wenner readings; ``rho1_ohm_m`` is NaN).
    rho1_ohm_m : float
        Upper (or only) layer resistivity. [ohm*m]
    thickness_m : float or None
        Upper layer thickness H (two-layer only). [m]
    rho2_ohm_m : float or None
        Lower layer resistivity (two-layer only). [ohm*m]
    layers : tuple of (float, float or None)
        ``"multilayer"`` only: (resistivity [ohm*m], thickness [m]) of every
        layer from the top, the last thickness ``None``; ``rho1_ohm_m``,
        ``thickness_m`` and ``rho2_ohm_m`` then describe the top two layers.
    """

    model: str
    rho1_ohm_m: float
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
    def is_uniform(self) -> bool:
        """True when the soil behaves as one uniform half-space."""
        if self.model == "multilayer":
            return len({r for r, _ in self.layers}) <= 1
        return self.model == "uniform" or self.rho2_ohm_m == self.rho1_ohm_m

    @property
    def reflection_k(self) -> float:
        """Reflection coefficient K = (rho2 - rho1) / (rho2 + rho1)."""
        if self.model == "uniform" or self.rho2_ohm_m is None:
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
    x_over_r : float
        System X/R ratio at the fault location.
    fault_duration_s : float
        Fault duration tf, used for the decrement factor. [s]
    shock_duration_s : float
        Shock duration ts, used for the tolerable voltages. [s]
    body_weight_kg : float
        50 or 70. [kg]
    frequency_hz : float
        System frequency. [Hz]
    ambient_c : float
        Ambient (soil) temperature for conductor sizing. [degC]
    max_conductor_c : float or None
        Largest allowed conductor temperature; ``None`` = the fusing
        temperature of each material. [degC]
    touch_limit_v, step_limit_v : float or None
        User-defined tolerable voltages replacing those of IEEE Std 80 (for
        jurisdictions that use another standard). [V]
    """

    fault_current_a: float
    split_factor: float
    x_over_r: float
    fault_duration_s: float
    shock_duration_s: float
    body_weight_kg: float
    frequency_hz: float
    ambient_c: float = 40.0
    max_conductor_c: float | None = None
    touch_limit_v: float | None = None
    step_limit_v: float | None = None


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
        return float(sum((b - a) ** 2 for a, b in zip(self.start, self.end, strict=True)) ** 0.5)


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
        Target (maximum) segment length. [m]
    raster_spacing_m : float or None
        Surface raster spacing; ``None`` picks one from the grid size. [m]
    margin_m : float
        Distance the surface raster extends beyond the grid. [m]
    """

    segment_length_m: float = 1.0
    raster_spacing_m: float | None = None
    margin_m: float = 5.0
    snap_tolerance_m: float = 0.0


@dataclass(frozen=True)
class Variant:
    """A named variant of the base case (one row of the Variants sheet).

    Attributes
    ----------
    name : str
        Variant name.
    overrides : dict
        Normalised quantity name -> value in SI units.
    row : int
        Worksheet row, for messages.
    columns : dict
        Normalised quantity name -> column label, for messages.
    """

    name: str
    overrides: dict
    row: int = 0
    columns: dict = field(default_factory=dict)


@dataclass(frozen=True)
class Design:
    """Everything needed to analyse one grounding design."""

    project: Project
    soil: Soil
    surface_layer: SurfaceLayer | None
    fault: Fault
    conductors: tuple[Conductor, ...]
    rods: tuple[Rod, ...]
    grids: tuple[GridSpec, ...] = ()
    settings: Settings = field(default_factory=Settings)
    notices: tuple[Notice, ...] = ()
    source_name: str = ""
    wenner: WennerReadings | None = None
    variants: tuple[Variant, ...] = ()

    def all_conductors(self) -> list[Conductor]:
        """Conductors, generated grid lines and rods as one list."""
        out = list(self.conductors)
        for g in self.grids:
            out.extend(g.conductors())
        out.extend(r.as_conductor() for r in self.rods)
        return out
