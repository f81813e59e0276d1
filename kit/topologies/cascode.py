"""Cascodes: the four-transistor cascode mirror and the cascoded single-transistor source.

Cascode mirror, NPN sink (PNP source: the mirror image)::

    I_REF --> n3 = Q3 base = Q3 collector (diode)        Q4 base = n3
              Q3 emitter = n1 = Q1 base = Q1 collector   Q4 emitter = n4, collector = out
              Q1 diode, emitter 0;  Q2 base = n1, collector = n4, emitter 0

Q3 and Q4 hold Q2's collector near V_BE, so Q2 copies Q1 at equal V_CE and
Q4 shields it from the load.  Unknowns V_n1, V_n3, V_n4.

Cascoded source, NPN sink::

    V_CC --R1--+-- b1 (Q1 base)    Q1 emitter e1 --R_E-- 0    Q1 collector = m
    0    --R2--+
    Q2 base b2 from its own divider R3 (V_CC) / R4 (0 V), or from a bias voltage
    V_BIAS through R_B2;  Q2 emitter = m, collector = out

The lower stage is the divider-biased degenerated source; Q2 passes its
collector current on, less Q2's base current.  Unknowns V_b1, V_e1, V_m, V_b2.

Closed forms (V_A -> ∞, each transistor its own β, ``a = I_S2/I_S1``; derived
here by KCL at the three nodes)::

    cascode mirror: I_out/I_REF = a β4/(β4+1) / (1 + 1/β1 + a/β2 + a/(β4+1))
                    matched: β²/(β² + 4β + 2) ≈ 1 - 4/β
    cascoded source: I_out = β2/(β2+1) · I_C1, with I_C1 of the lower stage
                     (Wright ω form, as for the divider-biased source)

With the Early effect every β becomes ``β (1 + V_CE/V_A)`` (and ``a`` becomes
``a (1 + V_CE2/V_A2)/(1 + V_CE1/V_A1)``), V_CE estimated from V_BE(on).

Output resistance: cascode mirror about ``β r_o4/2`` (Gray, Hurst, Lewis &
Meyer, ch. 4, from memory; base-current feedback through Q1/Q2 halves the
``β r_o`` of a plain cascode), exact from the nodal analysis of the circuit's
own hybrid-π models (:func:`kit.circuit.blocks.nodal_output_resistance`);
cascoded source ``r_o2 [1 + β R_x/(R_x + r_π2 + R_B2)] + R_x || (r_π2 + R_B2)``
with ``R_x`` the lower stage's own output resistance (the emitter-degenerated
result of Sedra & Smith and the UC Berkeley EE105 notes, applied twice).

Examples
--------
>>> import kit
>>> ev = kit.evaluate(kit.design("cascode_mirror"))
>>> 0.97 < ev.i_out / 400e-6 < 1.0, ev.compliance.low.part
(True, 'Q4')
"""

from __future__ import annotations

from kit.circuit.blocks import (degenerated_output_resistance, divider_drive, hand_vbe, junction_behind_resistor,
                                nodal_output_resistance, positive_or, reference_current, start_from_rail)
from kit.devices.bjt import ALPHA_ONE, BASE_CURRENT_NEGLECTED, FORWARD_ACTIVE, KIND as BJT, NO_EARLY, VBE_FIXED
from kit.topologies import common, drawing
from kit.topologies.base import Topology, Value
from kit.words import ISOTHERMAL

SATURATED_VCE_START = 0.05  # V; collector-emitter voltage of a hard-saturated transistor
STACK_START = 0.3  # V; least distance kept between the stacked nodes of a start
LABEL_ROOM = 1.8  # drawing units beside the reference source for its two-line label
EARLY_SOURCE = "derived here (Early factor 1 + V_CE/V_A on each collector current)"


