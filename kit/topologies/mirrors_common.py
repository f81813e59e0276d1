"""Shared pieces of the current-mirror topologies: value specs, guesses, drawing.

Nothing here writes equations.  The derivation cache is keyed by the source
of the module that defines a topology's ``build`` (see
:func:`kit.derive._source_key`), so every symbolic line of a mirror lives in
its own module (``mirrors_basic``, ``mirrors_degenerated``, ``mirrors_helper``)
and only numbers, value specs and schemdraw code are shared from here.

Conventions of all mirrors (NPN sink, PNP source as its mirror image):

* ``Q1`` is the input (reference) transistor, ``Q2`` the output transistor
  with emitter area ``N`` times that of ``Q1`` (``I_S2 = N I_S1``);
* ``I_REF`` flows into the input node from an ideal source (NPN) or out of
  it (PNP), or through ``R_REF`` from the supply;
* the load voltage is the output collector's voltage against 0 V.
"""

from __future__ import annotations

import numpy as np

from kit.errors import ParameterError
from kit.topologies.base import ValueSpec

# ---------------------------------------------------------------------------
# value specs shared by several mirrors

I_REF_LIMITS = (1e-9, 0.1)  # A; below 1 nA leakage rules, above 100 mA it is a power stage
N_AREA_LIMITS = (0.1, 100.0)


def i_ref_spec(default):
    """The ideal reference current."""
    return ValueSpec("i_ref", "A", "reference current fed to the input transistor Q1",
                     default, *I_REF_LIMITS)


I_REF_TC = ValueSpec("i_ref_tc", "1/K",
                     "temperature coefficient of the reference current (0 for an ideal source)",
                     0.0, -0.02, 0.02)


def n_area_spec(default=1.0):
    """Emitter-area ratio ``N`` of output to input transistor."""
    return ValueSpec("n_area", "", "emitter-area ratio N = A_E(Q2)/A_E(Q1)", default, *N_AREA_LIMITS)


def supply_spec(default, description="supply voltage (emitter rail of a PNP mirror)"):
    return ValueSpec("v_supply", "V", description, default, 0.5, 1000.0, "supply")


def load_spec(default):
    return ValueSpec("v_load", "V", "output collector (load) voltage against 0 V", default,
                     -1000.0, 1000.0, "load")


# Shown with every mirror's results (Topology.notes).
SAFETY_NOTES = (
    "Above about 60 V DC, or from a mains-derived supply, the circuit is a shock hazard: "
    "use parts and spacing rated for the voltage and follow the applicable safety standard "
    "and local codes.",
)


# ---------------------------------------------------------------------------
# starting points for the exact solve

# In saturation the output collector pulls the shared base node: keep the
# guessed base-collector forward bias near what carries the reference, so
# Newton starts on the right branch (same idea as divider.SATURATED_VBC_GUESS);
# this value is the least forward bias used.
SATURATED_VBC_GUESS = 0.3  # V


def operating(model, q, *names):
    """Rows of the operating-value array ``q`` by symbol name."""
    index = model.operating_index
    return [q[index[name]] for name in names]


def positive_current(current, fallback=1e-9):
    """A closed-form current made safe for a logarithm (guesses only)."""
    current = np.asarray(current, dtype=float)
    return np.where(np.isfinite(current) & (current > 0), current, fallback)


def junction_drop(current, i_s, v_t):
    """Forward V_BE for a collector current (exponential law, no Early effect).

    Examples
    --------
    >>> round(float(junction_drop(1e-3, 1e-14, 0.025)), 4)
    0.6332
    """
    return v_t * np.log(positive_current(current) / i_s)


def wright_omega(x):
    """Wright omega ``W0(e^x)`` of an array (SciPy, imported on first use like the generated code)."""
    from scipy.special import wrightomega

    return np.real(wrightomega(np.asarray(x, dtype=float)))


def degenerated_junction_current(drop, i_s, r_e, v_t):
    """Emitter current of a junction in series with ``r_e`` across ``drop`` volts.

    ``I r_e + V_T ln(I/I_S) = drop`` solved with the Wright omega function
    (alpha = 1; guesses only).

    Examples
    --------
    >>> i = float(degenerated_junction_current(1.0, 1e-14, 1e3, 0.025))
    >>> round(i * 1e3 + 0.025 * float(np.log(i / 1e-14)), 9)  # the loop closes at 1 V
    1.0
    """
    return v_t / r_e * wright_omega(np.asarray(drop) / v_t + np.log(i_s * r_e / v_t))


def bisect_increasing(function, low, high, iterations=80):
    """Root of an increasing ``function`` between ``low`` and ``high`` (arrays, vectorised).

    80 halvings shrink any bracket below double precision; guesses only.

    Examples
    --------
    >>> round(float(bisect_increasing(lambda v: v * v - 2.0, 0.0, 2.0)), 12)
    1.414213562373
    """
    low, high = (np.array(v, dtype=float) for v in np.broadcast_arrays(low, high))
    for _ in range(iterations):
        middle = 0.5 * (low + high)
        above = function(middle) > 0
        high = np.where(above, middle, high)
        low = np.where(above, low, middle)
    return 0.5 * (low + high)


