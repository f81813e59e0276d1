"""Op-amp + pass-transistor feedback source with a sense resistor.

Two registered topologies share one loop::

    opamp_bjt_source   BJT pass device Q1 (NPN sink / PNP source), base stopper R_B
    opamp_mos_source   MOSFET pass device M1 (NMOS sink / PMOS source)

Sink (NPN / NMOS)::

    V_SET -> U1 + input;  U1 - input = sense node s;  R_S: s -> 0
    U1 output o --R_B--> base b (BJT)   or   o -> gate (MOSFET)
    emitter/source = s;  collector/drain = out (the load, at V_load)

Source (PNP / PMOS): R_S from the supply to s, the + input at
``V_supply - V_SET``, collector/drain into the load to 0 V.  ``V_SET`` is
the voltage the loop puts across R_S in both cases.

The op-amp is the part U1 (:mod:`kit.devices.opamp`): it drives its output
node by ``V_o = A (V_+ - V_- + V_OS)``, its bias current ``I_B`` leaves the
sense node into the - input, and its output swing ``V_OL … V_OH`` is its own
limit, so a report names U1 when the loop runs out of drive.

Closed forms (``A`` the gain; the loop equation ``K I + V_ctrl = D`` with
the drive ``D = A (V_SET + V_OS) + (1 + A) R_S I_B`` for a sink and
``D = V_supply + A (V_SET - V_OS) - (1 + A) R_S I_B`` for a source, whose
+ input sits ``V_SET`` below the supply; derived here from the gain law and
KCL at the sense node):

* ideal op-amp, ``alpha = 1``: ``I_out = V_SET/R_S`` (hand analysis);
* BJT, fixed ``V_BE(on)``, base current through R_B (``I_B = I_E/(beta+1)``):
  ``I_out = alpha (D - V_BE(on))/K``, ``K = (1 + A) R_S + R_B/(beta + 1)``;
* BJT, exponential junction without the Early effect:
  ``K I_E + V_T ln(alpha I_E/I_S) = D``, solved in Wright-ω form
  (:func:`kit.circuit.blocks.junction_behind_resistor`; the structure of
  Banwell & Jayakumar, Electron. Lett. 36, 2000), ``I_out = alpha I_E``;
* MOSFET, square law without channel-length modulation: with
  ``B = (1 + A) R_S`` and ``C = D - V_th``, ``I = (K/2) y^2`` for the
  overdrive ``y = C - B I``, so ``I_out = (C/B)(r - 1)/(r + 1)``,
  ``r = sqrt(1 + 2 K B C)``.

Small-signal output resistance (op-amp + input at AC ground; derived here
by nodal analysis of the hybrid-π and square-law models)::

    BJT:     R_out = {r_o[(A+1)(beta+1)R_S + r_pi + R_B] + R_S (r_pi + R_B)}
                     / [(A+1)R_S + r_pi + R_B]   ->  (beta+1) r_o  as A -> inf
    MOSFET:  R_out = r_o + R_S + (A+1) g_m r_o R_S

A BJT pass device's R_out levels off near ``(beta+1) r_o`` however large the
gain: the loop holds the emitter current, and the base current's share of
it still follows the collector voltage.  A MOSFET has no gate current, so
its R_out grows in proportion to A.

Starting points are declared: a closed form's current, the control voltage
that carries it (V_BE at the guessed V_CE, V_GS in saturation, triode or
below the join), and the loop closed exactly around it, so that Newton
starts with the stiff gain law satisfied.  The generic source stepping is
not enough here: it misses points inside compliance of the PNP source, the
load-voltage sweeps of the MOSFET loops past their edges, and it is about
ten times slower on Monte-Carlo-size arrays.

Examples
--------
>>> import kit
>>> ev = kit.evaluate(kit.design("opamp_mos_source", "nmos"))
>>> round(ev.i_out * 1e3, 3), ev.regions["M1"], ev.compliance.low.part
(10.009, 'saturation', 'M1')
>>> d = kit.design("opamp_bjt_source", "pnp", devices={"U1": {"v_os": 0.0}})
>>> d.devices["U1"].a_ol, d.values["v_set"]
(100000.0, 1.0)
"""

