"""Schematics of designs, drawn with schemdraw and labelled with present values.

Each topology module has a ``draw(sheet, d)`` function that adds its parts to
a schemdraw drawing ``d``; :func:`render` gives it a
:class:`kit.topologies.drawing.Sheet` made from the design and returns a
:class:`Schematic` that shows itself as SVG in Jupyter and embeds in reports.
schemdraw is imported only here and in the drawing functions, so
``import kit`` stays light.

Examples
--------
>>> import kit
>>> sch = render(kit.design("divider_source"))
>>> sch.svg.startswith("<svg") or sch.svg.startswith("<?xml")
True
"""

from __future__ import annotations

from kit.errors import ParameterError
from kit.topologies.drawing import Sheet

FONT_SIZE = 11
UNIT = 2.5  # schemdraw length of one part


class Schematic:
    """An SVG drawing of a design (``_repr_svg_`` for notebooks)."""

    def __init__(self, svg, title):
        self.svg = svg
        self.title = title

    def _repr_svg_(self):
        return self.svg

    def save(self, path):
        """Write the SVG to ``path``."""
        with open(path, "w", encoding="utf-8") as handle:
            handle.write(self.svg)


def sheet_of(design):
    """The :class:`Sheet` a topology's drawing reads: every flat value with its unit."""
    words = design.vocabulary
    values = design.parameters()
    return Sheet(values=values, units={name: e.unit for name, e in words.items()},
                 polarity=design.polarity, sink=design.sense == "n")


def render(design):
    """Draw ``design`` with its topology's drawing function."""
    import schemdraw

    draw = design.topology.draw
    if draw is None:
        raise ParameterError("this topology has no schematic yet", parameter="topology",
                             value=design.topology.key)
    schemdraw.use("svg")
    with schemdraw.Drawing(show=False) as d:
        d.config(unit=UNIT, fontsize=FONT_SIZE)
        draw(sheet_of(design), d)
    data = d.get_imagedata("svg")
    svg = data.decode("utf-8") if isinstance(data, bytes) else data
    return Schematic(svg, design.topology.title)