def _rails(c):
    """Supply, load and the emitter rail (0 V for the NPN sink, V_CC for the PNP source)."""
    npn = c.supply_and_load()
    rail = "0" if npn else "cc"
    # The output's distance from the emitter rail, in the forward sense.
    height = c.voltages["out"] - c.voltages[rail] if npn else c.voltages[rail] - c.voltages["out"]
    return rail, height


# ---------------------------------------------------------------------------
# cascode mirror

def cascode_mirror_ratio(beta_1, beta_2, beta_4, a=1):
    """I_out/I_REF of the cascode mirror (no Early effect); Q3's gain drops out.

    Examples
    --------
    >>> b = 100.0
    >>> abs(cascode_mirror_ratio(b, b, b) - b**2 / (b**2 + 4*b + 2)) < 1e-15
    True
    """
    return a * beta_4 / (beta_4 + 1) / (1 + 1 / beta_1 + a / beta_2 + a / (beta_4 + 1))


def build_mirror(c):
    """The cascode mirror."""
    rail, height = _rails(c)
    for node in ("n1", "n3", "n4"):
        c.node(node)
    i_ref = reference_current(c, "n3", sink=c.sense == "n")
    q1 = c.add(BJT, "Q1", b="n1", c="n1", e=rail)
    q2 = c.add(BJT, "Q2", b="n1", c="n4", e=rail)
    c.add(BJT, "Q3", b="n3", c="n3", e="n1")
    q4 = c.add(BJT, "Q4", b="n3", c="out", e="n4")
    v_on = hand_vbe(c)

    a = q2["I_S"] / q1["I_S"]
    early_1 = 1 + v_on / q1["V_A"]  # V_CE1 = V_BE (diode)
    early_2 = 1 + v_on / q2["V_A"]  # V_CE2 = V_BE1 + V_BE3 - V_BE4 ≈ V_BE
    early_4 = 1 + (height - v_on) / q4["V_A"]
    c.closed_form("ideal", i_ref, "ideal mirror, I_out = I_REF",
                  (BASE_CURRENT_NEGLECTED.key, ALPHA_ONE.key, NO_EARLY.key, ISOTHERMAL.key),
                  "hand analysis, common practice")
    c.closed_form("finite_beta", i_ref * cascode_mirror_ratio(q1["beta"], q2["beta"], q4["beta"], a),
                  "finite β, β²/(β² + 4β + 2) for matched parts",
                  (NO_EARLY.key, FORWARD_ACTIVE.key, ISOTHERMAL.key),
                  "derived here (per-transistor β); ≈ 1 - 4/β as in Gray, Hurst, Lewis & Meyer, "
                  "ch. 4 (from memory)")
    c.closed_form("finite_beta_early",
                  i_ref * cascode_mirror_ratio(q1["beta"] * early_1, q2["beta"] * early_2, q4["beta"] * early_4,
                                               a * early_2 / early_1),
                  "finite β and Early effect, V_CE from V_BE(on)",
                  (VBE_FIXED.key, FORWARD_ACTIVE.key, ISOTHERMAL.key), EARLY_SOURCE)

    _start_mirror(c, rail, height)

    c.extra("r_out_hybrid_pi", nodal_output_resistance(c),
            "R_out, exact hybrid-π nodal analysis of the mirror")
    point = q4.small_signal
    c.extra("r_out_beta_ro_half", point["beta"] * point["r_o"] / 2,
            "R_out ≈ β r_o4 / 2 (Gray et al., ch. 4, from memory)")


