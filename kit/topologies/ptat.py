"""ΔV_BE (PTAT) self-biased current cell with emitter-area ratio N.

Two junctions at different current densities differ by
``ΔV_BE = V_T ln(N I_C1/I_C2)``; the cell forces ``I_C1 ≈ I_C2`` with a
mirror and puts ``ΔV_BE`` across ``R``, so ``I = V_T ln(N)/R``, proportional
to absolute temperature (Gray, Hurst, Lewis & Meyer, *Analysis and Design of
Analog ICs*, ch. 4, from memory; background: Widlar, IEEE JSSC SC-6, 1971;
Brokaw, IEEE JSSC SC-9, 1974).

NPN core (design polarity ``npn``) with a PNP mirror, output sourced::

    V_CC ---+--------------+--------------+
            Q3 (diode)     Q4             Q5 --> out (sources the load)
            |  base p      |  base p      |  base p
            p              b
            Q2 (area N)    Q1 (area 1, diode-connected at b)
            |  base b      |
            R              0
            0

Q1: base = collector = b, emitter 0.  Q2: base b, collector p, emitter
through R to 0.  Q3: diode at p.  Q4: base p, collector b.  Q5: base p,
collector out.  Unknowns V_b, V_e (Q2 emitter), V_p.  The ``pnp`` polarity
is the complement (PNP core at the supply, NPN mirror at 0 V, output sunk):
the mirror's parts take the opposite polarity.

Zero current is also a DC solution of this cell (every junction off), so the
exact solve starts on the running branch and the circuit declares that
branch valid (:meth:`kit.circuit.Circuit.valid_when`): a point that lands on
the zero-current state is refused; a real cell needs a start-up path.

Closed forms (forward active; the first two with V_A → ∞):

* ``I = V_T ln(N)/R`` (2 equal collector currents, base currents neglected);
* with base currents and the mirror's own I_S ratios ``m4 = I_S4/I_S3``,
  ``m5 = I_S5/I_S3`` (derived here from KCL at b and p):
  ``D = 1 + 1/β3 + m4/β4 + m5/β5``, ``r = (m4/D - 1/β2)/(1 + 1/β1)``,
  ``I_C2 = V_T ln(r I_S2/I_S1) / (R (1 + 1/β2))``, ``I_out = m5 I_C2 / D``;
* the same with each device's Early factor ``k = 1 + V_CE/V_A`` (junction
  drops at ``V_BE(on)``, ``ΔV_BE`` at ``V_T ln N``): ``D = k3 + ...``,
  ``r = (m4 k4/D - 1/(β2 k2))/(1 + 1/(β1 k1))``,
  ``I_C2 = V_T ln(r I_S2 k2/(I_S1 k1)) / (R (1 + 1/(β2 k2)))``,
  ``I_out = m5 k5 I_C2 / D`` (derived here).

Output resistance: the output device's ``r_o5 = (V_A5 + V_CE5)/I_C5``
(the load voltage moves nothing but Q5's collector).

Examples
--------
>>> import kit
>>> ev = kit.evaluate(kit.design("ptat_cell", r_ptat="5k1", n_area=8))
>>> 3300 < ev.tempco * 1e6 < 3800  # ppm/K: about 1/T, plus the Early effect's share
True
"""

from __future__ import annotations

from kit.circuit.blocks import hand_vbe
from kit.devices.bjt import (ALPHA_ONE, BASE_CURRENT_NEGLECTED, CUTOFF_THERMAL_VOLTAGES, FORWARD_ACTIVE,
                             KIND as BJT, NO_EARLY, VBE_FIXED)
from kit.topologies import common
from kit.topologies.base import Topology, Value
from kit.words import ISOTHERMAL

# A point whose Q1 current is below this fraction of V_T ln(N)/R has found
# the zero-current state (leakage level, many decades below).
ZERO_BRANCH_FRACTION = 1e-3
OVERDRIVE_START = 0.6  # V of load beyond the output's rail where the cell is taken as shut down

VALUES = (
    Value("r_ptat", "Ω", "resistor R in Q2's emitter (carries ΔV_BE)", 5.1e3, 1.0, 1e9, "resistor"),
    Value("n_area", "", "emitter-area ratio N = A_E(Q2)/A_E(Q1)", 8.0, 1.5, 100.0),
    common.supply(5.0, "supply voltage", low=1.5),
    common.load(2.5),
)

SOURCE_IDEAL = ("Gray, Hurst, Lewis & Meyer, Analysis and Design of Analog ICs, ch. 4 "
                "(from memory); Widlar 1971, Brokaw 1974")


