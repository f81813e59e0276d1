"""Junction diode, alone or as a string of equal diodes in series.

A string of ``count`` equal diodes carrying one current is one junction of
emission coefficient ``count n``::

    i_d = I_S (exp(v_d / (count n V_T)) - 1)

with the transistor's saturation-current temperature law written for a
junction of emission coefficient ``n`` (so each drop follows
``V(T) = E_g (1 - T/T0) + V(T0) T/T0 - m_IS V_T ln(T/T0)``; Getreu,
*Modeling the Bipolar Transistor*, 1976, from memory)::

    I_S(T) = I_S(T0) (T/T0)^(m_IS/n) exp[E_g/(n V_T) (T/T0 - 1)]

``n`` is about 1 for a diode-connected transistor and 1.5-2 for many
junction diodes (from memory).  Terminals: anode ``a``, cathode ``k``.
"""

from __future__ import annotations

import numpy as np

from kit.devices.base import BOLTZMANN_OVER_CHARGE, DeviceKind, Param
from kit.errors import ParameterError

COUNT_RANGE = (1.0, 8.0)


class Diode(DeviceKind):
    """The junction diode (string) kind."""

    key = "diode"
    law = "junction diode law, a string of equal diodes as one junction"
    title = "diode"
    terminals = ("a", "k")
    words = {"n": "diode", "p": "diode"}
    params = (
        Param("i_s", "A", 1e-20, 1e-3, "saturation current at T_ref", "I_S"),
        Param("n", "", 0.8, 3.0, "emission coefficient", "n"),
        Param("count", "", *COUNT_RANGE, "number of equal diodes in series (whole number)", "N_D"),
        Param("i_s_temp_exponent", "", -10.0, 10.0, "temperature exponent of I_S", "m_IS"),
        Param("e_g", "eV", 0.5, 2.0, "activation energy of I_S", "E_g"),
    )
    typical_values = {s: dict(i_s=2e-9, n=1.8, count=1.0, i_s_temp_exponent=3.0, e_g=1.11)
                      for s in ("n", "p")}
    typical_labels = {s: "typical small-signal silicon diode (generic values from memory, not a part's data)"
                      for s in ("n", "p")}
    quantities = ("v_d", "i_d")
    good_region = "forward"
    causes = {"reverse": "is reverse biased"}
    sensitivity = {"i_s": "A"}
    symbol_roles = {
        "I_S": ("I_SD_", "I_{SD}", "diode saturation current I_SD"),
        "n": ("nD_", "n", "diode emission coefficient n"),
        "N": ("ND_", "N_{D}", "number of diodes"),
        "V_T": ("V_T_", "V_{T}", "thermal voltage V_T"),
    }

    def check_model(self, values):
        if values["count"] != round(values["count"]):
            raise ParameterError("must be a whole number of diodes", parameter="count",
                                 value=values["count"], valid="1, 2, … 8")

    def temperature_map(self, name, params, junction, t_ref, scale):
        import sympy as sp

        op = self.operating_symbols(name)
        v_t = BOLTZMANN_OVER_CHARGE * junction
        ratio = junction / t_ref
        return {
            op["I_S"]: scale * params["i_s"] * ratio ** (params["i_s_temp_exponent"] / params["n"])
            * sp.exp(params["e_g"] / (params["n"] * v_t) * (ratio - 1)),
            op["n"]: params["n"],
            op["N"]: params["count"],
            op["V_T"]: v_t,
        }

    def stamp(self, sense, voltages, symbols):
        import sympy as sp

        v_d = voltages["a"] - voltages["k"]
        slope = symbols["N"] * symbols["n"] * symbols["V_T"]
        i_d = symbols["I_S"] * (sp.exp(v_d / slope) - 1)
        return {"a": i_d, "k": -i_d}, {"v_d": v_d, "i_d": i_d}

    def small_signal(self, quantities, symbols):
        """``r_d = count n V_T / (I_S exp(v_d/(count n V_T)))``: the string's small-signal resistance."""
        import sympy as sp

        slope = symbols["N"] * symbols["n"] * symbols["V_T"]
        return {"r_d": slope / (symbols["I_S"] * sp.exp(quantities["v_d"] / slope))}

    def small_signal_stamp(self, quantities, symbols):
        return [("g", "a", "k", 1 / self.small_signal(quantities, symbols)["r_d"])]

    def start(self, sense, current, symbols):
        import sympy as sp

        return symbols["N"] * symbols["n"] * symbols["V_T"] * sp.log(1 + current / symbols["I_S"])

    def regions(self, j, p, temp, edge):
        return np.where(j["i_d"] > 0, "forward", "reverse").astype(object)

    def dissipation(self, j):
        return j["v_d"] * j["i_d"]

    def current(self, j):
        return j["i_d"]

    def describe(self, j):
        from kit.quantities import format_quantity

        return f"V_D {format_quantity(j['v_d'], 'V', 4)}, I_D {format_quantity(j['i_d'], 'A')}"


KIND = Diode()
