"""Improved Howland current pump: an op-amp and five resistors drive a grounded load, both ways.

::

    V_in --R1--+-- p (U1 + input)           0 V --R3--+-- n (U1 - input)
               |                                      |
              R2a                          o --R4-----+
               |                           |
    load  <----+-- out (load node)  --R2b--+ o (U1 output)

The load sits between ``out`` and 0 V; the kit holds ``out`` at the load
voltage.  Unknowns: V_p, V_n and the op-amp output V_o (driven by U1's
gain law, :mod:`kit.devices.opamp`: finite gain, offset with drift, bias
current into the - input; its output swing is its limit).  The pump is
bidirectional: ``I_out`` (out of the pump into the load) follows the sign
of ``V_in``, so the design has one polarity word, ``bidirectional``, and a
negative ``V_in`` gives a negative ``I_out`` (the pump sinks).

With ``R_2 = R_2a + R_2b`` and the bridge balanced, ``R_4/R_3 = R_2/R_1``::

    I_out = V_in R_2/(R_1 R_2b)       (ideal op-amp)

(the improved Howland of Pease, "A Comprehensive Study of the Howland
Current Pump", National Semiconductor AN-1515, 2008 -- from memory).  Here
it is derived in SymPy from the nodal equations: the circuit's own
Kirchhoff equations with U1's gain law are solved exactly for any ratios,
gain, offset and bias current (the closed form ``linear_opamp``, exact
while U1 stays inside its swing); its limit for infinite gain, no offset
and no bias current is ``ideal_any_ratios``, which the balance reduces to
the form above (the physics test takes that limit on equations written out
by hand).

Output resistance.  A ratio mismatch leaves a finite R_out; with an ideal
op-amp (derived here from the nodal equations, and checked there against
the exact solve)::

    R_out = R_2b (R_1 + R_2a) / (R_2 - R_1 R_4/R_3)

which for ``R_4/R_3 = (1 - eps) R_2/R_1`` is ``R_2b (R_1 + R_2a)/(eps R_2)``
and, with ``R_2a = 0`` (the basic Howland), Franco's ``R_1/eps`` (Franco,
*Design with Operational Amplifiers and Analog Integrated Circuits*, ch. 2,
the Howland current pump -- from memory).  R_out is infinite at balance
and negative past it (R_4/R_3 above R_2/R_1: the positive feedback wins).
The finite gain bounds R_out at balance; the nodal R_out of the
small-signal models (:func:`kit.circuit.blocks.nodal_output_resistance`)
carries it.

Compliance: the op-amp output swing.  With an ideal op-amp and the bridge
balanced, ``V_o = V_out (1 + R_2b/(R_1 + R_2a)) + V_in (R_2a/R_1)(1 + R_2b/(R_1 + R_2a))``
(derived here); the load voltage may go as far as keeps ``V_o`` within
``V_OL … V_OH``.  The op-amp's input common-mode range, output current
limit and stability are not modelled (see the notes).

The circuit is linear: the generic source stepping finds every point, so no
starting point is declared.

Examples
--------
>>> import kit
>>> ev = kit.evaluate(kit.design("howland", v_in="-0.5 V"))
>>> round(ev.i_out * 1e3, 4), ev.regions["U1"]
(-0.4988, 'linear')
"""

from __future__ import annotations

from kit.circuit.blocks import nodal_output_resistance
from kit.devices.opamp import IDEAL_OPAMP, KIND as OPAMP
from kit.topologies import common, drawing
from kit.topologies.base import Topology, Value
from kit.words import assumption

BALANCED = assumption("balanced_howland", "balanced bridge, R_4/R_3 = (R_2a + R_2b)/R_1",
                      excludes=("R3", "R4"))

