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
"""

from __future__ import annotations

import numpy as np

from kit.devices import mosfet
from kit.topologies.base import Simplification, Topology, ValueSpec

# A 2 mA mirror of a matched pair of discrete small-signal MOSFETs (the
# typical part) on a 12 V rail -- a scenario of our own.
VALUES = (
    ValueSpec("i_ref", "A", "reference current fed to the input transistor M1", 2e-3, 1e-9, 1.0),
    ValueSpec("i_ref_tc", "1/K", "temperature coefficient of the reference current (0 for an ideal "
              "source)", 0.0, -0.02, 0.02),
    ValueSpec("w_ratio", "", "width-to-length ratio (W/L)2/(W/L)1 of output to input transistor",
              1.0, 0.01, 1000.0),
    ValueSpec("v_supply", "V", "supply voltage (source rail of a PMOS mirror)", 12.0, 0.5, 1000.0,
              "supply"),
    ValueSpec("v_load", "V", "output drain (load) voltage against 0 V", 6.0, -1000.0, 1000.0, "load"),
)

RAZAVI = ("Razavi, Design of Analog CMOS Integrated Circuits, ch. 5; Sedra & Smith, "
          "MOS current mirrors (from memory)")

SIMPLIFICATIONS = (
    Simplification("ratio", "ideal ratio, I_out = [(W/L)₂/(W/L)₁]·I_REF",
                   ("no_clm", "matched_mos", "square_law"), RAZAVI),
    Simplification("clm_ratio", "with λ: ratio·(1 + λV_DS2)/(1 + λV_GS1), V_GS1 refined once",
                   ("matched_mos", "square_law"), RAZAVI + "; V_GS1 form derived here"),
)

EXTRAS = {"r_out_ro2": "R_out = r_o2 = (1 + λ₂V_DS2)/(λ₂I_D2) (exact in saturation, strong inversion)"}

# Added to λ in the R_out form: λ = 0 then gives a huge finite r_o (~1e15/I_D Ω)
# instead of 1/0; the change is below 1e-9 relative for any λ above 1e-6 1/V.
LAMBDA_FLOOR = 1e-15  # 1/V


def build(polarity):
    """Exact equations of the MOS mirror fed by an ideal reference current."""
    import sympy as sp

    from kit.circuit import Circuit

    npn = polarity == "npn"
    c = Circuit(polarity)
    c.rail("0", 0)
    c.rail("dd", c.parameter("v_supply"))
    c.rail("out", c.parameter("v_load"))
    c.output("out", 1 if npn else -1)
    c.node("g")
    source_rail, far_rail = ("0", "dd") if npn else ("dd", "0")
    i_ref = c.operating_value(
        "I_REF", c.parameter("i_ref") * (1 + c.parameter("i_ref_tc") * (c.temp - c.t_ref)))
    # NMOS: into the input node from the supply side; PMOS: out of it to 0 V.
    c.current_source(*((far_rail, "g") if npn else ("g", far_rail)), i_ref)
    m1 = c.mosfet("M1", polarity, "g", "g", source_rail)
    m2 = c.mosfet("M2", polarity, "g", "out", source_rail, scale=c.parameter("w_ratio"))

    v_out, v_dd = c.voltages["out"], c.voltages["dd"]
    v_ds2 = v_out if npn else v_dd - v_out
    ratio = m2["K"] / m1["K"]
    # V_GS1 from the λ-free square law, refined once; |I_REF| only keeps NaN out should a
    # strong negative i_ref_tc drive the reference through zero at an extreme temperature.
    first = m1["V_th"] + sp.sqrt(2 * sp.Abs(i_ref) / m1["K"])
    v_gs1 = m1["V_th"] + sp.sqrt(2 * sp.Abs(i_ref) / (m1["K"] * (1 + m1["lambda"] * first)))
    closed_forms = {
        "ratio": ratio * i_ref,
        "clm_ratio": ratio * i_ref * (1 + m2["lambda"] * v_ds2) / (1 + m1["lambda"] * v_gs1),
    }
    # r_o2 = (1 + λV_DS2)/(λ I_D2) = 2/(λ K2 V_ov2²) in saturation, written with the plain
    # overdrive (not the piecewise law, whose every branch numpy would evaluate).
    j = c.transistors["M2"]
    extras = {"r_out_ro2": 2 / ((m2["lambda"] + LAMBDA_FLOOR) * m2["K"] * j["v_ov"] ** 2)}
    return c.equations(extras=extras, closed_forms=closed_forms, hand_parameters=())


def guess(model, q):
    """Input node from M1's law inverted at I_REF (diode-connected: V_DS1 = V_GS1)."""
    index = model.operating_index
    i_ref, k, v_th, lam, n, v_t = (q[index[name]] for name in
                                   ("I_REF", "K_M1", "Vth_M1", "lambda_M1", "nsub_M1", "V_T_M1"))
    current = np.where(np.isfinite(i_ref) & (i_ref > 0), i_ref, 1e-9)
    join = 2 * n * v_t
    # Diode-connected, V_DS1 = V_GS1: saturated unless V_GS1 falls below the join
    # (deep weak inversion of a low-threshold part).  Then the root lies below the
    # join, and starting at the join keeps Newton on the forward side of it.
    v_gs = v_th + mosfet.overdrive_for_current(current, np.full_like(current, 10.0), k, 0.0, join)
    v_gs = v_th + mosfet.overdrive_for_current(current, np.maximum(v_gs, join), k, lam, join)
    v_gs = np.maximum(v_gs, join)
    v_g = v_gs if model.polarity == "npn" else q[index["V_DD"]] - v_gs
    return np.stack([v_g for _ in model.unknowns])


