"""Zener diode in breakdown: piecewise-linear law above its knee.

Above the knee current the breakdown voltage rises with the current through
the dynamic resistance and drifts with temperature (the usual model for
design; typical values from memory: r_z of 5-30 Ω at a few mA for 5-8 V
parts, TC negative below about 5 V, near zero at 5-5.6 V, +2…+4 mV/K
around 6-8 V)::

    V_Z = V_Z0(T) + r_z I_Z,    V_Z0(T) = V_Z0 + TC_Z (T - T0)

Terminals: cathode ``k`` (the upper node in breakdown) and anode ``a``.
The law holds for ``I_Z`` above the least current ``i_z_min``; below it the
part is a limit of compliance ("falls below its least zener current"), as is
its dissipation rating.
"""

from __future__ import annotations

import numpy as np

from kit.devices.base import DeviceKind, Param
from kit.words import assumption

STIFF_REFERENCE = assumption("stiff_reference",
                             "reference voltage independent of its current (no r_z, no loading)",
                             excludes=("r_z_",))


class Zener(DeviceKind):
    """The zener kind (see the module docstring)."""

    key = "zener"
    law = "piecewise-linear zener law above the knee"
    title = "zener diode"
    terminals = ("k", "a")
    words = {"n": "zener", "p": "zener"}
    params = (
        Param("v_z0", "V", 1.0, 400.0, "zener voltage at zero current (PWL intercept), at T_ref", "V_Z0"),
        Param("r_z", "Ω", 0.01, 1e5, "dynamic resistance", "r_z"),
        Param("tc_z", "V/K", -0.02, 0.5, "temperature coefficient of the zener voltage", "TC_Z"),
        Param("i_z_min", "A", 1e-7, 1.0, "least current for the PWL law (above the knee)", "I_Z(min)",
              rating=True),
        Param("p_z_max", "W", 1e-3, 100.0, "dissipation limit at the design temperature", "P_Z(max)",
              rating=True),
    )
    typical_values = {s: dict(v_z0=5.6, r_z=15.0, tc_z=0.5e-3, i_z_min=1e-3, p_z_max=0.5) for s in ("n", "p")}
    typical_labels = {s: "typical small zener (generic values from memory, not a part's data)"
                      for s in ("n", "p")}
    quantities = ("v_z", "i_z")
    good_region = "regulating"
    causes = {"zener_current": "falls below its least zener current",
              "power": "reaches its dissipation limit", "tc_z": "has V_Z(T) ≤ 0"}
    sensitivity = {"v_z0": "V", "r_z": "Ω"}
    symbol_roles = {
        "V_Z0": ("V_Z0_", "V_{Z0}", "zener voltage TC_Z"),
        "r_z": ("r_z_", "r_{z}", "zener dynamic resistance r_z"),
    }

    def assumptions_of(self, role):
        return {"real": True} if role == "V_Z0" else {"positive": True}

    def temperature_map(self, name, params, junction, t_ref, scale):
        op = self.operating_symbols(name)
        return {op["V_Z0"]: params["v_z0"] + params["tc_z"] * (junction - t_ref), op["r_z"]: params["r_z"]}

    def stamp(self, sense, voltages, symbols):
        """The current as two terms, ``V/r_z`` and ``-V_Z0/r_z``.

        The same law, but the convergence scale at the node then sees the
        size of the parts that cancel, so a starved zener (tiny I_Z) is not
        failed on floating-point noise.
        """
        across = voltages["k"] - voltages["a"]
        terms = (across / symbols["r_z"], -symbols["V_Z0"] / symbols["r_z"])
        i_z = (across - symbols["V_Z0"]) / symbols["r_z"]
        return {"k": terms, "a": tuple(-t for t in terms)}, {"v_z": across, "i_z": i_z}

    def small_signal(self, quantities, symbols):
        return {"r_z": symbols["r_z"]}

    def small_signal_stamp(self, quantities, symbols):
        return [("g", "k", "a", 1 / symbols["r_z"])]

    def domain(self, j, op):
        """``V_Z0(T) > 0``: the linear temperature law of the zener voltage stays above zero."""
        return {"tc_z": ("V_Z(T) > 0", op["V_Z0"])}

    def regions(self, j, p, temp, edge):
        return np.where(j["i_z"] >= p.i_z_min, "regulating", "below knee").astype(object)

    def margins(self, j, p, temp, edge):
        """Current above the knee (A) and dissipation below the limit (W)."""
        # A point that did not converge is judged by the solver's own margin, not here.
        return {"zener_current": np.nan_to_num(j["i_z"] - p.i_z_min, nan=np.inf),
                "power": np.nan_to_num(p.p_z_max - self.dissipation(j), nan=np.inf)}

    def dissipation(self, j):
        return j["v_z"] * j["i_z"]

    def current(self, j):
        return j["i_z"]

    def describe(self, j):
        from kit.quantities import format_quantity

        return f"V_Z {format_quantity(j['v_z'], 'V', 4)}, I_Z {format_quantity(j['i_z'], 'A')}"


KIND = Zener()
