"""Units written in column headers, and their conversion to SI.

A header such as ``X1 [ft]`` or ``Fault current [kA]`` names the quantity and
its unit; the unit decides the conversion, once, at the workbook edge.
"""

from __future__ import annotations

import re

__all__ = ["UNITS", "normalise_name", "normalise_unit", "split_header", "to_si", "unit_case_problem"]

#: Accepted units per kind of quantity, as factors to SI.
UNITS: dict[str, dict[str, float]] = {
    "length": {"m": 1.0, "cm": 0.01, "mm": 0.001, "ft": 0.3048, "in": 0.0254},
    "current": {"a": 1.0, "ka": 1000.0},
    "time": {"s": 1.0, "ms": 0.001},
    "resistivity": {"ohm*m": 1.0, "ohm*cm": 0.01, "ohm*ft": 0.3048, "kohm*m": 1000.0},
    "mass": {"kg": 1.0},
    "frequency": {"hz": 1.0},
    "temperature": {"degc": 1.0},
    "resistance": {"ohm": 1.0, "mohm": 0.001, "kohm": 1000.0},
    "voltage": {"v": 1.0, "kv": 1000.0},
}

#: Unit written in the template for each kind.
DEFAULT_UNIT = {
    "length": "m",
    "current": "A",
    "time": "s",
    "resistivity": "ohm*m",
    "mass": "kg",
    "frequency": "Hz",
    "temperature": "degC",
    "resistance": "ohm",
    "voltage": "V",
}

_ALIASES = {
    "metre": "m",
    "metres": "m",
    "meter": "m",
    "meters": "m",
    "feet": "ft",
    "foot": "ft",
    "'": "ft",
    "inch": "in",
    "inches": "in",
    '"': "in",
    "amp": "a",
    "amps": "a",
    "ampere": "a",
    "amperes": "a",
    "kiloampere": "ka",
    "kiloamperes": "ka",
    "sec": "s",
    "second": "s",
    "seconds": "s",
    "millisecond": "ms",
    "milliseconds": "ms",
    "°c": "degc",
    "c": "degc",
    "deg c": "degc",
    "degree c": "degc",
    "celsius": "degc",
    "ω": "ohm",
    "ohms": "ohm",
    "v": "v",
    "volt": "v",
    "volts": "v",
}


def normalise_name(text: str) -> str:
    """Lower-case a name and collapse runs of white space."""
    return " ".join(str(text).split()).lower()


def normalise_unit(unit: str) -> str:
    """Canonical spelling of a unit (``Ohm-m`` -> ``ohm*m``, ``Ω·m`` -> ``ohm*m``)."""
    u = " ".join(unit.split()).lower()
    if u in _ALIASES:
        return _ALIASES[u]
    u = u.replace("ω", "ohm").replace("ohms", "ohm")
    u = re.sub(r"ohm\s*[-*.·×x ]?\s*", "ohm*", u) if re.match(r"k?ohm\s*[-*.·×x ]?\s*\w", u) else u
    u = u.replace("metres", "m").replace("metre", "m").replace("meters", "m").replace("meter", "m")
    u = u.replace(" ", "")
    return _ALIASES.get(u, u)


_HEADER = re.compile(r"^(?P<name>.*?)\s*[\[(](?P<unit>[^\])]*)[\])]\s*$")


def split_header(text: str) -> tuple[str, str | None]:
    """Split ``"X1 [ft]"`` into ``("x1", "ft")``; unitless headers give ``None``."""
    m = _HEADER.match(str(text).strip())
    if not m:
        return normalise_name(text), None
    return normalise_name(m.group("name")), m.group("unit").strip()


def to_si(kind: str, unit: str) -> float | None:
    """Factor converting a value in ``unit`` to SI for quantity ``kind``.

    Returns ``None`` when the unit is not accepted for that kind.
    """
    return UNITS.get(kind, {}).get(normalise_unit(unit))


def unit_case_problem(unit: str) -> str | None:
    """Why ``unit`` is ambiguous in capitals, or ``None``.

    Units are otherwise matched without regard to capitals, but a capital M
    before a unit means mega and a small m milli: ``MOhm`` is not ``mOhm``,
    ``MS`` is not ``ms``. A unit that starts with a capital M and lower-cases
    to a milli unit is refused rather than guessed (a lone ``M`` for metres
    stays accepted).
    """
    u = " ".join(str(unit).split())
    if len(u) < 2 or not u.startswith("M"):
        return None
    canon = normalise_unit(u)
    if canon in ("mm", "ms", "mohm") or canon.startswith("mohm"):
        return f"a capital M means mega, a small m milli ('{u}' would read as '{canon}', a milli unit)"
    return None
