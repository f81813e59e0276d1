"""Resistor: its value at the reference temperature, its TCR and its power rating.

A resistor's value is one of the design's values (``r1``, ``r_e``); its
TCR and rating are named after that value (``tcr_r1``, ``p_rated_r1``)::

    R(T) = R (1 + TCR (T - T0))

with ``T`` the temperature of the point.  Treat a datasheet's ±TCR as a
bound of unknown sign (IEC 60115-1 practice, from memory).  The power
rating is a limit of compliance when finite (default: none).
"""

from __future__ import annotations


from kit.devices.base import DeviceKind, Param


class Resistor(DeviceKind):
    """The resistor kind (see the module docstring)."""

    key = "resistor"
    law = "Ohm's law with the TCR"
    title = "resistor"
    terminals = ("a", "b")
    words = {"n": "resistor", "p": "resistor"}
    valued = True  # its value is a design value, its parameters named after it
    params = (
        Param("tcr", "1/K", -5e-3, 5e-3, "temperature coefficient of resistance", "TCR"),
        Param("p_rated", "W", 1e-4, 1e4, "power rating at the design temperature", "P_rated",
              allow_inf=True, rating=True),
    )
    typical_values = {s: dict(tcr=0.0, p_rated=float("inf")) for s in ("n", "p")}
    quantities = ("v_r", "i_r")
    good_region = "within rating"
    causes = {"power": "reaches its power rating"}
    symbol_roles = {}

    @staticmethod
    def flat_name(value, param):
        """``tcr_r1`` for parameter ``tcr`` of the resistor whose value is ``r1``."""
        return f"{param}_{value}"

    def small_signal_stamp(self, quantities, symbols):
        return [("g", "a", "b", 1 / symbols["R"])]

    def margins(self, j, p, temp, edge):
        return {"power": p.p_rated - self.dissipation(j)}

    def dissipation(self, j):
        return j["v_r"] * j["i_r"]

    def current(self, j):
        return j["i_r"]


class CurrentSource(DeviceKind):
    """An ideal current source (a reference current): needs its voltage the right way round.

    Its value is a design value (``i_ref``, with its temperature coefficient
    ``i_ref_tc``); the only limit is headroom: the current flows from node
    ``a`` to node ``b`` and an ideal source needs ``V_a - V_b >= 0``
    (a real one more).
    """

    key = "source"
    law = "ideal current source"
    title = "current source"
    terminals = ("a", "b")
    words = {"n": "current source", "p": "current source"}
    valued = True
    params = ()
    quantities = ("v_across",)
    good_region = "with headroom"
    causes = {"headroom": "has no headroom under the supply"}

    def margins(self, j, p, temp, edge):
        return {"headroom": j["v_across"]}


RESISTOR = Resistor()
SOURCE = CurrentSource()
KINDS = (RESISTOR, SOURCE)
