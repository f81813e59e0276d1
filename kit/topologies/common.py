"""Values, notes and a starting point several topologies share (the mirrors' reference, area ratio, supply, load).

Conventions of all mirrors (NPN sink, PNP source as its mirror image):
``Q1`` is the input (reference) transistor, ``Q2`` the output transistor
with emitter area ``N`` times that of ``Q1`` (``I_S2 = N I_S1``); ``I_REF``
flows into the input node from an ideal source (NPN) or out of it (PNP), or
through ``R_REF`` from the supply; the load voltage is the output
collector's voltage against 0 V.
"""

from __future__ import annotations

from kit.circuit.blocks import positive_or
from kit.devices.bjt import KIND as BJT
from kit.topologies.base import Value

I_REF_LIMITS = (1e-9, 0.1)  # A; below 1 nA leakage rules, above 100 mA it is a power stage
N_AREA_LIMITS = (0.1, 100.0)


def i_ref(default):
    """The ideal reference current."""
    return Value("i_ref", "A", "reference current fed to the input transistor Q1", default, *I_REF_LIMITS)


I_REF_TC = Value("i_ref_tc", "1/K", "temperature coefficient of the reference current (0 for an ideal source)",
                 0.0, -0.02, 0.02)


def n_area(default=1.0):
    """Emitter-area ratio ``N`` of output to input transistor."""
    return Value("n_area", "", "emitter-area ratio N = A_E(Q2)/A_E(Q1)", default, *N_AREA_LIMITS)


def supply(default, description="supply voltage (emitter rail of a PNP mirror)", low=0.5):
    return Value("v_supply", "V", description, default, low, 1000.0, "supply")


def load(default, description="output collector (load) voltage against 0 V"):
    return Value("v_load", "V", description, default, -1000.0, 1000.0, "load")


# Shown with every mirror's results.
SAFETY_NOTES = (
    "Above about 60 V DC, or from a mains-derived supply, the circuit is a shock hazard: "
    "use parts and spacing rated for the voltage and follow the applicable safety standard "
    "and local codes.",
)


# Starting points near saturation.  There the collector pulls the base: a guessed
# base-collector forward bias kept modest lets Newton start near the right branch.
SATURATED_VBC_START = 0.55  # V; forward bias of a saturated collector junction
# A mirror's shared base node, pulled by a saturated output collector: the least
# base-collector forward bias a starting point allows.
LEAST_SATURATED_VBC = 0.3  # V


def start_behind_emitter_resistor(c, q, current, r_e):
    """Start nodes ``b`` and ``e`` of ``q`` from a closed form of its collector current.

    The base sits one V_BE (the device law inverted at ``current``) above the
    drop across ``r_e``; when that would put the base far above the collector
    (saturation), it is clamped to :data:`SATURATED_VBC_START` (or the start's
    V_BE, if smaller) beyond the load rail.  Returns the base voltage expression.
    """
    import sympy as sp

    v_cc, v_out = c.voltages["cc"], c.voltages["out"]
    current = positive_or(current)
    v_be = BJT.start(q.sense, current, q.symbols)
    v_re = current * (q["beta"] + 1) / q["beta"] * r_e
    # Never more forward bias than the start's own V_BE either: a hot junction with
    # a large I_S (V_BE ~ 0.25 V at 400 K) biased by 0.55 V would carry amperes,
    # and Newton wanders off with the emitter above the base.
    v_bc = sp.Min(v_be, SATURATED_VBC_START)
    if c.sense == "n":
        v_b = sp.Min(v_re + v_be, v_out + v_bc)
        c.start("e", v_b - v_be)
    else:
        v_b = sp.Max(v_cc - v_re - v_be, v_out - v_bc)
        c.start("e", v_b + v_be)
    c.start("b", v_b)
    return v_b
