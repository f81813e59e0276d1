"""The symbolic view of a topology in HTML: exact equations and the named closed forms."""

from __future__ import annotations

from kit.report import tables


def _model_words(structure):
    """What the exact equations are made of, in the words of the kinds they use."""
    return "; ".join(kind.law or kind.title for kind in structure.kinds)


CHANNEL_QUANTITIES = ("v_gs", "v_ds", "v_ov", "i_d")


def channel_law_latex():
    """The channel law of a MOSFET (and a JFET) stated once, in its own voltages: LaTeX lines.

    Written from the kind's own functions (:func:`kit.devices.mosfet.forward_current`)
    with generic symbols, so what is printed is what the solve uses.

    Examples
    --------
    >>> lines = channel_law_latex()
    >>> any("v_{ov}" in line for line in lines), len(lines)
    (True, 3)
    """
    import sympy as sp

    from kit.devices.mosfet import forward_current

    v_ov, v_ds, k, lam, x, join, n, v_t = sp.symbols("v_ov v_DS K lambda x V_J n V_T")
    forward = forward_current(k, v_ov, v_ds, lam, join)
    square = forward.args[0].expr  # the square law at overdrive v_ov (the first case)
    named = sp.Function("s")
    law = forward.subs(square, named(v_ov)).subs(square.subs(v_ov, join), named(join))
    return [rf"s(x) = {sp.latex(square.subs(v_ov, x))}",
            rf"i_D(v_{{GS}}, v_{{DS}}) = {sp.latex(law)},\quad v_{{ov}} = v_{{GS}} - V_{{th}},\;"
            rf" V_J = {sp.latex(2 * n * v_t)}",
            r"i_D(v_{GS}, v_{DS}) = -\,i_D(v_{GS} - v_{DS},\, -v_{DS}) \quad\text{for } v_{DS} < 0"]


def _channel_parts(der):
    """``[(I_{D,M1}, part)]`` for each named current that is a channel's drain current."""
    out = []
    for _, text, expression in der.named_currents():
        name = text.rsplit(",", 1)[1].rstrip("}")
        part = der.equations.parts.get(name)
        if part is not None and all(q in part.q for q in CHANNEL_QUANTITIES) and part.q["i_d"] == expression:
            out.append((text, part))
    return out


def _laws_html(der):
    """Each part current the balances name: a channel's law once, then each part by it; others in full."""
    channels = _channel_parts(der)
    by_law = {text for text, _ in channels}
    html = ""
    if channels:
        html += ("<p>The channel law (square law with channel-length modulation, continued below threshold "
                 "by an exponential; the gate draws no current), stated once in the channel's own voltages, "
                 "each conducting direction positive:</p>"
                 + "".join(f"<p>$${line}$$</p>" for line in channel_law_latex())
                 + "<p>and each channel of this circuit by it, with its own K, V_th, λ and n:</p>"
                 # the balances name the normalised current (conduction positive for either polarity)
                 + "".join(f"<p>$${text} = "
                           f"i_D\\left({der.latex(part.q['v_gs'])},\\; {der.latex(part.q['v_ds'])}\\right)$$</p>"
                           for text, part in channels))
    rest = [law for law, (_, text, _) in zip(der.laws_latex, der.named_currents()) if text not in by_law]
    if rest:
        html += "<p>where the part currents named are:</p>" + "".join(f"<p>$${law}$$</p>" for law in rest)
    return html


def html(der):
    unknowns = ", ".join(der.unknowns_latex)
    structure = der.structure
    parts = [tables.section(
        f"{der.topology.title} ({der.polarity.upper()}): exact equations",
        f"<p>Unknowns ${unknowns}$; Kirchhoff's current law at each unknown node "
        f"({tables.escape(_model_words(structure))}):</p>"
        + "".join(f"<p>$${r}$$</p>" for r in der.residuals_latex)
        + _laws_html(der)
        + "<p>Exact sensitivities follow from the implicit function theorem at the solved point: "
        r"$$\frac{\partial x}{\partial p} = -J_x^{-1}\,\frac{\partial F}{\partial p},\qquad"
        r"\frac{dI_{out}}{dp} = \frac{\partial I_{out}}{\partial p}"
        r" + \frac{\partial I_{out}}{\partial x}\frac{\partial x}{\partial p}$$</p>")]
    rows = [[form.label, tables.Raw(f"$${latex}$$"), "; ".join(form.assumption_texts), form.source]
            for form, latex in der.forms_latex()]
    parts.append(tables.section("Named simplifications and their closed forms for I_out",
                                tables.table(["simplification", "I_out", "assumes", "source"], rows)))
    return tables.wrap("".join(parts))
