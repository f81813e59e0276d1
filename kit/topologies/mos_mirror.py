"""MOSFET square-law current mirror with channel-length modulation (NMOS sink, PMOS source).

NMOS sink (the PMOS source is its mirror image, sources at V_DD)::

    I_REF (ideal, from the supply side) -> node g
    M1: gate = drain = g, source = 0           (diode-connected input)
    M2: gate = g, drain = out, source = 0      (W/L ratio times that of M1)

Unknown: V_g.  KCL at g, exact: ``I_REF = I_D1`` -- the gates draw no DC
current, so unlike a BJT mirror nothing else loads the input node.

Closed forms (``K = k' W/L`` at the operating temperature; M2's includes
the ratio ``w_ratio``):

* ideal ratio ``I_out = (K2/K1) I_REF``, i.e. ``[(W/L)2/(W/L)1] I_REF`` for
  equal k' (Razavi, *Design of Analog CMOS Integrated Circuits*, ch. 5;
  Sedra & Smith, MOS current mirrors; from memory);
* with channel-length modulation, for equal thresholds,
  ``I_out/I_REF = (K2/K1)(1 + lambda2 V_DS2)/(1 + lambda1 V_GS1)``, exact in
  the square-law model given ``V_GS1`` (Razavi ch. 5, from memory).  The
  closed form takes ``V_GS1`` from the lambda-free square law refined once,
  ``V_GS1 = V_th1 + sqrt(2 I_REF/(K1 (1 + lambda1 V_GS1^(0))))``, which leaves
  an error of order ``lambda^2 V_ov V_GS`` (derived here).

Output resistance: ``R_out = r_o2 = (1 + lambda2 V_DS2)/(lambda2 I_D2)``,
exactly ``1/(dI_D2/dV_DS2)`` in saturation (Razavi ch. 2, from memory).
Compliance: M2 stays saturated for ``V_DS2 >= V_ov2`` (the triode edge).

Starting point: M1's law inverted at I_REF.  The generic source stepping
finds the same points but is 6 to 30 times slower on Monte-Carlo-size
arrays (nine continuation steps against one or two Newton steps).

Examples
--------
>>> import kit
>>> ev = kit.evaluate(kit.design("mos_mirror", "pmos", i_ref="1 mA", w_ratio=2))
>>> round(ev.i_out / 2e-3, 3), ev.compliance.high.part, ev.compliance.high.cause
(1.074, 'M2', 'triode')
"""

from __future__ import annotations

from kit.circuit.blocks import positive_or
from kit.devices.mosfet import KIND as MOS, MATCHED_MOS, NO_CLM, SQUARE_LAW, overdrive_for_current_expression
from kit.topologies import common, drawing
from kit.topologies.base import Topology, Value

# A 2 mA mirror of a matched pair of discrete small-signal MOSFETs (the
# typical part) on a 12 V rail -- a scenario of our own.
VALUES = (
    Value("i_ref", "A", "reference current fed to the input transistor M1", 2e-3, 1e-9, 1.0),
    common.I_REF_TC,
    Value("w_ratio", "", "width-to-length ratio (W/L)2/(W/L)1 of output to input transistor",
          1.0, 0.01, 1000.0),
    common.supply(12.0, "supply voltage V_DD (source rail of a PMOS mirror)"),
    common.load(6.0, "output drain (load) voltage against 0 V"),
)

RAZAVI = ("Razavi, Design of Analog CMOS Integrated Circuits, ch. 5; Sedra & Smith, "
          "MOS current mirrors (from memory)")


