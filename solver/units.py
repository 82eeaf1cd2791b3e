"""Units of the numbers wakeyard reads and writes: the summary's ``units`` map, study table headers, plot axes.

Paths are dotted; ``*`` stands for any list index or any key (a body name, a timing's name).
Unit "1" marks a number of dimension one (coefficients, counts, ratios).
"""

from __future__ import annotations

from typing import Any

_SUMMARY = {
    "reynolds_number": "1",
    "reference.velocity": "m/s",
    "reference.lengths.*": "m",
    "mesh.cells": "1",
    "mesh.dofs": "1",
    "timings.*": "s",
    "wall_time_seconds": "s",
    "bodies.*.fx": "N/m",
    "bodies.*.fy": "N/m",
    "bodies.*.drag_coefficient": "1",
    "bodies.*.lift_coefficient": "1",
    "bodies.*.drag_coefficient.*": "1",
    "bodies.*.lift_coefficient.*": "1",
    "bodies.*.strouhal_number": "1",
    "bodies.*.recirculation_length": "m",
    "bodies.*.nusselt_number": "1",
    "bodies.*.nusselt_number.*": "1",
    "bodies.*.surface_temperature": "°C",
    "bodies.*.motion.*.mean": "m",
    "bodies.*.motion.*.min": "m",
    "bodies.*.motion.*.max": "m",
    "bodies.*.motion.*.amplitude": "m",
    "bodies.*.motion.*.amplitude_ratio": "1",
    "bodies.*.motion.frequency": "1/s",
    "bodies.*.motion.frequency_ratio": "1",
    "outlet_temperature": "°C",
    "outlet_temperature.*": "°C",
    "heat.prandtl_number": "1",
    "heat.peclet_number": "1",
    "heat.diffusivity": "m^2/s",
    "pressure_drop": "Pa",
    "pressure_drop.*": "Pa",
    "velocity_probes.*.*": "m/s",
    "newton.iterations": "1",
    "newton.residual": "m^3/s^2",
    "newton.continuation.*": "1",
    "strouhal_number": "1",
    "shedding.strouhal_number": "1",
    "shedding.frequency": "1/s",
    "shedding.frequency_resolution": "1/s",
    "shedding.cycles": "1",
    "window.start": "s",
    "window.end": "s",
    "window.whole_cycles": "1",
    "steps": "1",
    "accuracy": "1",
    "time_steps.accepted": "1",
    "time_steps.rejected": "1",
    "time_steps.smallest": "s",
    "time_steps.largest": "s",
    "time_steps.mean": "s",
    "time_steps.factorisations": "1",
    "time_steps.solves_per_step": "1",
    "simulated_time": "s",
    "max_cfl": "1",
}

_SPEC = {
    "channel.length": "m",
    "channel.height": "m",
    "bodies.*.center.*": "m",
    "bodies.*.radius": "m",
    "bodies.*.spin": "rad/s",
    "bodies.*.width": "m",
    "bodies.*.height": "m",
    "bodies.*.angle": "deg",
    "bodies.*.corner_radius": "m",
    "bodies.*.chord": "m",
    "bodies.*.leading_edge.*": "m",
    "bodies.*.angle_of_attack": "deg",
    "bodies.*.points.*.*": "m",
    "bodies.*.mount.amplitude": "m",
    "bodies.*.mount.frequency": "1/s",
    "bodies.*.mount.mass_ratio": "1",
    "bodies.*.mount.damping_ratio": "1",
    "bodies.*.mount.reduced_velocity": "1",
    "bodies.*.mount.natural_frequency": "1/s",
    "bodies.*.mount.initial_displacement.*": "m",
    "bodies.*.mount.initial_velocity.*": "m/s",
    "fluid.density": "kg/m^3",
    "fluid.viscosity": "m^2/s",
    "fluid.reynolds": "1",
    "fluid.reference.velocity": "m/s",
    "fluid.reference.length": "m",
    "inflow.peak_velocity": "m/s",
    "inflow.mean_velocity": "m/s",
    "inflow.ramp_time": "s",
    "inflow.time_law.period": "s",
    "inflow.time_law.amplitude": "1",
    "inflow.time_law.mean": "1",
    "inflow.time_law.points.*.0": "s",
    "inflow.time_law.points.*.1": "1",
    "mesh.body_size": "m",
    "mesh.wake_size": "m",
    "mesh.far_size": "m",
    "mesh.wake_length": "m",
    "mesh.scale": "1",
    "mesh.refinements": "1",
    "analysis.time_step": "s",
    "analysis.accuracy": "1",
    "analysis.end_time": "s",
    "analysis.output_interval": "s",
    "analysis.checkpoint_interval": "1",
    "analysis.newton_tolerance": "1",
    "analysis.max_newton_iterations": "1",
    "analysis.until_periodic.cycles": "1",
    "analysis.until_periodic.tolerance": "1",
    "probes.pressure_drop.*.*": "m",
    "heat.prandtl": "1",
    "heat.conductivity": "W/(m K)",
    "heat.heat_capacity": "J/(kg K)",
    "heat.inflow_temperature": "°C",
    "heat.walls.temperature": "°C",
    "heat.walls.heat_flux": "W/m^2",
    "bodies.*.thermal.temperature": "°C",
    "bodies.*.thermal.heat_flux": "W/m^2",
    "probes.velocity.*.*": "m",
}


def _match(table: dict[str, str], path: str) -> str | None:
    parts = path.split(".")
    for pattern, unit in table.items():
        keys = pattern.split(".")
        if len(keys) == len(parts) and all(k in ("*", p) for k, p in zip(keys, parts)):
            return unit
    return None


def number_paths(value: Any, path: str = "") -> list[str]:
    """Dotted paths of every number in a JSON-like value (booleans are not numbers here)."""
    if isinstance(value, dict):
        return [p for k, v in value.items() for p in number_paths(v, f"{path}.{k}" if path else str(k))]
    if isinstance(value, list):
        return [p for i, v in enumerate(value) for p in number_paths(v, f"{path}.{i}" if path else str(i))]
    return [path] if isinstance(value, int | float) and not isinstance(value, bool) else []


def summary_units(summary: dict[str, Any]) -> dict[str, str]:
    """The ``units`` map of a summary: every pattern that matches one of its numbers, in table order."""
    used = {
        pattern
        for leaf in number_paths(summary)
        for pattern, unit in _SUMMARY.items()
        if _match({pattern: unit}, leaf) is not None
    }
    return {pattern: unit for pattern, unit in _SUMMARY.items() if pattern in used}


def unit_of(units: dict[str, str], path: str) -> str | None:
    """Look a number's dotted path up in a ``units`` map (None: not listed)."""
    return _match(units, path)


def spec_unit(path: str) -> str | None:
    """Unit of a numeric job-spec field by its dotted path, e.g. ``bodies.0.center.1`` -> ``m``."""
    return _match(_SPEC, path)


def value_unit(key: str) -> str:
    """Unit of a flat summary value of :func:`solver.study.summary_values` (``pier.cd_mean``, ``pressure_drop``)."""
    return "Pa" if key.startswith("pressure_drop") else "1"


def labelled(name: str, unit: str | None) -> str:
    """``name [unit]`` for table headers and plot axes; ``[-]`` for dimension one, the name alone if unknown."""
    if unit is None:
        return name
    return f"{name} [{'-' if unit == '1' else unit}]"
