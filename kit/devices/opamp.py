"""Operational amplifier, DC: finite gain, offset with drift, input bias current, output swing.

The output is an ideal driver (no output resistance) set by the gain law::

    V_o = A (V_+ - V_- + V_OS(T)),    V_OS(T) = V_OS + (dV_OS/dT)(T - T0)

with the offset referred to the + input and the bias current ``I_B``
flowing *into* the − input (out of the node it senses).  The output swing
``V_OL <= V_o <= V_OH`` is not part of the law: it is a limit of the part,
so a report names the op-amp when the loop runs out of drive.  The output can
never pass the op-amp's own supply pins either, whatever V_OH and V_OL say:
the swing limit is ``max(V_OL, V_-) <= V_o <= min(V_OH, V_+)``, so a lower
supply takes the drive away with it.
Terminals: ``p`` (+ input), ``n`` (− input), ``o`` (output), ``vp`` and ``vn``
(its positive and negative supply pins, on rails of the circuit).
"""

from __future__ import annotations

import numpy as np

from kit.devices.base import DeviceKind, Param
from kit.words import assumption

IDEAL_OPAMP = assumption("ideal_opamp", "ideal op-amp (infinite gain, no offset, no input bias current)",
                         excludes=("A_OL_", "V_OS_", "I_BIAS_"))


class OpAmp(DeviceKind):
    """The op-amp kind (see the module docstring)."""

    key = "opamp"
    law = "op-amp gain law with offset and input bias current"
    title = "op-amp"
    terminals = ("p", "n", "o", "vp", "vn")
    words = {"n": "op-amp", "p": "op-amp"}
    params = (
        Param("a_ol", "", 1.0, 1e12, "open-loop DC gain", "A_OL"),
        Param("v_os", "V", -0.1, 0.1, "input offset voltage, referred to the + input", "V_OS"),
        Param("v_os_tc", "V/K", -1e-4, 1e-4, "offset drift", "dV_OS/dT"),
        Param("i_bias", "A", -1e-3, 1e-3, "input bias current into the − input", "I_B"),
        Param("v_oh", "V", -1000.0, 1000.0, "highest output voltage (output swing; never above the "
              "positive supply pin)", "V_OH", rating=True),
        Param("v_ol", "V", -1000.0, 1000.0, "lowest output voltage (output swing; never below the "
              "negative supply pin)", "V_OL", rating=True),
    )
    typical_values = {s: dict(a_ol=1e5, v_os=0.5e-3, v_os_tc=0.0, i_bias=20e-9, v_oh=11.0, v_ol=0.2)
                      for s in ("n", "p")}
    typical_labels = {s: "typical general-purpose op-amp (generic values from memory, not a part's data)"
                      for s in ("n", "p")}
    quantities = ("v_o", "v_pos", "v_neg")
    good_region = "linear"
    causes = {"output_swing": "reaches its output swing limit"}
    sensitivity = {"a_ol": "", "v_os": "V", "v_os_tc": "V/K", "i_bias": "A"}
    drives_node = "o"
    symbol_roles = {
        "A": ("A_OL_", "A_{OL}", "op-amp gain A_OL"),
        "V_OS": ("V_OS_", "V_{OS}", "op-amp offset V_OS"),
        "I_B": ("I_BIAS_", "I_{B}", "op-amp bias current I_B"),
    }

    def assumptions_of(self, role):
        return {"positive": True} if role == "A" else {"real": True}

    def check_model(self, values):
        from kit.errors import ParameterError

        if values["v_ol"] >= values["v_oh"]:
            raise ParameterError("lowest output voltage must lie below the highest", parameter="v_ol",
                                 value=values["v_ol"], valid=f"< v_oh = {values['v_oh']:g} V")

    def temperature_map(self, name, params, junction, t_ref, scale):
        op = self.operating_symbols(name)
        return {op["A"]: params["a_ol"],
                op["V_OS"]: params["v_os"] + params["v_os_tc"] * (junction - t_ref),
                op["I_B"]: params["i_bias"]}

    def stamp(self, sense, voltages, symbols):
        """The bias current out of the − input's node, and the output's driven value.

        The supply pins draw no current here (the op-amp's own supply current
        comes from the rail, not through the circuit's nodes); their voltages
        are exported for the swing limit.
        """
        drive = symbols["A"] * (voltages["p"] + symbols["V_OS"] - voltages["n"])
        return ({"n": symbols["I_B"], "o": ("drive", drive)},
                {"v_o": voltages["o"], "v_pos": voltages["vp"], "v_neg": voltages["vn"]})

    def small_signal_stamp(self, quantities, symbols):
        return [("vcvs", "o", "p", "n", symbols["A"])]

    @staticmethod
    def _swing(j, p):
        """``(lowest, highest)`` output voltage: the stated swing within the supply pins."""
        return np.maximum(p.v_ol, j["v_neg"]), np.minimum(p.v_oh, j["v_pos"])

    def regions(self, j, p, temp, edge):
        low, high = self._swing(j, p)
        inside = (j["v_o"] <= high) & (j["v_o"] >= low)
        return np.where(inside, "linear", "swing limit").astype(object)

    def margins(self, j, p, temp, edge):
        """Output swing: ``min(min(V_OH, V_+) - V_o, V_o - max(V_OL, V_-))`` (V)."""
        low, high = self._swing(j, p)
        return {"output_swing": np.minimum(high - j["v_o"], j["v_o"] - low)}

    def limit_parameter(self, cause, j, p):
        """``v_oh`` when the output would rise past its highest voltage, else ``v_ol``."""
        if cause != "output_swing":
            return None
        return "v_oh" if np.all(p.v_oh - j["v_o"] <= j["v_o"] - p.v_ol) else "v_ol"

    def describe(self, j):
        from kit.quantities import format_quantity

        return f"V_o {format_quantity(j['v_o'], 'V', 4)}"


KIND = OpAmp()