def build(c):
    """The mirror fed by an ideal reference current from the V_DD side (NMOS) or to 0 V (PMOS)."""
    import sympy as sp

    nmos = c.supply_and_load("dd")
    c.node("g")
    source_rail, far_rail = ("0", "dd") if nmos else ("dd", "0")
    i_ref = c.drifting("I_REF", "i_ref", latex="I_{REF}", budget="reference current I_REF")
    # NMOS: into the input node from the supply side; PMOS: out of it to 0 V.
    c.current_source("I_REF", *((far_rail, "g") if nmos else ("g", far_rail)), i_ref)
    m1 = c.add(MOS, "M1", g="g", d="g", s=source_rail)
    m2 = c.add(MOS, "M2", g="g", d="out", s=source_rail, scale=c.parameter("w_ratio"))

    v_ds2 = c.voltages["out"] if nmos else c.voltages["dd"] - c.voltages["out"]
    ratio = m2["K"] / m1["K"]
    # V_GS1 from the λ-free square law, refined once; |I_REF| only keeps NaN out should a
    # strong negative i_ref_tc drive the reference through zero at an extreme temperature.
    first = m1["V_th"] + sp.sqrt(2 * sp.Abs(i_ref) / m1["K"])
    v_gs1 = m1["V_th"] + sp.sqrt(2 * sp.Abs(i_ref) / (m1["K"] * (1 + m1["lambda"] * first)))
    c.closed_form("ratio", ratio * i_ref, "ideal ratio, I_out = [(W/L)₂/(W/L)₁]·I_REF",
                  (NO_CLM.key, MATCHED_MOS.key, SQUARE_LAW.key), RAZAVI)
    c.closed_form("clm_ratio", ratio * i_ref * (1 + m2["lambda"] * v_ds2) / (1 + m1["lambda"] * v_gs1),
                  "with λ: ratio·(1 + λV_DS2)/(1 + λV_GS1), V_GS1 refined once",
                  (MATCHED_MOS.key, SQUARE_LAW.key), RAZAVI + "; V_GS1 form derived here")
    c.extra("r_out_ro2", m2.small_signal["r_o"],
            "R_out = r_o2 = (1 + λ₂V_DS2)/(λ₂I_D2) (exact in saturation, strong inversion)")

    # Start: M1's law inverted at I_REF, at the V_DS1 = V_GS1 of the plain square law
    # (saturation, or the continuation below the join for a tiny reference).  Below the
    # join a diode-connected part leaves saturation and the root lies under it: starting
    # at the join keeps Newton on the forward side.
    current = positive_or(i_ref)
    join = 2 * m1["n"] * m1["V_T"]
    square_law = MOS.start(m1.sense, current, m1.symbols)
    v_gs = sp.Max(m1["V_th"] + overdrive_for_current_expression(current, square_law, m1["K"], m1["lambda"],
                                                               join), join)
    c.start("g", v_gs if nmos else c.voltages["dd"] - v_gs)


# ---------------------------------------------------------------------------
# schematic

def draw(sheet, d):
    """Schematic with the present values."""
    import schemdraw.elements as elm

    nmos = sheet.sink
    rail = f"V_DD {sheet.text('v_supply')}"
    ratio = f"(W/L)₂ = {sheet['w_ratio']:g}·(W/L)₁"
    m1 = _fet(nmos).label("M1", loc="left")
    elm.Line().at(m1.gate).right(2.2)
    m2 = _fet(nmos).reverse().anchor("gate").label(f"M2\n{ratio}", loc="right")
    for device in (m1, m2):
        getattr(elm.Line().at(device.source), drawing.toward_emitters(nmos))(drawing.LEAD * 0.5)
        if nmos:
            elm.Ground()
        else:
            elm.Vdd().label(rail)
    # Diode connection: M1's drain strapped to the gate line.
    node = drawing.diode_strap(m1.drain, m1.gate, nmos, rise=0.8, inset=0.6)
    text = f"I_REF\n{sheet.text('i_ref')}"
    source = elm.SourceI().label(text, loc="top")
    source = source.reverse() if nmos else source
    feed = getattr(source.at(node), drawing.toward_top(nmos))()
    drawing.make_room(feed.center, "left", text, 0.9)
    if nmos:
        elm.Vdd().at(feed.end).label(rail)
    else:
        elm.Ground().at(feed.end)
    drawing.output_terminal(m2.drain, nmos)


def _fet(nmos):
    import schemdraw.elements as elm

    kind = elm.AnalogNFet if nmos else elm.AnalogPFet
    return kind(offset_gate=False, source_arrow=True).theta(0)


# ---------------------------------------------------------------------------
# registry entry

NOTES = (
    "The output current follows the output voltage through M2's channel-length modulation "
    "(R_out = r_o2 ≈ 1/(λI_D)); best match where V_DS2 ≈ V_GS1. Longer channels lower λ.",
    "Matching: threshold mismatch moves the ratio by about 2ΔV_th/V_ov; unselected discrete "
    "MOSFETs differ by hundreds of mV in V_th — use a matched pair, or a larger overdrive.",
    "The square law holds in strong inversion; the kit calls a device cut off below V_th and "
    "does not accept a design on its subthreshold continuation.",
    "Check M2's dissipation at the extreme of the load voltage against its package rating.",
) + common.SAFETY_NOTES

TOPOLOGY = Topology(
    key="mos_mirror",
    order=120,
    title="MOSFET current mirror (square law)",
    description=("Diode-connected input MOSFET M1 fed by an ideal reference current; output "
                 "MOSFET M2 with (W/L)₂ = w_ratio·(W/L)₁; square law with channel-length "
                 "modulation. NMOS sinks, PMOS sources."),
    values=VALUES,
    build=build,
    draw=draw,
    polarities=("nmos", "pmos"),
    notes=NOTES,
)