def _start_mirror(c, rail, height):
    """Node voltages from the finite-β closed form (exact for V_A -> inf).

    A saturated Q4 pulls the top of the stack towards its collector.  Kept
    because the generic continuation loses half of the load window (the
    saturated side) and most PNP points.
    """
    import sympy as sp

    q1, q2, q3, q4 = (c.parts[f"Q{k}"] for k in range(1, 5))
    current = c.form("finite_beta")
    i_c2 = current * (q4["beta"] + 1) / q4["beta"]
    i_c1 = i_c2 * q1["I_S"] / q2["I_S"]
    i_c3 = (i_c1 * (1 + 1 / q1["beta"]) + i_c2 / q2["beta"]) * q3["beta"] / (q3["beta"] + 1)
    h_1 = BJT.start(q1.sense, i_c1, q1.symbols)
    h_3 = sp.Min(h_1 + BJT.start(q3.sense, i_c3, q3.symbols), height + common.SATURATED_VBC_START)
    h_1 = sp.Min(h_1, h_3 - STACK_START)
    h_4 = sp.Min(h_3 - BJT.start(q4.sense, current, q4.symbols), h_3 - STACK_START,
                 height + SATURATED_VCE_START)
    start_from_rail(c, rail, {"n1": h_1, "n3": h_3, "n4": h_4})


# ---------------------------------------------------------------------------
# cascoded single-transistor source

def _build_source(c, bias):
    """The cascoded source; ``bias`` is ``"divider"`` (R3/R4) or ``"fixed"`` (V_BIAS through R_B2)."""
    npn = c.sense == "n"
    rail, height = _rails(c)
    for node in ("b1", "e1", "m", "b2"):
        c.node(node)
    r1 = c.resistor("R1", "cc", "b1", "r1")
    r2 = c.resistor("R2", "b1", "0", "r2")
    r_e = c.resistor("R_E", "e1", rail, "r_e")
    v_cc = c.voltages["cc"]
    if bias == "divider":
        r3 = c.resistor("R3", "cc", "b2", "r3")
        r4 = c.resistor("R4", "b2", "0", "r4")
        drive_2, r_b2 = divider_drive(v_cc, r3, r4, across_bottom=npn)
    else:
        v_bias = c.parameter("v_bias")
        c.rail("bias", v_bias if npn else c.parameter("v_supply") - v_bias)
        r_b2 = c.resistor("R_B2", "bias", "b2", "r_b2")
        drive_2 = (c.voltages["bias"] - c.voltages[rail]) * (1 if npn else -1)
    q1 = c.add(BJT, "Q1", b="b1", c="m", e="e1")
    q2 = c.add(BJT, "Q2", b="b2", c="out", e="m")
    v_on = hand_vbe(c)

    drive_1, r_th = divider_drive(v_cc, r1, r2, across_bottom=npn)
    b1, b2, v_t1 = q1["beta"], q2["beta"], q1["V_T"]

    def lower_stage(beta, i_s):
        # K I + V_T ln(I/I_S) = V_TH with K = (R_TH + (β+1) R_E)/β: the divider source's loop
        return junction_behind_resistor(drive_1, (r_th + (beta + 1) * r_e) / beta, v_t1, i_s)

    exponential = b2 / (b2 + 1) * lower_stage(b1, q1["I_S"])
    # Early factors with V_CE from V_BE(on): V_CE1 = V_B2 - V_BE2 - I R_E, V_CE2 = V_out - V_M.
    v_m = drive_2 - r_b2 * exponential / b2 - v_on
    early_1 = 1 + (v_m - exponential * r_e) / q1["V_A"]
    early_2 = 1 + (height - v_m) / q2["V_A"]
    b2_early = b2 * early_2
    c.closed_form("stiff_divider", (drive_1 - v_on) / r_e, "stiff divider, fixed V_BE, α = 1",
                  (BASE_CURRENT_NEGLECTED.key, ALPHA_ONE.key, VBE_FIXED.key, NO_EARLY.key),
                  "hand analysis, common practice")
    c.closed_form("fixed_vbe", b2 / (b2 + 1) * b1 * (drive_1 - v_on) / (r_th + (b1 + 1) * r_e),
                  "fixed V_BE with base currents, × α of the cascode", (VBE_FIXED.key, NO_EARLY.key),
                  "Sedra & Smith, Microelectronic Circuits, BJT biasing (from memory); cascode α derived here")
    c.closed_form("exponential", exponential, "exponential junction (Wright ω form) × α of the cascode",
                  (NO_EARLY.key, FORWARD_ACTIVE.key),
                  "derived here; cf. Banwell & Jayakumar, Electron. Lett. 36 (2000)")
    c.closed_form("exponential_early",
                  b2_early / (b2_early + 1) * lower_stage(b1 * early_1, q1["I_S"] * early_1),
                  "as above with the Early effect, V_CE from V_BE(on)", (VBE_FIXED.key, FORWARD_ACTIVE.key),
                  EARLY_SOURCE)

    _start_source(c, rail, height, (drive_2, r_b2, r_e))

    lower, cascode = q1.small_signal, q2.small_signal
    r_x = degenerated_output_resistance(lower["r_o"], lower["beta"], lower["r_pi"], r_e, r_th)
    c.extra("r_out_cascode",
            degenerated_output_resistance(cascode["r_o"], cascode["beta"], cascode["r_pi"], r_x, r_b2),
            "R_out = r_o2[1 + βR_x/(R_x + r_π2 + R_B2)] + R_x‖(r_π2 + R_B2), R_x = lower stage"
            + (", R_B2 = R3‖R4" if bias == "divider" else ""))
    c.extra("r_out_ceiling", (cascode["beta"] + 1) * cascode["r_o"] + cascode["r_pi"] + r_b2,
            "R_x → ∞ ceiling (β+1) r_o2 + r_π2 + R_B2")
    c.extra("r_out_lower_stage", r_x, "R_x, the lower stage alone (what the cascode multiplies)")


