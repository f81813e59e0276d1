"""Drawing helpers for the topologies' schematics (schemdraw, imported on use).

A topology's ``draw(sheet, d)`` adds its parts to the schemdraw drawing
``d``; ``sheet`` (:class:`Sheet`) holds the present values and the polarity,
and writes value labels with their units.  The shared layout of a mirror
pair (NPN: supply rail on top, emitters to ground at the bottom, the output
terminal above the output transistor; PNP: the picture flipped top to
bottom) is written once here.
"""

from __future__ import annotations

from dataclasses import dataclass

GAP = 3.0  # horizontal distance between neighbouring transistors
LEAD = 1.0  # length of short connecting leads
LABEL_ROOM_PER_CHARACTER = 0.2  # drawing units (36 pt) per character at 11 pt
UNIT_WIDTH = 3.0


@dataclass(frozen=True)
class Sheet:
    """What a drawing needs of a design: its values (flat names), units, polarity.

    ``values`` maps flat parameter names (``r1``, ``D1.v_z0``) to floats,
    ``units`` the same names to units; ``sink`` is True for the first
    polarity of the topology (an NPN or NMOS sink).
    """

    values: dict
    units: dict
    polarity: str
    sink: bool

    def __getitem__(self, name):
        return self.values[name]

    def text(self, name, digits=3):
        """A value with its unit (``"33 kΩ"``)."""
        from kit.quantities import format_quantity

        unit = self.units.get(name, "")
        return format_quantity(self.values[name], unit, digits) if unit else f"{self.values[name]:g}"

    def label(self, name, designator=None):
        """``"R1\\n33 kΩ"``: a part's designator over its present value."""
        return f"{designator or name.upper()}\n{self.text(name)}"

    def supply(self, name="V_CC"):
        """The supply rail's label (``"V_CC 12 V"``; MOSFET circuits say ``V_DD``)."""
        return f"{name} {self.text('v_supply')}"


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


def emitter_return(sheet, at, npn, resistor=None, designator=None):
    """From an emitter to its rail: ground (NPN) or a V_CC stub (PNP), optionally via a resistor."""
    import schemdraw.elements as elm

    direction = toward_emitters(npn)
    if resistor:
        getattr(elm.Resistor().at(at), direction)().label(sheet.label(resistor, designator), loc="bottom")
    else:
        getattr(elm.Line().at(at), direction)(LEAD * 0.5)
    if npn:
        elm.Ground()
    else:
        elm.Vdd().label(sheet.supply())


def mirror_pair(sheet):
    """Q1 (facing left) and Q2 side by side, bases joined, emitters to their rail.

    The start of every two-transistor mirror drawing; returns ``(q1, q2)``.
    """
    import schemdraw.elements as elm

    npn = sheet.sink
    q1 = transistor(npn, facing_left=True, label="Q1").at((0.0, 0.0)).anchor("base")
    emitter_return(sheet, q1.emitter, npn)
    elm.Line().at(q1.base).right(GAP)
    q2 = transistor(npn, label="Q2").anchor("base")
    emitter_return(sheet, q2.emitter, npn)
    return q1, q2


def diode_strap(collector, base, npn, *, rise=LEAD * 0.6, inset=0.8):
    """Strap a collector (or drain) to its own base (gate) line: the diode connection.

    Rises ``rise`` from ``collector`` toward the far rail, dots the node, and
    runs back down to the base line ``inset`` beside ``base``.  Returns the node,
    where the reference feed joins.
    """
    import schemdraw.elements as elm

    node = getattr(elm.Line().at(collector), toward_top(npn))(rise).end
    elm.Dot()
    elm.Line().at(node).tox(base[0] + inset)
    elm.Line().toy(base[1])
    elm.Dot()
    return node


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


def reference_feed(sheet, at, npn, *, resistor=None, current_text=None):
    """The reference from the far rail into the input node ``at``.

    NPN: from V_CC down into the node; PNP: from the node down to ground.
    A resistor (``resistor`` = value name) or an ideal current source.
    """
    import schemdraw.elements as elm

    direction = toward_top(npn)
    if resistor:
        text = sheet.label(resistor, "R_REF")
        part = elm.Resistor().label(text, loc="top")
    else:
        text = current_text or f"I_REF\n{sheet.text('i_ref')}"
        # Arrow along the current: into the node for NPN, out of it for PNP.
        part = elm.SourceI().label(text, loc="top")
        part = part.reverse() if npn else part
    feed = getattr(part.at(at), direction)()
    make_room(feed.center, "left", text, 0.9)
    if npn:
        elm.Vdd().at(feed.end).label(sheet.supply())
    else:
        elm.Ground().at(feed.end)