from __future__ import annotations

from dataclasses import dataclass

from kit.circuit.blocks import hand_vbe, held_node, junction_behind_resistor, positive_or
from kit.devices.bjt import ALPHA_ONE, FORWARD_ACTIVE, KIND as BJT, NO_EARLY, VBE_FIXED
from kit.devices.mosfet import KIND as MOS, NO_CLM, SQUARE_LAW, overdrive_for_current_expression
from kit.devices.opamp import IDEAL_OPAMP, KIND as OPAMP
from kit.topologies import common, drawing
from kit.topologies.base import Topology, Value

# ---------------------------------------------------------------------------
# values: scenarios of our own (a 1 mA sensor-excitation sink, a 10 mA LED driver)


def _loop_values(*, r_s, v_set, v_supply, v_load, terminal, control):
    """Values every op-amp source shares (defaults of the scenario)."""
    return (
        Value("r_s", "Ω", f"sense resistor ({control} to 0 V; from the supply to it for a source)",
              r_s, 1e-3, 1e9, "resistor"),
        Value("v_set", "V", "set voltage across R_S (op-amp + input above 0 V for a sink, "
              "below the supply for a source)", v_set, 1e-4, 1000.0),
        Value("v_set_tc", "1/K", "temperature coefficient of the set voltage", 0.0, -1e-3, 1e-3),
        common.supply(v_supply, "supply voltage (R_S returns to it for a source)", low=0.1),
        common.load(v_load, f"{terminal} (load) voltage against 0 V"),
    )


# A 1 mA sensor-excitation sink (or source) on a 12 V rail.
VALUES_BJT = _loop_values(r_s=1e3, v_set=1.0, v_supply=12.0, v_load=6.0, terminal="collector",
                          control="emitter")
VALUES_BJT = VALUES_BJT[:1] + (
    Value("r_b", "Ω", "base stopper from the op-amp output to the base", 220.0, 1e-2, 1e7, "resistor"),
) + VALUES_BJT[1:]
# A 10 mA LED-string driver on a 24 V rail.
VALUES_MOS = _loop_values(r_s=50.0, v_set=0.5, v_supply=24.0, v_load=15.0, terminal="drain",
                          control="source")

# The op-amps of the two scenarios (generic values of our own): U1's defaults here.
OPAMP_BJT = dict(a_ol=1e5, v_os=0.5e-3, v_os_tc=0.0, i_bias=20e-9, v_oh=11.0, v_ol=0.2)
OPAMP_MOS = OPAMP_BJT | dict(v_oh=22.5)

FORCED_VDS = 1e-6  # V: what is left across a channel whose gate the loop drives to the limit

DERIVED_LOOP = "derived here from the loop equations (op-amp gain law, KCL at the sense node)"
COMMON_PRACTICE = "hand analysis, common practice (Sedra & Smith, op-amp circuits; from memory)"


# ---------------------------------------------------------------------------
# exact equations

@dataclass(frozen=True)
class Loop:
    """What the closed forms and starting points of a loop need (operating symbols)."""

    sink: bool
    v_set: object
    gain: object
    r_s: object
    plus: object  # the + input with the offset: what the loop compares the sense node with
    drive: object  # right-hand side of K I + V_ctrl = drive (module docstring)
    v_out: object
    v_rail: object
    i_bias: object

    def nodes(self, control):
        """Sense node and op-amp output that close the loop around a control voltage.

        ``control`` is V_BE + I_B R_B or V_GS; the gain law then holds exactly,
        ``V_o = A (V_+ + V_OS - V_S)``.
        """
        a = self.gain
        if self.sink:
            v_s = (a * self.plus - control) / (1 + a)
            return v_s, v_s + control
        v_s = (a * self.plus + control) / (1 + a)
        return v_s, v_s - control


