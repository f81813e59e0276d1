"""V_BE-referenced two-transistor source (NPN sink, PNP source).

The sense transistor Q1 holds the sense resistor ``R_S`` at its own
``V_BE``: when the output current rises, Q1 conducts harder and pulls the
pass transistor Q2's base down, so ``I ≈ V_BE1/R_S`` (Gray, Hurst, Lewis &
Meyer, *Analysis and Design of Analog ICs*, ch. 4, V_BE-referenced bias,
from memory).  A resistor ``R_B`` from the supply feeds Q1's collector and
Q2's base, and so sets Q1's current.

NPN sink::

    V_CC --R_B--+-- b (Q2 base, Q1 collector)     load -> out = Q2 collector
                |                                 Q2 emitter = e (Q1 base) --R_S-- 0
                Q1: base e, emitter 0

PNP source: the mirror image, R_S from V_CC to e, Q1's emitter at V_CC,
R_B from b to 0, Q2's collector drives the load to 0.  Unknowns V_b, V_e.

Closed forms (derived here from KCL at b and e):

* ``I = V_BE(on)/R_S`` — the hand rule;
* sense current from the feed resistor, base currents neglected, pass
  ``V_BE`` at ``V_BE(on)``: ``R_B I_C1 + V_T ln(I_C1/I_S1) = V_CC - V_BE(on)``, so
  ``I_C1 = (V_T/R_B) omega((V_CC - V_BE(on))/V_T + ln(I_S1 R_B/V_T))`` and
  ``I = V_T ln(I_C1/I_S1)/R_S``;
* with both base currents (V_A → ∞), ``A I_C1 + B V_T ln(I_C1/I_S1) = C`` with
  ``A = 1 + 1/(β1(β2+1))``, ``B = 1/R_B + 1/(R_S(β2+1))``, ``C = (V_CC - V_BE(on))/R_B``:
  ``I_C1 = (B V_T/A) omega(C/(B V_T) + ln(A I_S1/(B V_T)))``,
  ``I = β2/(β2+1) (V_BE1/R_S + I_C1/β1)``.

Output resistance: a hybrid-π model of both transistors solved for the test
current at the output (derived here with SymPy); for a large loop gain it
tends to the ``(β2 + 1) r_o2`` ceiling.

Examples
--------
>>> import kit
>>> ev = kit.evaluate(kit.design("vbe_reference_source", r_s=120))
>>> v_be = ev.transistors["Q1"]["v_be"]
>>> abs(ev.i_out * 120 / v_be - 1) < 0.02  # I ≈ V_BE1/R_S
True
"""

from __future__ import annotations

import numpy as np

from kit.topologies.base import Simplification, Topology, ValueSpec

SMALLEST_GUESS_CURRENT = 1e-9  # A

VALUES = (
    ValueSpec("r_s", "Ω", "sense resistor (carries the output current)", 120.0, 1e-2, 1e8, "resistor"),
    ValueSpec("r_bias", "Ω", "feed resistor R_B from the supply to Q2's base and Q1's collector",
              22e3, 1e-2, 1e9, "resistor"),
    ValueSpec("v_supply", "V", "supply voltage", 12.0, 0.1, 1000.0, "supply"),
    ValueSpec("v_load", "V", "pass collector (load) voltage against 0 V", 6.0, -1000.0, 1000.0,
              "load"),
)

SOURCE_HAND = "Gray, Hurst, Lewis & Meyer, Analysis and Design of Analog ICs, ch. 4 (from memory)"

SIMPLIFICATIONS = (
    Simplification("vbe_over_rs", "hand rule V_BE(on)/R_S",
                   ("base_current_neglected", "alpha_one", "vbe_fixed", "no_early"), SOURCE_HAND),
    Simplification("sense_from_feed", "sense V_BE from the feed current (Wright ω), β → ∞",
                   ("base_current_neglected", "alpha_one", "vbe_fixed", "no_early", "forward_active"),
                   "derived here (pass V_BE at V_BE(on)); cf. " + SOURCE_HAND),
    Simplification("sense_exponential", "sense V_BE with both base currents (Wright ω)",
                   ("vbe_fixed", "no_early", "forward_active"),
                   "derived here (pass V_BE at V_BE(on), sense junction exponential)"),
)