# A ±1 mA/V bidirectional excitation of our own: 10 kΩ input and bridge resistors,
# R_2 = 9 kΩ + 1 kΩ, on a ±15 V op-amp.
VALUES = (
    Value("r1", "Ω", "input resistor from V_in to the + input", 10e3, 1.0, 1e9, "resistor"),
    Value("r2a", "Ω", "feedback resistor from the + input to the load node", 9e3, 1e-2, 1e9, "resistor"),
    Value("r2b", "Ω", "output resistor from the op-amp output to the load node", 1e3, 1e-2, 1e9, "resistor"),
    Value("r3", "Ω", "resistor from the − input to 0 V", 10e3, 1.0, 1e9, "resistor"),
    Value("r4", "Ω", "feedback resistor from the op-amp output to the − input", 10e3, 1.0, 1e9, "resistor"),
    Value("v_in", "V", "input voltage (either sign: the output current follows it)", 1.0, -100.0, 100.0),
    Value("v_supply", "V", "op-amp supply magnitude, ±V_S (U1's output swing stays within it)",
          15.0, 0.5, 1000.0, "supply"),
    common.load(2.0, "load-node voltage against 0 V (the grounded load's voltage)"),
)

# U1's defaults here: a general-purpose op-amp on ±15 V (generic values of our own).
# A general-purpose part's offset drifts a few µV/K (common practice, no source).
OPAMP_SPLIT = dict(a_ol=1e5, v_os=0.5e-3, v_os_tc=5e-6, i_bias=20e-9, v_oh=13.5, v_ol=-13.5)

DERIVED = "derived here (SymPy, nodal equations with the op-amp gain law)"
PEASE = ("Pease, A Comprehensive Study of the Howland Current Pump, National Semiconductor AN-1515 "
         "(2008, from memory); " + DERIVED)


def build(c):
    """Rails, the bridge, U1; closed forms solved from the circuit's own nodal equations."""
    import sympy as sp

    c.rail("0", 0)
    # U1 runs from ±V_S: its output swing stays within them.
    c.rail("vs_pos", c.parameter("v_supply"))
    c.rail("vs_neg", -c.parameter("v_supply"))
    c.rail("in", c.parameter("v_in"))
    c.rail("out", c.parameter("v_load"))
    c.output("out", -1)  # out of the pump into the grounded load
    for node in ("p", "n", "o"):
        c.node(node)
    # The op-amp first: a driven node takes its driver before any other part.
    u1 = c.add(OPAMP, "U1", p="p", n="n", o="o", vp="vs_pos", vn="vs_neg", typical=OPAMP_SPLIT)
    r1 = c.resistor("R1", "in", "p", "r1")
    r2a = c.resistor("R2a", "p", "out", "r2a")
    r2b = c.resistor("R2b", "o", "out", "r2b")
    r3 = c.resistor("R3", "n", "0", "r3")
    r4 = c.resistor("R4", "o", "n", "r4")

    v_in = c.voltages["in"]
    r2 = r2a + r2b
    c.closed_form("ideal", v_in * r2 / (r1 * r2b), "ideal op-amp, balanced bridge: I_out = V_in·R_2/(R_1·R_2b)",
                  (IDEAL_OPAMP.key, BALANCED.key), PEASE)
    linear = c.closed_form("linear_opamp", pump_current(c), "finite gain, offset and bias current, any ratios "
                           "(exact inside the output swing)", (), DERIVED)
    ideal = sp.factor(sp.limit(linear.subs({u1["V_OS"]: 0, u1["I_B"]: 0}), u1["A"], sp.oo))
    c.closed_form("ideal_any_ratios", ideal, "ideal op-amp, any ratios", (IDEAL_OPAMP.key,), DERIVED)
    c.extra("r_out_mismatch", r2b * (r1 + r2a) / (r2 - r1 * r4 / r3),
            "R_out = R_2b(R_1 + R_2a)/(R_2 − R_1R_4/R_3) (ideal op-amp; infinite at balance)")
    c.extra("r_out_nodal", nodal_output_resistance(c),
            "R_out by nodal analysis of the small-signal models (finite gain)")


