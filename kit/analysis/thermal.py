"""Self-heating: junction temperature = ambient + theta_JA x dissipation.

:func:`solve_self_heated` solves the exact equations with each transistor's
junction raised above the ambient by its own dissipation through its
package's thermal resistance (``t_rise = theta_JA * P_D``), iterating the
electrical and thermal solutions to a fixed point.  Thermal coupling between
devices is not modelled: each junction heats only itself.
"""

from __future__ import annotations

import numpy as np

from kit.model.solve import solve_points

MAX_ITERATIONS = 30
RISE_TOLERANCE = 1e-6  # K


def heated_parts(model):
    """Names of the parts that heat themselves: those with a thermal resistance of their own."""
    return [part.name for part in model.structure.devices
            if "theta_ja" in part.params and f"{part.name}.t_rise" in model.parameter_index]


def solve_self_heated(model, values):
    """Exact operating points with self-heating of every part that has a thermal resistance.

    Parameters
    ----------
    model : kit.model.compiled.CompiledModel
    values : dict
        Full parameter vector (arrays broadcast); ``temp`` is the ambient,
        ``<part>.theta_ja`` each package's thermal resistance.

    Returns
    -------
    kit.model.solve.OperatingPoints
        Solved at the self-consistent junction temperatures (``<name>.t_rise``
        holds each rise in K).
    """
    heated = heated_parts(model)
    values = dict(values)
    points = solve_points(model, values)
    for _ in range(MAX_ITERATIONS):
        change = np.zeros(points.size)
        for n in heated:
            theta = np.asarray(values[f"{n}.theta_ja"], dtype=float)
            rise = theta * np.where(points.converged, points.dissipation[n], 0.0)
            change = np.maximum(change, np.abs(rise - values.get(f"{n}.t_rise", 0.0)))
            values[f"{n}.t_rise"] = rise
        if np.all(change < RISE_TOLERANCE):
            return points
        points = solve_points(model, values, x0=points.x)
    # Points whose temperature never settled (thermal runaway) are not valid solutions.
    points.converged &= change < RISE_TOLERANCE
    return points


def junction_temperatures(points):
    """Device name -> junction temperature in K of solved points."""
    temp = points.p[points.model.parameter_index["temp"]]
    out = {}
    for name in points.model.structure.device_names:
        index = points.model.parameter_index.get(f"{name}.t_rise")
        out[name] = temp + (points.p[index] if index is not None else 0.0)
    return out