def _start_source(c, rail, height, bias):
    """Node voltages from the exponential closed form (exact for V_A -> inf).

    In saturation each base stays near the collector that pulls it, and each
    emitter near its collector once saturation is deep.  Kept because the
    generic continuation loses half of the load window and every PNP point.
    """
    import sympy as sp

    drive_2, r_b2, r_e = bias
    q1, q2 = c.parts["Q1"], c.parts["Q2"]
    current = positive_or(c.form("exponential"))
    i_c1 = current * (q2["beta"] + 1) / q2["beta"]
    h_e1 = i_c1 * (q1["beta"] + 1) / q1["beta"] * r_e
    h_b1 = h_e1 + BJT.start(q1.sense, i_c1, q1.symbols)
    h_b2 = sp.Min(drive_2 - r_b2 * current / q2["beta"], height + common.SATURATED_VBC_START)
    h_m = sp.Min(h_b2 - BJT.start(q2.sense, current, q2.symbols), height + SATURATED_VCE_START)
    start_from_rail(c, rail, {"b1": sp.Min(h_b1, h_m + common.SATURATED_VBC_START),
                             "e1": sp.Min(h_e1, h_m + SATURATED_VCE_START), "m": h_m, "b2": h_b2})


def build_source_divider(c):
    """The cascoded source with the cascode base on its own divider."""
    _build_source(c, "divider")


def build_source_bias(c):
    """The cascoded source with the cascode base on a bias voltage."""
    _build_source(c, "fixed")


# ---------------------------------------------------------------------------
# schematics

