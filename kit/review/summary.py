"""The results summary a review opens with, shown in the notebook and lifted onto page one.

A design notebook ends with ``review_summary(...)``.  In Jupyter it shows as
a table; it also carries its content as JSON under the kit's own MIME type
:data:`MIME`, which :mod:`kit.review.build` reads from the executed notebook
to write the title block and the first page of the PDF.
"""

from __future__ import annotations

import datetime
import hashlib
import json

from kit.report import tables as display
from kit.report.cautions import GENERAL, cautions
from kit.report.evaluation import headline
from kit.quantities import format_quantity, format_temperature

MIME = "application/vnd.biasbook.review+json"

def _versions():
    import numpy
    import sympy

    import kit

    return {"biasbook": kit.__version__, "sympy": sympy.__version__, "numpy": numpy.__version__}


def _design_hash(design):
    text = json.dumps(design.to_dict(), sort_keys=True, separators=(",", ":"), default=str)
    return hashlib.sha256(text.encode()).hexdigest()


def _range(low, high, unit, digits=4):
    return f"{format_quantity(low, unit, digits)} … {format_quantity(high, unit, digits)}"


def _temperatures(low, high):
    return f"{format_temperature(low)} … {format_temperature(high)}"


def spec_box(result):
    """``[condition, what the spec takes]`` rows: every range, tolerance and default applied.

    Examples
    --------
    >>> import kit
    >>> from kit.analysis.spec import Spec
    >>> from kit.analysis.worstcase import worst_case
    >>> d = kit.design("divider_source")
    >>> rows = dict(spec_box(worst_case(d, Spec(1e-3, 0.05), methods=("RSS",))))
    >>> rows["load voltage"]
    "the design's own 8 V only"
    """
    spec, design = result.spec, result.design
    values = design.parameters()
    lo, hi = spec.limits
    rows = [["output current", f"{format_quantity(spec.i_target, 'A', 4)} ± {spec.tolerance:.2%} "
                               f"({_range(lo, hi, 'A')})"]]
    for name, label, unit in (("v_load", "load voltage", "V"), ("v_supply", "supply", "V")):
        bounds = getattr(spec, name)
        rows.append([label, _range(*bounds, unit) if bounds is not None
                     else f"the design's own {format_quantity(values[name], unit, 4)} only"])
    rows.append(["ambient temperature", _temperatures(*spec.temp) if spec.temp is not None
                 else f"the design's own {format_temperature(design.temp)} only"])
    gains = [f for f in result.factors if f.name.endswith(".beta_f") or f.label.startswith("β")]
    if gains:
        rows.append(["current gain β_F", "; ".join(f"{f.label} {f.low:g} … {f.high:g}" for f in gains)
                     + f" ({spec.beta_distribution} in Monte Carlo)"])
    elif any("beta_f" in m.values for m in design.devices.values()):
        rows.append(["current gain β_F", "nominal only (the spec gives no range)"])
    resistors = design.topology.resistors
    if resistors:
        tolerance = [f"{r} ±{spec.tolerances.get(r, spec.resistor_tolerance):.2%}" for r in resistors]
        tcr = [f"{r} ±{format_quantity(spec.tcrs.get(r, spec.resistor_tcr), 'ppm/K')}" for r in resistors]
        rows.append(["resistor tolerance", ", ".join(tolerance)
                     + ("" if spec.tolerances else " (the spec's default for every resistor)")])
        rows.append(["resistor TCR", ", ".join(tcr) + (" about each resistor's own TCR" if spec.temp is not None
                                                        else " (not varied: no temperature range)")])
    for name, (low, high) in spec.bounds.items():
        entry = design.vocabulary.get(name)
        unit = entry.unit if entry is not None else ""
        rows.append([entry.symbol if entry is not None and entry.symbol else name,
                     _range(low, high, unit) if unit and unit != "K" else f"{low:g} … {high:g}"])
    if spec.matched:
        rows.append(["matched groups", "; ".join(", ".join(g) for g in spec.matched)])
    for name, label, unit in (("mismatch_vbe", "ΔV_BE bound", "V"), ("mismatch_vth", "ΔV_th bound", "V")):
        if getattr(spec, name):
            rows.append([label, format_quantity(getattr(spec, name), unit)])
    for name, label in (("mismatch_beta", "Δβ/β bound"), ("mismatch_k", "Δk/k bound")):
        if getattr(spec, name):
            rows.append([label, f"{getattr(spec, name):.2%}"])
    if spec.p_max is not None:
        rows.append(["dissipation limit", f"{format_quantity(spec.p_max, 'W')} per transistor"])
    rows.append(["methods", ", ".join(result.methods) + f"; Monte Carlo {spec.samples} samples, seed {spec.seed}"
                 if "Monte Carlo" in result.methods else ", ".join(result.methods)])
    rows.append(["self-heating", "included" if result.self_heating else "not included"])
    return rows