def clamp_to_output(model, q, v_base, current):
    """Keep a guessed base voltage within a junction drop of the output collector.

    In saturation Q2's collector-base junction carries up to ``current`` (the
    reference); the drop that passes it follows temperature and I_S, where a
    fixed value would be far off when cold or hot.
    """
    (v_out,) = operating(model, q, "V_OUT")
    i_s2, v_t2 = operating(model, q, "I_S_Q2", "V_T_Q2")
    drop = np.maximum(junction_drop(current, i_s2, v_t2), SATURATED_VBC_GUESS)
    if model.polarity == "npn":
        return np.minimum(v_base, v_out + drop)
    return np.maximum(v_base, v_out - drop)


def from_emitter_rail(model, q, drop):
    """Node voltage ``drop`` volts from the emitter rail, towards the other rail."""
    if model.polarity == "npn":
        return np.asarray(drop, dtype=float)
    (v_cc,) = operating(model, q, "V_CC")
    return v_cc - drop


def stack_unknowns(model, named):
    """Guessed node voltages in the order of ``model.unknowns``."""
    return np.stack([np.asarray(named[name], dtype=float) for name in model.unknowns])


def reference_headroom(node):
    """A ``Topology.limits`` hook: the ideal reference source needs its node inside the rails.

    The source hangs from V_CC into ``node`` (NPN) or from ``node`` to 0 V
    (PNP); an ideal source needs at least 0 V across it, a real one more.
    """
    def limits(points):
        model = points.model
        v_node = points.x[model.unknowns.index(f"V_{node}")]
        if model.polarity == "npn":
            (v_cc,) = operating(model, points.q, "V_CC")
            return {("I_REF", "headroom"): v_cc - v_node}
        return {("I_REF", "headroom"): v_node}
    return limits


def require_whole_count(values, name, low, high):
    """Refuse a count parameter that is not a whole number (solve time check)."""
    values = np.asarray(values, dtype=float)
    bad = values != np.round(values)
    if np.any(bad):
        raise ParameterError("must be a whole number of transistors", parameter=name,
                             value=float(values[bad][0]), valid=f"{low:g}, {low + 1:g}, … {high:g}")


# ---------------------------------------------------------------------------
# drawing (schemdraw), shared layout of a mirror pair
#
# NPN: supply rail on top, emitters to ground at the bottom, the output
# terminal above Q2.  PNP: the picture flipped top to bottom.

GAP = 3.0  # horizontal distance between neighbouring transistors
LEAD = 1.0  # length of short connecting leads
LABEL_ROOM_PER_CHARACTER = 0.2  # drawing units (36 pt) per character at 11 pt


def toward_top(npn):
    """schemdraw direction from the emitters toward the far rail."""
    return "up" if npn else "down"


def toward_emitters(npn):
    return "down" if npn else "up"


def transistor(npn, *, facing_left=False, label=None):
    """A circle-style NPN or PNP symbol; ``facing_left`` puts its base on the right."""
    import schemdraw.elements as elm

    part = elm.BjtNpn(circle=True) if npn else elm.BjtPnp(circle=True)
    # Upright whatever the drawing direction was left at by the previous wire.
    part = part.theta(0)
    if facing_left:
        part = part.reverse()
    if label:
        part = part.label(label, loc="left" if facing_left else "right")
    return part


def emitter_return(design, d, at, npn, resistor=None, designator=None):
    """From an emitter to its rail: ground (NPN) or a V_CC stub (PNP), optionally via a resistor."""
    import schemdraw.elements as elm

    from kit.schematic import value_label

    direction = toward_emitters(npn)
    if resistor:
        getattr(elm.Resistor().at(at), direction)().label(value_label(design, resistor, designator),
                                                          loc="bottom")
    else:
        getattr(elm.Line().at(at), direction)(LEAD * 0.5)
    if npn:
        elm.Ground()
    else:
        elm.Vdd().label(supply_text(design))


def supply_text(design):
    from kit.quantities import format_quantity

    return f"V_CC {format_quantity(design.values['v_supply'], 'V')}"


def output_terminal(at, npn, text=None, side="right"):
    """The load connection above an NPN collector (below a PNP collector)."""
    import schemdraw.elements as elm

    getattr(elm.Line().at(at), toward_top(npn))(LEAD)
    text = text or ("load (sink)" if npn else "load (source)")
    dot = elm.Dot(open=True).label(text, loc=side)
    make_room(dot.center, side, text)
    return dot


def make_room(at, side, text, offset=0.4):
    """Widen the picture past a label: schemdraw underestimates the width of text.

    Moves the drawing's cursor: place the next part with an explicit ``at``.
    """
    import schemdraw.elements as elm

    room = LABEL_ROOM_PER_CHARACTER * max(len(line) for line in text.splitlines()) + offset
    getattr(elm.Gap().at(at), side)(room)


def reference_feed(design, d, at, npn, *, resistor=None, current_text=None):
    """The reference from the far rail into the input node ``at``.

    NPN: from V_CC down into the node; PNP: from the node down to ground.
    A resistor (``resistor`` = value name) or an ideal current source.
    """
    import schemdraw.elements as elm

    from kit.quantities import format_quantity
    from kit.schematic import value_label

    direction = toward_top(npn)
    if resistor:
        text = value_label(design, resistor, "R_REF")
        part = elm.Resistor().label(text, loc="top")
    else:
        text = current_text or f"I_REF\n{format_quantity(design.values['i_ref'], 'A')}"
        # Arrow along the current: into the node for NPN, out of it for PNP.
        part = elm.SourceI().label(text, loc="top")
        part = part.reverse() if npn else part
    feed = getattr(part.at(at), direction)()
    make_room(feed.center, "left", text, 0.9)
    if npn:
        elm.Vdd().at(feed.end).label(supply_text(design))
    else:
        elm.Ground().at(feed.end)
