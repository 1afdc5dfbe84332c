"""The workbook format: sheets, fields, units and their meaning.

This is a public contract: designers and outside scripts rely on these
names. The template writer, the reader and the README all come from here.
Names match case-insensitively with extra spaces ignored; the unit written in
brackets in a header decides the conversion.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = [
    "ALL_SHEETS",
    "METAL_SHEETS",
    "Field",
    "KEY_SHEETS",
    "LAYERS",
    "SheetSpec",
    "TABLE_SHEETS",
    "UNCERTAINTY",
    "VARIANTS",
    "WENNER",
    "sheet_spec",
]


@dataclass(frozen=True)
class Field:
    """One quantity (key-value sheets) or column (table sheets).

    Attributes
    ----------
    name : str
        Name without unit, as written in the template.
    kind : str
        Unit kind (see :data:`groundcalc.io.units.UNITS`), or ``"number"``,
        ``"count"``, ``"text"``, ``"choice"``.
    required : bool
        Whether a value must be given.
    rule : str
        ``"positive"``, ``"nonnegative"``, ``"fraction"`` (0 < x <= 1) or ``""``.
    help : str
        Meaning in words of the trade.
    typical : str
        Typical values or range.
    choices : tuple of str
        Allowed words for ``"choice"`` fields.
    unit : str
        Unit written in the template header (default: the kind's SI unit).
    """

    name: str
    kind: str
    required: bool = False
    rule: str = ""
    help: str = ""
    typical: str = ""
    choices: tuple[str, ...] = ()
    unit: str = ""

    @property
    def key(self) -> str:
        """Normalised name used for matching."""
        return " ".join(self.name.split()).lower()

    def header(self) -> str:
        """Header text as written in the template, with its default unit."""
        from .units import DEFAULT_UNIT

        unit = self.unit or DEFAULT_UNIT.get(self.kind)
        return f"{self.name} [{unit}]" if unit else self.name


@dataclass(frozen=True)
class SheetSpec:
    """A worksheet: key-value (``Quantity | Value``) or a table."""

    name: str
    layout: str  # "keyvalue" or "table"
    fields: tuple[Field, ...]
    purpose: str
    key_header: str = "Quantity"
    required: bool = False

    def field(self, key: str) -> Field | None:
        """Field whose normalised name is ``key``."""
        for f in self.fields:
            if f.key == key:
                return f
        return None


_LEN = "length"

PROJECT = SheetSpec(
    "Project",
    "keyvalue",
    (
        Field("Project", "text", help="Project name shown on the report title block."),
        Field("Site", "text", help="Substation or site name."),
        Field("Prepared by", "text", help="Designer's name or initials."),
        Field("Revision", "text", help="Drawing or study revision, e.g. A, B, 0, 1."),
    ),
    "Title-block information for the report. All optional.",
    key_header="Field",
)

SOIL = SheetSpec(
    "Soil",
    "keyvalue",
    (
        Field(
            "Model",
            "choice",
            True,
            help="Soil model: uniform; two-layer (an upper layer of "
            "given thickness over a lower layer of infinite depth); multilayer (the layers listed on "
            "the 'Layers' sheet); or fitted (uniform, two- or three-layer, whichever the information "
            "criterion prefers for the readings on the 'Wenner' sheet, which must then be filled in).",
            typical="uniform",
            choices=("uniform", "two-layer", "multilayer", "fitted"),
        ),
        Field(
            "Upper resistivity",
            "resistivity",
            False,
            "positive",
            "Resistivity of the soil (uniform model) or of the upper layer. Required unless Model = fitted.",
            "10 to 3000 ohm*m; wet clay ~20, sand and gravel 100-1000, rock > 1000",
        ),
        Field(
            "Upper thickness",
            _LEN,
            False,
            "positive",
            "Thickness H of the upper layer (two-layer model only).",
            "0.5 to 30 m",
        ),
        Field(
            "Lower resistivity",
            "resistivity",
            False,
            "positive",
            "Resistivity of the lower layer (two-layer model only).",
            "10 to 10000 ohm*m",
        ),
        Field(
            "Surface layer resistivity",
            "resistivity",
            False,
            "positive",
            "Resistivity of a crushed-rock or asphalt surface layer, wet. Leave both surface "
            "layer rows blank when there is none.",
            "1000 to 5000 ohm*m (crushed rock, wet)",
        ),
        Field(
            "Surface layer thickness", _LEN, False, "positive", "Thickness h_s of the surface layer.", "0.08 to 0.15 m"
        ),
    ),
    "Soil resistivity model and the optional high-resistivity surface layer.",
    required=True,
)

FAULT = SheetSpec(
    "Fault",
    "keyvalue",
    (
        Field(
            "Fault current",
            "current",
            True,
            "positive",
            "Symmetrical rms ground-fault current 3I0 at the substation for the worst fault.",
            "1 to 60 kA",
        ),
        Field(
            "Split factor",
            "number",
            False,
            "fraction",
            "Current division factor Sf: the share of 3I0 that flows between this grid and "
            "remote earth (the rest returns through shield wires and neutrals). Blank = 1.0, "
            "the conservative choice.",
            "0.2 to 1.0",
        ),
        Field(
            "X/R ratio",
            "number",
            True,
            "nonnegative",
            "X/R ratio of the system at the fault location; sets the decrement factor Df for the DC offset.",
            "5 to 40",
        ),
        Field(
            "Fault duration",
            "time",
            True,
            "positive",
            "Fault duration tf (clearing time) used for the decrement factor.",
            "0.05 to 1 s",
        ),
        Field(
            "Shock duration",
            "time",
            False,
            "positive",
            "Shock duration ts for the tolerable body current. Blank = the fault duration.",
            "0.05 to 1 s (0.03 to 3 s is the validity range)",
        ),
        Field(
            "Body weight",
            "mass",
            False,
            "positive",
            "Body weight for the tolerable voltages: 50 or 70. Blank = 50 kg, the conservative choice.",
            "50 or 70 kg",
        ),
        Field("Frequency", "frequency", False, "positive", "System frequency. Blank = 60 Hz.", "50 or 60 Hz"),
        Field(
            "Ambient temperature",
            "temperature",
            False,
            "",
            "Ambient (soil) temperature Ta for the conductor sizing check. Blank = 40 degC.",
            "10 to 40 degC",
        ),
        Field(
            "Maximum conductor temperature",
            "temperature",
            False,
            "positive",
            "Largest temperature Tm the conductors and joints may reach during the fault. Blank = the "
            "fusing temperature of each material (IEEE Std 80 Table 1); use 250 degC for bolted and "
            "450 degC for brazed joints.",
            "250 to 1083 degC",
        ),
        Field(
            "Touch voltage limit",
            "voltage",
            False,
            "positive",
            "User-defined tolerable touch voltage, replacing the IEEE Std 80 value (for jurisdictions "
            "that use another standard, e.g. IEC 60479 / EN 50522). Blank = IEEE Std 80.",
            "50 to 2000 V",
        ),
        Field(
            "Step voltage limit",
            "voltage",
            False,
            "positive",
            "User-defined tolerable step voltage, replacing the IEEE Std 80 value. Blank = IEEE Std 80.",
            "100 to 5000 V",
        ),
    ),
    "Fault current and the exposure data for the tolerable voltages (IEEE Std 80).",
    required=True,
)

#: The metal group a conductor or rod belongs to (Conductors and Rods sheets).
_GROUP_FIELD = Field(
    "Group",
    "text",
    help="Metal group named on the 'Metal' sheet that this belongs to (other buried metal at its own "
    "potential: a pipe, a rail, equipment not on the grid). Blank = the grid.",
    typical="blank, or a name from the Metal sheet",
)


def _material_field(typical: str) -> Field:
    """The Material column of the Conductors and Rods sheets, with the materials typical there."""
    return Field(
        "Material",
        "material",
        help="Conductor material of IEEE Std 80 Table 1, for the fault-current sizing check and the "
        "mass of metal. Blank = hard-drawn copper.",
        typical=typical,
    )


CONDUCTORS = SheetSpec(
    "Conductors",
    "table",
    (
        Field("Label", "text", help="Name shown in outputs. Blank = C and the row number."),
        Field("X1", _LEN, True, help="Plan x of the first end.", typical="site coordinates"),
        Field("Y1", _LEN, True, help="Plan y of the first end."),
        Field("Depth1", _LEN, True, "positive", "Burial depth of the first end below grade.", "0.3 to 1.5 m"),
        Field("X2", _LEN, True, help="Plan x of the second end."),
        Field("Y2", _LEN, True, help="Plan y of the second end."),
        Field("Depth2", _LEN, True, "positive", "Burial depth of the second end."),
        Field(
            "Diameter",
            _LEN,
            True,
            "positive",
            "Bare conductor diameter.",
            "8 to 20 mm (e.g. 120 mm2 stranded copper is about 14 mm)",
            unit="mm",
        ),
        _material_field("hard-drawn copper, annealed copper, copper-clad steel wire 40%, steel 1020, ..."),
        _GROUP_FIELD,
    ),
    "One row per straight buried bare conductor. Conductors that cross or touch are joined.",
)

RODS = SheetSpec(
    "Rods",
    "table",
    (
        Field("Label", "text", help="Name shown in outputs. Blank = R and the row number."),
        Field("X", _LEN, True, help="Plan x of the rod."),
        Field("Y", _LEN, True, help="Plan y of the rod."),
        Field(
            "Top depth",
            _LEN,
            True,
            "nonnegative",
            "Depth of the rod top below grade (usually the grid depth so that it touches the grid).",
            "0 to 1 m",
        ),
        Field("Length", _LEN, True, "positive", "Driven length of the rod.", "2.4 to 30 m"),
        Field("Diameter", _LEN, True, "positive", "Rod diameter.", "12 to 25 mm", unit="mm"),
        _material_field("copper-clad steel rod 20%, zinc-coated steel rod, stainless-clad steel rod, ..."),
        _GROUP_FIELD,
    ),
    "One row per driven vertical rod.",
)

GRIDS = SheetSpec(
    "Grids",
    "table",
    (
        Field("Label", "text", help="Name; the generated conductors are called Label-X1, Label-Y1, ..."),
        Field("X0", _LEN, True, help="Plan x of the grid corner with the smallest x and y."),
        Field("Y0", _LEN, True, help="Plan y of that corner."),
        Field("Length X", _LEN, True, "positive", "Size of the grid along x.", "10 to 300 m"),
        Field("Length Y", _LEN, True, "positive", "Size of the grid along y.", "10 to 300 m"),
        Field(
            "Conductors along X",
            "count",
            True,
            "positive",
            "Number of parallel conductors that run in the x direction (evenly spread over Length Y), at least 2.",
            "2 to 40",
        ),
        Field(
            "Conductors along Y",
            "count",
            True,
            "positive",
            "Number of parallel conductors that run in the y direction (evenly spread over Length X), at least 2.",
            "2 to 40",
        ),
        Field("Depth", _LEN, True, "positive", "Burial depth of the grid.", "0.3 to 1.5 m"),
        Field("Diameter", _LEN, True, "positive", "Conductor diameter.", "8 to 20 mm", unit="mm"),
        _material_field("hard-drawn copper, annealed copper, copper-clad steel wire 40%, steel 1020, ..."),
    ),
    "Optional generator of rectangular grids with equal mesh spacing. Each row adds its grid lines to the conductors.",
)

SETTINGS = SheetSpec(
    "Settings",
    "keyvalue",
    (
        Field(
            "Segment length",
            _LEN,
            False,
            "positive",
            "Longest segment the conductors are split into for the solution. Blank = 1 m. "
            "Shorter is more accurate and slower.",
            "0.5 to 2 m",
        ),
        Field(
            "Raster spacing",
            _LEN,
            False,
            "positive",
            "Spacing of the surface points where potentials are evaluated. Blank = chosen from "
            "the grid size (0.25 to 1 m); peaks are refined locally.",
            "0.25 to 1 m",
        ),
        Field(
            "Margin",
            _LEN,
            False,
            "nonnegative",
            "How far beyond the outermost conductors the surface is evaluated (for step "
            "voltage outside the grid). Blank = 5 m.",
            "3 to 20 m",
        ),
        Field(
            "Snap tolerance",
            _LEN,
            False,
            "nonnegative",
            "Conductor ends and rod tops that miss another conductor by no more than this are moved "
            "onto it (each move is reported). Blank = 0: only ends within 1 mm count as joined.",
            "0 to 0.1 m",
        ),
        Field(
            "Fence reach",
            _LEN,
            False,
            "positive",
            "Distance from a fence at which a person touching it stands; touch on fences is checked at this "
            "distance on both sides along every run. Blank = 1 m (common practice).",
            "1 m",
        ),
        Field(
            "Check areas",
            "choice",
            False,
            help="How the polygons of the 'Check areas' sheet are used: extend (touch is checked over the grid "
            "footprint and the areas) or replace (over the areas only). Blank = extend.",
            typical="extend",
            choices=("extend", "replace"),
        ),
    ),
    "Numerical settings. All optional.",
)

WENNER = SheetSpec(
    "Wenner",
    "table",
    (
        Field("Spacing", _LEN, True, "positive", "Pin spacing a of the Wenner array.", "0.5 to 100 m"),
        Field(
            "Resistance",
            "resistance",
            False,
            "positive",
            "Resistance V/I read from the earth tester. Give this or the apparent resistivity.",
            "0.01 to 1000 ohm",
        ),
        Field(
            "Apparent resistivity",
            "resistivity",
            False,
            "positive",
            "Apparent resistivity, if already worked out. Give this or the resistance.",
            "10 to 10000 ohm*m",
        ),
        Field(
            "Pin depth",
            _LEN,
            False,
            "nonnegative",
            "Depth b the pins are driven; blank = surface pins (b much smaller than a).",
            "0.1 to 0.5 m (less than a/20)",
        ),
    ),
    "Optional Wenner four-pin soil resistivity readings, one spacing per row. Used by "
    "'groundcalc soil' and by Model = fitted on the Soil sheet.",
)


def _changes(spec: SheetSpec, name: str, help_text: str) -> Field:
    """A Variants column: the base sheet's quantity (same unit kind and rule), optional."""
    from dataclasses import replace

    return replace(spec.field(name.lower()), required=False, help=help_text, typical="")


VARIANTS = SheetSpec(
    "Variants",
    "table",
    (
        Field("Variant", "text", True, help="Name of the variant, e.g. 'dry season' or 'future fault level'."),
        _changes(SOIL, "Upper resistivity", "Replaces the soil (or upper-layer) resistivity."),
        _changes(
            SOIL,
            "Upper thickness",
            "Replaces the upper-layer thickness H; with 'Lower resistivity' it makes uniform soil two-layer.",
        ),
        _changes(SOIL, "Lower resistivity", "Replaces the lower-layer resistivity."),
        _changes(SOIL, "Surface layer resistivity", "Replaces the surface layer rho_s."),
        _changes(SOIL, "Surface layer thickness", "Replaces the surface layer thickness h_s."),
        _changes(FAULT, "Fault current", "Replaces the fault current 3I0."),
        _changes(FAULT, "Split factor", "Replaces the split factor Sf."),
        _changes(
            FAULT,
            "Fault duration",
            "Replaces the fault duration tf (and the shock duration, where that equals the fault duration).",
        ),
        _changes(FAULT, "Body weight", "Replaces the body weight: 50 or 70 kg."),
    ),
    "Optional variants of the base case, one per row: each names a variant and overrides some of "
    "the soil, surface-layer and fault inputs (blank cells keep the base value). 'groundcalc run' "
    "reports the base case and every variant side by side; the geometry is solved once per soil model.",
)

YES_NO = ("yes", "no")

METAL = SheetSpec(
    "Metal",
    "table",
    (
        Field("Group", "text", True, help="Name of a metal group; conductors and rods join it by 'Group'."),
        Field(
            "Bonded to grid",
            "choice",
            True,
            help="yes: the group is bonded to the grid and rises to the GPR. no: it floats (no net current) and "
            "takes the potential the grid's field puts on it (a transferred potential).",
            typical="yes or no",
            choices=YES_NO,
        ),
    ),
    "Optional: buried metal besides the grid, one group per row (pipes, rails, isolated equipment). Its "
    "conductors and rods are on the Conductors and Rods sheets with this name in their 'Group' column.",
)

FENCES = SheetSpec(
    "Fences",
    "table",
    (
        Field("Label", "text", True, help="Fence name. Runs with the same label are one fence (one metal group)."),
        Field("X1", _LEN, True, help="Plan x of the first end of the run (the hinge of a gate)."),
        Field("Y1", _LEN, True, help="Plan y of the first end."),
        Field("X2", _LEN, True, help="Plan x of the second end."),
        Field("Y2", _LEN, True, help="Plan y of the second end."),
        Field("Post spacing", _LEN, True, "positive", "Largest distance between posts along the run.", "2 to 3 m"),
        Field("Post length", _LEN, True, "positive", "Buried length of each post (top at grade).", "0.6 to 1.5 m"),
        Field("Post diameter", _LEN, True, "positive", "Post diameter.", "40 to 80 mm", unit="mm"),
        Field(
            "Bonded",
            "choice",
            True,
            help="yes: bonded to the grid (at the GPR). no: isolated; the fence floats at its own potential.",
            typical="yes or no",
            choices=YES_NO,
        ),
        Field(
            "Bottom wire depth",
            _LEN,
            False,
            "positive",
            "Depth of a bare wire buried along the run and joined to the posts. Blank = none.",
            "0.3 to 0.5 m",
        ),
        Field(
            "Bottom wire diameter",
            _LEN,
            False,
            "positive",
            "Diameter of the bottom wire. Blank = 10 mm.",
            "8 to 12 mm",
            unit="mm",
        ),
        Field(
            "Gate swing",
            _LEN,
            False,
            "positive",
            "The run carries a gate hinged at (X1, Y1) whose leaf is this long; touch is checked over the whole "
            "disc it sweeps (both ways). Blank = no gate.",
            "1 to 5 m",
        ),
    ),
    "Optional: fences, one straight run per row. Posts become rods from grade; a bottom wire becomes a buried "
    "conductor. Touch on a fence is checked at the fence reach (Settings) on both sides of every run.",
)

CHECK_POINTS = SheetSpec(
    "Check points",
    "table",
    (
        Field("Label", "text", True, help="Name, e.g. 'breaker handle', 'lighting pole 3'."),
        Field("X", _LEN, True, help="Plan x where a person stands while touching the metal."),
        Field("Y", _LEN, True, help="Plan y of that place."),
        Field(
            "Group",
            "text",
            help="Metal touched: a group of the Metal sheet or a fence label. Blank = the grid.",
            typical="blank",
        ),
    ),
    "Optional: places where a person touches metal, one per row; each gives a touch voltage and a PASS/FAIL.",
)

CHECK_AREAS = SheetSpec(
    "Check areas",
    "table",
    (
        Field("Area", "text", True, help="Name of the area; rows with the same name are the vertices of one polygon."),
        Field("Vertex", "count", True, "positive", "Order of the vertex around the polygon (1, 2, 3, ...).", "1 to 50"),
        Field("X", _LEN, True, help="Plan x of the vertex."),
        Field("Y", _LEN, True, help="Plan y of the vertex."),
    ),
    "Optional: polygons where people walk and touch grid-connected metal (a yard outside the grid, a "
    "walkway); touch and step are checked over them. See 'Check areas' on the Settings sheet.",
)

PROFILES = SheetSpec(
    "Profiles",
    "table",
    (
        Field("Label", "text", True, help="Name of the profile."),
        Field("X1", _LEN, True, help="Plan x of the start."),
        Field("Y1", _LEN, True, help="Plan y of the start."),
        Field("X2", _LEN, True, help="Plan x of the end."),
        Field("Y2", _LEN, True, help="Plan y of the end."),
    ),
    "Optional: straight lines along which the surface potential and touch voltage are plotted and listed.",
)

LAYERS = SheetSpec(
    "Layers",
    "table",
    (
        Field("Layer", "count", True, "positive", "Layer number, 1 at the top, counting down without gaps.", "1 to 5"),
        Field("Resistivity", "resistivity", True, "positive", "Resistivity of the layer.", "10 to 10000 ohm*m"),
        Field(
            "Thickness",
            _LEN,
            False,
            "positive",
            "Thickness of the layer; leave blank for the last (deepest) layer, which extends downward without end.",
            "0.5 to 50 m",
        ),
    ),
    "Horizontal soil layers from the top, one per row, used when Model = multilayer on the Soil sheet. "
    "Two to eight layers; the last row's thickness is blank.",
)

UNCERTAINTY = SheetSpec(
    "Uncertainty",
    "table",
    (
        Field(
            "Quantity",
            "text",
            True,
            help="An uncertain input with its unit in brackets, e.g. 'Fault current [kA]': Fault current, Split "
            "factor, Fault duration, X/R ratio, Surface layer resistivity, Surface layer thickness, and (unless "
            "the soil is fitted to Wenner readings) Upper resistivity, Upper thickness, Lower resistivity.",
        ),
        Field("Low", "number", True, help="Low end of the range, in the unit of the quantity."),
        Field("High", "number", True, help="High end of the range, in the unit of the quantity."),
        Field(
            "Distribution",
            "choice",
            False,
            help="uniform: every value from Low to High equally likely. normal or lognormal: Low and High are "
            "the 5th and 95th percentiles. Blank = uniform.",
            typical="uniform",
            choices=("uniform", "normal", "lognormal"),
        ),
    ),
    "Optional ranges of uncertain inputs for 'groundcalc uncertainty', one quantity per row. The soil "
    "model fitted to Wenner readings brings its own uncertainty from the fit.",
)

METAL_SHEETS = (METAL, FENCES, CHECK_POINTS, CHECK_AREAS, PROFILES)

KEY_SHEETS = (PROJECT, SOIL, FAULT, SETTINGS)
TABLE_SHEETS = (CONDUCTORS, RODS, GRIDS, WENNER, VARIANTS, LAYERS, UNCERTAINTY) + METAL_SHEETS
ALL_SHEETS = (
    PROJECT,
    SOIL,
    FAULT,
    CONDUCTORS,
    RODS,
    GRIDS,
    SETTINGS,
    WENNER,
    VARIANTS,
    LAYERS,
    UNCERTAINTY,
) + METAL_SHEETS


def sheet_spec(name: str) -> SheetSpec:
    """Spec of the sheet called ``name`` (exact template spelling)."""
    for s in ALL_SHEETS:
        if s.name == name:
            return s
    raise KeyError(name)