def draw_mirror(sheet, d):
    """Schematic of the cascode mirror with the present values."""
    import schemdraw.elements as elm

    npn = sheet.sink
    s = 1.0 if npn else -1.0
    q1, q2 = drawing.mirror_pair(sheet)
    # Q1 diode: collector strapped to the lower base line (node n1).
    n1 = (q1.collector[0], q1.collector[1] + s * 0.5)
    elm.Line().at(q1.collector).to(n1)
    elm.Line().at(n1).tox(q1.base[0] + 0.5)
    elm.Line().toy(q1.base[1])
    elm.Dot().at((q1.base[0] + 0.5, q1.base[1]))
    q3 = drawing.transistor(npn, facing_left=True, label="Q3").anchor("emitter").at((n1[0], n1[1] + s * 0.4))
    elm.Line().at(n1).to(q3.emitter)
    elm.Dot().at(n1)
    elm.Line().at(q3.base).right(drawing.GAP)
    q4 = drawing.transistor(npn, label="Q4").anchor("base")
    elm.Line().at(q2.collector).to(q4.emitter)
    drawing.output_terminal(q4.collector, npn)
    n3 = (q3.collector[0], q3.collector[1] + s * 0.5)
    elm.Line().at(q3.collector).to(n3)
    elm.Line().at(n3).tox(q3.base[0] + 0.5)
    elm.Line().toy(q3.base[1])
    elm.Dot().at((q3.base[0] + 0.5, q3.base[1]))
    elm.Dot().at(n3)
    drawing.reference_feed(sheet, n3, npn)
    elm.Gap().at((n3[0], n3[1] + s * 1.5)).left(LABEL_ROOM)


def _draw_source(sheet, d, bias):
    """Q1 over R_E with its divider on the left; cascode Q2 above, its bias on the right.

    The PNP picture is the NPN one mirrored top to bottom.
    """
    import schemdraw.elements as elm

    npn = sheet.sink
    s = 1.0 if npn else -1.0
    up, down = drawing.toward_top(npn), drawing.toward_emitters(npn)

    def far_rail():
        if npn:
            elm.Vdd().label(sheet.supply())
        else:
            elm.Ground()

    def near_rail():
        if npn:
            elm.Ground()
        else:
            elm.Vdd().label(sheet.supply())

    q1 = drawing.transistor(npn, label="Q1").at((0.0, 0.0)).anchor("base")
    drawing.emitter_return(sheet, q1.emitter, npn, resistor="r_e", designator="R_E")
    # Lower divider on the left: R1 always runs to V_CC, R2 to 0 V.
    elm.Line().at(q1.base).left(1.2)
    b1 = (q1.base[0] - 1.2, q1.base[1])
    elm.Dot().at(b1)
    getattr(elm.Resistor().at(b1), up)().label(sheet.label("r1" if npn else "r2"), loc="top")
    far_rail()
    getattr(elm.Resistor().at(b1), down)().label(sheet.label("r2" if npn else "r1"), loc="top")
    near_rail()
    # Cascode Q2 (base on the right) on Q1's collector.
    q2 = drawing.transistor(npn, facing_left=True, label="Q2").anchor("emitter").at(
        (q1.collector[0], q1.collector[1] + s * 0.8))
    elm.Line().at(q1.collector).to(q2.emitter)
    drawing.output_terminal(q2.collector, npn, side="left")
    elm.Line().at(q2.base).right(1.2)
    b2 = (q2.base[0] + 1.2, q2.base[1])
    if bias == "divider":
        elm.Dot().at(b2)
        getattr(elm.Resistor().at(b2), up)().label(sheet.label("r3" if npn else "r4"), loc="bottom")
        far_rail()
        getattr(elm.Resistor().at(b2), down)().label(sheet.label("r4" if npn else "r3"), loc="bottom")
        near_rail()
    else:
        elm.Resistor().at(b2).right().label(sheet.label("r_b2", "R_B2"), loc="top")
        where = "above 0 V" if npn else "below V_CC"
        source = elm.SourceV().label(f"V_B2\n{sheet.text('v_bias')}\n{where}", loc="bottom")
        getattr(source.reverse() if npn else source, down)()  # + towards the higher rail
        near_rail()
    # schemdraw underestimates text width: leave room on the right for the labels.
    elm.Gap().at((b2[0] + 2.5, b2[1])).right(LABEL_ROOM + 1.2)


def draw_source_divider(sheet, d):
    """Schematic of the cascoded source (cascode base on a divider) with the present values."""
    _draw_source(sheet, d, "divider")


def draw_source_bias(sheet, d):
    """Schematic of the cascoded source (cascode base on a bias voltage) with the present values."""
    _draw_source(sheet, d, "fixed")


