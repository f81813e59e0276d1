"""The symbolic view of a topology in HTML: exact equations and the named closed forms."""

from __future__ import annotations

from kit.report import tables


def _model_words(structure):
    """What the exact equations are made of, in the words of the kinds they use."""
    return "; ".join(kind.law or kind.title for kind in structure.kinds)


def html(der):
    unknowns = ", ".join(der.unknowns_latex)
    structure = der.structure
    parts = [tables.section(
        f"{der.topology.title} ({der.polarity.upper()}): exact equations",
        f"<p>Unknowns ${unknowns}$; Kirchhoff's current law at each unknown node "
        f"({tables.escape(_model_words(structure))}):</p>"
        + "".join(f"<p>$${r}$$</p>" for r in der.residuals_latex)
        + ("<p>where the part currents named are:</p>" if der.laws_latex else "")
        + "".join(f"<p>$${law}$$</p>" for law in der.laws_latex)
        + "<p>Exact sensitivities follow from the implicit function theorem at the solved point: "
        r"$$\frac{\partial x}{\partial p} = -J_x^{-1}\,\frac{\partial F}{\partial p},\qquad"
        r"\frac{dI_{out}}{dp} = \frac{\partial I_{out}}{\partial p}"
        r" + \frac{\partial I_{out}}{\partial x}\frac{\partial x}{\partial p}$$</p>")]
    rows = [[form.label, tables.Raw(f"$${latex}$$"), "; ".join(form.assumption_texts), form.source]
            for form, latex in der.forms_latex()]
    parts.append(tables.section("Named simplifications and their closed forms for I_out",
                                tables.table(["simplification", "I_out", "assumes", "source"], rows)))
    return tables.wrap("".join(parts))