def stress_text(evaluation):
    """The hottest junction (or the largest dissipation) across compliance, in words."""
    if evaluation.hottest is not None:
        part, watts, at, junction = evaluation.hottest
        model = evaluation.design.devices.get(part)
        limit = getattr(model, "values", {}).get("t_j_max") if model is not None else None
        text = (f"{part} dissipates {format_quantity(watts, 'W')} at a load voltage of {format_quantity(at, 'V')}, "
                f"junction {format_temperature(junction)}")
        if limit is not None:
            below = limit - junction
            text += (f" (its limit {format_temperature(limit)}: " +
                     (f"{below:.1f} K to spare)" if below >= 0.05 else
                      "at the limit)" if below > -0.05 else f"{-below:.1f} K OVER it)"))
        return text + f" — the worst point for a load on the circuit's own rails ({_range_words(evaluation)})"
    part, watts, at = evaluation.max_dissipation
    return (f"{part} dissipates {format_quantity(watts, 'W')} at a load voltage of {format_quantity(at, 'V')} "
            f"— the most for a load on the circuit's own rails ({_range_words(evaluation)})")


def _range_words(evaluation):
    from kit.analysis.evaluation import own_rail_loads

    c = evaluation.compliance
    low, high, words = own_rail_loads(evaluation.design, evaluation.points.model.output_sign > 0,
                                      c.low.voltage, c.high.voltage)
    return f"{words}: {format_quantity(low, 'V')} … {format_quantity(high, 'V')}"


def _stress_words(evaluation, worst_case):
    """Inside the spec when a worst case ran (never a load voltage it excludes), else on the own rails."""
    if worst_case is not None and getattr(worst_case, "stress", None):
        from kit.report.worstcase import stress_headline

        inside = stress_headline(worst_case)
        prefix = "stress inside the spec: "
        if inside.startswith(prefix):
            return inside[len(prefix):] + " — the most inside the spec"
    return stress_text(evaluation)


def device_rows(design):
    """``[part, kind, values used, source]`` per device of ``design``."""
    words = design.vocabulary
    rows = []
    for name, model in design.devices.items():
        texts = []
        for key, value in model.values.items():
            entry = words.get(f"{name}.{key}")
            unit = entry.unit if entry is not None else ""
            if unit == "K" and key.startswith("t_"):
                texts.append(f"{key} {format_temperature(value)}")
            elif unit:
                texts.append(f"{key} {format_quantity(value, unit, 4)}")
            else:
                texts.append(f"{key} {value:g}")
        kind = f"{model.kind.title} ({model.polarity})" if model.kind.title else model.polarity
        rows.append([name, kind, ", ".join(texts), model.label or "the design's values"])
    return rows


def _schematic_svg(design):
    """The schematic as SVG text, or ``""`` for a topology that has no drawing."""
    if design.topology.draw is None:
        return ""
    from kit.report.schematic import render

    return render(design).svg