# ---------------------------------------------------------------------------
# registry entries

def _resistor(name, description, default):
    return Value(name, "Ω", description, default, 1e-2, 1e9, "resistor")


def _source_values(bias):
    """Values of the cascoded source: a 1 mA sink from 24 V; the PNP source swaps the divider legs."""
    head = (
        _resistor("r1", "lower divider resistor from the supply to Q1's base", {"npn": 100e3, "pnp": 10e3}),
        _resistor("r2", "lower divider resistor from Q1's base to 0 V", {"npn": 10e3, "pnp": 100e3}),
        _resistor("r_e", "emitter resistor of Q1", 1.5e3),
    )
    if bias == "divider":
        cascode = (
            _resistor("r3", "cascode divider resistor from the supply to Q2's base", {"npn": 47e3, "pnp": 9.1e3}),
            _resistor("r4", "cascode divider resistor from Q2's base to 0 V", {"npn": 9.1e3, "pnp": 47e3}),
        )
    else:
        cascode = (
            Value("v_bias", "V", "cascode bias voltage V_B2: above 0 V (NPN) or below the supply (PNP)",
                  3.9, 0.0, 1000.0),
            _resistor("r_b2", "source resistance of the cascode bias", 1e3),
        )
    return head + cascode + (common.supply(24.0, "supply voltage", low=1.0),
                             common.load(12.0, "output (load) voltage against 0 V"))


NOTES_MIRROR = (
    "The input needs about 2 V_BE plus the reference's own headroom, and the output "
    "stays in compliance only above about V_BE + V_CE(sat).",
    "Q1–Q2 and Q3–Q4 should be matched pairs at one temperature.",
    "Check Q4's dissipation at the highest load voltage against its package rating.",
) + common.SAFETY_NOTES

NOTES_SOURCE = (
    "The cascode base must sit at least V_CE(sat) + V_BE above Q1's emitter, or Q1 "
    "saturates; V_BE rises when cold, so leave margin over the temperature range.",
    "A base stopper (tens to hundreds of Ω) in series with Q2's base helps against "
    "parasitic oscillation with capacitive loads or long leads.",
    "Check Q2's dissipation at the highest load voltage against its package rating.",
) + common.SAFETY_NOTES

TOPOLOGIES = (
    Topology(
        key="cascode_mirror",
        order=80,
        title="Cascode current mirror (four transistors)",
        description=("Diode stacks Q1/Q3 and the mirror Q2 with cascode Q4: Q2 copies Q1 at equal "
                     "V_CE and Q4 shields it from the load, raising R_out to about β r_o/2. "
                     "Ideal reference current."),
        values=(common.i_ref(400e-6), common.I_REF_TC,
                common.supply(9.0, "supply voltage feeding the reference current (emitter rail of a PNP mirror)"),
                common.load(4.0)),
        build=build_mirror,
        draw=draw_mirror,
        notes=NOTES_MIRROR,
    ),
    Topology(
        key="cascoded_source",
        order=85,
        title="Cascoded divider-biased source (cascode base on its own divider)",
        description=("A divider-biased, emitter-degenerated transistor Q1 under a cascode Q2 whose "
                     "base sits on a second divider: Q1 works at a fixed V_CE and R_out rises "
                     "towards β r_o2."),
        values=_source_values("divider"),
        build=build_source_divider,
        draw=draw_source_divider,
        notes=NOTES_SOURCE,
    ),
    Topology(
        key="cascoded_source_fixed_bias",
        order=86,
        title="Cascoded divider-biased source (cascode base on a bias voltage)",
        description=("The cascoded source with Q2's base held by a bias voltage V_B2 through its "
                     "source resistance R_B2 (a zener, a reference or a shared bias line)."),
        values=_source_values("fixed"),
        build=build_source_bias,
        draw=draw_source_bias,
        notes=NOTES_SOURCE,
    ),
)
