"""Basic two-transistor current mirrors (NPN sink, PNP source).

Three registered topologies share one circuit::

    basic_mirror          ideal reference current I_REF into the input node
    basic_mirror_rref     reference set by R_REF from the supply
    multi_output_mirror   ideal I_REF, plus n_extra further outputs at V_X

NPN sink (the PNP source is its mirror image, emitters at V_CC)::

    I_REF (or R_REF from V_CC) -> node b
    Q1: base = collector = b, emitter = 0            (diode-connected input)
    Q2: base = b, collector = out, emitter = 0       (area N, the output)
    Q3: base = b, collector = x (V_X), emitter = 0   (area N; one of n_extra)

Unknown: V_b.  KCL at b, exact: ``I_REF = I_C1 + I_B1 + I_B2 (+ n_extra I_B3)``.
Every extra output is identical, so ``Q3`` stands for one of them and the
other ``n_extra - 1`` add its base current once more each.

Closed forms (``m = I_S2/I_S1``, equal to N for matched parts;
``a = 1 + 1/beta_1 + m/beta_2 (+ n_extra m_3/beta_3)``):

* ideal mirror ``I_out = m I_REF``;
* finite beta ``I_out = m I_REF / a``, which for matched parts is the
  published ``N I_REF / (1 + (1+N)/beta)`` (Gray, Hurst, Lewis & Meyer,
  *Analysis and Design of Analog Integrated Circuits*, ch. 4; Sedra & Smith,
  *Microelectronic Circuits*, current-mirror section; from memory) and, with
  n_extra outputs, ``N I_REF / (1 + (1 + N + n_extra N)/beta)``;
* with the Early law ``I_C = I_S e^{V_BE/V_T} (1 + V_CE/V_A)`` the ratio is
  exactly ``m (1 + V_CE2/V_A2) / (a + V_B/V_A1)`` given the input voltage
  ``V_B`` (derived here).  With an ideal reference the closed form takes ``V_B``
  from the no-Early solution plus one fixed-point step (error of order
  ``(V_T/V_A)^2``); with R_REF it solves the reference loop again with
  ``a + V_B/V_A1`` (error of order ``(V_T/V_A)(V_B/V_A)``);
* resistor reference: ``I_REF R_REF + V_T ln(I_REF/(a I_S1)) = V_CC``, so
  ``I_REF = (V_T/R_REF) omega(V_CC/V_T + ln(a I_S1 R_REF/V_T))`` and
  ``I_out = m I_REF/a`` (derived here; the structure of Banwell & Jayakumar,
  Electron. Lett. 36, 2000); the hand form ``I_REF = (V_CC - V_BE(on))/R_REF``.

All ratios assume Q1 and Q2 at one junction temperature ("isothermal"):
each junction keeps its own V_T in the exact equations, and a warmer Q2
raises the output by several per cent per kelvin.

Output resistance: Q2's base current does not depend on its collector
voltage in this model, so ``R_out = r_o2 = (V_A2 + V_CE2)/I_C2`` exactly in
the hybrid-pi model.
Examples
--------
>>> import kit
>>> ev = kit.evaluate(kit.design("basic_mirror", "npn", i_ref="100 uA", n_area=2))
>>> 1.9 < ev.i_out / 100e-6 < 2.2, ev.compliance.low.part
(True, 'Q2')
"""

from __future__ import annotations

from kit.circuit.blocks import hand_vbe, junction_behind_resistor, positive_or, reference_current
from kit.devices.bjt import BASE_CURRENT_NEGLECTED, FORWARD_ACTIVE, KIND as BJT, NO_EARLY, VBE_FIXED
from kit.topologies import common, drawing
from kit.topologies.base import Topology, Value
from kit.words import ISOTHERMAL

VALUES_IDEAL = (common.i_ref(350e-6), common.I_REF_TC, common.n_area(2.0), common.supply(9.0),
                common.load(4.5))
