"""A worst-case result in words: plain text and HTML."""

from __future__ import annotations

import math

from kit.analysis.spec import SIGMA_PER_TOLERANCE
from kit.quantities import format_quantity
from kit.report import tables


def share(fraction):
    """A fraction in per cent with the digits it needs not to read as 0 % or 100 %.

    Examples
    --------
    >>> share(3.84e-6), share(0.99808), share(1.0), share(0.0)
    ('0.00038%', '99.81%', '100%', '0%')
    """
    if fraction in (0.0, 1.0):
        return f"{fraction:.0%}"
    distance = 100 * min(fraction, 1 - fraction)  # per cent to the nearer end
    digits = min(10, max(2, math.ceil(-math.log10(distance)) + 1))
    return f"{100 * fraction:.{digits}f}%"


def yield_text(method):
    """``", yield 99.50% (95% interval 99.13% … 99.72%)"`` for a Monte Carlo result, else ``""``."""
    if "yield" not in method.detail:
        return ""
    low, high = method.detail["yield_interval"]
    return (f", yield {method.detail['yield']:.2%} ({method.detail['yield_confidence']:.0%} interval "
            f"{share(low)} … {share(high)})")


def spec_line(spec):
    lo, hi = spec.limits
    return (f"{format_quantity(spec.i_target, 'A', 4)} ± {spec.tolerance:.2%} "
            f"({format_quantity(lo, 'A', 4)} … {format_quantity(hi, 'A', 4)})")


def text(result):
    lines = [f"spec {spec_line(result.spec)}, nominal {format_quantity(result.nominal, 'A', 4)}",
             f"self-heating {'included' if result.self_heating else 'not included'}"]
    for m in result.methods.values():
        low, high, margin = m.texts()
        lines.append(f"  {m.method:<14} {low:>10} … {high:<10} margin {margin}  "
                     f"{'PASS' if m.passed else 'FAIL'}{yield_text(m)}")
    lines.append("error budget (each factor alone, exact)")
    for b in result.budget:
        lines.append(f"  {b.label:<22} {format_quantity(b.swing, 'A'):>9}  {b.share:6.1%}")
    for reason in result.reasons():
        lines.append(f"  ! {reason}")
    lines.append("verdict: " + result.verdict())
    return "\n".join(lines)


def html(result):
    rows = []
    for m in result.methods.values():
        css = "bb-ok" if m.passed else "bb-bad"
        rows.append([m.method, *m.texts(), tables.Raw(f'<span class="{css}">{"pass" if m.passed else "fail"}</span>'),
                     m.detail.get("how", "") + yield_text(m)])
    methods = tables.table(["method", "lowest", "highest", "margin", "verdict", "how"], rows, numeric=(1, 2, 3))
    budget = tables.table(["factor", "kind", "swing alone", "linear estimate", "share"],
                          [[b.label, b.kind, format_quantity(b.swing, "A"), format_quantity(b.linear, "A"),
                            f"{b.share:.1%}"] for b in result.budget], numeric=(2, 3, 4))
    head = (f"<p>Spec {tables.escape(spec_line(result.spec))}; nominal "
            f"{format_quantity(result.nominal, 'A', 4)}; self-heating "
            f"{'included' if result.self_heating else 'not included'}. "
            f"RSS takes ± tolerance as ±{SIGMA_PER_TOLERANCE:g} σ.</p>")
    said = result.verdict()
    said = tables.escape(said[0].upper() + said[1:])
    reasons = "".join(f"<li>{tables.escape(r)}</li>" for r in result.reasons())
    verdict = (f'<p class="bb-ok">{said}.</p>' if result.met else f'<p class="bb-bad">{said}.</p><ul>{reasons}</ul>')
    return tables.wrap(tables.section("Worst case", head + methods + verdict)
                       + tables.section("Error budget (each factor alone, exact solve)", budget))
