"""Worked example of the Python API: a design built in code, analysed, tabulated; nothing is plotted.

Wrenfield Lane is a made-up 33/11 kV substation: a 40 m x 30 m grid of 9 x 11
conductors at 0.6 m, four 6 m corner rods, uniform soil, a crushed-rock surface
layer, and one variant with a higher future fault level. Run it with
``python examples/api_example.py``. Results are a draft for review by a
licensed professional engineer.
"""

from __future__ import annotations

import groundcalc as gc


def build_design(segment_length_m: float = 1.0, raster_spacing_m: float | None = None) -> gc.Design:
    """The Wrenfield Lane design (``segment_length_m`` and ``raster_spacing_m`` coarsen it for a quick run). [m]"""
    corners = [(0.0, 0.0), (40.0, 0.0), (40.0, 30.0), (0.0, 30.0)]
    return gc.Design(
        project=gc.Project("Wrenfield Lane 33/11 kV", "Wrenfield Lane (fictional)", "example script", "A"),
        soil=gc.Soil("uniform", rho1_ohm_m=150.0),
        surface_layer=gc.SurfaceLayer(rho_ohm_m=3000.0, thickness_m=0.1),
        fault=gc.Fault(
            fault_current_a=6000.0,
            split_factor=0.5,
            x_over_r=12.0,
            fault_duration_s=0.4,
            shock_duration_s=0.4,
            body_weight_kg=70.0,
            frequency_hz=50.0,
        ),
        conductors=(),
        rods=tuple(gc.Rod(f"R{k + 1}", x, y, 0.6, 6.0, 0.016) for k, (x, y) in enumerate(corners)),
        grids=(gc.GridSpec("Yard", 0.0, 0.0, 40.0, 30.0, 9, 11, 0.6, 0.0107),),
        settings=gc.Settings(segment_length_m=segment_length_m, raster_spacing_m=raster_spacing_m),
        variants=(gc.Variant("future fault level", fault=gc.FaultOverride(fault_current_a=9000.0)),),
    )


def main(segment_length_m: float = 1.0, raster_spacing_m: float | None = None) -> gc.Results:
    """Analyse the design, print a few numbers and tables, and return the results."""
    design = build_design(segment_length_m, raster_spacing_m)
    res = gc.analyse(design)
    print(f"Grid resistance  {res.resistance_ohm:8.3f} ohm   (Sverak closed form {res.sverak_resistance_ohm:.3f} ohm)")
    print(f"GPR              {res.gpr_v:8.0f} V     grid current {res.grid_current_a:.0f} A")
    print(f"Max touch        {res.max_touch_v:8.0f} V     limit {res.touch_limit_v:.0f} V at {res.max_touch_xy_m}")
    print(f"Max step         {res.max_step_v:8.0f} V     limit {res.step_limit_v:.0f} V")
    print(f"Verdict          {res.verdict} (governing: {res.governing})")
    print()
    print(res.segments_frame()[["conductor", "length_m", "leakage_density_a_per_m"]].head())
    print()
    surface = res.raster_frame()
    print(surface[surface.in_touch_area].nlargest(3, "touch_v"))
    print()
    print(res.profile_frame((-5.0, 15.0), (45.0, 15.0), n=11)[["x_m", "potential_v", "touch_v"]])
    print()
    print(gc.compare(design)[["name", "changes", "grid_resistance_ohm", "max_touch_v", "passed"]])
    return res


if __name__ == "__main__":
    main()