def build(c):
    """The exact circuit of one polarity (``npn``: NPN core, PNP mirror)."""
    import sympy as sp

    npn = c.sense == "n"
    core_rail, mirror_rail = ("0", "cc") if npn else ("cc", "0")
    # the mirror's output transistor sources (npn core) or sinks (pnp core)
    c.supply_and_load(sinks=not npn)
    c.node("b")
    c.node("e")
    c.node("p")
    n_area = c.operating_value("N", c.parameter("n_area"), latex="N", budget="area ratio N")
    r = c.resistor("R", "e", core_rail, "r_ptat")
    q1 = c.add(BJT, "Q1", b="b", c="b", e=core_rail)
    q2 = c.add(BJT, "Q2", b="b", c="p", e="e", scale=c.parameter("n_area"))
    mirror = [c.add(BJT, name, b="p", c=collector, e=mirror_rail, sense="opposite")
              for name, collector in (("Q3", "p"), ("Q4", "b"), ("Q5", "out"))]
    devices = (q1, q2, *mirror)
    v_on = hand_vbe(c)

    v_t = q1["V_T"]  # ΔV_BE runs through Q1 and Q2, taken at one temperature
    v_cc, v_out = c.voltages["cc"], c.voltages["out"]
    v_delta = v_t * sp.log(n_area)  # the drop across R, for the Early factors only
    early = {
        "Q1": 1 + v_on / q1["V_A"],  # diode-connected: V_CE = V_BE
        "Q2": 1 + (v_cc - v_on - v_delta) / q2["V_A"],
        "Q3": 1 + v_on / mirror[0]["V_A"],
        "Q4": 1 + (v_cc - v_on) / mirror[1]["V_A"],
        "Q5": 1 + ((v_cc - v_out) if npn else v_out) / mirror[2]["V_A"],
    }
    ideal = c.closed_form("ideal_ptat", v_delta / r, "ideal PTAT cell: V_T ln(N)/R",
                          (BASE_CURRENT_NEGLECTED.key, ALPHA_ONE.key, NO_EARLY.key, FORWARD_ACTIVE.key,
                           ISOTHERMAL.key), SOURCE_IDEAL)
    c.closed_form("finite_beta", _finite_beta_current(devices, r, dict.fromkeys(early, 1)),
                  "finite β in core and mirror (matched temperatures)",
                  (NO_EARLY.key, FORWARD_ACTIVE.key, ISOTHERMAL.key),
                  "derived here from KCL at the two mirror nodes")
    c.closed_form("early_first_order", _finite_beta_current(devices, r, early),
                  "finite β and Early effect, junction drops at V_BE(on)",
                  (VBE_FIXED.key, FORWARD_ACTIVE.key, ISOTHERMAL.key),
                  "derived here (as finite β, with each device's 1 + V_CE/V_A)")
    c.extra("r_out_ro", mirror[2].small_signal["r_o"], "R_out = r_o of the output transistor Q5")

    # The zero-current state (every junction off) also satisfies every KCL equation: refuse
    # it.  A load past the output's saturation edge forward-biases Q5's collector junction,
    # which can pull the mirror node hard enough to stop the cell: that state is the
    # circuit's answer there (saturated, outside compliance), so it is kept.
    running = sp.And(q1.q["v_be"] > CUTOFF_THERMAL_VOLTAGES * v_t, q1.q["i_c"] > ZERO_BRANCH_FRACTION * ideal)
    c.valid_when(sp.Or(running, mirror[2].q["v_bc"] > 0))
    _start(c, q1, mirror[0], q2, r, ideal)


def _finite_beta_current(devices, r, early):
    """Output current with base currents and Early factors ``early[name]`` (derived here).

    KCL at p: ``I_C2 = E3 D`` with ``E3 = I_S3 exp(V_EB/V_T)`` and
    ``D = k3 + 1/β3 + m4/β4 + m5/β5``; KCL at b gives ``I_C1/I_C2``; KVL
    around Q1, Q2 and R gives ``I_C2``; the output is ``m5 k5 E3``.
    """
    import sympy as sp

    q1, q2, q3, q4, q5 = devices
    k1, k2, k3, k4, k5 = (early[name] for name in ("Q1", "Q2", "Q3", "Q4", "Q5"))
    m4 = q4["I_S"] / q3["I_S"]
    m5 = q5["I_S"] / q3["I_S"]
    loading = k3 + 1 / q3["beta"] + m4 / q4["beta"] + m5 / q5["beta"]
    ratio = (m4 * k4 / loading - 1 / (q2["beta"] * k2)) / (1 + 1 / (q1["beta"] * k1))
    i_c2 = (q1["V_T"] * sp.log(ratio * q2["I_S"] * k2 / (q1["I_S"] * k1))
            / (r * (1 + 1 / (q2["beta"] * k2))))
    return m5 * k5 * i_c2 / loading


def _start(c, q1, q3, q2, r, current):
    """Node voltages on the running branch from ``current``; the shut-down state past the output's rail.

    Source stepping ramps the cell up from its zero-current state and stays
    there, so a start on the running branch is needed.  A load driven well
    past the output's rail forward-biases Q5's collector junction and shuts
    the cell down: there the start is that state (core off, the mirror node
    a junction drop from the load).
    """
    import sympy as sp

    v_cc, v_out = c.voltages["cc"], c.voltages["out"]
    v_be_core = BJT.start(q1.sense, current, q1.symbols)
    v_be_mirror = BJT.start(q3.sense, current, q3.symbols)
    v_r = current * (1 + 1 / q2["beta"]) * r
    if c.sense == "n":
        overdriven = v_out > v_cc + OVERDRIVE_START
        starts = {"b": (0, v_be_core), "e": (0, v_r), "p": (v_out - common.SATURATED_VBC_START, v_cc - v_be_mirror)}
    else:
        overdriven = v_out < -OVERDRIVE_START
        starts = {"b": (v_cc, v_cc - v_be_core), "e": (v_cc, v_cc - v_r),
                  "p": (v_out + common.SATURATED_VBC_START, v_be_mirror)}
    for node, (shut_down, running) in starts.items():
        c.start(node, sp.Piecewise((shut_down, overdriven), (running, True)))