def pump_current(c):
    """I_out solved from the circuit's nodal equations (linear in every unknown) in closed form."""
    import sympy as sp

    eq = c.equations()
    matrix, rhs = sp.linear_eq_to_matrix(eq.residuals, eq.unknowns)
    solution = dict(zip(eq.unknowns, matrix.LUsolve(rhs)))
    return sp.factor(eq.output.xreplace(solution))


# ---------------------------------------------------------------------------
# schematic

def draw(sheet, d):
    """Schematic with the present values: U1, the inverting bridge above, the pump below."""
    import schemdraw.elements as elm

    op = elm.Opamp(leads=True).label("U1", loc="center", ofst=(-0.35, 0))
    op.label(f"supply ±{sheet.text('v_supply')}", loc="bottom", fontsize=10)
    minus, plus, out = op.in1, op.in2, op.out
    # − input: R3 to 0 V on the left, R4 over the top to the output.
    elm.Line().at(minus).left(0.5)
    left = elm.Dot()
    elm.Resistor().left().label(sheet.label("r3", "R3"), loc="top")
    elm.Ground()
    elm.Line().at(left.center).up(1.5)
    elm.Resistor().tox(out[0] + 0.5).label(sheet.label("r4", "R4"), loc="top")
    elm.Line().toy(out)
    elm.Line().tox(out)
    # + input: R1 from V_in; R2a down to the load node.
    elm.Line().at(plus).left(0.5)
    node_p = elm.Dot()
    elm.Resistor().left().label(sheet.label("r1", "R1"), loc="bottom")
    text = f"V_in\n{sheet.text('v_in')}"
    source = elm.SourceV().down().reverse().label(text, loc="top")
    elm.Ground()
    drawing.make_room(source.center, "left", text, 0.6)
    elm.Resistor().at(node_p.center).down().label(sheet.label("r2a", "R2a"), loc="bottom")
    load = elm.Dot()
    # Output: R2b down and back to the load node.
    elm.Line().at(out).right(0.5)
    corner = elm.Dot()
    elm.Resistor().at(corner.center).down().label(sheet.label("r2b", "R2b"), loc="bottom")
    elm.Line().toy(load.center)
    elm.Line().tox(load.center)
    elm.Line().at(load.center).down(drawing.LEAD)
    tag = "load to 0 V (I_out ±)"
    dot = elm.Dot(open=True).label(tag, loc="right")
    drawing.make_room(dot.center, "right", tag)


# ---------------------------------------------------------------------------
# registry entry

NOTES = (
    "R_out depends on the ratio match: a relative mismatch ε of R_4/R_3 against R_2/R_1 leaves "
    "R_out ≈ R_2b(R_1 + R_2a)/(ε·R_2). Use a matched network (0.01 % or better) where R_out matters.",
    "A ratio past balance makes R_out negative: with a capacitive or inductive load the pump can "
    "oscillate or latch. Check stability with the real load; this DC model says nothing about it.",
    "The op-amp's input common-mode range must include V_p = V_n, which moves with the load "
    "voltage; its output must source and sink I_out plus the bridge currents.",
    "R_2b dissipates I_out² R_2b and the op-amp I_out (V_S − V_o): check both at the extremes of "
    "V_in and the load.",
) + common.SAFETY_NOTES

TOPOLOGY = Topology(
    key="howland",
    order=140,
    title="Improved Howland current pump (op-amp, grounded load)",
    description=("An op-amp with a balanced resistor bridge (R1, R2a + R2b, R3, R4) drives a grounded "
                 "load through R2b: I_out = V_in·R_2/(R_1·R_2b), either sign. Finite gain, offset and "
                 "bias current included; compliance set by the op-amp's output swing."),
    values=VALUES,
    build=build,
    draw=draw,
    polarities=("bidirectional",),
    notes=NOTES,
)