VALUES_RREF = (
    Value("r_ref", "Ω", "reference resistor from the supply to the input node", 22e3, 1.0, 1e9, "resistor"),
    common.n_area(1.0),
    common.supply(12.0, "supply voltage feeding R_REF (and the emitter rail of a PNP mirror)"),
    common.load(6.0),
)
VALUES_MULTI = (
    common.i_ref(200e-6), common.I_REF_TC, common.n_area(1.0),
    Value("n_extra", "", "number of further identical outputs (whole number)", 3, 1, 64, whole=True),
    Value("v_extra", "V", "collector voltage of the further outputs against 0 V", 5.0, -1000.0, 1000.0),
    common.supply(12.0), common.load(6.0),
)

GRAY_SEDRA = ("Gray, Hurst, Lewis & Meyer, Analysis and Design of Analog ICs, ch. 4; "
              "Sedra & Smith, Microelectronic Circuits, current mirrors (from memory)")
DERIVED_EARLY = "derived here (Early law I_C = I_S e^(V_BE/V_T)(1 + V_CE/V_A))"
R_OUT_LABEL = "R_out = r_o2 = (V_A2 + V_CE2)/I_C2 (exact in the hybrid-π model)"

IDEAL = (BASE_CURRENT_NEGLECTED.key, NO_EARLY.key, FORWARD_ACTIVE.key, ISOTHERMAL.key)
FINITE_BETA = (NO_EARLY.key, FORWARD_ACTIVE.key, ISOTHERMAL.key)
EARLY = (FORWARD_ACTIVE.key, ISOTHERMAL.key)


def _mirror(c, reference, extra_outputs=False):
    """Rails, the reference, the pair Q1 (diode) and Q2 (area N), and optional further outputs."""
    npn = c.supply_and_load()
    c.node("b")
    emitter_rail = "0" if npn else "cc"
    s = {}
    if reference == "current":
        s["I_REF"] = reference_current(c, "b", sink=npn)
    else:
        s["R_REF"] = c.resistor("R_REF", "cc" if npn else "0", "b", "r_ref")
    area = c.parameter("n_area")
    s["Q1"] = c.add(BJT, "Q1", b="b", c="b", e=emitter_rail)
    s["Q2"] = c.add(BJT, "Q2", b="b", c="out", e=emitter_rail, scale=area)
    if extra_outputs:
        c.rail("x", c.parameter("v_extra"))
        s["K"] = c.operating_value("K", c.parameter("n_extra"), latex="n_{extra}")
        s["Q3"] = c.add(BJT, "Q3", b="b", c="x", e=emitter_rail, scale=area)
        # The other n_extra - 1 identical outputs draw Q3's base current again each.
        c.current(*(("b", "0") if npn else ("0", "b")), (s["K"] - 1) * s["Q3"].q["i_b"])
    s["v_ce2"] = c.voltages["out"] if npn else c.voltages["cc"] - c.voltages["out"]
    c.extra("r_out_ro2", s["Q2"].small_signal["r_o"], R_OUT_LABEL)
    return s


def _gain_terms(s):
    """``m = I_S2/I_S1`` and the base-loading factor ``a`` (V_A -> inf)."""
    q1, q2 = s["Q1"], s["Q2"]
    m = q2["I_S"] / q1["I_S"]
    a = 1 + 1 / q1["beta"] + m / q2["beta"]
    if "Q3" in s:
        a += s["K"] * (s["Q3"]["I_S"] / q1["I_S"]) / s["Q3"]["beta"]
    return m, a


def _start(c, s, current):
    """Input node from a closed form of I_out, kept within a junction drop of the output collector."""
    import sympy as sp

    q1, q2 = s["Q1"], s["Q2"]
    i_c1 = positive_or(current * q1["I_S"] / q2["I_S"])
    drop = BJT.start(q1.sense, i_c1, q1.symbols)
    # In saturation Q2's collector-base junction carries up to the input current; the
    # drop that passes it follows temperature and I_S.
    clamp = sp.Max(BJT.start(q2.sense, i_c1, q2.symbols), common.LEAST_SATURATED_VBC)
    if c.sense == "n":
        c.start("b", sp.Min(drop, c.voltages["out"] + clamp))
    else:
        c.start("b", sp.Max(c.voltages["cc"] - drop, c.voltages["out"] - clamp))


