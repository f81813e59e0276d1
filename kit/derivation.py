"""The symbolic side of a topology, for reading in a notebook.

:func:`derivation` returns a :class:`Derivation`: the exact KCL residuals,
how the exact sensitivities follow from them (implicit function theorem),
every named simplification with its closed form, and closed-form
sensitivities differentiated by SymPy.  It is the twin of
:func:`kit.evaluate`, which evaluates the same expressions numerically.

Examples
--------
>>> import kit
>>> from kit.derivation import derivation
>>> der = derivation(kit.design("divider_source"))
>>> der.closed_form("stiff_divider")
(R2*V_CC/(R1 + R2) - V_BE_on)/R_E
>>> der.sensitivity("stiff_divider", "beta_Q1")
0
"""

from __future__ import annotations

from functools import lru_cache

from kit import display
from kit.derive import latex
from kit.errors import ParameterError
from kit.topologies.base import ASSUMPTIONS


@lru_cache(maxsize=None)
def _equations(topology_key, polarity):
    from kit import topologies

    return topologies.get(topology_key).equations(polarity)


class Derivation:
    """Exact equations, closed forms and their symbolic sensitivities of one topology."""

    def __init__(self, topology, polarity):
        self.topology = topology
        self.polarity = polarity
        self.equations = _equations(topology.key, polarity)

    def _latex(self, expression):
        return latex(expression, self.equations.transistors)

    @property
    def residuals_latex(self):
        """The exact KCL residuals, one LaTeX line per unknown node."""
        return [self._latex(r) + " = 0" for r in self.equations.residuals]

    def closed_form(self, key):
        """SymPy expression of closed form ``key``."""
        try:
            return self.equations.closed_forms[key]
        except KeyError:
            raise ParameterError("no such closed form", parameter="key", value=key,
                                 valid=", ".join(self.equations.closed_forms)) from None

    def symbol(self, name):
        """The operating symbol called ``name`` (``"beta_Q1"``, ``"R_E"``, ``"V_T"``)."""
        for symbol in self.equations.operating:
            if symbol.name == name:
                return symbol
        raise ParameterError("no such operating symbol", parameter="name", value=name,
                             valid=", ".join(sorted(s.name for s in self.equations.operating)))

    def sensitivity(self, key, name):
        """d(closed form)/d(operating symbol), put over one denominator and factored."""
        import sympy as sp

        return sp.factor(sp.cancel(sp.diff(self.closed_form(key), self.symbol(name))))

    def _repr_html_(self):
        unknowns = ", ".join(self._latex(u) for u in self.equations.unknowns)
        parts = [display.section(
            f"{self.topology.title} ({self.polarity.upper()}): exact equations",
            f"<p>Unknowns ${unknowns}$; Kirchhoff's current law at each unknown node "
            "(Ebers–Moll transport model with the Early factor on the transport current):</p>"
            + "".join(f"<p>$${r}$$</p>" for r in self.residuals_latex)
            + "<p>Exact sensitivities follow from the implicit function theorem at the solved point: "
            r"$$\frac{\partial x}{\partial p} = -J_x^{-1}\,\frac{\partial F}{\partial p},\qquad"
            r"\frac{dI_{out}}{dp} = \frac{\partial I_{out}}{\partial p}"
            r" + \frac{\partial I_{out}}{\partial x}\frac{\partial x}{\partial p}$$</p>")]
        rows = []
        for s in self.topology.simplifications:
            rows.append([s.label, display.Raw(f"$${self._latex(self.closed_form(s.key))}$$"),
                         "; ".join(ASSUMPTIONS[a] for a in s.assumptions), s.source])
        parts.append(display.section("Named simplifications and their closed forms for I_out",
                                     display.table(["simplification", "I_out", "assumes", "source"], rows)))
        return display.wrap("".join(parts))


def derivation(design_or_topology, polarity=None):
    """The :class:`Derivation` of a design (or of a topology and polarity)."""
    if hasattr(design_or_topology, "spec"):
        return Derivation(design_or_topology.spec, design_or_topology.polarity)
    design_or_topology.check_polarity(polarity)
    return Derivation(design_or_topology, polarity)