def _loop(c, supply, opamp_typical):
    """Rails, sense node, R_S, the set point and the op-amp U1."""
    sink = c.supply_and_load(supply)
    c.node("s")
    c.node("o")
    r_s = c.resistor("R_S", "s", "0" if sink else supply, "r_s")
    v_set = c.drifting("V_SET", "v_set", latex="V_{SET}", budget="set voltage V_SET")
    v_rail = c.voltages[supply]
    held_node(c, "set", v_set if sink else v_rail - v_set, ramped=(v_set,))
    # U1 runs from the circuit's own supply and 0 V: its output cannot pass them.
    u1 = c.add(OPAMP, "U1", p="set", n="s", o="o", vp=supply, vn="0", typical=opamp_typical)
    a, v_os, i_b = u1["A"], u1["V_OS"], u1["I_B"]
    # The op-amp output is measured from 0 V, the set voltage of a source from the supply.
    if sink:
        drive = a * (v_set + v_os) + (1 + a) * r_s * i_b
    else:
        drive = v_rail + a * (v_set - v_os) - (1 + a) * r_s * i_b
    return Loop(sink, v_set, a, r_s, c.voltages["set"] + v_os, drive, c.voltages["out"], v_rail, i_b)


def build_bjt(c):
    """The loop with a BJT pass device Q1 and its base stopper R_B."""
    loop = _loop(c, "cc", OPAMP_BJT)
    v_set, a, r_s, drive = loop.v_set, loop.gain, loop.r_s, loop.drive
    c.node("b")
    r_b = c.resistor("R_B", "o", "b", "r_b")
    q1 = c.add(BJT, "Q1", b="b", c="out", e="s")
    v_on = hand_vbe(c)

    beta = q1["beta"]
    alpha = beta / (beta + 1)
    k = (1 + a) * r_s + r_b / (beta + 1)
    c.closed_form("ideal", v_set / r_s, "ideal op-amp, α = 1: I_out = V_SET/R_S",
                  (IDEAL_OPAMP.key, ALPHA_ONE.key), COMMON_PRACTICE)
    c.closed_form("fixed_vbe", alpha * (drive - v_on) / k,
                  "finite gain, offset, bias current and β; fixed V_BE",
                  (VBE_FIXED.key, NO_EARLY.key), DERIVED_LOOP)
    # K I_E + V_T ln(I_E/(I_S/alpha)) = drive: a junction behind the resistance K.
    emitter = junction_behind_resistor(drive, k, q1["V_T"], q1["I_S"] / alpha)
    exponential = c.closed_form(
        "exponential", alpha * emitter,
        "finite gain, offset, bias current and β; exponential junction (Wright ω form)",
        (NO_EARLY.key, FORWARD_ACTIVE.key), DERIVED_LOOP + "; cf. Banwell & Jayakumar, Electron. Lett. 36 (2000)")

    s = q1.small_signal
    r_base = s["r_pi"] + r_b
    c.extra("r_out_hybrid_pi",
            (s["r_o"] * ((a + 1) * (s["beta"] + 1) * r_s + r_base) + r_s * r_base)
            / ((a + 1) * r_s + r_base),
            "R_out, hybrid-π: {r_o[(A+1)(β+1)R_S + r_π + R_B] + R_S(r_π + R_B)}/[(A+1)R_S + r_π + R_B]")
    _start_bjt(c, loop, q1, r_b, exponential)


def _start_bjt(c, loop, q1, r_b, current):
    """Start from the exponential form's current, with V_BE corrected for the guessed V_CE.

    The loop holds the emitter current near its closed-form value whatever
    the collector does, so V_BE follows from the Ebers–Moll emitter current
    at the guessed V_CE; near saturation that keeps the start (and the
    op-amp output it implies) on the right branch.
    """
    import sympy as sp

    sign = 1 if loop.sink else -1
    beta, v_t = q1["beta"], q1["V_T"]
    current = positive_or(current)
    v_s, _ = loop.nodes(BJT.start(q1.sense, current, q1.symbols) + r_b * current / beta)
    v_ce = sp.Max(sign * (loop.v_out - v_s), 0)
    # Emitter current per I_S e^(V_BE/V_T): the transport share plus the base share.
    reverse = sp.exp(-v_ce / v_t)
    per_unit = (1 - reverse) * (1 + v_ce / q1["V_A"]) + 1 / beta
    emitter = current * (beta + 1) / beta
    v_be = BJT.start(q1.sense, emitter / per_unit, q1.symbols)
    forward = emitter / (q1["I_S"] * per_unit)  # e^(V_BE/V_T)
    collector = (q1["I_S"] * forward * (1 - reverse) * (1 + v_ce / q1["V_A"])
                 - q1["I_S"] / q1["beta_R"] * (forward * reverse - 1))
    v_s, v_o = loop.nodes(v_be + r_b * (emitter - collector))
    c.start("s", v_s)
    c.start("o", v_o)
    c.start("b", v_s + sign * v_be)


