"""groundcalc: substation grounding grid analysis by the method of moments.

Reads a design workbook, solves for the leakage current of the buried
conductors, and reports grid resistance, ground potential rise, touch and
step voltages against the tolerable limits of IEEE Std 80.

The package is its own front door::

    import groundcalc as gc
    res = gc.analyse(gc.read_design("site.xlsx"))
    res.max_touch_v, res.touch_limit_v, res.raster_frame()

Results are a draft for review by a licensed professional engineer.
"""

from .api import (  # noqa: E402
    Results,
    analyse,
    compare,
    read_design,
    sweep,
    write_csv,
    write_json,
    write_report,
    write_results_xlsx,
)
from .errors import InputError  # noqa: E402
from .model import (  # noqa: E402
    Conductor,
    Design,
    Fault,
    GridSpec,
    Notice,
    Project,
    Rod,
    Settings,
    Soil,
    SurfaceLayer,
    WennerReadings,
)
from .studies.variants import FaultOverride, SoilOverride, SurfaceLayerOverride, Variant, apply_variant  # noqa: E402
from .version import __version__  # noqa: E402

__all__ = [
    "Conductor",
    "Design",
    "Fault",
    "FaultOverride",
    "GridSpec",
    "InputError",
    "Notice",
    "Project",
    "Results",
    "Rod",
    "Settings",
    "Soil",
    "SoilOverride",
    "SurfaceLayer",
    "SurfaceLayerOverride",
    "Variant",
    "WennerReadings",
    "__version__",
    "analyse",
    "apply_variant",
    "compare",
    "read_design",
    "sweep",
    "write_csv",
    "write_json",
    "write_report",
    "write_results_xlsx",
]