def _ideal_forms(c, s, beta_label):
    import sympy as sp

    m, a = _gain_terms(s)
    i_ref, q1, q2 = s["I_REF"], s["Q1"], s["Q2"]
    c.closed_form("area_ratio", m * i_ref, "ideal mirror, I_out = N·I_REF", IDEAL, GRAY_SEDRA)
    finite = c.closed_form("finite_beta", m * i_ref / a, beta_label[0], FINITE_BETA, beta_label[1])
    # Input voltage: the no-Early value, then one fixed-point step of
    # I_REF = I_S1 e^(V_B/V_T) (a + V_B/V_A1).
    v_b = q1["V_T"] * sp.log(i_ref / (a * q1["I_S"]))
    v_b = q1["V_T"] * sp.log(i_ref / ((a + v_b / q1["V_A"]) * q1["I_S"]))
    c.closed_form("early_aware", m * i_ref * (1 + s["v_ce2"] / q2["V_A"]) / (a + v_b / q1["V_A"]),
                  "finite β and Early effect (V_B from the no-Early solution)", EARLY, DERIVED_EARLY)
    _start(c, s, finite)


def build_ideal(c):
    """The mirror fed by an ideal reference current."""
    s = _mirror(c, "current")
    _ideal_forms(c, s, ("finite β, N·I_REF/(1 + (1+N)/β)", GRAY_SEDRA))


def build_multi(c):
    """The mirror with ``n_extra`` further outputs."""
    s = _mirror(c, "current", extra_outputs=True)
    _ideal_forms(c, s, ("finite β, N·I_REF/(1 + (1 + N + n_extra·N)/β)",
                        "Sedra & Smith, Microelectronic Circuits, mirror with several outputs (from memory)"))


def build_rref(c):
    """The mirror fed through R_REF from the supply."""
    s = _mirror(c, "resistor")
    v_on = hand_vbe(c)
    m, a = _gain_terms(s)
    r_ref, v_cc, q1, q2 = s["R_REF"], c.voltages["cc"], s["Q1"], s["Q2"]
    v_t = q1["V_T"]  # the reference loop runs through Q1's junction

    def reference(gain):
        # I R_REF + V_T ln(I/(gain I_S1)) = V_CC
        return junction_behind_resistor(v_cc, r_ref, v_t, gain * q1["I_S"])

    i_ref = reference(a)
    # Early: the input transistor carries (a + V_B/V_A1) I_S1 e^(V_B/V_T); take V_B
    # from the no-Early solution and solve the reference loop again with it.
    # (the no-Early input voltage V_T ln(I_REF/(a I_S1)) is V_CC - I_REF R_REF exactly)
    a_early = a + (v_cc - i_ref * r_ref) / q1["V_A"]
    c.closed_form("stiff_hand", m * (v_cc - v_on) / r_ref, "hand analysis, N·(V_CC − V_BE(on))/R_REF",
                  (BASE_CURRENT_NEGLECTED.key, VBE_FIXED.key, NO_EARLY.key, ISOTHERMAL.key),
                  "hand analysis, common practice")
    c.closed_form("fixed_vbe", m * (v_cc - v_on) / (r_ref * a), "fixed V_BE with finite β",
                  (VBE_FIXED.key, NO_EARLY.key, ISOTHERMAL.key), GRAY_SEDRA)
    exponential = c.closed_form("exponential", m * i_ref / a, "exponential junction, finite β (Wright ω form)",
                                FINITE_BETA, "derived here; cf. Banwell & Jayakumar, Electron. Lett. 36 (2000)")
    c.closed_form("early_aware", m * reference(a_early) * (1 + s["v_ce2"] / q2["V_A"]) / a_early,
                  "ω form with Early effect (V_B from the no-Early solution)", EARLY, DERIVED_EARLY)
    _start(c, s, exponential)