def build_mos(c):
    """The loop with a MOSFET pass device M1 (gate driven by the op-amp)."""
    import sympy as sp

    loop = _loop(c, "dd", OPAMP_MOS)
    v_set, a, r_s, drive = loop.v_set, loop.gain, loop.r_s, loop.drive
    m1 = c.add(MOS, "M1", g="o", d="out", s="s")

    c.closed_form("ideal", v_set / r_s, "ideal op-amp: I_out = V_SET/R_S", (IDEAL_OPAMP.key,),
                  COMMON_PRACTICE)
    b = (1 + a) * r_s
    overdrive = drive - m1["V_th"]
    # I = (K/2) y², y = C - B I  =>  I = (C/B)(r - 1)/(r + 1), r = sqrt(1 + 2KBC); the |.|
    # only matters for a loop with no drive at all (C < 0), where it keeps NaN out.
    root = sp.sqrt(sp.Abs(1 + 2 * m1["K"] * b * overdrive))
    square_law = c.closed_form(
        "square_law", overdrive / b * (root - 1) / (root + 1), "finite gain, offset and bias current; square law",
        (NO_CLM.key, SQUARE_LAW.key), DERIVED_LOOP + "; square law: Sedra & Smith, MOSFET chapter (from memory)")

    s = m1.small_signal
    c.extra("r_out_small_signal", s["r_o"] + r_s + (a + 1) * s["g_m"] * s["r_o"] * r_s,
            "R_out = r_o + R_S + (A+1)·g_m·r_o·R_S (square-law small-signal model)")
    _start_mos(c, loop, m1, square_law)


def _start_mos(c, loop, m1, current):
    """Start from the square-law form's current and the gate voltage that carries it.

    The device law is inverted at the drain-source voltage the current
    leaves (saturation, triode or below the join).  With the load at or past
    the sense node the loop drives the gate as hard as its gain allows and
    V_DS shrinks to a sliver: start there (far outside compliance, but a
    converged point lets the report name the op-amp's swing rather than fail).
    """
    import sympy as sp

    sign = 1 if loop.sink else -1
    current = positive_or(current)
    r_s, i_b = loop.r_s, loop.i_bias
    if loop.sink:
        v_ds = loop.v_out - r_s * (current - i_b)
    else:
        v_ds = loop.v_rail - r_s * (current + i_b) - loop.v_out
    join = 2 * m1["n"] * m1["V_T"]
    overdrive = overdrive_for_current_expression(current, v_ds, m1["K"], m1["lambda"], join)
    v_s, v_o = loop.nodes(m1["V_th"] + overdrive)
    forced_s = loop.v_out - sign * FORCED_VDS
    hard = v_ds <= FORCED_VDS
    c.start("s", sp.Piecewise((forced_s, hard), (v_s, True)))
    c.start("o", sp.Piecewise((loop.gain * (loop.plus - forced_s), hard), (v_o, True)))


# ---------------------------------------------------------------------------
# schematic

