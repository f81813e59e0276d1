"""A worst-case result in words: plain text and HTML."""

from __future__ import annotations

import math

from kit.analysis.mismatch import ONE_DIE
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


def matched_line(result):
    """``"matched: Q1, Q2 (one gain; ...)"`` naming every matched group and where it comes from, or ``""``."""
    groups = [f for f in result.factors if f.group]
    seen = list(dict.fromkeys(f.group for f in groups))
    if not seen:
        return ""
    implied = {tuple(g) for g in ONE_DIE.get(result.design.topology.key, ())}
    words = [", ".join(g) + (" (one die by the topology)" if g in implied and g not in set(result.spec.matched)
                             else "") for g in seen]
    return "matched: " + "; ".join(words) + " — one common value per group, members differ by the mismatch"


def mismatch_lines(result):
    """One line per matched group with a mismatch: the output's sigma and bound."""
    out = []
    for m in result.mismatch:
        out.append(f"output mismatch within {', '.join(m.group)}: sigma {format_quantity(m.sigma, 'A', 3)} "
                   f"({m.relative_sigma:.3%} of the current), bound ±{format_quantity(m.bound, 'A', 3)} "
                   f"(exact; {m.coverage})")
    return out


def text(result):
    lines = [f"spec {spec_line(result.spec)}, nominal {format_quantity(result.nominal, 'A', 4)}",
             f"self-heating {'included' if result.self_heating else 'not included'}"]
    if matched_line(result):
        lines.append(matched_line(result))
    for m in result.methods.values():
        low, high, margin = m.texts()
        lines.append(f"  {m.method:<14} {low:>10} … {high:<10} margin {margin}  "
                     f"{'PASS' if m.passed else 'FAIL'}{yield_text(m)}")
    lines.append("error budget (each factor alone, exact)")
    width = max([22] + [len(b.label) for b in result.budget])
    for b in result.budget:
        lines.append(f"  {b.label:<{width}} {format_quantity(b.swing, 'A'):>9}  {b.share:6.1%}")
    lines += mismatch_lines(result)
    for reason in result.reasons():
        lines.append(f"  ! {reason}")
    lines.append("verdict: " + result.verdict())
    return "\n".join(lines)


def _sentence(line):
    return line[0].upper() + line[1:] + "."


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
            f"RSS takes ± tolerance as ±{SIGMA_PER_TOLERANCE:g} σ."
            + (f" {tables.escape(_sentence(matched_line(result)))}" if matched_line(result) else "") + "</p>")
    head += "".join(f"<p>{tables.escape(_sentence(line))}</p>" for line in mismatch_lines(result))
    said = result.verdict()
    said = tables.escape(said[0].upper() + said[1:])
    reasons = "".join(f"<li>{tables.escape(r)}</li>" for r in result.reasons())
    verdict = (f'<p class="bb-ok">{said}.</p>' if result.met else f'<p class="bb-bad">{said}.</p><ul>{reasons}</ul>')
    return tables.wrap(tables.section("Worst case", head + methods + verdict)
                       + tables.section("Error budget (each factor alone, exact solve)", budget))
