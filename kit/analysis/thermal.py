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
# Above the highest temperature any law is used at (kit.model.vocabulary):
# a junction heated this far is in thermal runaway.
RUNAWAY_TEMPERATURE = 500.0  # K


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
    runaway = {n: np.zeros(points.size, dtype=bool) for n in heated}
    for _ in range(MAX_ITERATIONS):
        change = np.zeros(points.size)
        for n in heated:
            theta = np.asarray(values[f"{n}.theta_ja"], dtype=float)
            # A part takes power, never gives it: a negative V_CE I_C belongs to a
            # point outside its laws (judged there), not to a cooled junction.
            power = np.maximum(np.nan_to_num(points.dissipation[n], nan=0.0), 0.0)
            rise = theta * np.where(points.converged, power, 0.0)
            # A junction heated past every temperature the laws are used at is
            # running away: keep its last rise (the laws stay finite) and stop.
            hot = (np.asarray(values["temp"]) + rise > RUNAWAY_TEMPERATURE) | runaway[n]
            runaway[n] = hot
            rise = np.where(hot, np.broadcast_to(values.get(f"{n}.t_rise", 0.0), hot.shape), rise)
            change = np.maximum(change, np.where(hot, 0.0, np.abs(rise - values.get(f"{n}.t_rise", 0.0))))
            values[f"{n}.t_rise"] = rise
        if np.all(change < RISE_TOLERANCE):
            break
        points = solve_points(model, values, x0=points.x)
    # Points whose temperature never settled (thermal runaway) are not valid solutions.
    points.converged &= change < RISE_TOLERANCE
    points.runaway = runaway
    for n in heated:
        points.converged &= ~runaway[n]
    return points


def runaway_error(points, what):
    """The error for points that did not solve, naming a part in thermal runaway if one is.

    Returns None when every point converged.
    """
    from kit.errors import ConvergenceError, OperatingPointError

    if points.converged.all():
        return None
    for name, hot in getattr(points, "runaway", {}).items():
        if hot.any():
            return OperatingPointError(
                f"thermal runaway: {name}'s junction heats past {RUNAWAY_TEMPERATURE:g} K through its own "
                f"dissipation ({what})", parameter=f"{name}.theta_ja",
                value=float(points.p[points.model.parameter_index[f"{name}.theta_ja"]][hot][0]),
                valid="a package (θ_JA) or operating point that keeps the junction below T_J(max)")
    bad = np.flatnonzero(~points.converged)
    return ConvergenceError(f"the exact solve did not converge at {bad.size} of {points.size} points "
                            f"(first: point {bad[0]})", parameter=what)


def junction_temperatures(points):
    """Device name -> junction temperature in K of solved points."""
    temp = points.p[points.model.parameter_index["temp"]]
    out = {}
    for name in points.model.structure.device_names:
        index = points.model.parameter_index.get(f"{name}.t_rise")
        out[name] = temp + (points.p[index] if index is not None else 0.0)
    return out
