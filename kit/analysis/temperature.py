"""The output current over temperature: exact curve, tempco, its budget, self-heating.

:func:`temperature_sweep` solves the design across an ambient range, with
and without self-heating of the transistors (junction = ambient +
theta_JA x P_D), and reports at each temperature the exact tempco
``(1/I) dI/dT`` split into its mechanisms.  It also gives the DC output
resistance with thermal feedback, which self-heating lowers or raises
because the dissipation changes with the load voltage.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from kit.analysis.evaluation import model_of
from kit.analysis.thermal import junction_temperatures, require_stable, solve_self_heated
from kit.errors import OperatingPointError
from kit.model.solve import solve_points
from kit.quantities import format_temperature

R_OUT_STEP = 0.05  # V, load-voltage step for the electro-thermal output resistance


@dataclass(frozen=True)
class TemperatureSweep:
    """Arrays over ambient temperature (see :func:`temperature_sweep`).

    Attributes
    ----------
    temps : ndarray
        Ambient temperatures in K.
    i_out : ndarray
        Exact current without self-heating (junctions at ambient).
    i_out_heated : ndarray
        Exact current with self-heating.
    tempco : ndarray
        Exact (1/I) dI/dT in 1/K, junctions at ambient.
    budget : dict
        Mechanism label -> contribution to ``tempco`` (1/K) at each temperature.
    junction : dict
        Transistor -> junction temperature (K) with self-heating.
    r_out, r_out_heated : float
        Output resistance at the design temperature, isothermal (exact) and with
        thermal feedback (finite difference of the self-heated solve).
    """

    design: object
    temps: np.ndarray
    i_out: np.ndarray
    i_out_heated: np.ndarray
    tempco: np.ndarray
    budget: dict
    junction: dict
    r_out: float
    r_out_heated: float

    @property
    def heating_shift(self):
        """Relative change of the current caused by self-heating, per temperature."""
        return self.i_out_heated / self.i_out - 1

    def to_dict(self):
        return {"temps": self.temps.tolist(), "i_out": self.i_out.tolist(),
                "i_out_heated": self.i_out_heated.tolist(), "tempco": self.tempco.tolist(),
                "budget": {k: v.tolist() for k, v in self.budget.items()},
                "junction": {k: v.tolist() for k, v in self.junction.items()},
                "r_out": self.r_out, "r_out_heated": self.r_out_heated}


def _require_valid(points, design, temps):
    """Refuse a sweep in which the design leaves forward active or its ratings."""
    worst, keys = points.worst_margin("vce_sat")
    bad = np.flatnonzero(worst < 0)
    if bad.size:
        part, cause = keys[bad[0]]
        what = "no converged solution" if part is None else f"{part} {points.cause_text(part, cause)}"
        raise OperatingPointError(f"{what} at {format_temperature(temps[bad[0]], 3)}", parameter="temp",
                                  value=float(temps[bad[0]]),
                                  valid="temperatures at which every part stays within its limits")


def temperature_sweep(design, temps, *, points=61):
    """Sweep the ambient temperature over ``temps`` = (low, high) in K (or an array).

    Examples
    --------
    >>> import kit
    >>> sweep = temperature_sweep(kit.design("divider_source"), (253.15, 343.15), points=5)
    >>> bool(np.all(sweep.tempco > 0))   # V_BE falls as it warms: the divider source speeds up
    True
    """
    temps = np.linspace(temps[0], temps[1], points) if len(temps) == 2 else np.asarray(temps, float)
    model = model_of(design)
    values = design.parameters() | {"temp": temps}
    cold = solve_points(model, values).require("temperature sweep")
    heated = require_stable(solve_self_heated(model, values), "self-heated sweep")
    for points in (cold, heated):
        _require_valid(points, design, temps)
    t_index = model.parameter_index["temp"]
    tempco = cold.di_dp[t_index] / cold.i_out
    budget = {}
    for name, di, dq in zip(model.operating_names, cold.di_dq, cold.dq_dp[:, t_index]):
        if np.any(di * dq != 0):
            label = model.structure.budget_label(name) or f"temperature law of {name}"
            budget[label] = budget.get(label, 0.0) + di * dq / cold.i_out
    base = design.parameters()
    step = R_OUT_STEP
    ends = require_stable(solve_self_heated(model, base | {"v_load": np.array([base["v_load"] - step,
                                                                            base["v_load"] + step])}),
                          "self-heated output resistance")
    slope = (ends.i_out[1] - ends.i_out[0]) / (2 * step)
    r_heated = model.output_sign / slope if slope != 0 else np.inf
    r_cold = float(solve_points(model, base).require().r_out[0])
    return TemperatureSweep(design, temps, cold.i_out, heated.i_out, tempco, budget,
                            junction_temperatures(heated), r_cold, float(r_heated))
