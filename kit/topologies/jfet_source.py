"""Self-biased JFET current source: the two-terminal regulator (n-channel sink, p-channel source).

n-channel sink (the p-channel source is its mirror image, hung from the supply)::

    load -> out = J1 drain
    J1 source = s --R_S-- 0 V,   J1 gate = 0 V   (the far end of R_S)

p-channel source: R_S from V_supply to s, the gate at V_supply, the drain
into the load to 0 V.  Unknown: V_s.  The gate draws no current, so the
drain current flows through R_S and sets ``V_GS = -I R_S`` (n-channel,
signed; the p-channel's ``V_GS = +I R_S``).

Closed forms (Shockley's square law in saturation with ``V_GS = -I R_S``,
``V_P`` the pinch-off magnitude, at the operating temperature)::

    I = I_DSS (1 - R_S I/V_P)^2            (signed V_P < 0: I_DSS (1 + R_S I/V_P)^2)

a quadratic in ``x = R_S I/V_P``, ``a x^2 - (2a + 1) x + a = 0`` with
``a = I_DSS R_S/V_P``.  Its roots multiply to 1; the one below 1 keeps
``V_GS`` above pinch-off (the other is the square law's mirror image past
pinch-off, where the channel is shut), so::

    I = 2 I_DSS / (1 + 2a + sqrt(1 + 4a))

(the stable form of ``(V_P/R_S)(2a + 1 - sqrt(1 + 4a))/(2a)``; ``I -> I_DSS``
as ``R_S -> 0``).  The self-bias relation and the square law are textbook
(Sedra & Smith, *Microelectronic Circuits*, JFET biasing; Horowitz & Hill,
*The Art of Electronics*, FET current sources -- from memory); the root
and its stable form are derived here.  With channel-length modulation the
same form with ``I_DSS (1 + lambda V_DS)``, ``V_DS`` taken from the first
form (one refinement; error of order ``lambda^2``, derived here).

Output resistance (gate at AC ground, degenerated common source;
Sedra & Smith, source degeneration, from memory)::

    R_out = r_ds (1 + g_m R_S) + R_S

Compliance.  Saturation needs ``V_DS >= V_GS + V_P``, i.e. ``V_DG >= V_P``:
the n-channel sink holds down to a load voltage of ``V_P`` whatever R_S is
(derived here from the saturation condition); the p-channel source up to
``V_supply - V_P``.  Upward the gate-drain junction breaks down at
``BV_GSS`` (or the dissipation rating ends it first).

The generic source stepping finds every point (the law is smooth and the
unknown is one node), so no starting point is declared.

Examples
--------
>>> import kit
>>> ev = kit.evaluate(kit.design("jfet_source", "njfet"))
>>> round(ev.i_out * 1e3, 3), ev.regions["J1"], round(ev.compliance.low.voltage, 3)
(1.148, 'saturation', 2.0)
"""

from __future__ import annotations

from kit.devices.jfet import JFET_SQUARE_LAW, KIND as JFET
from kit.devices.mosfet import NO_CLM
from kit.topologies import common, drawing
from kit.topologies.base import Topology, Value

# A 1.1 mA regulator of our own: a generic small-signal JFET (the typical part) with
# 1 kΩ, near its zero-tempco overdrive, on a 24 V rail.
VALUES = (
    Value("r_s", "Ω", "source resistor (to 0 V for an n-channel sink; from the supply for a p-channel "
          "source); the gate returns to its far end", 1e3, 1e-2, 1e8, "resistor"),
    common.supply(24.0, "supply voltage (R_S and the gate return to it for a p-channel source)", low=0.1),
    common.load(12.0, "drain (load) voltage against 0 V"),
)

TEXTBOOK = ("Sedra & Smith, Microelectronic Circuits, JFET biasing; Horowitz & Hill, The Art of "
            "Electronics, FET current sources (from memory)")


