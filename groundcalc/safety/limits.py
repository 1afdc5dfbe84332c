"""Safety assessment: tolerable limits of IEEE Std 80 against computed voltages."""

from __future__ import annotations

from dataclasses import dataclass

from ..model import Fault, Soil, SurfaceLayer
from .ieee80 import step_limit_v, surface_layer_factor, touch_limit_v

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
    touch_limit_v, step_limit_v : float
        Tolerable touch and step voltages applied (IEEE Std 80 or user-defined). [V]
    body_weight_kg : float
        Body weight. [kg]
    shock_duration_s : float
        Shock duration. [s]
    basis : str
        Where the limits come from.
    ieee80_touch_limit_v, ieee80_step_limit_v : float
        The IEEE Std 80 values, shown beside user-defined limits. [V]
    touch_user, step_user : bool
        Whether each limit was entered by the user (not IEEE Std 80).
    """

    cs: float
    rho_surface_ohm_m: float
    touch_limit_v: float
    step_limit_v: float
    body_weight_kg: float
    shock_duration_s: float
    basis: str
    ieee80_touch_limit_v: float = 0.0
    ieee80_step_limit_v: float = 0.0
    touch_user: bool = False
    step_user: bool = False

    @property
    def touch_basis(self) -> str:
        """Source of the touch limit, for outputs."""
        return "user-defined (not IEEE Std 80)" if self.touch_user else "IEEE Std 80"

    @property
    def step_basis(self) -> str:
        """Source of the step limit, for outputs."""
        return "user-defined (not IEEE Std 80)" if self.step_user else "IEEE Std 80"


def tolerable_limits(soil: Soil, surface: SurfaceLayer | None, fault: Fault) -> Limits:
    """IEEE Std 80 tolerable touch and step voltages for the design.

    Parameters
    ----------
    soil : Soil
        Soil model; the upper-layer resistivity lies under the surface layer.
    surface : SurfaceLayer or None
        High-resistivity surface layer, if any.
    fault : Fault
        Shock duration, body weight, and any user-defined limits (which
        replace the IEEE Std 80 values and are marked as such).

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
    touch, step = touch_limit_v(*args), step_limit_v(*args)
    basis = f"IEEE Std 80, {fault.body_weight_kg:.0f} kg body, ts = {fault.shock_duration_s:g} s"
    user_t, user_s = fault.touch_limit_v is not None, fault.step_limit_v is not None
    if user_t and user_s:
        basis = "user-defined limits (not IEEE Std 80)"
    elif user_t or user_s:
        basis = f"user-defined {'touch' if user_t else 'step'} limit (not IEEE Std 80); the other: " + basis
    return Limits(
        cs,
        rho_s,
        fault.touch_limit_v if user_t else touch,
        fault.step_limit_v if user_s else step,
        fault.body_weight_kg,
        fault.shock_duration_s,
        basis,
        touch,
        step,
        user_t,
        user_s,
    )


@dataclass(frozen=True)
class Assessment:
    """Computed voltages against their limits.

    Margins are ``(limit - computed) / limit`` in percent: positive passes.
    ``governing`` is the criterion with the smaller margin.
    """

    limits: Limits
    max_touch_v: float
    max_step_v: float
    conductors_ok: bool = True

    @property
    def touch_ok(self) -> bool:
        """True when the touch voltage does not exceed its limit."""
        return self.max_touch_v <= self.limits.touch_limit_v

    @property
    def step_ok(self) -> bool:
        """True when the step voltage does not exceed its limit."""
        return self.max_step_v <= self.limits.step_limit_v

    @property
    def passed(self) -> bool:
        """True when touch, step and conductor sizing all pass."""
        return self.touch_ok and self.step_ok and self.conductors_ok

    @property
    def touch_margin_pct(self) -> float:
        """Touch margin. [%]"""
        return 100.0 * (self.limits.touch_limit_v - self.max_touch_v) / self.limits.touch_limit_v

    @property
    def step_margin_pct(self) -> float:
        """Step margin. [%]"""
        return 100.0 * (self.limits.step_limit_v - self.max_step_v) / self.limits.step_limit_v

    @property
    def governing(self) -> str:
        """``"touch"`` or ``"step"``, whichever has the smaller margin."""
        return "touch" if self.touch_margin_pct <= self.step_margin_pct else "step"

    @property
    def governing_margin_pct(self) -> float:
        """Margin of the governing criterion. [%]"""
        return min(self.touch_margin_pct, self.step_margin_pct)


def assess(limits: Limits, max_touch_v: float, max_step_v: float, conductors_ok: bool = True) -> Assessment:
    """Compare computed touch and step voltages with the limits (and carry the sizing verdict)."""
    return Assessment(limits, max_touch_v, max_step_v, conductors_ok)
