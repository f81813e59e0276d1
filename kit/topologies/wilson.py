"""Wilson current mirrors: the three-transistor mirror and the improved four-transistor one.

NPN sink (the PNP source is its mirror image: emitters at V_CC, I_REF drawn
from the input node to 0 V)::

    I_REF --> x ----+-------- Q3 base             load -> out = Q3 collector
                    |                             Q3 emitter = y
         (4-T: Q4 diode x -> w)
                    |
              Q1 collector (x, or w)   Q1 base = y   Q1 emitter = 0
              Q2 diode-connected: base = collector = y, emitter = 0

Q3 feeds its emitter current into the diode Q2; Q1 copies it and takes it
away from Q3's base — a local negative-feedback loop that cancels the base
current error to second order.  The improved form adds the diode Q4 so that
Q1 sits at V_CE ≈ V_BE like Q2, which removes the Early-effect mismatch
(V_CE1 ≈ 2 V_BE in the three-transistor form).  Unknowns: V_x, V_y (and
V_w); the load voltage is imposed at Q3's collector.

Closed forms (each transistor its own β; ``a = I_S1/I_S2`` so that
``I_C1 = a I_C2`` at V_A → ∞; derived here, and reducing for matched parts to
the ratio of Wilson, IEEE J. Solid-State Circuits SC-3, 1968, as given in
Gray, Hurst, Lewis & Meyer, *Analysis and Design of Analog Integrated
Circuits*, ch. 4, from memory)::

    I_REF / I_out = a (β3 + 1) / (β3 (1 + 1/β2 + a/β1)) + 1/β3
    matched:  I_out / I_REF = β(β+2)/(β² + 2β + 2) = 1 - 2/(β² + 2β + 2)

The same expression holds for the four-transistor form (Q4's gain drops
out: its emitter current is Q1's collector current).  With the Early effect
every β becomes ``β (1 + V_CE/V_A)`` and ``a`` becomes ``a (1 + V_CE1/V_A1) /
(1 + V_CE2/V_A2)`` (base currents carry no Early factor in this model), with
each V_CE estimated from V_BE(on).

Output resistance: about ``β r_o3 / 2`` (Gray et al., ch. 4, from memory);
the exact small-signal value comes from the nodal analysis of the circuit's
own hybrid-π models (:func:`kit.circuit.blocks.nodal_output_resistance`).

Examples
--------
>>> import kit
>>> ev = kit.evaluate(kit.design("wilson_mirror", i_ref="1 mA", v_supply=12, v_load=5))
>>> abs(ev.i_out / 1e-3 - 1) < 0.01, ev.compliance.low.part
(True, 'Q3')
"""

from __future__ import annotations

from kit.circuit.blocks import hand_vbe, nodal_output_resistance, reference_current, start_from_rail
from kit.devices.bjt import ALPHA_ONE, BASE_CURRENT_NEGLECTED, FORWARD_ACTIVE, KIND as BJT, NO_EARLY, VBE_FIXED
from kit.topologies import common, drawing
from kit.topologies.base import Topology
from kit.words import ISOTHERMAL

STACK_START = 0.3  # V; least distance kept between node x and node y in a start
LABEL_ROOM = 1.8  # drawing units left of the reference source for its two-line label

WILSON_SOURCE = ("Wilson, IEEE J. Solid-State Circuits SC-3 (1968); Gray, Hurst, Lewis & Meyer, "
                 "ch. 4 (from memory); per-transistor form derived here")


def _values(i_ref, supply, load):
    return (common.i_ref(i_ref), common.I_REF_TC,
            common.supply(supply, "supply voltage feeding the reference current "
                                  "(emitter rail of a PNP mirror)"),
            common.load(load))


def wilson_ratio(beta_1, beta_2, beta_3, a=1):
    """Output-to-reference ratio of a Wilson mirror (no Early effect).

    Parameters
    ----------
    beta_1, beta_2, beta_3 : float or sympy expression
        Current gains I_C/I_B of Q1 (copying), Q2 (diode) and Q3 (output).
    a : float or sympy expression
        ``I_C1 / I_C2`` at equal V_BE (the saturation-current ratio).

    Examples
    --------
    >>> round(wilson_ratio(100, 100, 100), 8)  # 1 - 2/(β² + 2β + 2)
    0.99980396
    """
    return 1 / (a * (beta_3 + 1) / (beta_3 * (1 + 1 / beta_2 + a / beta_1)) + 1 / beta_3)


