"""Divider-biased, emitter-degenerated single-transistor source (NPN sink, PNP source).

NPN sink::

    V_CC --R1--+-- B          load -> out = Q1 collector
               |   Q1 base    Q1 emitter = E --R_E-- 0
    0    --R2--+

PNP source: R1 from V_CC to B, R2 from B to 0, R_E from V_CC to E, and the
collector drives the load to 0.  Unknowns: V_B, V_E; the load voltage is
imposed at the collector.  Base-current loading of the divider is in the
exact equations; the closed forms below show what neglecting it costs.

Closed forms (Thevenin drive ``V_TH = V_CC R2/(R1+R2)`` for the NPN,
``V_CC R1/(R1+R2)`` across the upper leg for the PNP, ``R_TH = R1 || R2``):

* stiff divider: ``I = (V_TH - V_BE(on)) / R_E``;
* fixed V_BE with base current: ``I = beta (V_TH - V_BE(on)) / (R_TH + (beta+1) R_E)``
  (Sedra & Smith, *Microelectronic Circuits*, BJT biasing, from memory);
* exponential junction, no Early effect, with ``K = (R_TH + (beta+1) R_E)/beta``:
  ``K I + V_T ln(I/I_S) = V_TH``, so ``I = (V_T/K) omega(V_TH/V_T + ln(I_S K / V_T))``
  (derived here; same structure as Banwell & Jayakumar, Electron. Lett. 36, 2000).

Small-signal output resistance (hybrid-pi, base returned through R_B = R_TH)::

    R_out = r_o [1 + beta R_E/(R_E + r_pi + R_B)] + R_E || (r_pi + R_B)
"""

from __future__ import annotations

from kit.circuit.blocks import (degenerated_output_resistance, divider_drive, hand_vbe,
                                junction_behind_resistor)
from kit.devices.bjt import (ALPHA_ONE, BASE_CURRENT_NEGLECTED, FORWARD_ACTIVE, KIND as BJT,
                             NO_EARLY, VBE_FIXED)
from kit.topologies import common
from kit.topologies.base import Topology, Value
from kit.topologies.drawing import UNIT_WIDTH

VALUES = (
    Value("r1", "Ω", "divider resistor from the supply to the base", 33e3, 1e-2, 1e9, "resistor"),
    Value("r2", "Ω", "divider resistor from the base to 0 V", 10e3, 1e-2, 1e9, "resistor"),
    Value("r_e", "Ω", "emitter resistor", 2.2e3, 1e-2, 1e9, "resistor"),
    Value("v_supply", "V", "supply voltage", 12.0, 0.1, 1000.0, "supply"),
    Value("v_load", "V", "collector (load) voltage against 0 V", {"npn": 8.0, "pnp": 2.0},
          -1000.0, 1000.0, "load"),
)

def build(c):
    """The exact circuit: divider, Q1 with its emitter resistor, load at the collector."""
    npn = c.supply_and_load()
    c.node("b")
    c.node("e")
    r1 = c.resistor("R1", "cc", "b", "r1")
    r2 = c.resistor("R2", "b", "0", "r2")
    r_e = c.resistor("R_E", "e", "0" if npn else "cc", "r_e")
    q1 = c.add(BJT, "Q1", b="b", c="out", e="e")
    v_on = hand_vbe(c)

    v_cc = c.voltages["cc"]
    beta, i_s = q1["beta"], q1["I_S"]
    v_t = q1["V_T"]  # at Q1's junction, so the closed forms hold with self-heating too
    drive, r_th = divider_drive(v_cc, r1, r2, across_bottom=npn)
    k = (r_th + (beta + 1) * r_e) / beta
    c.closed_form("stiff_divider", (drive - v_on) / r_e, "stiff divider, fixed V_BE",
                  (BASE_CURRENT_NEGLECTED.key, ALPHA_ONE.key, VBE_FIXED.key, NO_EARLY.key),
                  "hand analysis, common practice")
    c.closed_form("fixed_vbe", beta * (drive - v_on) / (r_th + (beta + 1) * r_e),
                  "fixed V_BE with base-current loading", (VBE_FIXED.key, NO_EARLY.key),
                  "Sedra & Smith, Microelectronic Circuits, BJT biasing (from memory)")
    exponential = c.closed_form(
        "exponential", junction_behind_resistor(drive, k, v_t, i_s), "exponential junction (Wright ω form)",
        (NO_EARLY.key, FORWARD_ACTIVE.key),
        "derived here; cf. Banwell & Jayakumar, Electron. Lett. 36 (2000)")

    point = q1.small_signal
    c.extra("r_out_hybrid_pi",
            degenerated_output_resistance(point["r_o"], point["beta"], point["r_pi"], r_e, r_th),
            "R_out, hybrid-π form r_o[1 + βR_E/(R_E + r_π + R_B)] + R_E‖(r_π + R_B)")

    # Start: the exponential form's current (exact for V_A -> inf), its V_BE and the
    # drop across R_E; in saturation the collector pulls the base.
    common.start_behind_emitter_resistor(c, q1, exponential, r_e)


def draw(sheet, d):
    """Schematic with the present values."""
    import schemdraw.elements as elm

    rail = elm.Vdd().label(sheet.supply())
    elm.Line().right(UNIT_WIDTH)
    elm.Line().left(UNIT_WIDTH).at(rail.start)
    elm.Resistor().down().label(sheet.label("r1", "R1"))
    d.push()
    elm.Line().right(1.0)
    if sheet.sink:
        q = elm.BjtNpn(circle=True).anchor("base").label("Q1", loc="right")
        elm.Resistor().down().at(q.emitter).label(sheet.label("r_e", "R_E"))
        elm.Ground()
        elm.Line().up(0.8).at(q.collector)
        elm.Dot(open=True).label("load (sink)", loc="right")
    else:
        q = elm.BjtPnp(circle=True).anchor("base").label("Q1", loc="right")
        elm.Resistor().up().at(q.emitter).toy(rail.start).label(sheet.label("r_e", "R_E"))
        elm.Line().down(0.8).at(q.collector)
        elm.Dot(open=True).label("load (source)", loc="right")
    d.pop()
    elm.Resistor().down().label(sheet.label("r2", "R2"))
    elm.Ground()


TOPOLOGY = Topology(
    key="divider_source",
    order=10,
    title="Divider-biased emitter-degenerated source",
    description=("One transistor with an emitter resistor, its base held by a resistive divider "
                 "from the supply (base-current loading included). NPN sinks, PNP sources."),
    values=VALUES,
    build=build,
    draw=draw,
)
