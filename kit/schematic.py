"""Schematics of designs, drawn with schemdraw and labelled with present values.

Each topology module has a ``draw(design, d)`` function that adds its parts
to a schemdraw drawing ``d``; :func:`render` runs it and returns a
:class:`Schematic` that shows itself as SVG in Jupyter and embeds in reports.
schemdraw is imported only here, so ``import kit`` stays light.

Examples
--------
>>> import kit
>>> from kit.schematic import render
>>> sch = render(kit.design("divider_source"))
>>> sch.svg.startswith("<svg") or sch.svg.startswith("<?xml")
True
"""

from __future__ import annotations

from kit.errors import ParameterError
from kit.quantities import format_quantity

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


def value_label(design, name, designator=None):
    """``"R1\\n33 kΩ"``: a part's designator over its present value."""
    spec = design.spec.value_spec(name)
    text = format_quantity(design.values[name], spec.unit)
    return f"{designator or name.upper()}\n{text}"


def render(design):
    """Draw ``design`` with its topology's drawing function."""
    import schemdraw

    draw = design.spec.draw
    if draw is None:
        raise ParameterError("this topology has no schematic yet", parameter="topology",
                             value=design.topology)
    schemdraw.use("svg")
    with schemdraw.Drawing(show=False) as d:
        d.config(unit=UNIT, fontsize=FONT_SIZE)
        draw(design, d)
    data = d.get_imagedata("svg")
    svg = data.decode("utf-8") if isinstance(data, bytes) else data
    return Schematic(svg, design.spec.title)