# ---------------------------------------------------------------------------
# schematics

def _draw(sheet, d, *, resistor=None, extra=False):
    """Q1 (input, facing left) and Q2 (output) side by side on one base line.

    Further outputs (``extra``) sit left of Q1, fed from the strapped input
    node, so that no wire passes through a transistor symbol.
    """
    import schemdraw.elements as elm

    npn = sheet.sink
    n_text = f"N = {sheet['n_area']:g}"
    q1 = drawing.transistor(npn, facing_left=True, label="Q1")
    drawing.emitter_return(sheet, q1.emitter, npn)
    elm.Line().at(q1.base).right(drawing.GAP)
    q2 = drawing.transistor(npn, label=f"Q2\n{n_text}").anchor("base")
    drawing.emitter_return(sheet, q2.emitter, npn)
    drawing.output_terminal(q2.collector, npn)
    # Diode connection: Q1's collector strapped to the shared base line.
    node = drawing.diode_strap(q1.collector, q1.base, npn)
    drawing.reference_feed(sheet, node, npn, resistor=resistor)
    if extra:
        elm.Line().at(node).left(drawing.GAP)
        q3 = drawing.transistor(npn, facing_left=True, label=f"Q3\n{n_text}").anchor("base")
        drawing.emitter_return(sheet, q3.emitter, npn)
        count = int(sheet["n_extra"])
        drawing.output_terminal(q3.collector, npn,
                                f"{count} output{'s' if count > 1 else ''} like Q3\nat V_X {sheet.text('v_extra')}",
                                side="left")


def draw_ideal(sheet, d):
    """Schematic with the present values."""
    _draw(sheet, d)


def draw_rref(sheet, d):
    """Schematic with the present values."""
    _draw(sheet, d, resistor="r_ref")


def draw_multi(sheet, d):
    """Schematic with the present values."""
    _draw(sheet, d, extra=True)


# ---------------------------------------------------------------------------
# registry entries

NOTES = (
    "The output current follows the output voltage through Q2's Early effect "
    "(R_out = r_o2); best match where V_CE2 ≈ V_BE.",
    "Discrete parts: unselected transistors differ by several mV in V_BE; "
    "use a matched (monolithic) pair or emitter degeneration.",
    "Thermal coupling: keep Q1 and Q2 at one temperature; a 1 K difference moves "
    "the ratio by about 8 % when undegenerated.",
    "Check Q2's dissipation at the highest load voltage against its package rating.",
) + common.SAFETY_NOTES

TOPOLOGIES = (
    Topology(
        key="basic_mirror",
        order=30,
        title="Basic current mirror",
        description=("Diode-connected input transistor Q1 fed by an ideal reference current; "
                     "output transistor Q2 of N times the emitter area. NPN sinks, PNP sources."),
        values=VALUES_IDEAL,
        build=build_ideal,
        draw=draw_ideal,
        notes=NOTES,
    ),
    Topology(
        key="basic_mirror_rref",
        order=31,
        title="Basic current mirror with reference resistor",
        description=("Basic mirror whose reference current is set by R_REF from the supply "
                     "into the diode-connected Q1; Q2 of N times the area. NPN sinks, PNP sources."),
        values=VALUES_RREF,
        build=build_rref,
        draw=draw_rref,
        notes=NOTES + ("The output follows the supply almost one to one "
                       "(S_VCC ≈ V_CC/(V_CC − V_BE)); regulate the supply or use a reference.",),
    ),
    Topology(
        key="multi_output_mirror",
        order=32,
        title="Current mirror with several outputs",
        description=("Basic mirror with the output Q2 and n_extra further identical outputs "
                     "(collectors at V_X) whose base currents all load the input node."),
        values=VALUES_MULTI,
        build=build_multi,
        draw=draw_multi,
        notes=NOTES + (
            "Q3 stands for one of the n_extra further outputs; its dissipation is per transistor.",
            "Every further output adds N/β to the base loading: with many outputs use a "
            "β-helper mirror.",
        ),
    ),
)