def _build(c, four):
    """The exact circuit; ``four`` adds the diode Q4 in Q1's collector."""
    npn = c.supply_and_load()
    for node in ("x", "y") + (("w",) if four else ()):
        c.node(node)
    rail = "0" if npn else "cc"
    i_ref = reference_current(c, "x", sink=npn)
    q1 = c.add(BJT, "Q1", b="y", c="w" if four else "x", e=rail)
    q2 = c.add(BJT, "Q2", b="y", c="y", e=rail)
    q3 = c.add(BJT, "Q3", b="x", c="out", e="y")
    if four:
        c.add(BJT, "Q4", b="x", c="x", e="w")
    v_on = hand_vbe(c)

    a = q1["I_S"] / q2["I_S"]
    # Height of the output above the emitter rail (forward sense for either polarity).
    height = c.voltages["out"] - c.voltages[rail] if npn else c.voltages[rail] - c.voltages["out"]
    early_1 = 1 + (1 if four else 2) * v_on / q1["V_A"]  # V_CE1 = V_BE (4-T) or 2 V_BE (3-T)
    early_2 = 1 + v_on / q2["V_A"]
    early_3 = 1 + (height - v_on) / q3["V_A"]
    c.closed_form("ideal", i_ref, "ideal mirror, I_out = I_REF",
                  (BASE_CURRENT_NEGLECTED.key, ALPHA_ONE.key, NO_EARLY.key, ISOTHERMAL.key),
                  "hand analysis, common practice")
    c.closed_form("finite_beta", i_ref * wilson_ratio(q1["beta"], q2["beta"], q3["beta"], a),
                  "finite β (Wilson ratio, per-transistor β)",
                  (NO_EARLY.key, FORWARD_ACTIVE.key, ISOTHERMAL.key), WILSON_SOURCE)
    c.closed_form("finite_beta_early",
                  i_ref * wilson_ratio(q1["beta"] * early_1, q2["beta"] * early_2, q3["beta"] * early_3,
                                       a * early_1 / early_2),
                  "finite β and Early effect, V_CE from V_BE(on)",
                  (VBE_FIXED.key, FORWARD_ACTIVE.key, ISOTHERMAL.key),
                  "derived here (Early factor 1 + V_CE/V_A on each collector current)")

    _start(c, rail, height, four)

    c.extra("r_out_hybrid_pi", nodal_output_resistance(c),
            "R_out, exact hybrid-π nodal analysis of the mirror")
    point = q3.small_signal
    c.extra("r_out_beta_ro_half", point["beta"] * point["r_o"] / 2,
            "R_out ≈ β r_o3 / 2 (Gray et al., ch. 4, from memory)")


def _start(c, rail, height, four):
    """Node voltages from the finite-β closed form (exact for V_A -> inf).

    A saturated Q3 clamps the input node a junction drop beyond its
    collector; once the output falls below node y, Q3 drags y down with it.
    Kept because the generic continuation is not enough: from 0 V it does not
    reach the PNP's nodes near V_CC, loses half of the load window (the
    saturated side) and solves Monte-Carlo arrays several times slower.
    """
    import sympy as sp

    q1, q2, q3 = (c.parts[name] for name in ("Q1", "Q2", "Q3"))
    current = c.form("finite_beta")
    a = q1["I_S"] / q2["I_S"]
    i_c2 = current * (q3["beta"] + 1) / q3["beta"] / (1 + 1 / q2["beta"] + a / q1["beta"])
    h_y = BJT.start(q2.sense, i_c2, q2.symbols)
    h_x = sp.Min(h_y + BJT.start(q3.sense, current, q3.symbols), height + common.SATURATED_VBC_START)
    heights = {"x": h_x, "y": sp.Min(h_y, h_x - STACK_START, height)}
    if four:
        q4 = c.parts["Q4"]
        i_c4 = a * i_c2 * q4["beta"] / (q4["beta"] + 1)
        heights["w"] = h_x - BJT.start(q4.sense, i_c4, q4.symbols)
    start_from_rail(c, rail, heights)


def build_wilson(c):
    """The three-transistor Wilson mirror."""
    _build(c, four=False)


