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
  ``I_C1 = (V_T/R_B) ω((V_CC - V_BE(on))/V_T + ln(I_S1 R_B/V_T))`` and
  ``I = V_T ln(I_C1/I_S1)/R_S``;
* with both base currents (V_A → ∞), ``A I_C1 + B V_T ln(I_C1/I_S1) = C`` with
  ``A = 1 + 1/(β1(β2+1))``, ``B = 1/R_B + 1/(R_S(β2+1))``, ``C = (V_CC - V_BE(on))/R_B``
  (an equation in amperes; divided by A, a junction law of slope ``B V_T/A``):
  ``I_C1 = (B V_T/A) ω(C/(B V_T) + ln(A I_S1/(B V_T)))``,
  ``I = β2/(β2+1) (V_BE1/R_S + I_C1/β1)``.

Output resistance: the hybrid-π models of both transistors and the two
resistors solved by nodal analysis for the test current at the output;
for a large loop gain it tends to the ``(β2 + 1) r_o2`` ceiling.

Examples
--------
>>> import kit
>>> ev = kit.evaluate(kit.design("vbe_reference_source", r_s=120))
>>> v_be = ev.parts["Q1"].quantities["v_be"]
>>> abs(ev.i_out * 120 / v_be - 1) < 0.02  # I ≈ V_BE1/R_S
True
"""

from __future__ import annotations

from kit.circuit.blocks import hand_vbe, junction_behind_resistor, nodal_output_resistance, positive_or
from kit.devices.bjt import ALPHA_ONE, BASE_CURRENT_NEGLECTED, FORWARD_ACTIVE, KIND as BJT, NO_EARLY, VBE_FIXED
from kit.topologies import common
from kit.topologies.base import Topology, Value

VALUES = (
    Value("r_s", "Ω", "sense resistor (carries the output current)", 120.0, 1e-2, 1e8, "resistor"),
    Value("r_bias", "Ω", "feed resistor R_B from the supply to Q2's base and Q1's collector",
          22e3, 1e-2, 1e9, "resistor"),
    common.supply(12.0, "supply voltage", low=0.1),
    common.load(6.0, "pass collector (load) voltage against 0 V"),
)

SOURCE_HAND = "Gray, Hurst, Lewis & Meyer, Analysis and Design of Analog ICs, ch. 4 (from memory)"


def build(c):
    """The exact circuit: feed resistor, sense transistor Q1 across R_S, pass transistor Q2."""
    import sympy as sp

    npn = c.supply_and_load()
    c.node("b")
    c.node("e")
    emitter_rail = "0" if npn else "cc"
    r_b = c.resistor("R_B", *(("cc", "b") if npn else ("b", "0")), "r_bias")
    r_s = c.resistor("R_S", *(("e", "0") if npn else ("cc", "e")), "r_s")
    sense = c.add(BJT, "Q1", b="e", c="b", e=emitter_rail)
    pass_ = c.add(BJT, "Q2", b="b", c="out", e="e")
    v_on = hand_vbe(c)

    v_cc = c.voltages["cc"]
    v_t1, i_s1, beta1, beta2 = sense["V_T"], sense["I_S"], sense["beta"], pass_["beta"]
    # R_B I_C1 + V_T ln(I_C1/I_S1) = V_CC - V_BE(on): Q1 behind the feed resistor.
    ideal_sense = junction_behind_resistor(v_cc - v_on, r_b, v_t1, i_s1)
    # A I_C1 + B V_T ln(I_C1/I_S1) = C, an equation in amperes: divided by A it is the
    # same law with a factor 1 for the resistor and B V_T/A for the slope.
    a = 1 + 1 / (beta1 * (beta2 + 1))
    b = 1 / r_b + 1 / (r_s * (beta2 + 1))
    loaded_sense = junction_behind_resistor((v_cc - v_on) / r_b / a, 1, b * v_t1 / a, i_s1)
    c.closed_form("vbe_over_rs", v_on / r_s, "hand rule V_BE(on)/R_S",
                  (BASE_CURRENT_NEGLECTED.key, ALPHA_ONE.key, VBE_FIXED.key, NO_EARLY.key), SOURCE_HAND)
    c.closed_form("sense_from_feed", v_t1 * sp.log(ideal_sense / i_s1) / r_s,
                  "sense V_BE from the feed current (Wright ω), β → ∞",
                  (BASE_CURRENT_NEGLECTED.key, ALPHA_ONE.key, VBE_FIXED.key, NO_EARLY.key, FORWARD_ACTIVE.key),
                  "derived here (pass V_BE at V_BE(on)); cf. " + SOURCE_HAND)
    sense_drop = v_t1 * sp.log(loaded_sense / i_s1)
    with_base_currents = beta2 / (beta2 + 1) * (sense_drop / r_s + loaded_sense / beta1)
    loaded = c.closed_form("sense_exponential", with_base_currents, "sense V_BE with both base currents (Wright ω)",
                           (VBE_FIXED.key, NO_EARLY.key, FORWARD_ACTIVE.key),
                           "derived here (pass V_BE at V_BE(on), sense junction exponential)")

    c.extra("r_out_hybrid_pi", nodal_output_resistance(c),
            "R_out, hybrid-π model of both transistors (nodal analysis)")
    point = pass_.small_signal
    c.extra("r_out_beta_ro", (point["beta"] + 1) * point["r_o"], "R_out ceiling (β₂ + 1) r_o2")
    _start(c, sense, pass_, positive_or(loaded), r_b, v_on)


def _start(c, sense, pass_, current, r_b, v_on):
    """Node voltages from the loaded closed form; in hard saturation Q2's emitter follows its collector.

    Source stepping from 0 V finds no saturated point: the pass transistor,
    a closed switch there, holds its base a junction drop beyond both.
    """
    import sympy as sp

    # The feed resistor carries Q1's current; two junction drops sit across the rest.
    v_cc, v_out = c.voltages["cc"], c.voltages["out"]
    feed = positive_or((sp.Abs(v_cc) - 2 * v_on) / r_b)
    v_be_sense = BJT.start(sense.sense, feed, sense.symbols)
    v_be_pass = BJT.start(pass_.sense, current, pass_.symbols)
    if c.sense == "n":
        v_e = sp.Min(v_be_sense, v_out)
        c.start("e", v_e)
        c.start("b", v_e + v_be_pass)
    else:
        v_e = sp.Max(v_cc - v_be_sense, v_out)
        c.start("e", v_e)
        c.start("b", v_e - v_be_pass)


def draw(sheet, d):
    """Schematic with the present values; the PNP source is the NPN picture mirrored top to bottom."""
    import schemdraw.elements as elm

    npn = sheet.sink
    s = 1 if npn else -1  # y of the NPN picture times s
    transistor = elm.BjtNpn if npn else elm.BjtPnp

    def at(x, y):
        return (x, s * y)

    def wire(*points):
        for a, b in zip(points, points[1:]):
            elm.Line().at(at(*a)).to(at(*b))

    feed_rail, sense_rail = 0.0, -6.5  # V_CC and 0 V for the NPN; exchanged for the PNP
    elm.Resistor().at(at(0, feed_rail)).to(at(0, -2.5)).label(sheet.label("r_bias", "R_B"))
    elm.Dot().at(at(0, -2.5))
    transistor(circle=True).right().anchor("base").at(at(1.5, -2.5)).label("Q2\npass", loc="right")
    transistor(circle=True).right().reverse().anchor("base").at(at(0.75, -4.0)).label(
        "Q1\nsense", loc="left")
    wire((0, -2.5), (1.5, -2.5))  # b: feed to the pass base
    wire((0, -3.3), (0, -2.5))  # sense collector to b
    wire((2.25, -1.8), (2.25, -1.0))  # pass collector to the load
    elm.Dot(open=True).at(at(2.25, -1.0)).label("load\n(sink)" if npn else "load\n(source)", loc="right")
    wire((2.25, -3.2), (2.25, -4.0), (0.75, -4.0))  # e: pass emitter to the sense base
    elm.Dot().at(at(2.25, -4.0))
    elm.Resistor().at(at(2.25, -4.0)).to(at(2.25, sense_rail)).label(sheet.label("r_s", "R_S"), loc="bottom")
    wire((0, -4.7), (0, sense_rail), (2.25, sense_rail))
    wire((0, feed_rail), (2.5, feed_rail))
    if npn:
        elm.Vdd().at(at(1.25, feed_rail)).label(sheet.supply())
        elm.Ground().at(at(1.1, sense_rail))
    else:
        elm.Ground().at(at(1.25, feed_rail))
        elm.Vdd().at(at(1.1, sense_rail)).label(sheet.supply())


NOTES = (
    "I ≈ V_BE/R_S falls with temperature by about 0.3 %/K (V_BE's drift over V_BE).",
    "Q1 and Q2 form a feedback loop: with a capacitive load or long leads add a base stopper "
    "or a small capacitor at Q2's base and check for oscillation.",
    "Q2 dissipates (V_CE) I at the highest load voltage; check it against the package.",
) + common.SAFETY_NOTES

TOPOLOGY = Topology(
    key="vbe_reference_source",
    order=100,
    title="V_BE-referenced two-transistor source",
    description=("A sense transistor holds the sense resistor at its own V_BE and steers the pass "
                 "transistor's base, fed through R_B from the supply: I ≈ V_BE/R_S. NPN sinks, "
                 "PNP sources."),
    values=VALUES,
    build=build,
    draw=draw,
    notes=NOTES,
)