def _draw(sheet, d, mos):
    """Op-amp driving the pass device; R_S at the emitter/source; load at the collector/drain.

    Sink: the + input on top takes V_SET, the feedback from the sense node
    below reaches the - input from below.  Source: the picture flipped, the
    sense node above the device and the feedback from above.
    """
    import schemdraw.elements as elm

    sink = sheet.sink
    rail = f"{'V_DD' if mos else 'V_CC'} {sheet.text('v_supply')}"
    op = elm.Opamp(leads=True)
    op = (op.flip() if sink else op).label("U1", loc="center", ofst=(-0.35, 0))
    # its supply: the circuit's rail and 0 V
    op.label(f"supply {rail}", loc="top" if sink else "bottom", fontsize=10)  # clear of the feedback wire
    plus, minus = op.in2, op.in1
    elm.Line().at(plus).left(1.8)
    set_text = sheet.text("v_set")
    reference = f"V_SET\n{set_text}" if sink else f"{rail.split()[0]} − V_SET\n(V_SET {set_text})"
    source = elm.SourceV().down().reverse().label(reference, loc="top")
    elm.Ground()
    drawing.make_room(source.center, "left", reference, 0.6)
    elm.Line().at(op.out).right(0.5)
    if not mos:
        elm.Resistor().right().label(sheet.label("r_b", "R_B"), loc="top")
    device = _pass_device(sink, mos).anchor("gate" if mos else "base")
    emitter = device.source if mos else device.emitter
    collector = device.drain if mos else device.collector
    toward_rail = drawing.toward_emitters(sink)
    getattr(elm.Line().at(emitter), toward_rail)(drawing.LEAD)
    node = elm.Dot()
    getattr(elm.Resistor(), toward_rail)().label(sheet.label("r_s", "R_S"), loc="bottom")
    if sink:
        elm.Ground()
    else:
        elm.Vdd().label(rail)
    # Feedback from the sense node to the - input, clear of the reference wire.
    elm.Line().at(node.center).tox(minus[0] - 0.5)
    elm.Line().toy(minus)
    elm.Line().tox(minus)
    drawing.output_terminal(collector, sink)


def _pass_device(sink, mos):
    """Pass transistor with its control terminal facing the op-amp (left)."""
    import schemdraw.elements as elm

    if mos:
        kind = elm.AnalogNFet if sink else elm.AnalogPFet
        return kind(offset_gate=False, source_arrow=True).theta(0).reverse().label("M1", loc="right")
    return drawing.transistor(sink, label="Q1")


def draw_bjt(sheet, d):
    """Schematic with the present values."""
    _draw(sheet, d, mos=False)


def draw_mos(sheet, d):
    """Schematic with the present values."""
    _draw(sheet, d, mos=True)


# ---------------------------------------------------------------------------
# registry entries

def _notes(stopper, device):
    return (
        f"Stability: the loop contains a follower driving R_S; use a {stopper} stopper (tens to "
        f"hundreds of Ω) and check the phase margin with the load and cable capacitance at the sense "
        f"node. This DC model says nothing about it.",
        f"The pass {device} dissipates (V_load − V_S)·I_out (a sink at its highest load voltage, a "
        "source at its lowest): a power pass device on a high supply can run hot — check its SOA, "
        "heatsink and junction temperature.",
        "The op-amp's input common-mode range must include its + input: V_SET above 0 V for a sink "
        "(single-supply op-amp), V_SET below the supply for a source (rail-to-rail or high-side input).",
        "Output swing V_OL … V_OH is the op-amp's at this load current; its output current limit "
        "and its own supply are not modelled.",
    ) + common.SAFETY_NOTES


TOPOLOGIES = (
    Topology(
        key="opamp_bjt_source",
        order=90,
        title="Op-amp feedback source, BJT pass device",
        description=("An op-amp holds V_SET across the sense resistor R_S at the emitter of a "
                     "pass BJT (base stopper R_B); finite gain, offset and bias current included. "
                     "NPN sinks, PNP sources."),
        values=VALUES_BJT,
        build=build_bjt,
        draw=draw_bjt,
        notes=_notes("base", "transistor") + (
            "The base current leaves through the emitter and the collector carries only α of it "
            "(−1/(β+1)); use a MOSFET or a Darlington where that matters.",),
    ),
    Topology(
        key="opamp_mos_source",
        order=91,
        title="Op-amp feedback source, MOSFET pass device",
        description=("An op-amp holds V_SET across the sense resistor R_S at the source of a pass "
                     "MOSFET (square law with channel-length modulation); finite gain, offset and "
                     "bias current included. NMOS sinks, PMOS sources."),
        values=VALUES_MOS,
        build=build_mos,
        draw=draw_mos,
        polarities=("nmos", "pmos"),
        notes=_notes("gate", "MOSFET") + (
            "A MOSFET's gate capacitance slows the loop further: keep the gate stopper close to "
            "the gate.",),
    ),
)