def _small_signal_r_out(gm, r_pi, r_o, r_feed, r_sense):
    """R_out of the two-transistor loop, hybrid-π (derived here by solving KCL at b and e).

    ``gm``, ``r_pi``, ``r_o`` are dicts keyed ``"sense"`` and ``"pass"``.  The
    linear solve runs on plain symbols, then the operating-point expressions
    are put in (solving with them in place is far slower).
    """
    import sympy as sp

    names = ("g_s g_p rpi_s rpi_p ro_s ro_p r_b r_s")
    g_s, g_p, rpi_s, rpi_p, ro_s, ro_p, rb, rs = sp.symbols(names, positive=True)
    v_b, v_e = sp.symbols("v_b v_e")
    v_out = sp.Integer(1)  # test voltage; the supply and 0 V are AC ground
    i_c_pass = g_p * (v_b - v_e) + (v_out - v_e) / ro_p
    i_b_pass = (v_b - v_e) / rpi_p
    i_c_sense = g_s * v_e + v_b / ro_s
    i_b_sense = v_e / rpi_s
    solution = sp.solve([v_b / rb + i_c_sense + i_b_pass,
                         v_e / rs + i_b_sense - i_c_pass - i_b_pass], [v_b, v_e], dict=True)[0]
    r_out = sp.factor(v_out / i_c_pass.subs(solution))
    return r_out.xreplace({g_s: gm["sense"], g_p: gm["pass"], rpi_s: r_pi["sense"],
                           rpi_p: r_pi["pass"], ro_s: r_o["sense"], ro_p: r_o["pass"],
                           rb: r_feed, rs: r_sense})


def build(polarity):
    """The exact equations of one polarity."""
    import sympy as sp

    from kit.circuit import Circuit
    from kit.derive import wright_omega_function

    npn = polarity == "npn"
    c = Circuit(polarity)
    c.rail("0", 0)
    c.rail("cc", c.parameter("v_supply"))
    c.rail("out", c.parameter("v_load"))
    c.output("out", 1 if npn else -1)
    c.node("b")
    c.node("e")
    emitter_rail = "0" if npn else "cc"
    if npn:
        r_b = c.resistor("R_B", "cc", "b", "r_bias")
        r_s = c.resistor("R_S", "e", "0", "r_s")
    else:
        r_b = c.resistor("R_B", "b", "0", "r_bias")
        r_s = c.resistor("R_S", "cc", "e", "r_s")
    sense = c.transistor("Q1", polarity, "e", "b", emitter_rail)
    pass_ = c.transistor("Q2", polarity, "b", "out", "e")
    v_on = c.operating_value(
        "V_BE_on", c.parameter("v_be_on") + c.parameter("v_be_tc") * (c.temp - c.t_ref))

    omega = wright_omega_function()
    v_cc = c.voltages["cc"]
    v_t1, i_s1, beta1, beta2 = sense["V_T"], sense["I_S"], sense["beta"], pass_["beta"]
    ideal_sense = v_t1 / r_b * omega((v_cc - v_on) / v_t1 + sp.log(i_s1 * r_b / v_t1))
    a = 1 + 1 / (beta1 * (beta2 + 1))
    b = 1 / r_b + 1 / (r_s * (beta2 + 1))
    loaded_sense = b * v_t1 / a * omega((v_cc - v_on) / r_b / (b * v_t1) + sp.log(a * i_s1 / (b * v_t1)))
    closed_forms = {
        "vbe_over_rs": v_on / r_s,
        "sense_from_feed": v_t1 * sp.log(ideal_sense / i_s1) / r_s,
        "sense_exponential": beta2 / (beta2 + 1) * (v_t1 * sp.log(loaded_sense / i_s1) / r_s
                                                    + loaded_sense / beta1),
    }

    j = c.transistors
    small = {"gm": {}, "r_pi": {}, "r_o": {}}
    for role, name, device in (("sense", "Q1", sense), ("pass", "Q2", pass_)):
        small["gm"][role] = j[name]["i_c"] / device["V_T"]
        small["r_pi"][role] = device["V_T"] / j[name]["i_b"]
        small["r_o"][role] = (device["V_A"] + j[name]["v_ce"]) / j[name]["i_c"]
    extras = {
        "r_out_hybrid_pi": _small_signal_r_out(small["gm"], small["r_pi"], small["r_o"], r_b, r_s),
        "r_out_beta_ro": (j["Q2"]["i_c"] / j["Q2"]["i_b"] + 1) * small["r_o"]["pass"],
    }
    return c.equations(extras=extras, closed_forms=closed_forms,
                       hand_parameters=("v_be_on", "v_be_tc"))