class ReviewSummary:
    """Title-block facts and page-one results of one design (see the module docstring)."""

    def __init__(self, evaluation, worst_case=None, record=None, revision="", author=""):
        self.evaluation = evaluation
        self.worst_case = worst_case
        self.record = record
        design = evaluation.design
        self.data = {
            "title": (record.title if record else design.title) or design.topology.title,
            "revision": (record.revision if record else revision) or "—",
            "author": (record.author if record else author) or "—",
            "date": datetime.date.today().isoformat(),
            "content_hash": record.content_hash() if record else _design_hash(design),
            "hash_of": "design record" if record else "design values",
            "topology": design.topology.title,
            "polarity": design.polarity.upper(),
            "versions": _versions(),
            "headline": headline(evaluation),
            "ledger": [{"label": e.label, "value": format_quantity(e.value, "A", 4),
                        "error": f"{e.error:+.3%}", "assumes": "; ".join(e.assumptions)}
                       for e in evaluation.ledger],
            "exact": format_quantity(evaluation.i_out, "A", 5),
            "r_out_agreement": {k: f"{v / evaluation.r_out - 1:+.2e}" for k, v in evaluation.r_out_forms.items()},
            "notes": list(design.topology.notes),
            "cautions": list(GENERAL) + cautions(evaluation),
            "spec": self._spec_rows(),
            "met": None if worst_case is None else bool(worst_case.met),
            "verdict": "" if worst_case is None else worst_case.verdict(),
            "reasons": [] if worst_case is None else list(worst_case.reasons()),
            "spec_box": [] if worst_case is None else spec_box(worst_case),
            "stress": _stress_words(evaluation, worst_case),
            "devices": device_rows(design),
            "schematic_svg": _schematic_svg(design),
        }

    def _spec_rows(self):
        wc = self.worst_case
        if wc is None:
            return []
        lo, hi = wc.spec.limits
        rows = [{"method": "nominal (exact)", "low": format_quantity(wc.nominal, "A", 4),
                 "high": format_quantity(wc.nominal, "A", 4),
                 "margin": f"{wc.spec.margin(wc.nominal, wc.nominal):+.2%}",
                 "verdict": "pass" if lo <= wc.nominal <= hi else "fail"}]
        for m in wc.methods.values():
            low, high, margin = m.texts()
            rows.append({"method": m.method, "low": low, "high": high, "margin": margin,
                         "verdict": "pass" if m.passed else "fail"})
        return [{"spec": f"{format_quantity(wc.spec.i_target, 'A', 4)} ± {wc.spec.tolerance:.2%}"}] + rows

    def html(self):
        d = self.data
        head = display.table(["quantity", "value"], list(d["headline"].items()), numeric=(1,))
        ledger = display.table(["simplification", "value", "error vs exact", "assumes"],
                               [[r["label"], r["value"], r["error"], r["assumes"]] for r in d["ledger"]],
                               numeric=(1, 2))
        parts = [display.section("Results at the design point (exact solve)", head),
                 display.section(f"Hand formulas against the exact solution ({d['exact']})", ledger)]
        if d["spec"]:
            spec, rows = d["spec"][0]["spec"], d["spec"][1:]
            table = display.table(["method", "lowest", "highest", "margin", "verdict"],
                                  [[r["method"], r["low"], r["high"], r["margin"], r["verdict"]] for r in rows],
                                  numeric=(1, 2, 3))
            verdict = "met" if d["met"] else "NOT met"
            parts.append(display.section(f"Specification {spec}: {verdict} (extreme-value bound)", table))
        if d["notes"]:
            parts.append(display.section("Design notes", "".join(f"<p>{display.escape(n)}</p>" for n in d["notes"])))
        return display.wrap("".join(parts))

    def _repr_mimebundle_(self, include=None, exclude=None):
        return {"text/html": self.html(), MIME: self.data,
                "text/plain": f"review summary: {self.data['title']}"}


def review_summary(evaluation, worst_case=None, record=None, **header):
    """The summary object a design notebook displays last (see :class:`ReviewSummary`)."""
    return ReviewSummary(evaluation, worst_case, record, **header)