def build_improved(c):
    """The improved (four-transistor) Wilson mirror."""
    _build(c, four=True)


# ---------------------------------------------------------------------------
# schematics

def _draw(sheet, d, four):
    """Q1 (facing left) and diode Q2 on one base line, Q3 above Q2, I_REF above Q1.

    The PNP picture is the NPN one mirrored top to bottom (``s`` = -1).
    """
    import schemdraw.elements as elm

    npn = sheet.sink
    s = 1.0 if npn else -1.0
    q1, q2 = drawing.mirror_pair(sheet)
    # Q2 diode: collector strapped to the base line; this is node y.
    y_node = (q2.collector[0], q2.collector[1] + s * 0.5)
    elm.Line().at(q2.collector).to(y_node)
    strap = (q2.base[0] - 0.6, y_node[1])
    elm.Line().at(y_node).to(strap)
    elm.Line().at(strap).toy(q2.base[1])
    elm.Dot().at((strap[0], q2.base[1]))
    elm.Dot().at(y_node)
    # Q3 above node y; its emitter comes down to y.
    q3 = drawing.transistor(npn, label="Q3").anchor("emitter").at((y_node[0], y_node[1] + s * 1.4))
    elm.Line().at(q3.emitter).to(y_node)
    drawing.output_terminal(q3.collector, npn)
    if four:
        # Q4 diode between Q1's collector (w) and the input node x, strapped on its left.
        q4 = drawing.transistor(npn, label="Q4").anchor("emitter").at(
            (q1.collector[0], q1.collector[1] + s * 0.5))
        elm.Line().at(q1.collector).to(q4.emitter)
        top = (q4.collector[0], q3.base[1])
        elm.Line().at(q4.collector).to(top)
        knee = (q4.base[0] - 0.4, q4.base[1])
        elm.Line().at(q4.base).to(knee)
        elm.Line().at(knee).toy(top[1] - s * 0.3)
        elm.Line().tox(top[0])
        elm.Dot().at((top[0], top[1] - s * 0.3))
    else:
        top = (q1.collector[0], q3.base[1])
        elm.Line().at(q1.collector).to(top)
    elm.Dot().at(top)
    elm.Line().at(top).to(q3.base)
    drawing.reference_feed(sheet, top, npn)
    # schemdraw underestimates text width: leave room for the I_REF label.
    elm.Gap().at((top[0], top[1] + s * 1.5)).left(LABEL_ROOM)


def draw_wilson(sheet, d):
    """Schematic of the three-transistor mirror with the present values."""
    _draw(sheet, d, four=False)


def draw_improved(sheet, d):
    """Schematic of the four-transistor mirror with the present values."""
    _draw(sheet, d, four=True)


# ---------------------------------------------------------------------------
# registry entries

NOTES = (
    "The mirror closes a local feedback loop through Q3 and Q1: with a capacitive load it "
    "can ring or oscillate; check the step response, and add a small capacitor across "
    "Q1's collector–base (or an emitter resistor in Q3) if it does.",
    "The reference current I_REF is ideal here; its own compliance needs about 2 V_BE "
    "plus its headroom below the supply.",
    "Check Q3's dissipation at the highest load voltage against its package rating.",
) + common.SAFETY_NOTES

TOPOLOGIES = (
    Topology(
        key="wilson_mirror",
        order=60,
        title="Wilson current mirror (three transistors)",
        description=("Diode Q2 and copying transistor Q1 under output transistor Q3, whose base is "
                     "the input node: local feedback makes the base-current error second order "
                     "in 1/β and raises R_out to about β r_o/2. Ideal reference current."),
        values=_values(750e-6, 15.0, 7.5),
        build=build_wilson,
        draw=draw_wilson,
        notes=NOTES,
    ),
    Topology(
        key="improved_wilson_mirror",
        order=65,
        title="Improved Wilson current mirror (four transistors)",
        description=("The Wilson mirror with diode Q4 in Q1's collector, so that Q1 and Q2 both "
                     "sit at V_CE ≈ V_BE: the Early-effect mismatch of the three-transistor form "
                     "goes away. Ideal reference current."),
        values=_values(2e-3, 12.0, 5.0),
        build=build_improved,
        draw=draw_improved,
        notes=NOTES,
    ),
)
