"""groundcalc: substation grounding grid analysis by the method of moments.

Reads a design workbook, solves for the leakage current of the buried
conductors, and reports grid resistance, ground potential rise, touch and
step voltages against the tolerable limits of IEEE Std 80.

Results are a draft for review by a licensed professional engineer.
"""

__version__ = "0.1.0"
__all__ = ["__version__"]