# ---------------------------------------------------------------------------
# schematic

def draw(design, d):
    """Schematic with the present values (see :mod:`kit.schematic`)."""
    import schemdraw.elements as elm

    from kit.quantities import format_quantity

    npn = design.polarity == "npn"
    ratio = f"(W/L)₂ = {design.values['w_ratio']:g}·(W/L)₁"
    m1 = _fet(npn).label("M1", loc="left")
    elm.Line().at(m1.gate).right(2.2)
    m2 = _fet(npn).reverse().anchor("gate").label(f"M2\n{ratio}", loc="right")
    for device in (m1, m2):
        _to_rail(design, device.source, npn)
    # Diode connection: M1's drain strapped to the gate line.
    toward_far = "up" if npn else "down"
    node = getattr(elm.Line().at(m1.drain), toward_far)(0.8).end
    elm.Dot()
    elm.Line().at(node).tox(m1.gate[0] + 0.6)
    elm.Line().toy(m1.gate[1])
    elm.Dot()
    text = f"I_REF\n{format_quantity(design.values['i_ref'], 'A')}"
    source = elm.SourceI().label(text, loc="top")
    source = source.reverse() if npn else source
    getattr(source.at(node), toward_far)()
    if npn:
        elm.Vdd().label(_supply(design))
    else:
        elm.Ground()
    getattr(elm.Line().at(m2.drain), toward_far)(0.8)
    elm.Dot(open=True).label("load (sink)" if npn else "load (source)", loc="right")
    elm.Gap().right(2.2)  # room for the label (schemdraw underestimates text width)


def _fet(npn):
    import schemdraw.elements as elm

    kind = elm.AnalogNFet if npn else elm.AnalogPFet
    return kind(offset_gate=False, source_arrow=True).theta(0)


def _to_rail(design, at, npn):
    import schemdraw.elements as elm

    getattr(elm.Line().at(at), "down" if npn else "up")(0.5)
    if npn:
        elm.Ground()
    else:
        elm.Vdd().label(_supply(design))


def _supply(design):
    from kit.quantities import format_quantity

    return f"V_DD {format_quantity(design.values['v_supply'], 'V')}"


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
)

TOPOLOGY = Topology(
    key="mos_mirror",
    order=120,
    title="MOSFET current mirror (square law)",
    description=("Diode-connected input MOSFET M1 fed by an ideal reference current; output "
                 "MOSFET M2 with (W/L)₂ = w_ratio·(W/L)₁; square law with channel-length "
                 "modulation. NMOS sinks, PMOS sources."),
    polarities=("npn", "pnp"),
    transistors=("M1", "M2"),
    output_transistor="M2",
    values=VALUES,
    simplifications=SIMPLIFICATIONS,
    build=build,
    guess=guess,
    draw=draw,
    extras=EXTRAS,
    hand_parameters=(),
    kinds={"M1": "mos", "M2": "mos"},
    notes=NOTES,
    budget_labels={"I_REF": "reference current I_REF"},
)
