"""A worst-case result in words: plain text and HTML."""

from __future__ import annotations

import math

from kit.analysis.mismatch import ONE_DIE
from kit.analysis.spec import SIGMA_PER_TOLERANCE
from kit.quantities import format_quantity, format_temperature
from kit.report import tables
from kit.report.cautions import HOT_SURFACE_KELVIN, SELF_HEATING_KELVIN


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


def box_lines(result):
    """Over what the verdict holds: one line per aspect of the box, defaults marked."""
    return [f"{b['item']}: {b['value']}"
            + ((" [default, not written]" if b.get("known", True) else " [the spec's default value]")
               if b["default"] else "")
            for b in result.box]


def _where(conditions):
    shown = []
    for name, value in conditions.items():
        if name == "temp":
            shown.append(f"T_a {format_temperature(value, 3)}")
        elif name in ("v_load", "v_supply"):
            shown.append(f"{name} {format_quantity(value, 'V', 4)}")
    return ", ".join(shown)


def fault_text(fault):
    """``"output shorted (V_load = 25.2 V): survives (hottest: M1 8.81 W, 138 °C)"`` and the like."""
    head = f"{fault.fault} (V_load = {format_quantity(fault.v_load, 'V', 4)}): "
    if fault.survives is None:
        return head + "not judged — " + "; ".join(fault.reasons)
    if not fault.survives:
        return head + "does NOT survive — " + "; ".join(fault.reasons)
    hot = max(fault.hottest.items(), key=lambda item: (item[1][1], item[1][0]), default=None)
    if hot is None or not math.isfinite(hot[1][1]):
        return head + "survives"
    part, (watts, kelvin) = hot
    watts = watts if watts >= 1e-12 else 0.0  # a cut-off part's leakage reads as nothing
    return head + f"survives (hottest: {part} {format_quantity(watts, 'W', 3)}, {format_temperature(kelvin, 3)})"


def stress_lines(result):
    """Each part's worst stress inside the spec box, then the fault cases and any runaway."""
    out = []
    for s in result.stress:
        if s.kind == "opamp":
            out.append(_opamp_line(s))
            continue
        margin = "no rating known" if s.rating_margin is None else f"rating margin {s.rating_margin:.1%}"
        if s.breakdown_margin is not None:
            margin += f", {format_quantity(s.breakdown_margin, 'V', 3)} below breakdown"
        temp = (f", T_j {format_temperature(s.junction_temperature, 3)} at {_where(s.conditions)}"
                if s.kind != "resistor" else "")
        out.append(f"{s.part}: {format_quantity(s.power, 'W', 3)} max at {_where(s.power_conditions)}"
                   f"{temp}; {margin}" + (f"; thermal runaway at {s.runaway_points} box points"
                                           if s.runaway_points else ""))
    out += [fault_text(f) for f in result.faults]
    if result.runaway is not None:
        out.append(result.runaway.text())
    return out


def _opamp_line(s):
    """An op-amp's output stage: what it drives, its current and dissipation, and that no rating is known."""
    if s.negligible:
        return (f"{s.part} output: drives a gate only, no DC output current; output-stage dissipation "
                "negligible (gate charge on fast changes not modelled); no output rating known")
    current = s.output_current or 0.0
    way = "sources" if current >= 0 else "sinks"
    return (f"{s.part} output stage: {format_quantity(s.power, 'W', 3)} max at {_where(s.power_conditions)}, "
            f"where it {way} {format_quantity(abs(current), 'A', 3)}; no output-current or output-power "
            "rating known (compare with the op-amp's datasheet)")


def heat_cautions(result):
    """The usual cautions where the box makes a part hot enough to burn or run away."""
    hot = [s for s in result.stress if s.kind not in ("resistor", "opamp")
           and s.junction_temperature > HOT_SURFACE_KELVIN
           and s.junction_temperature - s.conditions.get("temp", result.design.temp) > SELF_HEATING_KELVIN]
    out = []
    if hot:
        names = ", ".join(f"{s.part} ({format_temperature(s.junction_temperature, 3)})" for s in hot)
        out.append(f"Hot parts inside the spec: {names}. The part and the board around it can burn a "
                   "finger; check the datasheet's derating, keep people and heat-sensitive parts away, "
                   "and follow local codes and licensed practice for the equipment.")
    if result.runaway is not None or any(f.survives is False for f in result.faults):
        out.append("A fault or thermal runaway can destroy a part and start a fire: fuse or limit the "
                   "supply and test the fault cases on the bench with protection in place.")
    return out


def stress_headline(result):
    """The hottest part inside the spec in one line, or ``""``: never a load voltage the spec excludes."""
    heated = [s for s in result.stress if s.kind not in ("resistor", "opamp")]  # with a junction of their own
    if not heated:
        return ""
    s = min(heated, key=lambda e: e.rating_margin if e.rating_margin is not None else float("inf"))
    margin = "" if s.rating_margin is None else f", rating margin {s.rating_margin:.1%}"
    return (f"stress inside the spec: {s.part} up to {format_quantity(s.power, 'W', 3)}, T_j up to "
            f"{format_temperature(s.junction_temperature, 3)} (at {_where(s.conditions)}){margin}")


def text(result):
    lines = [f"spec {spec_line(result.spec)}, nominal {format_quantity(result.nominal, 'A', 4)}",
             f"self-heating {'included' if result.self_heating else 'not included'}"]
    if stress_headline(result):
        lines.append(stress_headline(result))
    if result.box:
        lines.append("over (the spec's box)")
        lines += [f"  {line}" for line in box_lines(result)]
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
    if result.stress or result.faults:
        lines.append("stress inside the spec (largest over the box)")
        lines += [f"  {line}" for line in stress_lines(result)]
    for reason in result.reasons():
        lines.append(f"  ! {reason}")
    lines += [f"  ! caution: {c}" for c in heat_cautions(result)]
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
    over = "".join(f"<li>{tables.escape(line)}</li>" for line in box_lines(result))
    if over:
        head += f"<p>Over:</p><ul>{over}</ul>"
    stress = "".join(f"<li>{tables.escape(line)}</li>" for line in stress_lines(result))
    stress += "".join(f'<li class="bb-bad">{tables.escape(c)}</li>' for c in heat_cautions(result))
    verdict += f"<p>Stress inside the spec (largest over the box):</p><ul>{stress}</ul>" if stress else ""
    return tables.wrap(tables.section("Worst case", head + methods + verdict)
                       + tables.section("Error budget (each factor alone, exact solve)", budget))