def guess(model, q):
    """Node voltages from the ``sense_exponential`` closed form (in ``model.unknowns`` order)."""
    index = model.operating_index

    def value(name):
        return q[index[name]]

    forms = model.closed_forms(q)
    current = forms["sense_exponential"]
    current = np.where(np.isfinite(current) & (current > 0), current, forms["vbe_over_rs"])
    current = np.maximum(current, SMALLEST_GUESS_CURRENT)
    # The feed resistor carries Q1's current; two junction drops sit across the rest.
    feed_drop = np.abs(value("V_CC")) - 2 * value("V_BE_on")
    sense_current = np.maximum(feed_drop / value("R_B"), SMALLEST_GUESS_CURRENT)
    v_be_sense = value("V_T_Q1") * np.log(sense_current / value("I_S_Q1"))
    v_be_pass = value("V_T_Q2") * np.log(current / value("I_S_Q2"))
    v_out = value("V_OUT")
    # In hard saturation the pass transistor is a closed switch: its emitter
    # follows the collector and its base sits a junction drop above both.
    if model.polarity == "npn":
        v_e = np.minimum(v_be_sense, v_out)
        v_b = v_e + v_be_pass
    else:
        v_cc = value("V_CC")
        v_e = np.maximum(v_cc - v_be_sense, v_out)
        v_b = v_e - v_be_pass
    order = {"V_b": v_b, "V_e": v_e}
    return np.stack([order[name] for name in model.unknowns])


def draw(design, d):
    """Schematic with the present values (see :mod:`kit.schematic`).

    The PNP source is the NPN picture mirrored top to bottom.
    """
    import schemdraw.elements as elm

    from kit.quantities import format_quantity
    from kit.schematic import value_label

    npn = design.polarity == "npn"
    s = 1 if npn else -1  # y of the NPN picture times s
    transistor = elm.BjtNpn if npn else elm.BjtPnp

    def at(x, y):
        return (x, s * y)

    def wire(*points):
        for a, b in zip(points, points[1:]):
            elm.Line().at(at(*a)).to(at(*b))

    feed_rail, sense_rail = 0.0, -6.5  # V_CC and 0 V for the NPN; exchanged for the PNP
    elm.Resistor().at(at(0, feed_rail)).to(at(0, -2.5)).label(value_label(design, "r_bias", "R_B"))
    elm.Dot().at(at(0, -2.5))
    transistor(circle=True).right().anchor("base").at(at(1.5, -2.5)).label("Q2\npass", loc="right")
    transistor(circle=True).right().reverse().anchor("base").at(at(0.75, -4.0)).label(
        "Q1\nsense", loc="left")
    wire((0, -2.5), (1.5, -2.5))  # b: feed to the pass base
    wire((0, -3.3), (0, -2.5))  # sense collector to b
    wire((2.25, -1.8), (2.25, -1.0))  # pass collector to the load
    elm.Dot(open=True).at(at(2.25, -1.0)).label("load\n(sink)" if npn else "load\n(source)",
                                                 loc="right")
    wire((2.25, -3.2), (2.25, -4.0), (0.75, -4.0))  # e: pass emitter to the sense base
    elm.Dot().at(at(2.25, -4.0))
    elm.Resistor().at(at(2.25, -4.0)).to(at(2.25, sense_rail)).label(
        value_label(design, "r_s", "R_S"), loc="bottom")
    wire((0, -4.7), (0, sense_rail), (2.25, sense_rail))
    wire((0, feed_rail), (2.5, feed_rail))
    supply = f"V_CC {format_quantity(design.values['v_supply'], 'V')}"
    if npn:
        elm.Vdd().at(at(1.25, feed_rail)).label(supply)
        elm.Ground().at(at(1.1, sense_rail))
    else:
        elm.Ground().at(at(1.25, feed_rail))
        elm.Vdd().at(at(1.1, sense_rail)).label(supply)


NOTES = (
    "I ≈ V_BE/R_S falls with temperature by about 0.3 %/K (V_BE's drift over V_BE).",
    "Q1 and Q2 form a feedback loop: with a capacitive load or long leads add a base stopper "
    "or a small capacitor at Q2's base and check for oscillation.",
    "Q2 dissipates (V_CE) I at the highest load voltage; check it against the package.",
)

TOPOLOGY = Topology(
    key="vbe_reference_source",
    order=100,
    title="V_BE-referenced two-transistor source",
    description=("A sense transistor holds the sense resistor at its own V_BE and steers the pass "
                 "transistor's base, fed through R_B from the supply: I ≈ V_BE/R_S. NPN sinks, "
                 "PNP sources."),
    polarities=("npn", "pnp"),
    transistors=("Q1", "Q2"),
    output_transistor="Q2",
    values=VALUES,
    simplifications=SIMPLIFICATIONS,
    build=build,
    guess=guess,
    draw=draw,
    notes=NOTES,
    extras={"r_out_hybrid_pi": "R_out, hybrid-π model of both transistors (derived)",
            "r_out_beta_ro": "R_out ceiling (β₂ + 1) r_o2"},
)