def draw(sheet, d):
    """Schematic with the present values.

    The ``npn`` cell has the PNP mirror on top at V_CC and the NPN core below;
    the ``pnp`` complement is the same picture mirrored top to bottom.
    """
    import schemdraw.elements as elm

    npn = sheet.sink
    s = 1 if npn else -1  # y of the npn picture times s
    core, mirror = (elm.BjtNpn, elm.BjtPnp) if npn else (elm.BjtPnp, elm.BjtNpn)

    def at(x, y):
        return (x, s * y)

    def wire(*points):
        for a, b in zip(points, points[1:]):
            elm.Line().at(at(*a)).to(at(*b))

    # mirror row: Q5 | Q3 (diode) | Q4, bases at y = 0
    mirror(circle=True).right().reverse().anchor("base").at(at(-2.0, 0)).label("Q5", loc="left")
    mirror(circle=True).right().reverse().anchor("base").at(at(0, 0)).label("Q3", loc="left")
    mirror(circle=True).right().anchor("base").at(at(1.5, 0)).label("Q4", loc="right")
    # core row: Q2 (area N) under Q3, Q1 (diode) under Q4, bases at y = -3
    core(circle=True).right().reverse().anchor("base").at(at(0, -3.0)).label(
        f"Q2\n×{sheet['n_area']:g}", loc="left")
    core(circle=True).right().anchor("base").at(at(1.5, -3.0)).label("Q1", loc="right")

    mirror_rail, core_rail = 1.3, -6.2
    wire((-2.75, mirror_rail), (2.25, mirror_rail))
    for x in (-2.75, -0.75, 2.25):
        wire((x, 0.7), (x, mirror_rail))
    wire((0, 0), (1.5, 0))  # Q3-Q4 bases
    wire((0.5, 0), (0.5, -1.4), (-0.75, -1.4))  # Q3 diode connection to p
    elm.Dot().at(at(0.5, 0))
    wire((-0.75, -0.7), (-0.75, -2.3))  # Q3 collector, node p, Q2 collector
    elm.Dot().at(at(-0.75, -1.4)).label("p", loc="left")
    wire((-0.75, -1.4), (-2.0, -1.4), (-2.0, 0))  # p to Q5's base
    wire((-2.75, -0.7), (-2.75, -2.2))  # Q5 collector to the load
    elm.Dot(open=True).at(at(-2.75, -2.2)).label("load\n(source)" if npn else "load\n(sink)",
                                                  loc="bottom" if npn else "top")
    wire((2.25, -0.7), (2.25, -2.3))  # Q4 collector, node b, Q1 collector
    elm.Dot().at(at(2.25, -1.9)).label("b", loc="right")
    wire((0, -3.0), (1.5, -3.0))  # Q2-Q1 bases
    wire((1.0, -3.0), (1.0, -1.9), (2.25, -1.9))  # Q1 diode connection
    elm.Dot().at(at(1.0, -3.0))
    elm.Resistor().at(at(-0.75, -3.7)).to(at(-0.75, core_rail)).label(
        sheet.label("r_ptat", "R"), loc="bottom" if npn else "top")
    wire((2.25, -3.7), (2.25, core_rail))
    wire((-0.75, core_rail), (2.25, core_rail))
    if npn:
        elm.Vdd().at(at(0.5, mirror_rail)).label(sheet.supply())
        elm.Ground().at(at(0.75, core_rail))
    else:
        elm.Ground().at(at(0.5, mirror_rail))
        elm.Vdd().at(at(0.75, core_rail)).label(sheet.supply())


TOPOLOGY = Topology(
    key="ptat_cell",
    order=110,
    title="ΔV_BE (PTAT) self-biased current cell",
    description=("Q1 (area 1, diode) and Q2 (area N, R in its emitter) held at equal currents by a "
                 "mirror of the other polarity: I = V_T ln(N)/R, proportional to absolute "
                 "temperature. npn: NPN core with a PNP mirror (output sourced); pnp: the "
                 "complement (PNP core, NPN mirror, output sunk)."),
    values=VALUES,
    build=build,
    draw=draw,
    notes=(
        "Start-up: zero current is also a DC solution of this cell; the circuit needs a start-up "
        "path (e.g. a high-value resistor or a leaky device injecting current into the diode "
        "node) that leaves the zero state for every supply ramp and then stays out of the way.",
        "The cell's current follows the transistors' temperature: keep Q1 and Q2 thermally "
        "together and ratio-matched (a common-centroid array for N = 8).",
    ) + common.SAFETY_NOTES,
)