def build(c):
    """J1 with R_S in its source and the gate at the far end of R_S; load at the drain."""
    import sympy as sp

    sink = c.sense == "n"
    c.rail("0", 0)
    c.rail("dd", c.parameter("v_supply"))
    c.rail("out", c.parameter("v_load"))
    c.output("out", 1 if sink else -1)
    c.node("s")
    rail = "0" if sink else "dd"
    r_s = c.resistor("R_S", "s", rail, "r_s")
    j1 = c.add(JFET, "J1", g=rail, d="out", s="s")

    i_dss, v_p, lam = j1["I_DSS"], j1["V_P"], j1["lambda"]
    a = i_dss * r_s / v_p
    plain = c.closed_form("square_law", 2 * i_dss / (1 + 2 * a + sp.sqrt(1 + 4 * a)),
                          "square law, no λ: I = 2I_DSS/(1 + 2a + √(1 + 4a)), a = I_DSS·R_S/V_P",
                          (NO_CLM.key, JFET_SQUARE_LAW.key), TEXTBOOK + "; root chosen and written stably here")
    v_out, v_dd = c.voltages["out"], c.voltages["dd"]
    v_ds = v_out - r_s * plain if sink else v_dd - r_s * plain - v_out
    i_dss_clm = i_dss * (1 + lam * v_ds)
    a_clm = i_dss_clm * r_s / v_p
    c.closed_form("clm", 2 * i_dss_clm / (1 + 2 * a_clm + sp.sqrt(1 + 4 * a_clm)),
                  "with λ: I_DSS·(1 + λV_DS), V_DS from the plain form (one refinement)",
                  (JFET_SQUARE_LAW.key,), TEXTBOOK + "; λ refinement derived here")
    s = j1.small_signal
    c.extra("r_out_small_signal", s["r_o"] * (1 + s["g_m"] * r_s) + r_s,
            "R_out = r_ds(1 + g_m·R_S) + R_S (degenerated common source, gate at AC ground)")


# ---------------------------------------------------------------------------
# schematic

def draw(sheet, d):
    """Schematic with the present values: the JFET, R_S below (above) it, the gate strap."""
    import schemdraw.elements as elm
    from schemdraw.elements.transistors import fetl  # the gate lead's length

    sink = sheet.sink
    # The untyped symbol, reversed so that the gate faces the strap on the left (a
    # p-channel part also flipped so its source faces the supply), with the arrow
    # drawn here: into the channel for n, out of it for p.  (schemdraw 0.23's typed
    # JFET symbols point their arrows the other way round.)
    part = elm.JFet().theta(0).reverse()
    j1 = (part if sink else part.flip()).label("J1", loc="right")
    bar = j1.gate[0] + fetl
    ends = (bar - 0.35, bar - 0.05) if sink else (bar - 0.1, bar - 0.4)
    elm.Line(arrow="->").at((ends[0], j1.gate[1])).to((ends[1], j1.gate[1]))
    toward_rail = "down" if sink else "up"
    end = j1.source
    getattr(elm.Line().at(end), toward_rail)(drawing.LEAD * 0.5)
    node = elm.Dot()
    # Set off from the zigzag: the default offset lets the value touch its peaks.
    resistor = getattr(elm.Resistor(), toward_rail)().label(sheet.label("r_s", "R_S"), loc="bottom", ofst=0.3)
    rail_end = resistor.end
    if sink:
        elm.Ground()
    else:
        elm.Vdd().label(sheet.supply("V_DD"))
    # The gate returns to the far end of R_S.
    elm.Line().at(j1.gate).left(1.2)
    elm.Line().toy(rail_end)
    elm.Line().tox(rail_end)
    elm.Dot().at(rail_end)
    drawing.make_room(node.center, "right", sheet.label("r_s", "R_S"))
    # a sink's load returns to the supply; a source's load to 0 V
    drawing.output_terminal(j1.drain, sink, f"load to {sheet.supply('V_DD')}" if sink else None)


# ---------------------------------------------------------------------------
# registry entry

NOTES = (
    "I_DSS and V_P of one JFET type spread by 2:1 or more from part to part: select or trim "
    "R_S on the part in hand, or buy a graded part; the closed form shows the spread's effect.",
    "The regulator needs at least |V_P| across its drain and gate (the load voltage of a sink "
    "above V_P) to stay in saturation.",
    "The tempco changes sign with the overdrive: near |V_P| − |V_GS| ≈ 0.6 … 0.9 V the mobility "
    "and pinch-off drifts cancel (the zero-tempco point); look at the tempco budget.",
    "Gate leakage (doubling about every 10 K) is not modelled; at high temperature and small "
    "currents it adds to the output.",
) + common.SAFETY_NOTES

TOPOLOGY = Topology(
    key="jfet_source",
    order=130,
    title="Self-biased JFET current source (two-terminal regulator)",
    description=("A JFET with a source resistor R_S and its gate returned to the far end of R_S: "
                 "V_GS = −I·R_S sets the current (square law with channel-length modulation). "
                 "n-channel sinks, p-channel sources."),
    values=VALUES,
    build=build,
    draw=draw,
    polarities=("njfet", "pjfet"),
    notes=NOTES,
)
