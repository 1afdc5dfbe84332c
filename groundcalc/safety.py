"""Safety assessment: tolerable limits of IEEE Std 80 against computed voltages."""

from __future__ import annotations

from dataclasses import dataclass

from .ieee80 import surface_layer_factor, tolerable_step_v, tolerable_touch_v
from .model import Fault, Soil, SurfaceLayer

__all__ = ["Assessment", "Limits", "assess", "tolerable_limits"]


@dataclass(frozen=True)
class Limits:
    """Tolerable touch and step voltages and how they were obtained.

    Attributes
    ----------
    cs : float
        Surface layer derating factor (1 without a surface layer).
    rho_surface_ohm_m : float
        Resistivity under the feet used in the body-circuit formulas. [ohm*m]
    touch_v, step_v : float
        Tolerable touch and step voltages. [V]
    body_weight_kg : float
        Body weight. [kg]
    shock_duration_s : float
        Shock duration. [s]
    basis : str
        Where the limits come from.
    """

    cs: float
    rho_surface_ohm_m: float
    touch_v: float
    step_v: float
    body_weight_kg: float
    shock_duration_s: float
    basis: str


def tolerable_limits(soil: Soil, surface: SurfaceLayer | None, fault: Fault) -> Limits:
    """IEEE Std 80 tolerable touch and step voltages for the design.

    Parameters
    ----------
    soil : Soil
        Soil model; the upper-layer resistivity lies under the surface layer.
    surface : SurfaceLayer or None
        High-resistivity surface layer, if any.
    fault : Fault
        Shock duration and body weight.

    Returns
    -------
    Limits

    References
    ----------
    IEEE Std 80-2000, Eq. (27) for Cs; Eqs. (29)-(30) step and (32)-(33)
    touch.
    """
    if surface is None:
        cs = 1.0
        rho_s = soil.rho1_ohm_m
    else:
        cs = surface_layer_factor(soil.rho1_ohm_m, surface.rho_ohm_m, surface.thickness_m)
        rho_s = surface.rho_ohm_m
    args = (cs, rho_s, fault.shock_duration_s, fault.body_weight_kg)
    return Limits(
        cs,
        rho_s,
        tolerable_touch_v(*args),
        tolerable_step_v(*args),
        fault.body_weight_kg,
        fault.shock_duration_s,
        f"IEEE Std 80, {fault.body_weight_kg:.0f} kg body, ts = {fault.shock_duration_s:g} s",
    )


@dataclass(frozen=True)
class Assessment:
    """Computed voltages against their limits.

    Margins are ``(limit - computed) / limit`` in percent: positive passes.
    ``governing`` is the criterion with the smaller margin.
    """

    limits: Limits
    touch_v: float
    step_v: float

    @property
    def touch_ok(self) -> bool:
        """True when the touch voltage does not exceed its limit."""
        return self.touch_v <= self.limits.touch_v

    @property
    def step_ok(self) -> bool:
        """True when the step voltage does not exceed its limit."""
        return self.step_v <= self.limits.step_v

    @property
    def passed(self) -> bool:
        """True when both criteria pass."""
        return self.touch_ok and self.step_ok

    @property
    def touch_margin_pct(self) -> float:
        """Touch margin. [%]"""
        return 100.0 * (self.limits.touch_v - self.touch_v) / self.limits.touch_v

    @property
    def step_margin_pct(self) -> float:
        """Step margin. [%]"""
        return 100.0 * (self.limits.step_v - self.step_v) / self.limits.step_v

    @property
    def governing(self) -> str:
        """``"touch"`` or ``"step"``, whichever has the smaller margin."""
        return "touch" if self.touch_margin_pct <= self.step_margin_pct else "step"


def assess(limits: Limits, touch_v: float, step_v: float) -> Assessment:
    """Compare computed touch and step voltages with the limits."""
    return Assessment(limits, touch_v, step_v)
