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

import numpy as np

from kit.topologies.base import Simplification, Topology, ValueSpec

VALUES = (
    ValueSpec("r1", "Ω", "divider resistor from the supply to the base", 33e3, 1e-2, 1e9, "resistor"),
    ValueSpec("r2", "Ω", "divider resistor from the base to 0 V", 10e3, 1e-2, 1e9, "resistor"),
    ValueSpec("r_e", "Ω", "emitter resistor", 2.2e3, 1e-2, 1e9, "resistor"),
    ValueSpec("v_supply", "V", "supply voltage", 12.0, 0.1, 1000.0, "supply"),
    ValueSpec("v_load", "V", "collector (load) voltage against 0 V", 8.0, -1000.0, 1000.0, "load"),
)

SIMPLIFICATIONS = (
    Simplification("stiff_divider", "stiff divider, fixed V_BE",
                   ("base_current_neglected", "alpha_one", "vbe_fixed", "no_early"),
                   "hand analysis, common practice"),
    Simplification("fixed_vbe", "fixed V_BE with base-current loading",
                   ("vbe_fixed", "no_early"),
                   "Sedra & Smith, Microelectronic Circuits, BJT biasing (from memory)"),
    Simplification("exponential", "exponential junction (Wright ω form)",
                   ("no_early", "forward_active"),
                   "derived here; cf. Banwell & Jayakumar, Electron. Lett. 36 (2000)"),
)


def build(polarity):
    """The exact equations of one polarity."""
    import sympy as sp

    from kit.circuit import Circuit, degenerated_output_resistance
    from kit.derive import wright_omega_function

    npn = polarity == "npn"
    c = Circuit(polarity)
    c.rail("0", 0)
    c.rail("cc", c.parameter("v_supply"))
    c.rail("out", c.parameter("v_load"))
    c.output("out", 1 if npn else -1)
    c.node("b")
    c.node("e")
    r1 = c.resistor("R1", "cc", "b", "r1")
    r2 = c.resistor("R2", "b", "0", "r2")
    r_e = c.resistor("R_E", "e", "0" if npn else "cc", "r_e")
    q1 = c.transistor("Q1", polarity, "b", "out", "e")
    v_on = c.operating_value(
        "V_BE_on", c.parameter("v_be_on") + c.parameter("v_be_tc") * (c.temp - c.t_ref))

    v_cc = c.voltages["cc"]
    beta, i_s = q1["beta"], q1["I_S"]
    v_t = q1["V_T"]  # at Q1's junction, so the closed forms hold with self-heating too
    drive = v_cc * (r2 if npn else r1) / (r1 + r2)
    r_th = r1 * r2 / (r1 + r2)
    k = (r_th + (beta + 1) * r_e) / beta
    omega = wright_omega_function()
    closed_forms = {
        "stiff_divider": (drive - v_on) / r_e,
        "fixed_vbe": beta * (drive - v_on) / (r_th + (beta + 1) * r_e),
        "exponential": v_t / k * omega(drive / v_t + sp.log(i_s * k / v_t)),
    }

    point = c.small_signal("Q1")
    r_out = degenerated_output_resistance(point["r_o"], point["beta"], point["r_pi"], r_e, r_th)
    return c.equations(extras={"r_out_hybrid_pi": r_out}, closed_forms=closed_forms,
                       hand_parameters=("v_be_on", "v_be_tc"))


SATURATED_VBC_GUESS = 0.55  # V


def guess(model, q):
    """Node voltages from the exponential closed form (exact for V_A -> inf)."""
    index = model.operating_index
    current = model.closed_forms(q)["exponential"]
    beta, i_s, v_t = (q[index[n]] for n in ("beta_Q1", "I_S_Q1", "V_T_Q1"))
    current = np.where(np.isfinite(current) & (current > 0), current, 1e-9)
    v_be = v_t * np.log(current / i_s)
    v_re = current * (beta + 1) / beta * q[index["R_E"]]
    v_out = q[index["V_OUT"]]
    # In saturation the collector pulls the base: keep the guessed
    # base-collector bias modest so Newton starts near the right branch.
    if model.polarity == "npn":
        v_b = np.minimum(v_re + v_be, v_out + SATURATED_VBC_GUESS)
        v_e = v_b - v_be
    else:
        v_b = np.maximum(q[index["V_CC"]] - v_re - v_be, v_out - SATURATED_VBC_GUESS)
        v_e = v_b + v_be
    order = {"V_b": v_b, "V_e": v_e}
    return np.stack([order[name] for name in model.unknowns])


def draw(design, d):
    """Schematic with the present values (see :mod:`kit.schematic`)."""
    import schemdraw.elements as elm

    from kit.quantities import format_quantity
    from kit.schematic import value_label

    npn = design.polarity == "npn"
    supply = format_quantity(design.values["v_supply"], "V")
    rail = elm.Vdd().label(f"V_CC {supply}")
    elm.Line().right(UNIT_WIDTH)
    elm.Line().left(UNIT_WIDTH).at(rail.start)
    elm.Resistor().down().label(value_label(design, "r1", "R1"))
    d.push()
    elm.Line().right(1.0)
    if npn:
        q = elm.BjtNpn(circle=True).anchor("base").label("Q1", loc="right")
        elm.Resistor().down().at(q.emitter).label(value_label(design, "r_e", "R_E"))
        elm.Ground()
        elm.Line().up(0.8).at(q.collector)
        elm.Dot(open=True).label("load (sink)", loc="right")
    else:
        q = elm.BjtPnp(circle=True).anchor("base").label("Q1", loc="right")
        elm.Resistor().up().at(q.emitter).toy(rail.start).label(value_label(design, "r_e", "R_E"))
        elm.Line().down(0.8).at(q.collector)
        elm.Dot(open=True).label("load (source)", loc="right")
    d.pop()
    elm.Resistor().down().label(value_label(design, "r2", "R2"))
    elm.Ground()


UNIT_WIDTH = 3.0


TOPOLOGY = Topology(
    key="divider_source",
    order=10,
    title="Divider-biased emitter-degenerated source",
    description=("One transistor with an emitter resistor, its base held by a resistive divider "
                 "from the supply (base-current loading included). NPN sinks, PNP sources."),
    polarities=("npn", "pnp"),
    transistors=("Q1",),
    output_transistor="Q1",
    values=VALUES,
    simplifications=SIMPLIFICATIONS,
    build=build,
    guess=guess,
    draw=draw,
    extras={"r_out_hybrid_pi": "R_out, hybrid-π form r_o[1 + βR_E/(R_E + r_π + R_B)] + R_E‖(r_π + R_B)"},
)
